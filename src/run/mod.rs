//! run: the commands as thin orchestration over the stages — `run` and
//! `check` here, `merge`, `verify`, `render`, `draft` and `kinds` in their
//! own files; `pipeline` turns cell outputs into a results folder for run,
//! merge and verify alike.

pub(crate) mod audit;
pub(crate) mod draft;
pub(crate) mod kinds;
pub(crate) mod merge;
pub(crate) mod pipeline;
pub(crate) mod render;
pub(crate) mod verify;

#[cfg(test)]
mod property_tests;

use crate::backtest::{self, cache, CellOutput};
use crate::error::{Error, Result};
use crate::plan;
pub use crate::progress::{Progress, Silent};
use crate::results::{folder, shard};
use crate::spec::{self, Experiment};
use std::path::{Path, PathBuf};
use std::time::Instant;

/// What `check` found: the grid and the work it implies.
#[derive(Debug, Clone)]
pub struct CheckSummary {
    pub experiment: String,
    pub targets: usize,
    pub candidates: usize,
    pub schemes: usize,
    pub horizons: usize,
    pub cells: usize,
    pub forecasts: usize,
    /// An estimate of the run's wall time in seconds on `threads` threads.
    pub estimated_seconds: f64,
    pub threads: usize,
    /// What the experiment asks that outturn does differently than it may seem.
    pub warnings: Vec<String>,
}

/// Validate an experiment and its data; estimation problems (too few rows,
/// singular designs) are found by running the cells in memory. Writes nothing.
pub fn check(path: &Path) -> Result<CheckSummary> {
    let exp = spec::load(path)?;
    plan::check_size(&exp)?;
    let cells = plan::cells(&exp);
    // Least-squares and benchmark cells are cheap and are where SPEC §4's
    // "invalid experiment" problems arise; likelihood families are left to the run.
    let quick: Vec<usize> = (0..cells.len())
        .filter(|&i| {
            backtest::is_computed(&exp, &cells[i])
                && !crate::models::is_likelihood(&exp.candidates[cells[i].candidate].family)
        })
        .collect();
    let started = Instant::now();
    backtest::run_selected(&exp, &cells, &quick, None, &Silent)?;
    let quick_seconds = started.elapsed().as_secs_f64();
    let threads = std::thread::available_parallelism().map_or(1, |n| n.get());
    let (likelihood, failing) = likelihood_seconds(&exp, &cells)?;
    let mut warnings = exp.warnings.clone();
    warnings.extend(failing);
    Ok(CheckSummary {
        experiment: exp.name.clone(),
        targets: exp.targets.len(),
        candidates: exp.candidates.len(),
        schemes: exp.schemes.len(),
        horizons: exp.horizons.len(),
        cells: cells.len(),
        estimated_seconds: (quick_seconds + likelihood) / threads as f64,
        threads,
        warnings,
        forecasts: plan::forecast_count(&exp),
    })
}

pub struct RunOptions {
    pub out: Option<PathBuf>,
    pub jobs: Option<usize>,
    /// Run only shard K of N (1-based) and write a shard folder.
    pub shard: Option<(usize, usize)>,
    /// Skip the resume cache.
    pub no_cache: bool,
}

pub struct RunSummary {
    pub folder: PathBuf,
    pub cells: usize,
    pub forecasts: usize,
    /// What the experiment asks that outturn does differently than it may seem.
    pub warnings: Vec<String>,
    /// Cells that could not be estimated, (id, why): recorded in the
    /// manifest and the report; the command line exits 3 when there are any.
    pub failed_cells: Vec<(String, String)>,
    pub seconds: f64,
}

/// Default results folder: `results/<experiment>/` relative to the working directory.
fn default_folder(exp: &Experiment) -> PathBuf {
    PathBuf::from("results").join(&exp.name)
}

pub(crate) fn now_unix() -> u64 {
    std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs())
        .unwrap_or(0)
}

pub(crate) fn host() -> String {
    std::fs::read_to_string("/etc/hostname")
        .map(|s| s.trim().to_string())
        .unwrap_or_default()
}

/// An absolute form of a path, for the manifest's `run` section.
pub(crate) fn absolute(p: &Path) -> String {
    std::path::absolute(p)
        .unwrap_or_else(|_| p.to_path_buf())
        .to_string_lossy()
        .to_string()
}

