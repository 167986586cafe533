//! `outturn render DIR [--templates DIR]`: re-render the reports of a
//! results folder from its stored tables, in place, and update the
//! manifest's `templates` and the report entries of its `outputs`.

use crate::digest::sha256_hex;
use crate::error::{Error, Result};
use crate::report::render::{default_templates, load_templates, reports, used_templates};
use crate::results::manifest::{Manifest, OutputFile, TemplateRecord};
use serde_json::Value;
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
    if serde_json::from_slice::<Value>(&manifest_bytes).is_ok_and(|v| v.get("shard_of").is_some())
        || !dir.join("scores.csv").exists()
    {
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
    let mut manifest = Manifest::from_bytes(&manifest_bytes)
        .map_err(|e| Error::invalid(None, format!("{}: {e}", manifest_path.display())))?;
    let detailed: Option<HashMap<String, usize>> = Some(
        manifest
            .grid
            .targets
            .iter()
            .enumerate()
            .map(|(t, name)| (name.clone(), t))
            .collect(),
    );
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
    manifest.templates = used
        .iter()
        .map(|(name, text)| TemplateRecord {
            name: name.clone(),
            sha256: sha256_hex(text.as_bytes()),
        })
        .collect();
    let core = manifest.core_value();
    // The tables are the folder's, not this run's: a problem with them is the input's.
    let out = reports(&files, &core, &declared, &templates).map_err(|e| {
        Error::invalid(
            None,
            format!(
                "{}: the stored tables cannot be reported: {e}",
                dir.display()
            ),
        )
    })?;
    for (name, bytes) in &out {
        write_atomic(dir, name, bytes)?;
        manifest.set_output(OutputFile::of(name, bytes));
    }
    let bytes = manifest.to_bytes();
    if bytes != manifest_bytes {
        write_atomic(dir, "manifest.json", &bytes)?;
    }
    Ok(())
}
