//! `outturn render DIR [--templates DIR]`: re-render the reports of a
//! results folder from its stored tables, in place, and update the
//! manifest's `templates` and the report entries of its `outputs`.

use crate::digest::sha256_hex;
use crate::error::{Error, Result};
use crate::report::render::{
    default_templates, load_templates, manifest_core, reports_of, used_templates,
};
use crate::report::{Folder, DETAIL_TARGETS};
use crate::results::{Grid, Rows};
use serde_json::{json, Value};
use std::path::Path;

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

/// A file of the folder; `missing` says what its absence means (invalid
/// input, exit 2).
fn read_stored(path: &Path, missing: impl FnOnce() -> String) -> Result<Vec<u8>> {
    match std::fs::read(path) {
        Ok(bytes) => Ok(bytes),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Err(Error::invalid(None, missing())),
        Err(e) => Err(Error::io(format!("cannot read {}", path.display()), e)),
    }
}

/// Record a report file in the manifest's `outputs`, in place of its
/// earlier entry or after the others.
fn record_output(manifest: &mut Value, name: &str, bytes: &[u8]) {
    let entry = json!({"file": name, "sha256": sha256_hex(bytes), "bytes": bytes.len()});
    match manifest.get_mut("outputs").and_then(Value::as_array_mut) {
        Some(outputs) => {
            match outputs
                .iter_mut()
                .find(|o| o.get("file").and_then(Value::as_str) == Some(name))
            {
                Some(o) => *o = entry,
                None => outputs.push(entry),
            }
        }
        None => manifest["outputs"] = json!([entry]),
    }
}

/// `outturn render DIR [--templates DIR]`: re-render the reports of a
/// results folder from its stored tables, in place, and update the
/// manifest's `templates` and the report entries of its `outputs`;
/// everything else stays byte for byte. A table that is not as outturn
/// wrote it is invalid input (exit 2), named with its line.
pub fn render_folder(dir: &Path, templates: Option<&Path>) -> Result<()> {
    let manifest_path = dir.join("manifest.json");
    let manifest_bytes = read_stored(&manifest_path, || {
        format!(
            "{} is not an outturn results folder (no manifest.json)",
            dir.display()
        )
    })?;
    let mut manifest: Value = serde_json::from_slice(&manifest_bytes).map_err(|e| {
        Error::invalid(
            None,
            format!("{}: not valid JSON: {e}", manifest_path.display()),
        )
    })?;
    let scores = read_stored(&dir.join("scores.csv"), || {
        format!(
            "{} holds no scores.csv: a shard folder has no reports; merge the shards first",
            dir.display()
        )
    })?;
    // The large tables are read row by row, keeping the rows of the targets
    // the report shows in detail (a 1000-series folder holds gigabytes).
    let grid = Grid::read(&manifest, &scores).map_err(|e| e.into_error(dir))?;
    let rows = Rows::read_folder(dir, &scores, &grid, &|t| t < DETAIL_TARGETS)
        .map_err(|e| e.into_error(dir))?;
    let templates = match templates {
        Some(t) => load_templates(t)?,
        None => default_templates(),
    };
    // What the stored experiment file declares, checked as a run checks it.
    let experiment_path = dir.join("experiment.yaml");
    let text = read_stored(&experiment_path, || {
        format!(
            "{} is missing: a results folder keeps the experiment file it ran",
            experiment_path.display()
        )
    })?;
    let text = String::from_utf8(text).map_err(|_| {
        Error::invalid(
            None,
            format!("{}: not UTF-8 text", experiment_path.display()),
        )
    })?;
    let declared = crate::spec::declaration(&experiment_path, &text)?;
    let used = used_templates(&templates, &declared.formats);
    manifest["templates"] = json!(used
        .iter()
        .map(|(name, text)| json!({"name": name, "sha256": sha256_hex(text.as_bytes())}))
        .collect::<Vec<_>>());
    let core = manifest_core(&manifest);
    let folder = Folder::assemble(grid, rows, &declared, text, &core);
    let out = reports_of(folder, None, &core, &declared.formats, &templates).map_err(Error::Run)?;
    for (name, bytes) in &out {
        write_atomic(dir, name, bytes)?;
        record_output(&mut manifest, name, bytes);
    }
    let mut bytes = serde_json::to_vec_pretty(&manifest)
        .map_err(|e| Error::Run(format!("cannot write the manifest: {e}")))?;
    bytes.push(b'\n');
    if bytes != manifest_bytes {
        write_atomic(dir, "manifest.json", &bytes)?;
    }
    Ok(())
}
