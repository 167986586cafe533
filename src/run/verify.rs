//! `outturn verify DIR`: rerun the experiment a results folder records and
//! compare every output byte for byte — all but the manifest's `run`
//! section (SPEC §1, §5). Refuses when an input's hash changed. Works on a
//! folder copied to another machine: the experiment file is the folder's
//! own copy, the data file is looked for (or given with `--data`), and the
//! templates of a `render --templates` are given with `--templates`.

use super::merge::load_recorded;
use super::{RunContext, Silent};
use crate::digest::sha256_hex;
use crate::error::{Error, Location, Result};
use crate::plan;
use crate::report::render::{default_templates, load_templates, used_templates, Templates};
use crate::results::manifest::{Digest, OutsideRun};
use crate::spec::{Experiment, ReportFormat};
use serde_json::Value;
use std::path::{Path, PathBuf};

pub struct Verdict {
    /// Every difference in words: files changed (with their first differing
    /// line), missing from the folder, or added to it. Empty when all match.
    pub differences: Vec<String>,
    pub files: usize,
}

/// The first line where `ours` and `theirs` differ, in words (None when
/// they are the same bytes). Read line by line, so that a table of
/// gigabytes is compared in the memory of its longest line.
fn first_difference(
    name: &str,
    mut ours: impl std::io::BufRead,
    mut theirs: impl std::io::BufRead,
) -> std::io::Result<Option<String>> {
    let (mut a, mut b) = (Vec::new(), Vec::new());
    for line in 1.. {
        a.clear();
        b.clear();
        let (na, nb) = (
            ours.read_until(b'\n', &mut a)?,
            theirs.read_until(b'\n', &mut b)?,
        );
        if a != b {
            let show = |l: &[u8], n: usize| {
                if n == 0 {
                    return "(missing)".to_string();
                }
                let l = l.strip_suffix(b"\n").unwrap_or(l);
                String::from_utf8_lossy(l).chars().take(160).collect()
            };
            return Ok(Some(format!(
                "{name} differs first at line {line}:\n  recorded: {}\n  rerun:    {}",
                show(&b, nb),
                show(&a, na)
            )));
        }
        if na == 0 {
            break;
        }
    }
    Ok(None)
}

/// [`first_difference`] of two byte strings.
/// Where `verify` looks for what a results folder was made from.
pub struct Inputs<'a> {
    /// A folder holding the data file (at the experiment's relative path, or
    /// by its file name), for a results folder copied to another machine.
    pub data: Option<&'a Path>,
    /// The templates the reports were rendered with, when they are not the
    /// built-in ones (after `render --templates`).
    pub templates: Option<&'a Path>,
}

/// The results folder's manifest.
fn read_manifest(dir: &Path) -> Result<Digest> {
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
    let open = || std::fs::File::open(&mpath).map_err(|e| at(format!("cannot read: {e}")));
    // Read as it streams: its cells are counted, not held.
    Digest::from_reader(open()?).map_err(|e| {
        let shard = open()
            .ok()
            .and_then(|f| serde_json::from_reader::<_, Value>(std::io::BufReader::new(f)).ok())
            .is_some_and(|v| v.get("shard_of").is_some());
        if shard {
            at("this is a shard folder; merge the shards (outturn merge) and verify the merged folder".into())
        } else {
            at(e)
        }
    })
}

fn invalid(message: String) -> Error {
    Error::invalid(None, format!("{message} — docs/commands.md (verify)"))
}

/// The experiment a results folder records, with its inputs checked
/// unchanged. The experiment is the file at the recorded path when it is
/// still there and unchanged, else the copy the folder keeps
/// (`experiment.yaml`); the data file is looked for in `--data`, beside the
/// recorded experiment file, then in and beside the results folder. Every
/// place looked is named when none holds the recorded data.
fn recorded_experiment(dir: &Path, manifest: &Digest, data: Option<&Path>) -> Result<Experiment> {
    let recorded = manifest
        .run
        .as_ref()
        .map(|r| PathBuf::from(&r.experiment_path));
    let expected = &manifest.experiment.sha256;
    let data_sha = manifest
        .data
        .first()
        .map(|d| d.sha256.as_str())
        .unwrap_or("");
    // The recorded file, where it still is and unchanged, and its data in place.
    if let (None, Some(path)) = (data, &recorded) {
        if std::fs::read(path).is_ok_and(|t| sha256_hex(&t) == *expected) {
            if let Ok(exp) = load_recorded(&path.to_string_lossy(), expected, data_sha) {
                return Ok(exp);
            }
        }
    }
    // The folder's own copy of the experiment file.
    let copy = dir.join("experiment.yaml");
    let text = std::fs::read(&copy).map_err(|e| {
        invalid(format!(
            "{} cannot be read ({e}): a results folder keeps the experiment file it ran",
            copy.display()
        ))
    })?;
    if sha256_hex(&text) != *expected {
        return Err(invalid(format!(
            "{} is not the experiment file the run recorded (its SHA-256 differs from the manifest's)",
            copy.display()
        )));
    }
    let text = String::from_utf8(text)
        .map_err(|_| invalid(format!("{}: not UTF-8 text", copy.display())))?;
    let declared = crate::spec::declaration(&copy, &text)?;
    let original = recorded.unwrap_or_else(|| dir.join(&manifest.experiment.file));
    let mut places: Vec<PathBuf> = Vec::new();
    if let Some(d) = data {
        places.push(d.to_path_buf());
    }
    if let Some(parent) = original.parent() {
        places.push(parent.to_path_buf());
    }
    places.push(dir.to_path_buf());
    if let Some(parent) = dir.parent() {
        places.push(parent.to_path_buf());
    }
    let file = &declared.data_file;
    let name = Path::new(file)
        .file_name()
        .map(PathBuf::from)
        .unwrap_or_default();
    let mut looked = Vec::new();
    for place in &places {
        for candidate in [place.join(file), place.join(&name)] {
            if looked.contains(&candidate) {
                continue;
            }
            looked.push(candidate.clone());
            let Ok(bytes) = std::fs::read(&candidate) else {
                continue;
            };
            if sha256_hex(&bytes) == data_sha {
                return crate::spec::load_text(&original, &text, &candidate);
            }
        }
    }
    Err(invalid(format!(
        "the data file {} the run used (SHA-256 {}) is not in any place looked: {}; give the folder that holds it with --data DIR",
        file,
        &data_sha[..data_sha.len().min(12)],
        looked.iter().map(|p| p.display().to_string()).collect::<Vec<_>>().join(", ")
    )))
}

