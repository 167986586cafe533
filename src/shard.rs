//! Scale-out (SPEC §6): a shard runs the cells whose stable hash falls in its
//! slice and writes only their rows (lossless, `cells.txt`) with a manifest
//! naming the experiment, inputs and grid; `merge` checks that N shards of
//! one experiment are all present exactly once, rebuilds every cell's output
//! in plan order, and finalizes exactly as a single run does.

use crate::backtest::{is_computed, CellOutput};
use crate::error::{Error, Location, Result};
use crate::plan::{self, Cell};
use crate::spec::{self, sha256_hex, Experiment};
use crate::{cellio, output, pipeline, RunContext};
use serde_json::{json, Value};
use std::path::{Path, PathBuf};

/// A digest of the grid: every cell id in plan order.
fn grid_digest(cells: &[Cell]) -> String {
    let ids: Vec<&str> = cells.iter().map(|c| c.id.as_str()).collect();
    sha256_hex(ids.join("\n").as_bytes())
}

pub fn shard_files(
    exp: &Experiment,
    cells: &[Cell],
    selected: &[usize],
    outputs: &[CellOutput],
    (k, n): (usize, usize),
    ctx: &RunContext,
) -> Vec<(String, Vec<u8>)> {
    let mut text = String::new();
    for (&i, out) in selected.iter().zip(outputs) {
        cellio::write_cell(&cells[i].id, out, &mut text);
    }
    let manifest = json!({
        "shard_of": {
            "experiment": exp.name,
            "experiment_sha256": sha256_hex(exp.source_text.as_bytes()),
            "data_sha256": exp.data_bytes_sha256,
            "tool_version": env!("CARGO_PKG_VERSION"),
            "grid_sha256": grid_digest(cells),
            "shard": k,
            "count": n,
        },
        "cells": selected.iter().map(|&i| cells[i].id.clone()).collect::<Vec<_>>(),
        "outputs": [{"file": "cells.txt", "sha256": sha256_hex(text.as_bytes())}],
        "run": {
            "started_unix": ctx.started_unix,
            "seconds": ctx.started.elapsed().as_secs_f64(),
            "threads": ctx.threads,
            "shard": ctx.shard,
            "experiment_path": crate::absolute(&exp.source_path),
        },
    });
    let mut m = serde_json::to_vec_pretty(&manifest).unwrap_or_default();
    m.push(b'\n');
    vec![
        ("cells.txt".into(), text.into_bytes()),
        ("manifest.json".into(), m),
    ]
}

fn invalid(path: &Path, msg: impl Into<String>) -> Error {
    Error::invalid(
        Some(Location {
            file: path.to_path_buf(),
            line: None,
            column: None,
        }),
        msg,
    )
}

fn read_json(path: &Path) -> Result<Value> {
    let bytes = std::fs::read(path).map_err(|e| invalid(path, format!("cannot read: {e}")))?;
    serde_json::from_slice(&bytes)
        .map_err(|e| invalid(path, format!("not a readable manifest: {e}")))
}

/// Load the experiment a manifest records and check its inputs are unchanged.
pub fn load_recorded(
    manifest: &Value,
    manifest_path: &Path,
    experiment_sha: &str,
    data_sha: &str,
) -> Result<Experiment> {
    let path = manifest["run"]["experiment_path"]
        .as_str()
        .map(PathBuf::from)
        .ok_or_else(|| {
            invalid(
                manifest_path,
                "the manifest does not record the experiment file's path",
            )
        })?;
    let text = std::fs::read(&path).map_err(|e| {
        invalid(
            &path,
            format!("cannot read the recorded experiment file: {e}"),
        )
    })?;
    if sha256_hex(&text) != experiment_sha {
        return Err(invalid(&path, "the experiment file changed since the run (its SHA-256 differs from the manifest's); refusing"));
    }
    let exp = spec::load(&path)?;
    if exp.data_bytes_sha256 != data_sha {
        return Err(invalid(&exp.data_path, "the data file changed since the run (its SHA-256 differs from the manifest's); refusing"));
    }
    Ok(exp)
}

