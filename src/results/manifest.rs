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

pub(crate) use super::cell_log::{CellDigest, CellLog, CellSummary, Counted, Streamed};

/// A manifest read for what a reader needs: its cells counted and the
/// cells of note kept, their seconds counted.
pub(crate) type Digest = Manifest<CellDigest, Counted>;

/// The tool name every manifest carries.
pub(crate) const TOOL: &str = "outturn";

/// A results folder's manifest.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
///
/// Its cells (`C`) and their seconds (`S`) are lists as read in full, a
/// [`CellDigest`] and [`Counted`] when read for the count and the cells of
/// note alone, or [`Streamed`] when written from a run's cell log: the
/// lists grow with the grid, so neither a run nor a reader holds them.
pub(crate) struct Manifest<C = Vec<CellRecord>, S = Vec<CellSeconds>> {
    /// The look-ahead audit's outcome, when the experiment asks for one.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub audit: Option<AuditRecord>,
    pub data: Vec<InputFile>,
    pub experiment: ExperimentRecord,
    pub grid: GridRecord<C>,
    pub outputs: Vec<OutputFile>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub run: Option<RunRecord<S>>,
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
pub(crate) struct GridRecord<C = Vec<CellRecord>> {
    pub benchmark: String,
    pub candidates: Vec<String>,
    pub cells: C,
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
pub(crate) struct RunRecord<S = Vec<CellSeconds>> {
    pub cell_seconds: S,
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

impl CellFacts {
    /// The cell as the manifest's grid lists it.
    pub fn record(&self) -> CellRecord {
        CellRecord {
            id: self.id.clone(),
            status: if self.failure.is_some() {
                "failed"
            } else {
                "ok"
            }
            .into(),
            fallbacks: (self.fallbacks > 0).then_some(self.fallbacks),
            left_out: (!self.left_out.is_empty()).then(|| self.left_out.clone()),
            failure: self.failure.clone(),
        }
    }
}

fn file_name(p: &std::path::Path) -> String {
    p.file_name()
        .map(|f| f.to_string_lossy().to_string())
        .unwrap_or_default()
}

impl Manifest<Streamed<CellRecord>, Streamed<CellSeconds>> {
    /// The manifest of a run of `exp`: its inputs, grid, the cells its log
    /// holds (streamed from the log when written) and the outputs written
    /// so far.
    pub fn of(
        exp: &Experiment,
        cells: &mut CellLog,
        templates: &[(String, String)],
        outputs: Vec<OutputFile>,
        run: &RunFacts,
    ) -> std::io::Result<Self> {
        let digest = cells.digest().clone();
        let cached = cells.cached();
        let (records, seconds) = cells.replay()?;
        Ok(Manifest {
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
                cells: Streamed::new(records, digest),
            },
            outputs,
            run: Some(RunRecord {
                started_unix: run.started_unix,
                seconds: run.seconds,
                threads: run.threads,
                host: run.host.clone(),
                shard: run.shard.clone(),
                experiment_path: run.experiment_path.clone(),
                cells_from_cache: cached,
                cell_seconds: Streamed::new(seconds, CellDigest::default()),
            }),
        })
    }

    /// Write the file (pretty JSON and a final newline), the cells streamed
    /// from the log; synced when it must reach the disk.
    pub fn write(&self, path: &std::path::Path, durable: bool) -> std::io::Result<()> {
        use std::io::Write;
        let file = std::fs::File::create(path)?;
        let mut w = std::io::BufWriter::new(file);
        serde_json::to_writer_pretty(&mut w, self).map_err(std::io::Error::other)?;
        w.write_all(b"\n")?;
        let file = w.into_inner().map_err(|e| e.into_error())?;
        if durable {
            file.sync_all()?;
        }
        Ok(())
    }
}

impl<C: CellSummary, S> Manifest<C, S> {
    /// The manifest as the report sees it: without `run`, with only the
    /// tables among the outputs (the reports' own entries go), and of the
    /// cells only those of note (failed, or keeping an earlier estimate)
    /// with `grid.cell_count` counting them all.
    pub fn core_value(&self) -> serde_json::Value {
        let core: Manifest<Vec<CellRecord>, ()> = Manifest {
            audit: self.audit.clone(),
            data: self.data.clone(),
            experiment: self.experiment.clone(),
            grid: GridRecord {
                benchmark: self.grid.benchmark.clone(),
                candidates: self.grid.candidates.clone(),
                cells: self.grid.cells.notable(),
                horizons: self.grid.horizons.clone(),
                schemes: self.grid.schemes.clone(),
                targets: self.grid.targets.clone(),
            },
            outputs: self
                .outputs
                .iter()
                .filter(|o| !o.file.starts_with("report.") && o.file != "manifest.json")
                .cloned()
                .collect(),
            run: None,
            seed: self.seed,
            templates: self.templates.clone(),
            tool: self.tool.clone(),
            units: self.units.clone(),
        };
        let mut value = serde_json::to_value(&core).unwrap_or(serde_json::Value::Null);
        if let Some(grid) = value.get_mut("grid").and_then(|g| g.as_object_mut()) {
            grid.insert("cell_count".into(), self.grid.cells.count().into());
        }
        value
    }
}

impl<C, S> Manifest<C, S> {
    /// The file's bytes: pretty JSON and a final newline.
    #[cfg(test)]
    pub fn to_bytes(&self) -> Vec<u8>
    where
        Self: Serialize,
    {
        to_bytes(self)
    }

