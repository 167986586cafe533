//! manifest.json (SPEC §5): what was run, on which inputs, producing which
//! outputs. Everything except the `run` section is deterministic; timing,
//! threads and host live in `run` alone.

use crate::digest::sha256_hex;
use crate::spec::Experiment;
use serde_json::{json, Value};

/// An output file as the manifest records it.
#[derive(Debug, Clone, PartialEq)]
pub struct OutputFile {
    pub name: String,
    pub sha256: String,
    pub bytes: usize,
}

impl OutputFile {
    pub fn of(name: &str, bytes: &[u8]) -> OutputFile {
        OutputFile {
            name: name.to_string(),
            sha256: sha256_hex(bytes),
            bytes: bytes.len(),
        }
    }
}

pub struct RunFacts {
    pub seconds: f64,
    pub threads: usize,
    pub host: String,
    pub started_unix: u64,
    pub shard: String,
    /// Absolute path of the experiment file, so `verify` and `merge` can find it.
    pub experiment_path: String,
}

/// Per-cell facts: id, status, fallbacks (deterministic) and seconds (run only).
pub struct CellFacts {
    pub id: String,
    pub failure: Option<String>,
    pub fallbacks: usize,
    pub seconds: f64,
    pub cached: bool,
}

pub fn manifest(
    exp: &Experiment,
    cells: &[CellFacts],
    templates: &[(String, String)],
    outputs: &[OutputFile],
    run: &RunFacts,
) -> Vec<u8> {
    to_bytes(&manifest_value(exp, cells, templates, outputs, run))
}

/// A manifest value as the file holds it.
pub fn to_bytes(value: &Value) -> Vec<u8> {
    let mut bytes = serde_json::to_vec_pretty(value).unwrap_or_default();
    bytes.push(b'\n');
    bytes
}

/// The manifest's `outputs` list.
pub fn outputs_value(outputs: &[OutputFile]) -> Value {
    outputs
        .iter()
        .map(|o| json!({"file": o.name, "sha256": o.sha256, "bytes": o.bytes}))
        .collect()
}

/// The manifest as a JSON value (what [`manifest`] writes).
pub fn manifest_value(
    exp: &Experiment,
    cells: &[CellFacts],
    templates: &[(String, String)],
    outputs: &[OutputFile],
    run: &RunFacts,
) -> Value {
    let file_name = |p: &std::path::Path| {
        p.file_name()
            .map(|f| f.to_string_lossy().to_string())
            .unwrap_or_default()
    };
    json!({
        "tool": {
            "name": "outturn",
            "version": env!("CARGO_PKG_VERSION"),
            "profile": if cfg!(debug_assertions) { "debug" } else { "release" },
        },
        "experiment": {
            "name": exp.name,
            "file": file_name(&exp.source_path),
            "sha256": sha256_hex(exp.source_text.as_bytes()),
        },
        "data": [{
            "file": file_name(&exp.data_path),
            "sha256": exp.data_bytes_sha256,
        }],
        "templates": templates.iter().map(|(name, text)| json!({"name": name, "sha256": sha256_hex(text.as_bytes())})).collect::<Vec<_>>(),
        "seed": exp.seed,
        "grid": {
            "targets": exp.targets.iter().map(|t| t.name.clone()).collect::<Vec<_>>(),
            "candidates": exp.candidates.iter().map(|c| c.id.clone()).collect::<Vec<_>>(),
            "schemes": exp.schemes.iter().map(|s| s.id.clone()).collect::<Vec<_>>(),
            "horizons": exp.horizons,
            "benchmark": exp.candidates[exp.benchmark].id,
            "cells": cells.iter().map(|c| {
                let mut v = json!({"id": c.id, "status": if c.failure.is_some() { "failed" } else { "ok" }});
                if c.fallbacks > 0 {
                    v["fallbacks"] = json!(c.fallbacks);
                }
                if let Some(f) = &c.failure {
                    v["failure"] = json!(f);
                }
                v
            }).collect::<Vec<_>>(),
        },
        "outputs": outputs_value(outputs),
        "run": {
            "started_unix": run.started_unix,
            "seconds": run.seconds,
            "threads": run.threads,
            "host": run.host,
            "shard": run.shard,
            "experiment_path": run.experiment_path,
            "cells_from_cache": cells.iter().filter(|c| c.cached).count(),
            "cell_seconds": cells.iter().map(|c| json!({"id": c.id, "seconds": c.seconds})).collect::<Vec<_>>(),
        },
    })
}
