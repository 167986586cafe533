//! manifest.json (SPEC §5): what was run, on which inputs, producing which
//! outputs. Everything except the `run` section is deterministic; timing,
//! threads and host live in `run` alone. The manifest is one typed value,
//! written and read by serde: a results folder's and a shard folder's
//! manifests are refused when they hold keys outturn does not write, so a
//! folder that outturn did not write is never taken for one of its own.
//!
//! Keys are declared in alphabetical order: the file has always listed them
//! so, and the bytes must not change.

use crate::digest::sha256_hex;
use crate::spec::Experiment;
use serde::{Deserialize, Serialize};

/// The tool name every manifest carries.
pub(crate) const TOOL: &str = "outturn";

/// A results folder's manifest.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct Manifest {
    /// The look-ahead audit's outcome, when the experiment asks for one.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub audit: Option<AuditRecord>,
    pub data: Vec<InputFile>,
    pub experiment: ExperimentRecord,
    pub grid: GridRecord,
    pub outputs: Vec<OutputFile>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub run: Option<RunRecord>,
    pub seed: u64,
    pub templates: Vec<TemplateRecord>,
    pub tool: ToolRecord,
    /// Under `scoring.units: original`: the units and centre scored.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub units: Option<UnitsRecord>,
}

/// What the forecasts are scored in (docs/results-folder.md#manifestjson):
/// `original` units, the centre of a log-based level, and the candidates
/// whose model sees a transform of its own.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct UnitsRecord {
    pub back_transform: String,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub candidate_transforms: Vec<CandidateTransform>,
    pub transform: String,
    pub units: String,
}

/// A candidate and the transform its model sees.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct CandidateTransform {
    pub candidate: String,
    pub transform: String,
}

impl UnitsRecord {
    fn of(exp: &Experiment) -> Option<UnitsRecord> {
        (exp.units == crate::spec::Units::Original).then(|| UnitsRecord {
            back_transform: exp.back_transform.name().into(),
            candidate_transforms: exp
                .candidates
                .iter()
                .filter_map(|c| {
                    c.transform.map(|t| CandidateTransform {
                        candidate: c.id.clone(),
                        transform: t.name().into(),
                    })
                })
                .collect(),
            transform: exp.transform.name().into(),
            units: exp.units.name().into(),
        })
    }
}

/// The look-ahead audit of a run (docs/results-folder.md#manifestjson).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct AuditRecord {
    pub cells: usize,
    pub checks: usize,
    pub moved: Vec<MovedRecord>,
    pub origins: usize,
    pub path_differences: usize,
    pub unchecked: usize,
}

/// A forecast that moved when data hidden at its origin changed.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct MovedRecord {
    pub candidate: String,
    pub horizon: usize,
    pub origin: String,
    pub scheme: String,
    pub target: String,
    pub what: String,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct InputFile {
    pub file: String,
    pub sha256: String,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct ExperimentRecord {
    pub file: String,
    pub name: String,
    pub sha256: String,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct GridRecord {
    pub benchmark: String,
    pub candidates: Vec<String>,
    pub cells: Vec<CellRecord>,
    pub horizons: Vec<usize>,
    pub schemes: Vec<String>,
    pub targets: Vec<String>,
}

/// A cell's status: `ok`, or `failed` with why; fallbacks when some
/// re-estimation kept the previous estimate.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct CellRecord {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub failure: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fallbacks: Option<usize>,
    pub id: String,
    /// Regressors left out of some estimations (constant in the window).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub left_out: Option<Vec<LeftOutRecord>>,
    pub status: String,
}

/// A regressor left out of `estimations` of a cell's estimations because it
/// was constant in the window (SPEC §7.1); `first` and `last` are the
/// estimation ends (period labels) of the first and the last of them.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct LeftOutRecord {
    pub estimations: usize,
    pub first: String,
    pub last: String,
    pub regressor: String,
}

/// An output file as the manifest records it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct OutputFile {
    pub bytes: usize,
    pub file: String,
    pub sha256: String,
}

