//! `outturn render DIR [--templates DIR]`: re-render the reports of a
//! results folder from its stored tables, in place, and update the
//! manifest's `templates` and the report entries of its `outputs`.

use crate::digest::sha256_hex;
use crate::error::{Error, Result};
use crate::report::render::{default_templates, load_templates, reports_of, used_templates};
use crate::report::{selection, Folder};
use crate::results::manifest::{rewrite, Digest, OutputFile, TemplateRecord};
use crate::results::{Grid, Rows};
use serde_json::Value;
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

/// `outturn render DIR [--templates DIR]`: re-render the reports of a
/// results folder from its stored tables, in place, and update the
/// manifest's `templates` and the report entries of its `outputs`;
/// everything else stays byte for byte. A table that is not as outturn
/// wrote it is invalid input (exit 2), named with its line.
///
/// One function because its steps (read the manifest, check every table
/// against it, rebuild the view, render, write, update the manifest) must run
/// in this order and share the manifest as it is checked.
pub fn render_folder(dir: &Path, templates: Option<&Path>) -> Result<()> {
    let manifest_path = dir.join("manifest.json");
    // Read as it streams: its cells are counted, not held.
    let file = match std::fs::File::open(&manifest_path) {
        Ok(f) => f,
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
    let mut manifest = Digest::from_reader(file).map_err(|e| {
        let shard = std::fs::File::open(&manifest_path)
            .ok()
            .and_then(|f| serde_json::from_reader::<_, Value>(std::io::BufReader::new(f)).ok())
            .is_some_and(|v| v.get("shard_of").is_some());
        let message = if shard {
            format!(
                "{} is a shard folder: it has no reports; merge the shards first",
                dir.display()
            )
        } else {
            format!("{}: {e}", manifest_path.display())
        };
        Error::invalid(None, message)
    })?;
    // Every stored table as outturn wrote it, before anything is read.
    manifest
        .check_tables(dir)
        .map_err(|e| Error::invalid(None, e))?;
    let scores = read_stored(&dir.join("scores.csv"), || {
        format!(
            "{} holds no scores.csv: a shard folder has no reports; merge the shards first",
            dir.display()
        )
    })?;
    let user_templates = templates.is_some();
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
    // The large tables are read row by row, keeping the rows of the targets
    // the report shows in detail (a 1000-series folder holds gigabytes).
    let grid = Grid::read(&manifest.core_value(), &scores).map_err(|e| e.into_error(dir))?;
    let (chosen, leaders) = {
        let s =
            crate::results::scores::read(&scores, &grid.lookup()).map_err(|e| e.into_error(dir))?;
        (
            selection::choose(&grid, &s.metric_names, &s.rows, declared.report_targets),
            selection::parameter_leaders(&grid, &s.rows),
        )
    };
    let detail = |t| chosen.shown(t).detail;
    let rows = Rows::read_folder(
        dir,
        &scores,
        &grid,
        (&detail, &|t, c| detail(t) && leaders.contains(&(t, c))),
    )
    .map_err(|e| e.into_error(dir))?;
    let used = used_templates(&templates, &declared.formats);
    manifest.templates = used
        .iter()
        .map(|(name, text)| TemplateRecord {
            name: name.clone(),
            sha256: sha256_hex(text.as_bytes()),
        })
        .collect();
    let core = manifest.core_value();
    let folder = Folder::assemble(grid, rows, &declared, text, &core);
    let out = reports_of(folder, None, &core, &declared.formats, &templates).map_err(|e| {
        // A user's template that fails (a syntax error, a loop without
        // bound that runs out of fuel) is a problem of the input.
        if user_templates {
            let text = e.to_string();
            let message = if text.contains("fuel") {
                format!(
                    "{text} (a template folder's templates may take at most {} steps)",
                    crate::report::render::TEMPLATE_FUEL
                )
            } else {
                text
            };
            Error::invalid(None, message)
        } else {
            Error::Report(e)
        }
    })?;
    for (name, bytes) in &out {
        write_atomic(dir, name, bytes)?;
        manifest.set_output(OutputFile::of(name, bytes));
    }
    rewrite(&manifest_path, &manifest.outputs, &manifest.templates)
        .map_err(|e| Error::io(format!("cannot replace {}", manifest_path.display()), e))?;
    Ok(())
}
