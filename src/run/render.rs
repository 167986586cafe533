//! `outturn render DIR [--templates DIR]`: re-render the reports of a
//! results folder from its stored tables, in place, and update the
//! manifest's `templates` and the report entries of its `outputs`.

use crate::digest::sha256_hex;
use crate::error::{Error, Result};
use crate::report::render::{
    default_templates, load_templates, manifest_core, reports, used_templates,
};
use serde_json::{json, Value};
use std::collections::{BTreeMap, HashMap};
use std::path::Path;

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
            Some(s) if is_target => targets
                .get(s)
                .is_none_or(|&t| t < crate::report::DETAIL_TARGETS),
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
    // What the stored experiment file declares, checked as a run checks it.
    let experiment_path = dir.join("experiment.yaml");
    let text = match files.get("experiment.yaml") {
        Some(bytes) => String::from_utf8(bytes.clone()).map_err(|_| {
            Error::invalid(
                None,
                format!("{}: not UTF-8 text", experiment_path.display()),
            )
        })?,
        None => {
            return Err(Error::invalid(
                None,
                format!(
                    "{} is missing: a results folder keeps the experiment file it ran",
                    experiment_path.display()
                ),
            ))
        }
    };
    let declared = crate::spec::declaration(&experiment_path, &text)?;
    let used = used_templates(&templates, &declared.formats);
    manifest["templates"] = json!(used
        .iter()
        .map(|(name, text)| json!({"name": name, "sha256": sha256_hex(text.as_bytes())}))
        .collect::<Vec<_>>());
    let core = manifest_core(&manifest);
    let out = reports(&files, &core, &declared, &templates).map_err(Error::Run)?;
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
