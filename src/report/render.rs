//! Rendering the reports of a results folder from its stored tables: the
//! templates (built in, or a user's folder), the report files from the
//! tables and the manifest's deterministic part, and `outturn render`, which
//! re-renders a folder in place and updates the manifest's hashes.

use super::{report_data, Folder, TargetPart};
use crate::error::{Error, Result};
use crate::spec::{sha256_hex, ReportFormat};
use serde_json::{json, Value};
use std::collections::{BTreeMap, HashMap};
use std::path::Path;

/// The two report templates: (file name, source).
pub struct Templates {
    pub markdown: (String, String),
    pub html: (String, String),
}

pub const MARKDOWN_TEMPLATE: &str = "report.md.j2";
pub const HTML_TEMPLATE: &str = "report.html.j2";

/// The built-in templates, embedded at compile time from `templates/`.
pub fn default_templates() -> Templates {
    Templates {
        markdown: (
            MARKDOWN_TEMPLATE.into(),
            include_str!("../../templates/report.md.j2").into(),
        ),
        html: (
            HTML_TEMPLATE.into(),
            include_str!("../../templates/report.html.j2").into(),
        ),
    }
}

/// A user's templates: `report.md.j2` and `report.html.j2` from `dir`.
pub fn load_templates(dir: &Path) -> Result<Templates> {
    let read = |name: &str| -> Result<(String, String)> {
        let path = dir.join(name);
        match std::fs::read(&path) {
            Ok(bytes) => String::from_utf8(bytes)
                .map(|text| (name.to_string(), text))
                .map_err(|_| {
                    Error::invalid(None, format!("{}: the template is not UTF-8 text", path.display()))
                }),
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => Err(Error::invalid(
                None,
                format!(
                    "{} is missing: a template folder holds {MARKDOWN_TEMPLATE} and {HTML_TEMPLATE} (copy the built-in ones from the outturn source's templates/ folder to start)",
                    path.display()
                ),
            )),
            Err(e) => Err(Error::io(format!("cannot read {}", path.display()), e)),
        }
    };
    Ok(Templates {
        markdown: read(MARKDOWN_TEMPLATE)?,
        html: read(HTML_TEMPLATE)?,
    })
}

/// The templates a run with these formats uses, in output order
/// (Markdown, then HTML), as the manifest records them.
pub fn used_templates(templates: &Templates, formats: &[ReportFormat]) -> Vec<(String, String)> {
    let mut out = Vec::new();
    if formats.contains(&ReportFormat::Markdown) {
        out.push(templates.markdown.clone());
    }
    if formats.contains(&ReportFormat::Html) {
        out.push(templates.html.clone());
    }
    out
}

/// The manifest without its `outputs` and `run` keys: what a report may show.
pub fn manifest_core(manifest: &Value) -> Value {
    let mut core = manifest.clone();
    if let Some(map) = core.as_object_mut() {
        map.remove("run");
        // The tables' hashes stay (the report lists them); the reports' own go.
        if let Some(outputs) = map.get_mut("outputs").and_then(Value::as_array_mut) {
            outputs.retain(|o| {
                let name = o["file"].as_str().unwrap_or("");
                !name.starts_with("report.") && name != "manifest.json"
            });
        }
    }
    core
}

/// Render one template with the report data.
fn render_one(
    name: &str,
    source: &str,
    html: bool,
    data: &minijinja::Value,
) -> std::result::Result<String, String> {
    let mut env = minijinja::Environment::new();
    env.set_auto_escape_callback(move |_| {
        if html {
            minijinja::AutoEscape::Html
        } else {
            minijinja::AutoEscape::None
        }
    });
    env.set_keep_trailing_newline(true);
    env.set_trim_blocks(true);
    env.set_lstrip_blocks(true);
    env.add_template(name, source)
        .map_err(|e| format!("template {name}: {e}"))?;
    let tmpl = env
        .get_template(name)
        .map_err(|e| format!("template {name}: {e}"))?;
    tmpl.render(data)
        .map_err(|e| format!("template {name}: {e}"))
}

