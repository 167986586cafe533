//! A shard folder (SPEC §6): the rows of the cells a shard ran (lossless,
//! `cells.txt`) and a typed manifest naming the experiment, its inputs, the
//! grid and the shard. Keys are declared in alphabetical order, as the file
//! has always listed them.

use super::manifest::to_bytes;
use crate::backtest::{cellio, CellOutput};
use crate::digest::sha256_hex;
use crate::plan::Cell;
use crate::spec::Experiment;
use serde::{Deserialize, Serialize};

/// The most shards a run may be split into (far more than cells any
/// experiment has; a manifest claiming more was edited).
pub const MAX_SHARDS: usize = 100_000;

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct ShardManifest {
    pub cells: Vec<String>,
    pub outputs: Vec<ShardOutput>,
    pub run: ShardRun,
    pub shard_of: ShardOf,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct ShardOutput {
    pub file: String,
    pub sha256: String,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct ShardRun {
    pub experiment_path: String,
    pub seconds: f64,
    pub shard: String,
    pub started_unix: u64,
    pub threads: usize,
}

/// Which run a shard belongs to: all shards of one run agree on every field but `shard`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct ShardOf {
    pub count: usize,
    pub data_sha256: String,
    pub experiment: String,
    pub experiment_sha256: String,
    pub grid_sha256: String,
    pub shard: usize,
    pub tool_version: String,
}

impl ShardManifest {
    /// Read a shard folder's manifest; the message says what is wrong.
    pub fn from_bytes(bytes: &[u8]) -> Result<ShardManifest, String> {
        let m: ShardManifest = serde_json::from_slice(bytes)
            .map_err(|e| format!("not a shard manifest written by outturn run --shard: {e}"))?;
        let s = &m.shard_of;
        if s.count == 0 || s.count > MAX_SHARDS {
            return Err(format!(
                "the shard count {} is outside 1..{MAX_SHARDS} (edited?)",
                s.count
            ));
        }
        if s.shard == 0 || s.shard > s.count {
            return Err(format!(
                "shard number {} is outside 1..{}",
                s.shard, s.count
            ));
        }
        if m.outputs.len() != 1 || m.outputs[0].file != "cells.txt" {
            return Err("its outputs must be the one file cells.txt".into());
        }
        Ok(m)
    }

    /// The SHA-256 its manifest records for cells.txt.
    pub fn cells_sha256(&self) -> &str {
        &self.outputs[0].sha256
    }
}

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
    run: ShardRun,
) -> Vec<(String, Vec<u8>)> {
    let mut text = String::new();
    for (&i, out) in selected.iter().zip(outputs) {
        cellio::write_cell(&cells[i].id, out, &mut text);
    }
    let manifest = ShardManifest {
        shard_of: ShardOf {
            experiment: exp.name.clone(),
            experiment_sha256: sha256_hex(exp.source_text.as_bytes()),
            data_sha256: exp.data_bytes_sha256.clone(),
            tool_version: env!("CARGO_PKG_VERSION").into(),
            grid_sha256: grid_digest(cells),
            shard: k,
            count: n,
        },
        cells: selected.iter().map(|&i| cells[i].id.clone()).collect(),
        outputs: vec![ShardOutput {
            file: "cells.txt".into(),
            sha256: sha256_hex(text.as_bytes()),
        }],
        run,
    };
    vec![
        ("cells.txt".into(), text.into_bytes()),
        ("manifest.json".into(), to_bytes(&manifest)),
    ]
}
