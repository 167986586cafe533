//! outturn: declarative forecast experiments. Stages flow one way:
//! spec (parse + check) → plan (grid) → backtest (fit and forecast) →
//! score (metrics) → report (tables, manifest, HTML, Markdown).
//! Library code returns typed errors and never exits; `main` maps them to
//! exit codes.

pub mod backtest;
pub mod cache;
pub mod cellio;
pub mod draft;
pub mod error;
pub mod kinds;
pub mod linalg;
pub mod models;
pub mod output;
pub mod plan;
pub mod report;
pub mod score;
pub mod spec;

use error::{Error, Result};
use spec::Experiment;
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
}

fn count_forecasts(exp: &Experiment) -> usize {
    let mut total = 0;
    for t in &exp.targets {
        for (s, scheme) in exp.schemes.iter().enumerate() {
            for &h in &exp.horizons {
                total += plan::origins(scheme, t.first_origins[s], t.n, h).count();
            }
        }
    }
    total * exp.candidates.len()
}

/// Validate an experiment and its data; estimation problems (too few rows,
/// singular designs) are found by running the cells in memory. Writes nothing.
pub fn check(path: &Path) -> Result<CheckSummary> {
    let exp = spec::load(path)?;
    let cells = plan::cells(&exp);
    // Least-squares and benchmark cells are cheap and are where SPEC §4's
    // "invalid experiment" problems arise; likelihood families are left to the run.
    let quick: Vec<usize> = (0..cells.len())
        .filter(|&i| {
            let f = &exp.candidates[cells[i].candidate].family;
            backtest::is_computed(&exp, &cells[i])
                && !matches!(
                    f,
                    spec::Family::Arima { .. }
                        | spec::Family::ArimaSelect { .. }
                        | spec::Family::Smoothing { .. }
                )
        })
        .collect();
    backtest::run_selected(&exp, &cells, &quick, None, &|| {})?;
    Ok(CheckSummary {
        experiment: exp.name.clone(),
        targets: exp.targets.len(),
        candidates: exp.candidates.len(),
        schemes: exp.schemes.len(),
        horizons: exp.horizons.len(),
        cells: cells.len(),
        forecasts: count_forecasts(&exp),
    })
}

pub struct RunOptions {
    pub out: Option<PathBuf>,
    pub jobs: Option<usize>,
    pub quiet: bool,
    /// Run only shard K of N (1-based) and write a shard folder.
    pub shard: Option<(usize, usize)>,
    /// Skip the resume cache.
    pub no_cache: bool,
}

pub struct RunSummary {
    pub folder: PathBuf,
    pub cells: usize,
    pub forecasts: usize,
    pub seconds: f64,
}

/// Default results folder: `results/<experiment>/` relative to the working directory.
pub fn default_folder(exp: &Experiment) -> PathBuf {
    PathBuf::from("results").join(&exp.name)
}

/// With OUTTURN_DEBUG_TIMING set, print how far into the run a step ended
/// (for performance work; the figures are not part of any output).
pub(crate) fn timing(started: Instant, step: &str) {
    if std::env::var_os("OUTTURN_DEBUG_TIMING").is_some() {
        eprintln!("timing: {step} at {:.3} s", started.elapsed().as_secs_f64());
    }
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
        .map_err(|e| Error::Run(format!("cannot start {threads} worker threads: {e}")))?;
    Ok((pool, threads))
}

fn progress_bar(quiet: bool, len: usize) -> Option<indicatif::ProgressBar> {
    use std::io::IsTerminal;
    if quiet || !std::io::stderr().is_terminal() {
        return None;
    }
    let pb = indicatif::ProgressBar::new(len as u64);
    pb.set_style(
        indicatif::ProgressStyle::with_template(
            "{spinner} backtesting [{bar:30}] {pos}/{len} cells {elapsed}",
        )
        .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar())
        .progress_chars("=> "),
    );
    Some(pb)
}

/// Facts about a run that live only in the manifest's `run` section.
pub struct RunContext {
    pub started: Instant,
    pub started_unix: u64,
    pub threads: usize,
    pub shard: String,
    /// Sync every file to disk before returning (a results folder about to
    /// be swapped in); `verify`'s scratch copy, compared and removed, needs not.
    pub durable: bool,
}