/// The report files of a results folder: `files` holds the folder's tables
/// by name, `manifest` the manifest without `outputs` and `run`. Returns
/// ("report.md", bytes) and/or ("report.html", bytes), in that order.
pub fn reports(
    files: &BTreeMap<String, Vec<u8>>,
    manifest: &Value,
    formats: &[ReportFormat],
    templates: &Templates,
) -> std::result::Result<Vec<(String, Vec<u8>)>, String> {
    let folder = Folder::parse(files, manifest)?;
    reports_of(folder, None, manifest, formats, templates)
}

/// The report files of a parsed folder (see [`reports`]), with the targets'
/// parts of the report when they are built already.
pub fn reports_of(
    folder: Folder,
    parts: Option<Vec<TargetPart>>,
    manifest: &Value,
    formats: &[ReportFormat],
    templates: &Templates,
) -> std::result::Result<Vec<(String, Vec<u8>)>, String> {
    let value = report_data(
        &folder,
        manifest,
        formats.contains(&ReportFormat::Html),
        parts,
    );
    // The formats render side by side.
    let render = |format: ReportFormat| -> std::result::Result<Option<(String, Vec<u8>)>, String> {
        if !formats.contains(&format) {
            return Ok(None);
        }
        let (file, (name, source), html) = match format {
            ReportFormat::Markdown => ("report.md", &templates.markdown, false),
            ReportFormat::Html => ("report.html", &templates.html, true),
        };
        Ok(Some((
            file.to_string(),
            render_one(name, source, html, &value)?.into_bytes(),
        )))
    };
    let (markdown, html) = if formats.len() > 1 {
        std::thread::scope(|scope| {
            // Should no thread start, the HTML renders after the Markdown.
            let html =
                std::thread::Builder::new().spawn_scoped(scope, || render(ReportFormat::Html));
            let markdown = render(ReportFormat::Markdown);
            let html = match html {
                Ok(h) => h.join().unwrap_or_else(|p| std::panic::resume_unwind(p)),
                Err(_) => render(ReportFormat::Html),
            };
            (markdown, html)
        })
    } else {
        (render(ReportFormat::Markdown), render(ReportFormat::Html))
    };
    let out: Vec<(String, Vec<u8>)> = [markdown?, html?].into_iter().flatten().collect();
    // Freeing the large trees takes a few milliseconds the caller need not wait for.
    // (Should no thread start, they are freed here.)
    let _ = std::thread::Builder::new().spawn(move || drop((folder, value)));
    Ok(out)
}

/// The tables a report is built from.
pub const TABLES: [&str; 8] = [
    "forecasts.csv",
    "scores.csv",
    "tests.csv",
    "outlook.csv",
    "stability.csv",
    "diagnostics.csv",
    "series.csv",
    "experiment.yaml",
];

/// Write `bytes` to `dir/name` atomically: a temporary file beside it, then a rename.
fn write_atomic(dir: &Path, name: &str, bytes: &[u8]) -> Result<()> {
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let target = dir.join(name);
    std::fs::write(&tmp, bytes)
        .map_err(|e| Error::io(format!("cannot write {}", tmp.display()), e))?;
    std::fs::rename(&tmp, &target).map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        Error::io(format!("cannot replace {}", target.display()), e)
    })
}

/// A large table's header and the rows of targets the report shows in
/// detail (the first `DETAIL_TARGETS` of the grid; rows naming no target of
/// the grid are kept too), read row by row. In series.csv only target
/// series are filtered; predictor rows stay.
fn detailed_rows(
    path: &Path,
    name: &str,
    targets: &HashMap<String, usize>,
) -> std::io::Result<Vec<u8>> {
    let file = std::fs::File::open(path)?;
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(true)
        .flexible(false)
        .from_reader(std::io::BufReader::with_capacity(1 << 20, file));
    let bad = |e: csv::Error| std::io::Error::new(std::io::ErrorKind::InvalidData, e);
    let header = reader.headers().map_err(bad)?.clone();
    let column = |n: &str| header.iter().position(|h| h == n);
    let (subject, role) = if name == "series.csv" {
        (column("series"), column("role"))
    } else {
        (column("target"), None)
    };
    let mut writer = csv::Writer::from_writer(Vec::new());
    writer.write_record(&header).map_err(bad)?;
    let mut record = csv::StringRecord::new();
    while reader.read_record(&mut record).map_err(bad)? {
        let is_target = role.is_none_or(|r| record.get(r) == Some("target"));
        let keep = match subject.and_then(|c| record.get(c)) {
            Some(s) if is_target => targets.get(s).is_none_or(|&t| t < super::DETAIL_TARGETS),
            _ => true,
        };
        if keep {
            writer.write_record(&record).map_err(bad)?;
        }
    }
    writer
        .into_inner()
        .map_err(|e| std::io::Error::other(e.to_string()))
}