    /// Read a results folder's manifest; the message says what is wrong.
    #[cfg(test)]
    pub fn from_bytes(bytes: &[u8]) -> Result<Self, String>
    where
        Self: serde::de::DeserializeOwned,
    {
        Self::checked(serde_json::from_slice(bytes))
    }

    /// Read a results folder's manifest as it streams from a file.
    pub fn from_reader(reader: impl std::io::Read) -> Result<Self, String>
    where
        Self: serde::de::DeserializeOwned,
    {
        Self::checked(serde_json::from_reader(std::io::BufReader::new(reader)))
    }

    fn checked(read: serde_json::Result<Self>) -> Result<Self, String> {
        let m = read.map_err(|e| format!("not a results manifest written by outturn: {e}"))?;
        if m.tool.name != TOOL {
            return Err(format!("written by '{}', not by outturn", m.tool.name));
        }
        Ok(m)
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

/// Rewrite the manifest at `path` with these `outputs` and `templates`,
/// every other byte as it was: line by line, so that its cells are never
/// held (a top-level key's lines start with two spaces and a quote, the
/// lines inside its value with more). Replaced atomically, and only when
/// something changed; says whether it did.
pub(crate) fn rewrite(
    path: &std::path::Path,
    outputs: &[OutputFile],
    templates: &[TemplateRecord],
) -> std::io::Result<bool> {
    use sha2::{Digest as _, Sha256};
    use std::io::{BufRead, Write};
    let fresh = |key: &str| -> std::io::Result<Option<String>> {
        let text = match key {
            "outputs" => serde_json::to_string_pretty(outputs),
            "templates" => serde_json::to_string_pretty(templates),
            _ => return Ok(None),
        }
        .map_err(std::io::Error::other)?;
        // One level deeper than on its own: two more spaces after each newline.
        Ok(Some(text.replace('\n', "\n  ")))
    };
    let dir = path.parent().unwrap_or(std::path::Path::new("."));
    let tmp = dir.join(format!(".manifest.json.{}.tmp", std::process::id()));
    let mut reader = std::io::BufReader::new(std::fs::File::open(path)?);
    let mut out = std::io::BufWriter::new(std::fs::File::create(&tmp)?);
    let (mut old_hash, mut new_hash) = (Sha256::new(), Sha256::new());
    let mut emit = |out: &mut std::io::BufWriter<std::fs::File>, bytes: &[u8]| {
        new_hash.update(bytes);
        out.write_all(bytes)
    };
    let mut line = Vec::new();
    // The key whose old value is being skipped, and its last line.
    let mut replacing: Option<(String, Vec<u8>)> = None;
    let finish = |replacing: &mut Option<(String, Vec<u8>)>| -> std::io::Result<Option<Vec<u8>>> {
        let Some((key, last)) = replacing.take() else {
            return Ok(None);
        };
        let comma = if last.trim_ascii_end().ends_with(b",") {
            ","
        } else {
            ""
        };
        let value = fresh(&key)?.unwrap_or_default();
        Ok(Some(format!("  \"{key}\": {value}{comma}\n").into_bytes()))
    };
    loop {
        line.clear();
        let n = reader.read_until(b'\n', &mut line)?;
        old_hash.update(&line);
        let top = n == 0 || line.starts_with(b"  \"") || line.starts_with(b"}");
        if top {
            if let Some(section) = finish(&mut replacing)? {
                emit(&mut out, &section)?;
            }
            if let Some(key) = line
                .strip_prefix(b"  \"")
                .and_then(|rest| rest.split(|&b| b == b'"').next())
                .map(|k| String::from_utf8_lossy(k).into_owned())
                .filter(|k| k == "outputs" || k == "templates")
            {
                replacing = Some((key, line.clone()));
                continue;
            }
        }
        if n == 0 {
            break;
        }
        match replacing.as_mut() {
            Some((_, last)) => *last = line.clone(),
            None => emit(&mut out, &line)?,
        }
    }
    let file = out.into_inner().map_err(|e| e.into_error())?;
    file.sync_all()?;
    drop(file);
    if old_hash.finalize() == new_hash.finalize() {
        std::fs::remove_file(&tmp)?;
        return Ok(false);
    }
    std::fs::rename(&tmp, path).inspect_err(|_| {
        let _ = std::fs::remove_file(&tmp);
    })?;
    Ok(true)
}

/// A manifest's lines without its `run` section (the facts of one run),
/// for comparing two runs' manifests as they stream.
pub(crate) struct OutsideRun<R> {
    inner: R,
    line: Vec<u8>,
    at: usize,
    skipping: bool,
}

impl<R: std::io::BufRead> OutsideRun<R> {
    pub(crate) fn new(inner: R) -> Self {
        OutsideRun {
            inner,
            line: Vec::new(),
            at: 0,
            skipping: false,
        }
    }
}

impl<R: std::io::BufRead> std::io::Read for OutsideRun<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        use std::io::BufRead;
        let available = self.fill_buf()?;
        let n = available.len().min(buf.len());
        buf[..n].copy_from_slice(&available[..n]);
        self.consume(n);
        Ok(n)
    }
}

impl<R: std::io::BufRead> std::io::BufRead for OutsideRun<R> {
    fn fill_buf(&mut self) -> std::io::Result<&[u8]> {
        while self.at >= self.line.len() {
            self.line.clear();
            self.at = 0;
            if self.inner.read_until(b'\n', &mut self.line)? == 0 {
                break;
            }
            if self.line.starts_with(b"  \"") || self.line.starts_with(b"}") {
                self.skipping = self.line.starts_with(b"  \"run\": ");
            }
            if self.skipping {
                self.line.clear();
            }
        }
        Ok(&self.line[self.at..])
    }