pub fn run(path: &Path, opts: &RunOptions) -> Result<RunSummary> {
    let started = Instant::now();
    let started_unix = now_unix();
    let exp = spec::load(path)?;
    timing(started, "experiment and data read");
    let folder = opts.out.clone().unwrap_or_else(|| default_folder(&exp));
    output::check_target(&folder)?;
    let cells = plan::cells(&exp);
    let (pool, threads) = thread_pool(opts.jobs)?;
    let selected: Vec<usize> = (0..cells.len())
        .filter(|&i| backtest::is_computed(&exp, &cells[i]))
        .filter(|&i| {
            opts.shard
                .is_none_or(|(k, n)| plan::shard_of(&cells[i], n) == k)
        })
        .collect();
    let cache = (!opts.no_cache).then(|| cache::Cache::beside(&folder));
    let bar = progress_bar(opts.quiet, selected.len());
    let tick = || {
        if let Some(b) = &bar {
            b.inc(1);
        }
    };
    let ctx = RunContext {
        started,
        started_unix,
        threads,
        shard: opts
            .shard
            .map(|(k, n)| format!("{k}/{n}"))
            .unwrap_or_else(|| "1/1".into()),
        durable: true,
    };
    // An invalid experiment writes nothing (SPEC §1): not even cache entries.
    let take_back = |e: Error| {
        if let (Error::Invalid(_), Some(c)) = (&e, &cache) {
            c.take_back();
        }
        e
    };
    if let Some((k, n)) = opts.shard {
        let computed =
            pool.install(|| backtest::run_selected(&exp, &cells, &selected, cache.as_ref(), &tick));
        if let Some(b) = &bar {
            b.finish_and_clear();
        }
        let computed = computed.map_err(take_back)?;
        let files = shard::shard_files(&exp, &cells, &selected, &computed, (k, n), &ctx);
        output::write_folder(&folder, &files)?;
        return Ok(RunSummary {
            folder,
            cells: selected.len(),
            forecasts: computed.iter().map(|o| o.forecasts.len()).sum(),
            seconds: started.elapsed().as_secs_f64(),
        });
    }
    let staging = output::stage(&folder)?;
    let produced = produce_run(
        &exp,
        &cells,
        cache.as_ref(),
        &tick,
        staging.dir(),
        &ctx,
        &pool,
    );
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let produced = produced.map_err(take_back)?;
    if produced.failed_cells > 0 && !opts.quiet {
        eprintln!(
            "warning: {} cell(s) could not be estimated; they are recorded in the manifest and the report",
            produced.failed_cells
        );
    }
    staging.commit_synced()?;
    timing(started, "results folder swapped in");
    Ok(RunSummary {
        folder,
        cells: cells.len(),
        forecasts: count_forecasts(&exp),
        seconds: started.elapsed().as_secs_f64(),
    })
}

/// How many targets the workers may run ahead of the files: enough to keep
/// every thread busy, few enough to bound memory.
fn window_for(threads: usize) -> usize {
    (threads * 8).max(8)
}

/// The cells of target `t` in plan order (candidates × schemes).
pub(crate) fn target_range(exp: &Experiment, t: usize) -> std::ops::Range<usize> {
    let per = exp.candidates.len() * exp.schemes.len();
    t * per..(t + 1) * per
}

/// Run every target's cells and write the whole results folder into `dir`.
pub(crate) fn produce_run(
    exp: &Experiment,
    cells: &[plan::Cell],
    cache: Option<&cache::Cache>,
    progress: &(dyn Fn() + Sync),
    dir: &Path,
    ctx: &RunContext,
    pool: &rayon::ThreadPool,
) -> Result<pipeline::Produced> {
    let source = |t: usize| -> Result<Vec<backtest::CellOutput>> {
        let range = target_range(exp, t);
        let selected: Vec<usize> = range
            .clone()
            .filter(|&i| backtest::is_computed(exp, &cells[i]))
            .collect();
        let computed = backtest::run_selected(exp, cells, &selected, cache, progress)?;
        let mut outputs = vec![backtest::CellOutput::default(); range.len()];
        for (i, o) in selected.into_iter().zip(computed) {
            outputs[i - range.start] = o;
        }
        Ok(outputs)
    };
    pipeline::produce(exp, &source, dir, ctx, pool, window_for(ctx.threads))
}

/// An absolute form of a path, for the manifest's `run` section.
pub fn absolute(p: &Path) -> String {
    std::path::absolute(p)
        .unwrap_or_else(|_| p.to_path_buf())
        .to_string_lossy()
        .to_string()
}

pub mod pipeline;
pub mod shard;
pub mod verify;
