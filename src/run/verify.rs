//! `outturn verify DIR`: rerun the experiment a results folder records and
//! compare every output byte for byte — all but the manifest's `run`
//! section (SPEC §1, §5). Refuses when an input's hash changed.

use super::merge::load_recorded;
use super::{RunContext, Silent};
use crate::error::{Error, Location, Result};
use crate::plan;
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

pub fn verify(dir: &Path, jobs: Option<usize>) -> Result<Verdict> {
    let started = std::time::Instant::now();
    let mpath = dir.join("manifest.json");
    let bytes = std::fs::read(&mpath).map_err(|e| {
        Error::invalid(
            Some(Location {
                file: mpath.clone(),
                line: None,
                column: None,
            }),
            format!("cannot read: {e}"),
        )
    })?;
    let manifest: Value = serde_json::from_slice(&bytes).map_err(|e| {
        Error::invalid(
            Some(Location {
                file: mpath.clone(),
                line: None,
                column: None,
            }),
            format!("not a results manifest: {e}"),
        )
    })?;
    let exp_sha = manifest["experiment"]["sha256"]
        .as_str()
        .unwrap_or("")
        .to_string();
    let data_sha = manifest["data"][0]["sha256"]
        .as_str()
        .unwrap_or("")
        .to_string();
    let exp = load_recorded(&manifest, &mpath, &exp_sha, &data_sha)?;
    let cells = plan::cells(&exp);
    let (pool, threads) = super::thread_pool(jobs)?;
    let ctx = RunContext {
        started,
        started_unix: super::now_unix(),
        threads,
        shard: "verify".into(),
        durable: false,
        progress: &Silent,
    };
    // Rerun into a scratch folder that is never swapped in.
    let scratch = std::env::temp_dir().join(format!(
        "outturn-verify-{}-{}",
        std::process::id(),
        super::now_unix()
    ));
    std::fs::create_dir_all(&scratch)
        .map_err(|e| Error::io(format!("cannot create {}", scratch.display()), e))?;
    struct Cleanup(std::path::PathBuf);
    impl Drop for Cleanup {
        fn drop(&mut self) {
            let _ = std::fs::remove_dir_all(&self.0);
        }
    }
    let _cleanup = Cleanup(scratch.clone());
    super::produce_run(&exp, &cells, None, &scratch, &ctx, &pool)?;
    let mut files: Vec<String> = std::fs::read_dir(&scratch)
        .map_err(|e| Error::io("cannot list the rerun", e))?
        .flatten()
        .map(|e| e.file_name().to_string_lossy().to_string())
        .collect();
    files.sort();
    for name in &files {
        let ours = std::fs::read(scratch.join(name))
            .map_err(|e| Error::io(format!("cannot read the rerun's {name}"), e))?;
        let path = dir.join(name);
        let Ok(theirs) = std::fs::read(&path) else {
            return Ok(Verdict {
                difference: Some(format!("{name} is missing from the folder")),
                files: files.len(),
            });
        };
        let diff = if name == "manifest.json" {
            let a = serde_json::from_slice::<Value>(&ours).map(without_run).ok();
            let b = serde_json::from_slice::<Value>(&theirs)
                .map(without_run)
                .ok();
            if a.is_some() && a == b {
                None
            } else {
                let pa = a
                    .map(|v| serde_json::to_vec_pretty(&v).unwrap_or_default())
                    .unwrap_or_default();
                let pb = b
                    .map(|v| serde_json::to_vec_pretty(&v).unwrap_or_default())
                    .unwrap_or_default();
                first_difference("manifest.json (outside its run section)", &pa, &pb)
                    .or_else(|| Some("manifest.json differs".into()))
            }
        } else {
            first_difference(name, &ours, &theirs)
        };
        if diff.is_some() {
            return Ok(Verdict {
                difference: diff,
                files: files.len(),
            });
        }
    }
    Ok(Verdict {
        difference: None,
        files: files.len(),
    })
}