/// `outturn merge DIR... --out DIR`.
pub fn merge(dirs: &[PathBuf], out: &Path) -> Result<usize> {
    let started = std::time::Instant::now();
    if dirs.is_empty() {
        return Err(Error::invalid(
            None,
            "merge needs at least one shard folder",
        ));
    }
    let mut manifests = Vec::new();
    for d in dirs {
        let mpath = d.join("manifest.json");
        let m = read_json(&mpath)?;
        if !m["shard_of"].is_object() {
            return Err(invalid(
                &mpath,
                "not a shard folder (run with --shard K/N to make one)",
            ));
        }
        manifests.push((d.clone(), mpath, m));
    }
    let first = &manifests[0].2["shard_of"];
    let count = first["count"].as_u64().unwrap_or(0) as usize;
    for (_, mpath, m) in &manifests[1..] {
        let s = &m["shard_of"];
        for key in [
            "experiment_sha256",
            "data_sha256",
            "tool_version",
            "grid_sha256",
            "count",
        ] {
            if s[key] != first[key] {
                let what = match key {
                    "experiment_sha256" => "a different experiment file",
                    "data_sha256" => "different data",
                    "tool_version" => "a different outturn version",
                    "grid_sha256" => "a different grid",
                    _ => "a different shard count",
                };
                return Err(invalid(
                    mpath,
                    format!(
                        "this shard comes from {what} than {}; shards of one run only",
                        manifests[0].1.display()
                    ),
                ));
            }
        }
    }
    let mut seen = vec![None; count + 1];
    for (d, mpath, m) in &manifests {
        let k = m["shard_of"]["shard"].as_u64().unwrap_or(0) as usize;
        if k == 0 || k > count {
            return Err(invalid(
                mpath,
                format!("shard number {k} is outside 1..{count}"),
            ));
        }
        if let Some(prev) = &seen[k] {
            return Err(invalid(
                mpath,
                format!(
                    "shard {k}/{count} is given twice (also {})",
                    Path::new(prev).display()
                ),
            ));
        }
        seen[k] = Some(d.to_string_lossy().to_string());
    }
    let missing: Vec<String> = (1..=count)
        .filter(|&k| seen[k].is_none())
        .map(|k| format!("{k}/{count}"))
        .collect();
    if !missing.is_empty() {
        return Err(Error::invalid(
            None,
            format!("missing shard(s): {}", missing.join(", ")),
        ));
    }
    let exp = load_recorded(
        &manifests[0].2,
        &manifests[0].1,
        first["experiment_sha256"].as_str().unwrap_or(""),
        first["data_sha256"].as_str().unwrap_or(""),
    )?;
    let cells = plan::cells(&exp);
    if grid_digest(&cells) != first["grid_sha256"].as_str().unwrap_or("") {
        return Err(invalid(
            &manifests[0].1,
            "the experiment's grid no longer matches the shards'",
        ));
    }
    let index: std::collections::HashMap<&str, usize> = cells
        .iter()
        .enumerate()
        .map(|(i, c)| (c.id.as_str(), i))
        .collect();
    let mut outputs: Vec<Option<CellOutput>> = vec![None; cells.len()];
    for (d, _, m) in &manifests {
        let path = d.join("cells.txt");
        let text = std::fs::read(&path).map_err(|e| invalid(&path, format!("cannot read: {e}")))?;
        if m["outputs"][0]["sha256"].as_str() != Some(&sha256_hex(&text)) {
            return Err(invalid(
                &path,
                "the shard's rows do not match its manifest's hash (damaged or edited)",
            ));
        }
        let text = String::from_utf8(text).map_err(|_| invalid(&path, "not UTF-8 text"))?;
        for (id, out) in cellio::read_cells(&text).map_err(|e| invalid(&path, e))? {
            let Some(&i) = index.get(id.as_str()) else {
                return Err(invalid(
                    &path,
                    format!("cell '{id}' is not in the experiment's grid"),
                ));
            };
            if outputs[i].is_some() {
                return Err(invalid(
                    &path,
                    format!("cell '{id}' appears in more than one shard"),
                ));
            }
            outputs[i] = Some(out);
        }
    }
    let mut full = Vec::with_capacity(cells.len());
    for (cell, out) in cells.iter().zip(outputs) {
        match out {
            Some(o) => full.push(o),
            None if !is_computed(&exp, cell) => full.push(CellOutput::default()),
            None => {
                return Err(Error::invalid(
                    None,
                    format!("no shard holds cell '{}'", cell.id),
                ))
            }
        }
    }
    let ctx = RunContext {
        started,
        started_unix: crate::now_unix(),
        threads: 1,
        shard: format!("merged {count}"),
    };
    let per = exp.candidates.len() * exp.schemes.len();
    let source =
        |t: usize| -> Result<Vec<CellOutput>> { Ok(full[t * per..(t + 1) * per].to_vec()) };
    let staging = output::stage(out)?;
    pipeline::produce(&exp, &source, staging.dir(), &ctx, 4)?;
    staging.commit_synced()?;
    Ok(cells.len())
}
