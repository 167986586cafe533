//! `outturn verify DIR`: rerun the experiment a results folder records and
//! compare every output byte for byte — all but the manifest's `run`
//! section (SPEC §1, §5). Refuses when an input's hash changed.

use super::merge::load_recorded;
use super::{RunContext, Silent};
use crate::error::{Error, Location, Result};
use crate::plan;
use crate::results::manifest::Manifest;
use crate::spec::Experiment;
use serde_json::Value;
use std::path::Path;

pub struct Verdict {
    /// Every difference in words: files changed (with their first differing
    /// line), missing from the folder, or added to it. Empty when all match.
    pub differences: Vec<String>,
    pub files: usize,
}

fn first_difference(name: &str, ours: &[u8], theirs: &[u8]) -> Option<String> {
    if ours == theirs {
        return None;
    }
    let a: Vec<&[u8]> = ours.split(|b| *b == b'\n').collect();
    let b: Vec<&[u8]> = theirs.split(|b| *b == b'\n').collect();
    for i in 0..a.len().max(b.len()) {
        if a.get(i) != b.get(i) {
            let show = |l: Option<&&[u8]>| {
                l.map(|l| {
                    String::from_utf8_lossy(l)
                        .chars()
                        .take(160)
                        .collect::<String>()
                })
                .unwrap_or_else(|| "(missing)".into())
            };
            return Some(format!(
                "{name} differs first at line {}:\n  recorded: {}\n  rerun:    {}",
                i + 1,
                show(b.get(i)),
                show(a.get(i))
            ));
        }
    }
    Some(format!("{name} differs"))
}

fn without_run(mut v: Value) -> Value {
    if let Some(map) = v.as_object_mut() {
        map.remove("run");
    }
    v
}

/// The experiment a results folder records, with its inputs checked unchanged.
fn recorded_experiment(dir: &Path) -> Result<Experiment> {
    let mpath = dir.join("manifest.json");
    let at = |message: String| {
        Error::invalid(
            Some(Location {
                file: mpath.clone(),
                line: None,
                column: None,
            }),
            message,
        )
    };
    let bytes = std::fs::read(&mpath).map_err(|e| at(format!("cannot read: {e}")))?;
    if serde_json::from_slice::<Value>(&bytes).is_ok_and(|v| v.get("shard_of").is_some()) {
        return Err(at(
            "this is a shard folder; merge the shards (outturn merge) and verify the merged folder"
                .into(),
        ));
    }
    let manifest = Manifest::from_bytes(&bytes).map_err(at)?;
    let recorded = manifest
        .run
        .as_ref()
        .ok_or_else(|| at("the manifest does not record the experiment file's path".into()))?;
    let data_sha = manifest
        .data
        .first()
        .map(|d| d.sha256.as_str())
        .unwrap_or("");
    load_recorded(
        &recorded.experiment_path,
        &manifest.experiment.sha256,
        data_sha,
    )
}

/// A scratch folder for the rerun, removed when dropped (it is never swapped in).
struct Scratch(std::path::PathBuf);

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
        crate::results::folder::unregister_scratch(&self.0);
    }
}

/// Rerun `exp` into a scratch folder.
fn rerun(exp: &Experiment, jobs: Option<usize>) -> Result<Scratch> {
    let started = std::time::Instant::now();
    let cells = plan::cells(exp);
    let (pool, threads) = super::thread_pool(jobs)?;
    let ctx = RunContext {
        started,
        started_unix: super::now_unix(),
        threads,
        shard: "verify".into(),
        durable: false,
        progress: &Silent,
    };
    let scratch = Scratch(std::env::temp_dir().join(format!(
        "outturn-verify-{}-{}",
        std::process::id(),
        super::now_unix()
    )));
    // An interrupt removes it too.
    crate::results::folder::register_scratch(&scratch.0);
    std::fs::create_dir_all(&scratch.0)
        .map_err(|e| Error::io(format!("cannot create {}", scratch.0.display()), e))?;
    super::produce_run(exp, &cells, None, &scratch.0, &ctx, &pool)?;
    Ok(scratch)
}

/// The first difference between a rerun's file and the folder's, in words.
fn difference(name: &str, ours: &[u8], theirs: &[u8]) -> Option<String> {
    if name != "manifest.json" {
        return first_difference(name, ours, theirs);
    }
    let a = serde_json::from_slice::<Value>(ours).map(without_run).ok();
    let b = serde_json::from_slice::<Value>(theirs)
        .map(without_run)
        .ok();
    if a.is_some() && a == b {
        return None;
    }
    let pretty = |v: Option<Value>| {
        v.map(|v| serde_json::to_vec_pretty(&v).unwrap_or_default())
            .unwrap_or_default()
    };
    first_difference(
        "manifest.json (outside its run section)",
        &pretty(a),
        &pretty(b),
    )
    .or_else(|| Some("manifest.json differs".into()))
}

/// The names of the files in a folder, sorted.
fn listing(dir: &Path) -> Result<Vec<String>> {
    let mut files: Vec<String> = std::fs::read_dir(dir)
        .map_err(|e| Error::io(format!("cannot list {}", dir.display()), e))?
        .flatten()
        .map(|e| e.file_name().to_string_lossy().to_string())
        .collect();
    files.sort();
    Ok(files)
}

pub fn verify(dir: &Path, jobs: Option<usize>) -> Result<Verdict> {
    let exp = recorded_experiment(dir)?;
    let scratch = rerun(&exp, jobs)?;
    let files = listing(&scratch.0)?;
    let present = listing(dir)?;
    let mut differences = Vec::new();
    for name in &files {
        let ours = std::fs::read(scratch.0.join(name))
            .map_err(|e| Error::io(format!("cannot read the rerun's {name}"), e))?;
        match std::fs::read(dir.join(name)) {
            Ok(theirs) => differences.extend(difference(name, &ours, &theirs)),
            Err(_) => differences.push(format!("{name} is missing from the folder")),
        }
    }
    for name in present.iter().filter(|n| !files.contains(n)) {
        differences.push(format!(
            "{name} was added to the folder (a rerun does not write it)"
        ));
    }
    Ok(Verdict {
        differences,
        files: files.len(),
    })
}