    fn consume(&mut self, n: usize) {
        self.at += n;
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
        assert_eq!(<Manifest>::from_bytes(&bytes).unwrap(), m);
    }

    #[test]
    fn foreign_manifests_are_refused() {
        assert!(<Manifest>::from_bytes(b"{}").is_err());
        let mut v = serde_json::to_value(sample()).unwrap();
        v["extra"] = serde_json::json!(1);
        assert!(<Manifest>::from_bytes(&to_bytes(&v)).is_err());
        let mut v = serde_json::to_value(sample()).unwrap();
        v["tool"]["name"] = serde_json::json!("other");
        assert!(<Manifest>::from_bytes(&to_bytes(&v))
            .unwrap_err()
            .contains("not by outturn"));
    }

    /// `sample()` with `n` cells, the odd ones of note, and a run section.
    fn with_cells(n: usize) -> Manifest {
        let mut m = sample();
        m.grid.cells = (0..n)
            .map(|i| CellRecord {
                failure: (i % 4 == 1).then(|| format!("failed {i}")),
                fallbacks: (i % 4 == 3).then_some(i),
                id: format!("y/c{i}/fixed"),
                left_out: None,
                status: if i % 4 == 1 { "failed" } else { "ok" }.into(),
            })
            .collect();
        m.run = Some(RunRecord {
            cell_seconds: (0..n)
                .map(|i| CellSeconds {
                    id: format!("y/c{i}/fixed"),
                    seconds: 0.1 * i as f64,
                })
                .collect(),
            cells_from_cache: 0,
            experiment_path: "/x/e.yaml".into(),
            host: "h".into(),
            seconds: 1.5,
            shard: "all".into(),
            started_unix: 7,
            threads: 2,
        });
        m
    }