/// The templates to rerun the reports with: the built-in ones, or the
/// folder given with `--templates`; either must be what the manifest recorded.
fn recorded_templates(manifest: &Digest, dir: Option<&Path>) -> Result<Templates> {
    let templates = match dir {
        Some(d) => load_templates(d)?,
        None => default_templates(),
    };
    let used = used_templates(&templates, &[ReportFormat::Markdown, ReportFormat::Html]);
    for recorded in &manifest.templates {
        let ours = used.iter().find(|(name, _)| *name == recorded.name);
        if ours.is_some_and(|(_, text)| sha256_hex(text.as_bytes()) == recorded.sha256) {
            continue;
        }
        return Err(invalid(match dir {
            None => format!(
                "the reports were rendered with a {} that is not this build's built-in one (SHA-256 {} recorded): a template of your own (give its folder with --templates DIR) or the built-in template of another outturn build (verify with that build)",
                recorded.name,
                &recorded.sha256[..12]
            ),
            Some(d) => format!(
                "{} in {} is not the template the reports were rendered with (SHA-256 {} recorded)",
                recorded.name,
                d.display(),
                &recorded.sha256[..12]
            ),
        }));
    }
    Ok(templates)
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
fn rerun(exp: &Experiment, jobs: Option<usize>, templates: &Templates) -> Result<Scratch> {
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
        templates,
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

/// The first difference between a rerun's file and the folder's, in words:
/// the tables line by line as they are read; the manifest as JSON without
/// its `run` section.
fn difference(name: &str, ours: &Path, theirs: &Path) -> Result<Option<String>> {
    let open = |p: &Path, whose: &str| {
        std::fs::File::open(p)
            .map(std::io::BufReader::new)
            .map_err(|e| Error::io(format!("cannot read {whose} {name}"), e))
    };
    if name != "manifest.json" {
        return first_difference(
            name,
            open(ours, "the rerun's")?,
            open(theirs, "the folder's")?,
        )
        .map_err(|e| Error::io(format!("cannot compare {name}"), e));
    }
    // Line by line outside the run section, as both stream.
    first_difference(
        "manifest.json (outside its run section)",
        OutsideRun::new(open(ours, "the rerun's")?),
        OutsideRun::new(open(theirs, "the folder's")?),
    )
    .map_err(|e| Error::io(format!("cannot compare {name}"), e))
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

pub fn verify(dir: &Path, jobs: Option<usize>, inputs: &Inputs) -> Result<Verdict> {
    let manifest = read_manifest(dir)?;
    let templates = recorded_templates(&manifest, inputs.templates)?;
    let exp = recorded_experiment(dir, &manifest, inputs.data)?;
    let scratch = rerun(&exp, jobs, &templates)?;
    let files = listing(&scratch.0)?;
    let present = listing(dir)?;
    let mut differences = Vec::new();
    for name in &files {
        if present.contains(name) {
            differences.extend(difference(name, &scratch.0.join(name), &dir.join(name))?);
        } else {
            differences.push(format!("{name} is missing from the folder"));
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

#[cfg(test)]
mod tests {
    fn diff(name: &str, ours: &[u8], theirs: &[u8]) -> Option<String> {
        super::first_difference(name, ours, theirs).unwrap()
    }

    #[test]
    fn the_first_differing_line_is_named() {
        assert_eq!(diff("t.csv", b"a\nb\nc\n", b"a\nb\nc\n"), None);
        let said = diff("t.csv", b"a\nx\nc\n", b"a\nb\nc\n").unwrap();
        assert!(said.starts_with("t.csv differs first at line 2:"), "{said}");
        assert!(
            said.contains("recorded: b\n") && said.ends_with("rerun:    x"),
            "{said}"
        );
        // A rerun with a line fewer: the recorded line has no partner.
        let said = diff("t.csv", b"a\n", b"a\nb\n").unwrap();
        assert!(
            said.contains("line 2") && said.ends_with("rerun:    (missing)"),
            "{said}"
        );
        // Only the last newline differs.
        assert!(diff("t.csv", b"a\nb", b"a\nb\n")
            .unwrap()
            .contains("line 2"));
    }
}