pub(crate) fn thread_pool(jobs: Option<usize>) -> Result<(rayon::ThreadPool, usize)> {
    let threads = jobs
        .unwrap_or_else(|| {
            std::thread::available_parallelism()
                .map(|n| n.get())
                .unwrap_or(1)
        })
        .max(1);
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .map_err(|e| Error::Threads {
            threads,
            message: e.to_string(),
        })?;
    Ok((pool, threads))
}

/// Facts about a run that live only in the manifest's `run` section.
pub(crate) struct RunContext<'a> {
    pub started: Instant,
    pub started_unix: u64,
    pub threads: usize,
    pub shard: String,
    /// Sync every file to disk before returning (a results folder about to
    /// be swapped in); `verify`'s scratch copy, compared and removed, needs not.
    pub durable: bool,
    pub progress: &'a dyn Progress,
    /// The report templates (the built-in ones but for `verify --templates`).
    pub templates: &'a crate::report::render::Templates,
}

impl RunContext<'_> {
    /// Tell the progress how far into the run a step ended.
    pub fn step(&self, step: &str) {
        self.progress
            .step(step, self.started.elapsed().as_secs_f64());
    }
}

/// Stop every write in progress and remove the temporary folders of this
/// process (call on interrupt, before exiting). True when the run had
/// already swapped its results folder in: it holds the complete new results.
pub fn interrupted() -> bool {
    folder::cleanup_pending()
}

pub fn run(path: &Path, opts: &RunOptions, progress: &dyn Progress) -> Result<RunSummary> {
    let started = Instant::now();
    let templates = crate::report::render::default_templates();
    let started_unix = now_unix();
    let exp = spec::load(path)?;
    let ctx = RunContext {
        started,
        started_unix,
        threads: 0,
        shard: opts
            .shard
            .map(|(k, n)| format!("{k}/{n}"))
            .unwrap_or_else(|| "1/1".into()),
        durable: true,
        progress,
        templates: &templates,
    };
    ctx.step("experiment and data read");
    plan::check_size(&exp)?;
    let folder = opts.out.clone().unwrap_or_else(|| default_folder(&exp));
    folder::check_target(&folder)?;
    let cells = plan::cells(&exp);
    let (pool, threads) = thread_pool(opts.jobs)?;
    let ctx = RunContext { threads, ..ctx };
    let selected: Vec<usize> = (0..cells.len())
        .filter(|&i| backtest::is_computed(&exp, &cells[i]))
        .filter(|&i| {
            opts.shard
                .is_none_or(|(k, n)| plan::shard_of(&cells[i], n) == k)
        })
        .collect();
    let cache = (!opts.no_cache).then(|| cache::Cache::beside(&folder));
    progress.begin(
        if opts.shard.is_some() {
            selected.len()
        } else {
            cells.len()
        },
        if opts.shard.is_some() {
            selected_forecasts(&exp, &cells, &selected)
        } else {
            plan::forecast_count(&exp)
        },
    );
    // An invalid experiment writes nothing (SPEC §1): not even cache entries.
    let take_back = |e: Error| {
        if let (Error::Invalid(_), Some(c)) = (&e, &cache) {
            c.take_back();
        }
        e
    };
    if let Some((k, n)) = opts.shard {
        let computed = pool
            .install(|| backtest::run_selected(&exp, &cells, &selected, cache.as_ref(), progress));
        progress.end();
        let computed = computed.map_err(take_back)?;
        let run = shard::ShardRun {
            started_unix: ctx.started_unix,
            seconds: ctx.started.elapsed().as_secs_f64(),
            threads: ctx.threads,
            shard: ctx.shard.clone(),
            experiment_path: absolute(&exp.source_path),
        };
        let files = shard::shard_files(&exp, &cells, &selected, &computed, (k, n), run);
        folder::write_folder(&folder, &files)?;
        return Ok(RunSummary {
            warnings: exp.warnings.clone(),
            folder,
            cells: selected.len(),
            forecasts: computed.iter().map(|o| o.forecasts.len()).sum(),
            failed_cells: selected
                .iter()
                .zip(&computed)
                .filter_map(|(&i, o)| Some((cells[i].id.clone(), o.failure.clone()?)))
                .collect(),
            seconds: started.elapsed().as_secs_f64(),
        });
    }
    let staging = folder::stage(&folder)?;
    let produced = produce_run(&exp, &cells, cache.as_ref(), staging.dir(), &ctx, &pool);
    progress.end();
    let produced = produced.map_err(take_back)?;
    staging.commit_synced()?;
    ctx.step("results folder swapped in");
    Ok(RunSummary {
        warnings: exp.warnings.clone(),
        folder,
        cells: cells.len(),
        forecasts: plan::forecast_count(&exp),
        failed_cells: produced.failed_cells,
        seconds: started.elapsed().as_secs_f64(),
    })
}

