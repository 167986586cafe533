//! Scale-out (SPEC §6): a shard runs the cells whose stable hash falls in its
//! slice and writes only their rows (lossless, `cells.txt`) with a manifest
//! naming the experiment, inputs and grid; `merge` checks that N shards of
//! one experiment are all present exactly once, rebuilds every cell's output
//! in plan order, and finalizes exactly as a single run does.

use super::{pipeline, RunContext};
use crate::backtest::cellio;
use crate::backtest::{is_computed, CellOutput};
use crate::digest::sha256_hex;
use crate::error::{Error, Location, Result};
use crate::plan::{self, Cell};
use crate::results::folder as output;
use crate::results::shard::{grid_digest, ShardManifest};
use crate::spec::{self, Experiment};
use serde_json::Value;
use std::path::{Path, PathBuf};

fn invalid(path: &Path, msg: impl Into<String>) -> Error {
    Error::invalid(
        Some(Location {
            file: path.to_path_buf(),
            line: None,
            column: None,
        }),
        msg,
    )
}

/// Load the experiment a manifest records (by the absolute path in its
/// `run` section) and check its inputs are unchanged.
pub(crate) fn load_recorded(
    experiment_path: &str,
    experiment_sha: &str,
    data_sha: &str,
) -> Result<Experiment> {
    let path = PathBuf::from(experiment_path);
    let text = std::fs::read(&path).map_err(|e| {
        invalid(
            &path,
            format!("cannot read the recorded experiment file: {e}"),
        )
    })?;
    if sha256_hex(&text) != experiment_sha {
        return Err(invalid(&path, "the experiment file changed since the run (its SHA-256 differs from the manifest's); refusing"));
    }
    let exp = spec::load(&path)?;
    if exp.data_bytes_sha256 != data_sha {
        return Err(invalid(&exp.data_path, "the data file changed since the run (its SHA-256 differs from the manifest's); refusing"));
    }
    Ok(exp)
}

/// A shard folder's manifest.
fn read_shard_manifest(path: &Path) -> Result<ShardManifest> {
    let bytes = std::fs::read(path).map_err(|e| invalid(path, format!("cannot read: {e}")))?;
    if bytes.len() > MAX_MANIFEST_BYTES {
        return Err(invalid(path, "too large for a shard manifest (edited?)"));
    }
    if serde_json::from_slice::<Value>(&bytes).is_ok_and(|v| v.get("shard_of").is_none()) {
        return Err(invalid(
            path,
            "not a shard folder (run with --shard K/N to make one)",
        ));
    }
    ShardManifest::from_bytes(&bytes).map_err(|e| invalid(path, e))
}

/// A shard manifest lists its cells: a few hundred bytes per cell.
const MAX_MANIFEST_BYTES: usize = 1 << 30;

/// Every shard of one run, each exactly once.
fn check_shards(manifests: &[(PathBuf, PathBuf, ShardManifest)]) -> Result<()> {
    let first = &manifests[0].2.shard_of;
    let count = first.count;
    for (_, mpath, m) in &manifests[1..] {
        let s = &m.shard_of;
        let differs = [
            (
                s.experiment_sha256 != first.experiment_sha256,
                "a different experiment file",
            ),
            (s.data_sha256 != first.data_sha256, "different data"),
            (
                s.tool_version != first.tool_version,
                "a different outturn version",
            ),
            (s.grid_sha256 != first.grid_sha256, "a different grid"),
            (s.count != first.count, "a different shard count"),
        ];
        if let Some((_, what)) = differs.iter().find(|(d, _)| *d) {
            return Err(invalid(
                mpath,
                format!(
                    "this shard comes from {what} than {}; shards of one run only",
                    manifests[0].1.display()
                ),
            ));
        }
    }
    let mut seen: Vec<Option<&Path>> = vec![None; count + 1];
    for (d, mpath, m) in manifests {
        let k = m.shard_of.shard;
        if let Some(prev) = seen[k] {
            return Err(invalid(
                mpath,
                format!("shard {k}/{count} is given twice (also {})", prev.display()),
            ));
        }
        seen[k] = Some(d);
    }
    let missing: Vec<String> = (1..=count)
        .filter(|&k| seen[k].is_none())
        .map(|k| format!("{k}/{count}"))
        .collect();
    if !missing.is_empty() {
        let more = missing.len().saturating_sub(10);
        return Err(Error::invalid(
            None,
            format!(
                "missing shard(s): {}{}",
                missing[..missing.len().min(10)].join(", "),
                if more > 0 {
                    format!(" and {more} more")
                } else {
                    String::new()
                }
            ),
        ));
    }
    Ok(())
}

