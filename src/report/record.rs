//! The run record: the tool, the seed, the hashes of the inputs, the
//! templates and the tables, the cells that failed or fell back, and the
//! experiment file as stored. Everything comes from the manifest's
//! deterministic part (no timing) and the stored experiment file.

use super::view::Folder;
use serde_json::{json, Value};

/// The tables' (file, SHA-256, bytes) as the manifest's `outputs` list
/// them, by file name; the reports and the manifest itself left out.
pub fn table_hashes(manifest: &Value) -> Vec<(String, String, usize)> {
    let mut hashes: Vec<(String, String, usize)> = manifest["outputs"]
        .as_array()
        .into_iter()
        .flatten()
        .filter_map(|o| {
            let name = o["file"].as_str()?;
            (!name.starts_with("report.") && name != "manifest.json").then(|| {
                (
                    name.to_string(),
                    o["sha256"].as_str().unwrap_or("").to_string(),
                    o["bytes"].as_u64().unwrap_or(0) as usize,
                )
            })
        })
        .collect();
    hashes.sort();
    hashes
}

/// How many cells the manifest's grid has (`cell_count` where the cells
/// listed are only those of note).
pub fn cell_count(manifest: &Value) -> usize {
    manifest
        .pointer("/grid/cell_count")
        .and_then(Value::as_u64)
        .map_or_else(|| cells(manifest).len(), |n| n as usize)
}

/// The manifest's cells (of note, when `cell_count` counts them all).
pub fn cells(manifest: &Value) -> Vec<&Value> {
    manifest
        .pointer("/grid/cells")
        .and_then(Value::as_array)
        .map(|a| a.iter().collect())
        .unwrap_or_default()
}

/// The cells that failed: id and failure.
pub fn failures(cells: &[&Value]) -> Vec<Value> {
    cells
        .iter()
        .filter(|c| c.get("status").and_then(Value::as_str) == Some("failed"))
        .map(|c| json!({"id": c.get("id"), "failure": c.get("failure").and_then(Value::as_str).unwrap_or("")}))
        .collect()
}

/// The `record` value of the report data.
pub fn record(f: &Folder, manifest: &Value) -> Value {
    let cells = cells(manifest);
    let fallbacks: Vec<Value> = cells
        .iter()
        .filter(|c| c.get("fallbacks").is_some())
        .map(|c| json!({"id": c.get("id"), "fallbacks": c.get("fallbacks")}))
        .collect();
    let text = |pointer: &str, default: &'static str| {
        manifest
            .pointer(pointer)
            .and_then(Value::as_str)
            .unwrap_or(default)
            .to_string()
    };
    json!({
        "tool": text("/tool/name", "outturn"),
        "version": text("/tool/version", ""),
        "profile": text("/tool/profile", ""),
        "seed": manifest.get("seed"),
        "experiment": manifest.get("experiment"),
        "data": manifest.get("data"),
        "templates": manifest.get("templates"),
        "tables": f.record.table_hashes.iter().map(|(n, h, b)| json!({"file": n, "sha256": h, "bytes": b})).collect::<Vec<_>>(),
        "cells": cell_count(manifest),
        "failures": failures(&cells),
        "fallbacks": fallbacks,
        // The look-ahead audit's outcome, when the run audited itself.
        "audit": manifest.get("audit"),
        "experiment_text": f.record.experiment_text,
        // A code fence longer than any run of backticks in the text, so the
        // verbatim file cannot close it early (Markdown shows it as code).
        "fence": "`".repeat(longest_backtick_run(&f.record.experiment_text).max(2) + 1),
    })
}

/// The longest run of backticks in a text.
fn longest_backtick_run(text: &str) -> usize {
    let (mut longest, mut run) = (0, 0);
    for c in text.chars() {
        run = if c == '`' { run + 1 } else { 0 };
        longest = longest.max(run);
    }
    longest
}
