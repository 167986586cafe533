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

pub(crate) fn now_unix() -> u64 {
    std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs())
        .unwrap_or(0)
}

fn host() -> String {
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
}

pub fn run(path: &Path, opts: &RunOptions) -> Result<RunSummary> {
    let started = Instant::now();
    let started_unix = now_unix();
    let exp = spec::load(path)?;
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
    let computed =
        pool.install(|| backtest::run_selected(&exp, &cells, &selected, cache.as_ref(), &tick));
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let computed = match computed {
        Ok(c) => c,
        Err(e) => {
            if let (Error::Invalid(_), Some(c)) = (&e, &cache) {
                c.take_back();
            }
            return Err(e);
        }
    };
    let failed = computed.iter().filter(|o| o.failure.is_some()).count();
    if failed > 0 && !opts.quiet {
        eprintln!("warning: {failed} cell(s) could not be estimated; they are recorded in the manifest and the report");
    }
    let ctx = RunContext {
        started,
        started_unix,
        threads,
        shard: opts
            .shard
            .map(|(k, n)| format!("{k}/{n}"))
            .unwrap_or_else(|| "1/1".into()),
    };
    if let Some((k, n)) = opts.shard {
        let files = shard::shard_files(&exp, &cells, &selected, &computed, (k, n), &ctx);
        output::write_folder(&folder, &files)?;
        return Ok(RunSummary {
            folder,
            cells: selected.len(),
            forecasts: computed.iter().map(|o| o.forecasts.len()).sum(),
            seconds: started.elapsed().as_secs_f64(),
        });
    }
    let mut outputs = vec![backtest::CellOutput::default(); cells.len()];
    for (i, o) in selected.into_iter().zip(computed) {
        outputs[i] = o;
    }
    let files = finalize(&exp, &cells, outputs, &ctx)?;
    output::write_folder(&folder, &files)?;
    Ok(RunSummary {
        folder,
        cells: cells.len(),
        forecasts: count_forecasts(&exp),
        seconds: started.elapsed().as_secs_f64(),
    })
}

/// From every cell's output to the files of a results folder: combinations,
/// scores, tests, diagnostics, tables, reports and the manifest. A single
/// run and a merge of shards both end here, so they write the same bytes.
pub fn finalize(
    exp: &Experiment,
    cells: &[plan::Cell],
    mut outputs: Vec<backtest::CellOutput>,
    ctx: &RunContext,
) -> Result<Vec<(String, Vec<u8>)>> {
    backtest::combine(exp, cells, &mut outputs);
    let outputs = outputs;
    let errors = score::cell_errors(exp, cells, &outputs);
    let scores = score::scores(exp, &errors);
    let mut tests = score::comparison::run(exp, &errors);
    let (stability, fluctuation) = score::stability::rolling(exp, &errors);
    tests.extend(fluctuation);
    tests.sort_by_key(|r| (r.target, r.scheme, r.horizon));
    let diagnostics = score::stability::diagnostics(exp, cells, &outputs);
    let mut files: Vec<(String, Vec<u8>)> = vec![
        (
            "forecasts.csv".into(),
            report::tables::forecasts_csv(exp, cells, &outputs),
        ),
        (
            "scores.csv".into(),
            report::tables::scores_csv(exp, &scores),
        ),
        ("tests.csv".into(), report::tables::tests_csv(exp, &tests)),
        (
            "stability.csv".into(),
            report::tables::stability_csv(exp, &stability),
        ),
        (
            "diagnostics.csv".into(),
            report::tables::diagnostics_csv(&diagnostics),
        ),
        ("series.csv".into(), report::tables::series_csv(exp)),
        (
            "experiment.yaml".into(),
            exp.source_text.clone().into_bytes(),
        ),
        (
            "outlook.csv".into(),
            report::tables::outlook_csv(exp, cells, &outputs),
        ),
    ];
    let facts = report::manifest::RunFacts {
        seconds: ctx.started.elapsed().as_secs_f64(),
        threads: ctx.threads,
        host: host(),
        started_unix: ctx.started_unix,
        shard: ctx.shard.clone(),
        experiment_path: absolute(&exp.source_path),
    };
    let cell_facts: Vec<report::manifest::CellFacts> = cells
        .iter()
        .zip(&outputs)
        .map(|(c, o)| report::manifest::CellFacts {
            id: c.id.clone(),
            failure: o.failure.clone(),
            fallbacks: o.fallbacks,
            seconds: o.seconds,
            cached: o.cached,
        })
        .collect();
    // Reports: rendered from the tables above and the manifest's
    // deterministic part, exactly as `outturn render` does from the folder.
    let templates = report::render::default_templates();
    let templates_used = report::render::used_templates(&templates, &exp.formats);
    let core = {
        let draft = report::manifest::manifest(exp, &cell_facts, &templates_used, &[], &facts);
        let value: serde_json::Value =
            serde_json::from_slice(&draft).map_err(|e| Error::Run(format!("manifest: {e}")))?;
        report::render::manifest_core(&value)
    };
    let tables: std::collections::BTreeMap<String, Vec<u8>> = files.iter().cloned().collect();
    let rendered =
        report::render::reports(&tables, &core, &exp.formats, &templates).map_err(Error::Run)?;
    files.extend(rendered);
    let manifest = report::manifest::manifest(exp, &cell_facts, &templates_used, &files, &facts);
    files.push(("manifest.json".into(), manifest));
    Ok(files)
}

/// An absolute form of a path, for the manifest's `run` section.
pub fn absolute(p: &Path) -> String {
    std::path::absolute(p)
        .unwrap_or_else(|_| p.to_path_buf())
        .to_string_lossy()
        .to_string()
}

pub mod shard;
pub mod verify;
