//! A shard folder (SPEC §6): the rows of the cells a shard ran (lossless,
//! `cells.txt`) and a manifest naming the experiment, its inputs, the grid
//! and the shard.

use crate::backtest::{cellio, CellOutput};
use crate::digest::sha256_hex;
use crate::plan::Cell;
use crate::run::RunContext;
use crate::spec::Experiment;
use serde_json::json;

/// A digest of the grid: every cell id in plan order.
pub(crate) fn grid_digest(cells: &[Cell]) -> String {
    let ids: Vec<&str> = cells.iter().map(|c| c.id.as_str()).collect();
    sha256_hex(ids.join("\n").as_bytes())
}

pub(crate) fn shard_files(
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
            "experiment_path": crate::run::absolute(&exp.source_path),
        },
    });
    let mut m = serde_json::to_vec_pretty(&manifest).unwrap_or_default();
    m.push(b'\n');
    vec![
        ("cells.txt".into(), text.into_bytes()),
        ("manifest.json".into(), m),
    ]
}