    fn streamed(m: &Manifest) -> Manifest<Streamed<CellRecord>, Streamed<CellSeconds>> {
        fn items<T: 'static>(v: Vec<T>) -> Box<dyn Iterator<Item = std::io::Result<T>>> {
            Box::new(v.into_iter().map(Ok))
        }
        let run = m.run.as_ref().unwrap();
        Manifest {
            audit: m.audit.clone(),
            data: m.data.clone(),
            experiment: m.experiment.clone(),
            grid: GridRecord {
                benchmark: m.grid.benchmark.clone(),
                candidates: m.grid.candidates.clone(),
                cells: Streamed::new(items(m.grid.cells.clone()), CellDigest::default()),
                horizons: m.grid.horizons.clone(),
                schemes: m.grid.schemes.clone(),
                targets: m.grid.targets.clone(),
            },
            outputs: m.outputs.clone(),
            run: Some(RunRecord {
                cell_seconds: Streamed::new(items(run.cell_seconds.clone()), CellDigest::default()),
                cells_from_cache: run.cells_from_cache,
                experiment_path: run.experiment_path.clone(),
                host: run.host.clone(),
                seconds: run.seconds,
                shard: run.shard.clone(),
                started_unix: run.started_unix,
                threads: run.threads,
            }),
            seed: m.seed,
            templates: m.templates.clone(),
            tool: m.tool.clone(),
            units: m.units.clone(),
        }
    }

    #[test]
    fn a_streamed_manifest_has_the_bytes_of_the_listed_one() {
        // Property by construction: serde_json writes a list of unknown
        // length as one of known length, `[]` when empty.
        let dir = std::env::temp_dir().join(format!("outturn-manifest-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        for n in [0, 1, 5] {
            let m = with_cells(n);
            let path = dir.join(format!("m{n}.json"));
            streamed(&m).write(&path, false).unwrap();
            assert_eq!(std::fs::read(&path).unwrap(), m.to_bytes(), "{n} cells");
        }
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn a_digest_counts_the_cells_and_keeps_those_of_note() {
        let m = with_cells(9);
        let d = Digest::from_bytes(&m.to_bytes()).unwrap();
        assert_eq!(d.grid.cells.count, 9);
        let ids: Vec<&str> = d.grid.cells.notable.iter().map(|c| c.id.as_str()).collect();
        assert_eq!(
            ids,
            ["y/c1/fixed", "y/c3/fixed", "y/c5/fixed", "y/c7/fixed"]
        );
        assert_eq!(d.run.as_ref().unwrap().cell_seconds, Counted(9));
        // The report sees the same cells of note and the full count either way.
        let (full, digest) = (m.core_value(), d.core_value());
        assert_eq!(full, digest);
        assert_eq!(digest["grid"]["cell_count"], 9);
    }

    #[test]
    fn a_rewrite_changes_only_outputs_and_templates() {
        let dir = std::env::temp_dir().join(format!("outturn-rewrite-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let path = dir.join("manifest.json");
        for with_audit in [false, true] {
            let mut m = with_cells(3);
            if with_audit {
                m.audit = Some(AuditRecord {
                    cells: 1,
                    checks: 2,
                    moved: vec![],
                    origins: 3,
                    path_differences: 0,
                    unchecked: 0,
                });
            }
            std::fs::write(&path, m.to_bytes()).unwrap();
            assert!(!rewrite(&path, &m.outputs, &m.templates).unwrap());
            assert_eq!(std::fs::read(&path).unwrap(), m.to_bytes());
            m.set_output(OutputFile::of("report.md", b"# r"));
            m.templates = vec![TemplateRecord {
                name: "report.md.j2".into(),
                sha256: "ef".into(),
            }];
            assert!(rewrite(&path, &m.outputs, &m.templates).unwrap());
            assert_eq!(std::fs::read(&path).unwrap(), m.to_bytes());
            m.templates.clear();
            m.outputs.clear();
            assert!(rewrite(&path, &m.outputs, &m.templates).unwrap());
            assert_eq!(std::fs::read(&path).unwrap(), m.to_bytes());
        }
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn outside_run_reads_the_manifest_without_its_run_section() {
        use std::io::Read;
        let m = with_cells(4);
        let mut without = m.clone();
        without.run = None;
        let mut seen = Vec::new();
        OutsideRun::new(&m.to_bytes()[..])
            .read_to_end(&mut seen)
            .unwrap();
        assert_eq!(seen, without.to_bytes());
    }
}