/// `outturn merge DIR... --out DIR`: the cell count, and the cells that could not be estimated (id, why).
///
/// One function because its refusals (same experiment, same build, shards
/// complete and disjoint, every table as written) run in this order before a
/// byte is written, and each names the folder it concerns.
pub fn merge(dirs: &[PathBuf], out: &Path) -> Result<(usize, Vec<(String, String)>)> {
    let started = std::time::Instant::now();
    if dirs.is_empty() {
        return Err(Error::invalid(
            None,
            "merge needs at least one shard folder",
        ));
    }
    let mut manifests = Vec::new();
    for d in dirs {
        let mpath = d.join("manifest.json");
        let m = read_shard_manifest(&mpath)?;
        manifests.push((d.clone(), mpath, m));
    }
    check_shards(&manifests)?;
    let first = manifests[0].2.shard_of.clone();
    let count = first.count;
    let exp = load_recorded(
        &manifests[0].2.run.experiment_path,
        &first.experiment_sha256,
        &first.data_sha256,
    )?;
    let cells = plan::cells(&exp);
    if grid_digest(&cells) != first.grid_sha256 {
        return Err(invalid(
            &manifests[0].1,
            "the experiment's grid no longer matches the shards'",
        ));
    }
    let index: std::collections::HashMap<&str, usize> = cells
        .iter()
        .enumerate()
        .map(|(i, c)| (c.id.as_str(), i))
        .collect();
    // Each shard's rows are read as the targets need them (a shard holds
    // its cells in plan order), so memory stays bounded however large the
    // run; the rows' hashes are checked once every row is read, and a
    // failure on the way leaves nothing written.
    let mut by_shard: Vec<Option<Shard>> = (0..count).map(|_| None).collect();
    for (d, _, m) in &manifests {
        let k = m.shard_of.shard;
        let path = d.join("cells.txt");
        let file =
            std::fs::File::open(&path).map_err(|e| invalid(&path, format!("cannot read: {e}")))?;
        by_shard[k - 1] = Some(Shard {
            reader: cellio::CellReader::new(std::io::BufReader::with_capacity(1 << 20, file)),
            expected: m.cells_sha256().to_string(),
            path,
            last: None,
        });
    }
    let shards: Vec<Shard> = by_shard.into_iter().flatten().collect();
    let rows = std::sync::Mutex::new(Rows {
        shards,
        pending: std::collections::HashMap::new(),
    });
    let (pool, threads) = super::thread_pool(None)?;
    let ctx = RunContext {
        started,
        started_unix: super::now_unix(),
        threads,
        shard: format!("merged {count}"),
        durable: true,
        progress: &super::Silent,
        templates: &crate::report::render::default_templates(),
    };
    let per = exp.candidates.len() * exp.schemes.len();
    let source = |t: usize| -> Result<Vec<CellOutput>> {
        let mut rows = rows.lock().unwrap_or_else(|e| e.into_inner());
        (t * per..(t + 1) * per)
            .map(|i| {
                if !is_computed(&exp, &cells[i]) {
                    return Ok(CellOutput::default());
                }
                rows.take(&exp, i, &cells, &index, count)
            })
            .collect()
    };
    let staging = output::stage(out)?;
    let produced = pipeline::produce(&exp, &source, staging.dir(), &ctx, &pool, threads * 8)?;
    rows.into_inner()
        .unwrap_or_else(|e| e.into_inner())
        .finish(&cells)?;
    staging.commit_synced()?;
    Ok((cells.len(), produced.failed_cells))
}

/// One shard's rows, read as they are needed.
struct Shard {
    reader: cellio::CellReader<std::io::BufReader<std::fs::File>>,
    /// The hash of cells.txt its manifest records.
    expected: String,
    path: PathBuf,
    /// Plan index of the last cell read.
    last: Option<usize>,
}