impl OutputFile {
    pub fn of(name: &str, bytes: &[u8]) -> OutputFile {
        OutputFile {
            file: name.to_string(),
            sha256: sha256_hex(bytes),
            bytes: bytes.len(),
        }
    }
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct TemplateRecord {
    pub name: String,
    pub sha256: String,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct ToolRecord {
    pub name: String,
    pub profile: String,
    pub version: String,
}

impl ToolRecord {
    pub fn this() -> ToolRecord {
        ToolRecord {
            name: TOOL.into(),
            profile: if cfg!(debug_assertions) {
                "debug"
            } else {
                "release"
            }
            .into(),
            version: env!("CARGO_PKG_VERSION").into(),
        }
    }
}

/// The `run` section: facts of this run only (never compared).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RunRecord {
    pub cell_seconds: Vec<CellSeconds>,
    pub cells_from_cache: usize,
    /// Absolute path of the experiment file, so `verify` and `merge` can find it.
    pub experiment_path: String,
    pub host: String,
    pub seconds: f64,
    pub shard: String,
    pub started_unix: u64,
    pub threads: usize,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct CellSeconds {
    pub id: String,
    pub seconds: f64,
}

/// Facts about a run for the `run` section.
pub(crate) struct RunFacts {
    pub seconds: f64,
    pub threads: usize,
    pub host: String,
    pub started_unix: u64,
    pub shard: String,
    pub experiment_path: String,
}

/// Per-cell facts: id, status, fallbacks (deterministic) and seconds (run only).
pub(crate) struct CellFacts {
    pub id: String,
    pub failure: Option<String>,
    pub fallbacks: usize,
    pub left_out: Vec<LeftOutRecord>,
    pub seconds: f64,
    pub cached: bool,
}

fn file_name(p: &std::path::Path) -> String {
    p.file_name()
        .map(|f| f.to_string_lossy().to_string())
        .unwrap_or_default()
}

impl Manifest {
    /// The manifest of a run of `exp`: its inputs, grid, cells and the
    /// outputs written so far.
    pub fn of(
        exp: &Experiment,
        cells: &[CellFacts],
        templates: &[(String, String)],
        outputs: Vec<OutputFile>,
        run: &RunFacts,
    ) -> Manifest {
        Manifest {
            audit: None,
            units: UnitsRecord::of(exp),
            tool: ToolRecord::this(),
            experiment: ExperimentRecord {
                name: exp.name.clone(),
                file: file_name(&exp.source_path),
                sha256: sha256_hex(exp.source_text.as_bytes()),
            },
            data: vec![InputFile {
                file: file_name(&exp.data_path),
                sha256: exp.data_bytes_sha256.clone(),
            }],
            templates: templates
                .iter()
                .map(|(name, text)| TemplateRecord {
                    name: name.clone(),
                    sha256: sha256_hex(text.as_bytes()),
                })
                .collect(),
            seed: exp.seed,
            grid: GridRecord {
                targets: exp.targets.iter().map(|t| t.name.clone()).collect(),
                candidates: exp.candidates.iter().map(|c| c.id.clone()).collect(),
                schemes: exp.schemes.iter().map(|s| s.id.clone()).collect(),
                horizons: exp.horizons.clone(),
                benchmark: exp.candidates[exp.benchmark].id.clone(),
                cells: cells
                    .iter()
                    .map(|c| CellRecord {
                        id: c.id.clone(),
                        status: if c.failure.is_some() { "failed" } else { "ok" }.into(),
                        fallbacks: (c.fallbacks > 0).then_some(c.fallbacks),
                        left_out: (!c.left_out.is_empty()).then(|| c.left_out.clone()),
                        failure: c.failure.clone(),
                    })
                    .collect(),
            },
            outputs,
            run: Some(RunRecord {
                started_unix: run.started_unix,
                seconds: run.seconds,
                threads: run.threads,
                host: run.host.clone(),
                shard: run.shard.clone(),
                experiment_path: run.experiment_path.clone(),
                cells_from_cache: cells.iter().filter(|c| c.cached).count(),
                cell_seconds: cells
                    .iter()
                    .map(|c| CellSeconds {
                        id: c.id.clone(),
                        seconds: c.seconds,
                    })
                    .collect(),
            }),
        }
    }

    /// The file's bytes: pretty JSON and a final newline.
    pub fn to_bytes(&self) -> Vec<u8> {
        to_bytes(self)
    }

    /// Read a results folder's manifest; the message says what is wrong.
    pub fn from_bytes(bytes: &[u8]) -> Result<Manifest, String> {
        let m: Manifest = serde_json::from_slice(bytes)
            .map_err(|e| format!("not a results manifest written by outturn: {e}"))?;
        if m.tool.name != TOOL {
            return Err(format!("written by '{}', not by outturn", m.tool.name));
        }
        Ok(m)
    }

    /// The manifest as the report sees it: without `run`, and with only the
    /// tables among the outputs (the reports' own entries go).
    pub fn core_value(&self) -> serde_json::Value {
        let mut core = self.clone();
        core.run = None;
        core.outputs
            .retain(|o| !o.file.starts_with("report.") && o.file != "manifest.json");
        serde_json::to_value(&core).unwrap_or(serde_json::Value::Null)
    }

    /// Every table the manifest lists is in `dir` with the bytes it
    /// recorded (the reports aside: they are what gets rebuilt). The
    /// message names the first file missing or changed.
    pub fn check_tables(&self, dir: &std::path::Path) -> Result<(), String> {
        for o in &self.outputs {
            if o.file.starts_with("report.") {
                continue;
            }
            let path = dir.join(&o.file);
            match crate::digest::file_sha256(&path) {
                Ok((sha, bytes)) if sha == o.sha256 && bytes as usize == o.bytes => {}
                Ok(_) => {
                    return Err(format!(
                        "{} is not as outturn wrote it (its SHA-256 differs from the manifest's); the reports are rebuilt only from the tables as written — rerun the experiment, or run verify to see what changed",
                        path.display()
                    ))
                }
                Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
                    return Err(format!("{} is missing (the manifest lists it)", path.display()))
                }
                Err(e) => return Err(format!("cannot read {}: {e}", path.display())),
            }
        }
        Ok(())
    }

    /// Replace or add an output's entry.
    pub fn set_output(&mut self, entry: OutputFile) {
        match self.outputs.iter_mut().find(|o| o.file == entry.file) {
            Some(o) => *o = entry,
            None => self.outputs.push(entry),
        }
    }
}

/// Pretty JSON and a final newline, as every manifest is written.
pub(crate) fn to_bytes<T: Serialize>(value: &T) -> Vec<u8> {
    let mut bytes = serde_json::to_vec_pretty(value).unwrap_or_default();
    bytes.push(b'\n');
    bytes
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample() -> Manifest {
        Manifest {
            audit: None,
            data: vec![InputFile {
                file: "d.csv".into(),
                sha256: "ab".into(),
            }],
            experiment: ExperimentRecord {
                file: "e.yaml".into(),
                name: "e".into(),
                sha256: "cd".into(),
            },
            grid: GridRecord {
                benchmark: "naive".into(),
                candidates: vec!["naive".into()],
                cells: vec![CellRecord {
                    failure: Some("did not converge".into()),
                    fallbacks: Some(2),
                    id: "y/naive/fixed".into(),
                    left_out: None,
                    status: "failed".into(),
                }],
                horizons: vec![1],
                schemes: vec!["fixed".into()],
                targets: vec!["y".into()],
            },
            outputs: vec![OutputFile::of("scores.csv", b"x")],
            run: None,
            seed: 3,
            templates: vec![],
            tool: ToolRecord::this(),
            units: None,
        }
    }

    #[test]
    fn keys_are_written_in_alphabetical_order_and_read_back() {
        // Property by construction: the typed value writes the keys that a
        // JSON object with sorted keys writes, and reads its own bytes back.
        let m = sample();
        let bytes = m.to_bytes();
        let value: serde_json::Value = serde_json::from_slice(&bytes).unwrap();
        let sorted = to_bytes(&value); // serde_json's map sorts keys
        assert_eq!(bytes, sorted);
        assert_eq!(Manifest::from_bytes(&bytes).unwrap(), m);
    }

    #[test]
    fn foreign_manifests_are_refused() {
        assert!(Manifest::from_bytes(b"{}").is_err());
        let mut v = serde_json::to_value(sample()).unwrap();
        v["extra"] = serde_json::json!(1);
        assert!(Manifest::from_bytes(&to_bytes(&v)).is_err());
        let mut v = serde_json::to_value(sample()).unwrap();
        v["tool"]["name"] = serde_json::json!("other");
        assert!(Manifest::from_bytes(&to_bytes(&v))
            .unwrap_err()
            .contains("not by outturn"));
    }
}