/// The likelihood cells' time, estimated from one timed estimation per
/// candidate (on the first target and scheme) times the estimations each
/// of its cells makes; warm starts make later estimations cheaper, so this
/// leans high. The cells' work is spread over the run's threads. A first
/// estimation that fails is returned as a warning: the run would record
/// that cell as failed (exit 3) unless a later window succeeds. A model
/// that cannot be built on the data (a seasonal form on data without a
/// season) is refused, as the run would refuse it.
fn likelihood_seconds(exp: &Experiment, cells: &[plan::Cell]) -> Result<(f64, Vec<String>)> {
    let mut per_candidate: Vec<Option<Option<f64>>> = vec![None; exp.candidates.len()];
    let mut total = 0.0;
    let mut warnings = Vec::new();
    let mut refused = Vec::new();
    for cell in cells {
        if !crate::models::is_likelihood(&exp.candidates[cell.candidate].family) {
            continue;
        }
        let one = *per_candidate[cell.candidate].get_or_insert_with(|| {
            match backtest::time_one_estimation(exp, cell) {
                Ok(Ok(seconds)) => Some(seconds),
                Err(diagnostic) => {
                    refused.push(diagnostic);
                    None
                }
                Ok(Err(why)) => {
                    warnings.push(format!(
                        "candidate {} on target '{}' under scheme {}: its first estimation fails ({why}); `run` records every estimation that fails and exits 3 if a cell has none",
                        exp.candidates[cell.candidate].id,
                        exp.targets[cell.target].name,
                        exp.schemes[cell.scheme].id
                    ));
                    None
                }
            }
        });
        if let Some(seconds) = one {
            total += seconds * backtest::estimations(exp, cell) as f64;
        }
    }
    if !refused.is_empty() {
        return Err(crate::error::Error::Invalid(refused));
    }
    Ok((total, warnings))
}

/// How many forecasts the selected cells make (a shard's share).
fn selected_forecasts(exp: &Experiment, cells: &[plan::Cell], selected: &[usize]) -> usize {
    selected
        .iter()
        .map(|&i| {
            let c = &cells[i];
            let t = &exp.targets[c.target];
            exp.horizons
                .iter()
                .map(|&h| {
                    plan::origins(&exp.schemes[c.scheme], t.first_origins[c.scheme], t.n, h).count()
                })
                .sum::<usize>()
        })
        .sum()
}

/// How many targets the workers may run ahead of the files: enough to keep
/// every thread busy, few enough to bound memory.
pub(crate) fn window_for(threads: usize) -> usize {
    (threads * 8).max(8)
}

/// Run every target's cells and write the whole results folder into `dir`.
pub(crate) fn produce_run(
    exp: &Experiment,
    cells: &[plan::Cell],
    cache: Option<&cache::Cache>,
    dir: &Path,
    ctx: &RunContext,
    pool: &rayon::ThreadPool,
) -> Result<pipeline::Produced> {
    let source = |t: usize| -> Result<Vec<CellOutput>> {
        let range = plan::target_range(exp, t);
        let selected: Vec<usize> = range
            .clone()
            .filter(|&i| backtest::is_computed(exp, &cells[i]))
            .collect();
        let computed = backtest::run_selected(exp, cells, &selected, cache, ctx.progress)?;
        let mut outputs = vec![CellOutput::default(); range.len()];
        for (i, o) in selected.into_iter().zip(computed) {
            outputs[i - range.start] = o;
        }
        Ok(outputs)
    };
    pipeline::produce(exp, &source, dir, ctx, pool, window_for(ctx.threads))
}