impl Shard {
    fn hash_error(&self) -> Error {
        invalid(
            &self.path,
            "the shard's rows do not match its manifest's hash (damaged or edited)",
        )
    }

    /// When reading a shard's rows fails, the likeliest cause is an edit:
    /// say so if the whole file no longer matches its manifest's hash.
    fn damaged(&self) -> Option<Error> {
        use sha2::Digest;
        let mut file = std::fs::File::open(&self.path).ok()?;
        let mut hash = sha2::Sha256::new();
        std::io::copy(&mut file, &mut hash).ok()?;
        let hex: String = hash.finalize().iter().map(|b| format!("{b:02x}")).collect();
        (hex != self.expected).then(|| self.hash_error())
    }
}

/// The shards' rows, and cells read ahead of the target that needs them
/// (when targets are merged side by side).
struct Rows {
    shards: Vec<Shard>,
    pending: std::collections::HashMap<usize, CellOutput>,
}

impl Rows {
    /// Cell `i`'s output, from the shard that holds it.
    fn take(
        &mut self,
        exp: &Experiment,
        i: usize,
        cells: &[Cell],
        index: &std::collections::HashMap<&str, usize>,
        count: usize,
    ) -> Result<CellOutput> {
        if let Some(o) = self.pending.remove(&i) {
            return Ok(o);
        }
        let k = plan::shard_of(&cells[i], count);
        self.take_from(exp, k, i, cells, index, count)
            .map_err(|e| self.shards[k - 1].damaged().unwrap_or(e))
    }

    fn take_from(
        &mut self,
        exp: &Experiment,
        k: usize,
        i: usize,
        cells: &[Cell],
        index: &std::collections::HashMap<&str, usize>,
        count: usize,
    ) -> Result<CellOutput> {
        let shard = &mut self.shards[k - 1];
        loop {
            let Some((id, out)) = shard
                .reader
                .next_cell()
                .map_err(|e| invalid(&shard.path, e))?
            else {
                return Err(Error::invalid(
                    None,
                    format!("no shard holds cell '{}'", cells[i].id),
                ));
            };
            let Some(&j) = index.get(id.as_str()) else {
                return Err(invalid(
                    &shard.path,
                    format!("cell '{id}' is not in the experiment's grid"),
                ));
            };
            // A shard holds its cells in plan order; refuse any other order
            // outright, so the outcome does not depend on which target asks first.
            if shard.last.is_some_and(|last| j <= last) {
                return Err(invalid(
                    &shard.path,
                    format!("cell '{id}' is out of order or repeated (damaged or edited)"),
                ));
            }
            shard.last = Some(j);
            if plan::shard_of(&cells[j], count) != k {
                return Err(invalid(
                    &shard.path,
                    format!("cell '{id}' belongs to another shard (damaged or edited)"),
                ));
            }
            if let Err(why) = crate::backtest::check_output(exp, &cells[j], &out) {
                return Err(invalid(
                    &shard.path,
                    format!("cell '{id}' does not match the experiment's plan (damaged or edited): {why}"),
                ));
            }
            if j == i {
                return Ok(out);
            }
            if j > i {
                // Rows come in plan order: cell i was skipped.
                return Err(Error::invalid(
                    None,
                    format!("no shard holds cell '{}'", cells[i].id),
                ));
            }
            // A cell of a target another worker has yet to ask for.
            if self.pending.insert(j, out).is_some() {
                return Err(invalid(
                    &shard.path,
                    format!("cell '{id}' appears more than once"),
                ));
            }
        }
    }

    /// Every row read and no row left over, and every shard's rows match
    /// its manifest's hash.
    fn finish(mut self, cells: &[Cell]) -> Result<()> {
        if let Some(&j) = self.pending.keys().min() {
            return Err(Error::invalid(
                None,
                format!("cell '{}' appears more than once", cells[j].id),
            ));
        }
        for shard in &mut self.shards {
            if let Some((id, _)) = shard
                .reader
                .next_cell()
                .map_err(|e| invalid(&shard.path, e))?
            {
                return Err(invalid(
                    &shard.path,
                    format!("cell '{id}' appears more than once or out of order"),
                ));
            }
            if shard.reader.digest() != shard.expected {
                return Err(shard.hash_error());
            }
        }
        Ok(())
    }
}