/// `outturn render DIR [--templates DIR]`: re-render the reports of a
/// results folder from its stored tables, in place, and update the
/// manifest's `templates` and the report entries of its `outputs`;
/// everything else stays byte for byte.
pub fn render_folder(dir: &Path, templates: Option<&Path>) -> Result<()> {
    let manifest_path = dir.join("manifest.json");
    let manifest_bytes = match std::fs::read(&manifest_path) {
        Ok(b) => b,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
            return Err(Error::invalid(
                None,
                format!(
                    "{} is not an outturn results folder (no manifest.json)",
                    dir.display()
                ),
            ))
        }
        Err(e) => {
            return Err(Error::io(
                format!("cannot read {}", manifest_path.display()),
                e,
            ))
        }
    };
    let mut manifest: Value = serde_json::from_slice(&manifest_bytes).map_err(|e| {
        Error::invalid(
            None,
            format!("{}: not valid JSON: {e}", manifest_path.display()),
        )
    })?;
    if !dir.join("scores.csv").exists() {
        return Err(Error::invalid(
            None,
            format!(
                "{} holds no scores.csv: a shard folder has no reports; merge the shards first",
                dir.display()
            ),
        ));
    }
    // The large tables are read row by row, keeping the rows of the targets
    // the report shows in detail (a 1000-series folder holds gigabytes).
    let detailed: Option<HashMap<String, usize>> = manifest
        .pointer("/grid/targets")
        .and_then(Value::as_array)
        .map(|list| {
            list.iter()
                .enumerate()
                .filter_map(|(t, name)| Some((name.as_str()?.to_string(), t)))
                .collect()
        });
    let mut files = BTreeMap::new();
    for name in TABLES {
        let path = dir.join(name);
        let read = match (name, &detailed) {
            ("forecasts.csv" | "stability.csv" | "series.csv", Some(targets)) => {
                detailed_rows(&path, name, targets)
            }
            _ => std::fs::read(&path),
        };
        match read {
            Ok(bytes) => {
                files.insert(name.to_string(), bytes);
            }
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => {}
            Err(e) => {
                return Err(Error::io(
                    format!("cannot read {}", dir.join(name).display()),
                    e,
                ))
            }
        }
    }
    let templates = match templates {
        Some(t) => load_templates(t)?,
        None => default_templates(),
    };
    let formats = files
        .get("experiment.yaml")
        .map(|b| super::formats_of(&String::from_utf8_lossy(b)))
        .unwrap_or_else(|| vec![ReportFormat::Html, ReportFormat::Markdown]);
    let used = used_templates(&templates, &formats);
    manifest["templates"] = json!(used
        .iter()
        .map(|(name, text)| json!({"name": name, "sha256": sha256_hex(text.as_bytes())}))
        .collect::<Vec<_>>());
    let core = manifest_core(&manifest);
    let out = reports(&files, &core, &formats, &templates).map_err(Error::Run)?;
    for (name, bytes) in &out {
        write_atomic(dir, name, bytes)?;
        let entry = json!({"file": name, "sha256": sha256_hex(bytes), "bytes": bytes.len()});
        match manifest.get_mut("outputs").and_then(Value::as_array_mut) {
            Some(outputs) => {
                match outputs
                    .iter_mut()
                    .find(|o| o.get("file").and_then(Value::as_str) == Some(name.as_str()))
                {
                    Some(o) => *o = entry,
                    None => outputs.push(entry),
                }
            }
            None => manifest["outputs"] = json!([entry]),
        }
    }
    let mut bytes = serde_json::to_vec_pretty(&manifest)
        .map_err(|e| Error::Run(format!("cannot write the manifest: {e}")))?;
    bytes.push(b'\n');
    if bytes != manifest_bytes {
        write_atomic(dir, "manifest.json", &bytes)?;
    }
    Ok(())
}
