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
    /// None when everything matched; else the first difference in words.
    pub difference: Option<String>,
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

pub fn verify(dir: &Path, jobs: Option<usize>) -> Result<Verdict> {
    let exp = recorded_experiment(dir)?;
    let scratch = rerun(&exp, jobs)?;
    let mut files: Vec<String> = std::fs::read_dir(&scratch.0)
        .map_err(|e| Error::io("cannot list the rerun", e))?
        .flatten()
        .map(|e| e.file_name().to_string_lossy().to_string())
        .collect();
    files.sort();
    for name in &files {
        let ours = std::fs::read(scratch.0.join(name))
            .map_err(|e| Error::io(format!("cannot read the rerun's {name}"), e))?;
        let Ok(theirs) = std::fs::read(dir.join(name)) else {
            return Ok(Verdict {
                difference: Some(format!("{name} is missing from the folder")),
                files: files.len(),
            });
        };
        if let Some(d) = difference(name, &ours, &theirs) {
            return Ok(Verdict {
                difference: Some(d),
                files: files.len(),
            });
        }
    }
    Ok(Verdict {
        difference: None,
        files: files.len(),
    })
}
