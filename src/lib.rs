//! outturn: declarative forecast experiments. Stages flow one way:
//! spec (parse + check) → plan (grid) → backtest (fit and forecast) →
//! score (metrics) → report (tables, manifest, HTML, Markdown).
//! Library code returns typed errors and never exits; `main` maps them to
//! exit codes.

pub mod backtest;
pub mod error;
pub mod linalg;
pub mod models;
pub mod output;
pub mod plan;
pub mod report;
pub mod score;
pub mod spec;

use error::{Error, Result};
use spec::{Experiment, ReportFormat};
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
    backtest::run(&exp, &cells, &|| {})?;
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

pub fn run(path: &Path, opts: &RunOptions) -> Result<RunSummary> {
    let started = Instant::now();
    let started_unix = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs())
        .unwrap_or(0);
    let exp = spec::load(path)?;
    let folder = opts.out.clone().unwrap_or_else(|| default_folder(&exp));
    let cells = plan::cells(&exp);
    let threads = opts
        .jobs
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

    use std::io::IsTerminal;
    let bar = if !opts.quiet && std::io::stderr().is_terminal() {
        let pb = indicatif::ProgressBar::new(cells.len() as u64);
        pb.set_style(
            indicatif::ProgressStyle::with_template(
                "{spinner} backtesting [{bar:30}] {pos}/{len} cells {elapsed}",
            )
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar())
            .progress_chars("=> "),
        );
        Some(pb)
    } else {
        None
    };
    let tick = || {
        if let Some(b) = &bar {
            b.inc(1);
        }
    };
    let outputs = pool.install(|| backtest::run(&exp, &cells, &tick));
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let outputs = outputs?;

    let errors = score::cell_errors(&exp, &cells, &outputs);
    let scores = score::scores(&exp, &errors);
    let mut tests = score::comparison::run(&exp, &errors);
    let (stability, fluctuation) = score::stability::rolling(&exp, &errors);
    tests.extend(fluctuation);
    tests.sort_by_key(|r| (r.target, r.scheme, r.horizon));
    let diagnostics = score::stability::diagnostics(&exp, &cells, &outputs);
    let mut files: Vec<(String, Vec<u8>)> = vec![
        (
            "forecasts.csv".into(),
            report::tables::forecasts_csv(&exp, &cells, &outputs),
        ),
        (
            "scores.csv".into(),
            report::tables::scores_csv(&exp, &scores),
        ),
        ("tests.csv".into(), report::tables::tests_csv(&exp, &tests)),
        (
            "stability.csv".into(),
            report::tables::stability_csv(&exp, &stability),
        ),
        (
            "diagnostics.csv".into(),
            report::tables::diagnostics_csv(&diagnostics),
        ),
        ("series.csv".into(), report::tables::series_csv(&exp)),
        (
            "experiment.yaml".into(),
            exp.source_text.clone().into_bytes(),
        ),
        (
            "outlook.csv".into(),
            report::tables::outlook_csv(&exp, &cells, &outputs),
        ),
    ];
    let data = report::report_data(&exp, &cells, &outputs, &scores);
    let mut templates_used = Vec::new();
    for (name, source) in report::DEFAULT_TEMPLATES {
        let (format, out_name) = if name.starts_with("report.html") {
            (ReportFormat::Html, "report.html")
        } else {
            (ReportFormat::Markdown, "report.md")
        };
        if !exp.formats.contains(&format) {
            continue;
        }
        let text = report::render(name, source, &data).map_err(Error::Run)?;
        templates_used.push((name.to_string(), source.to_string()));
        files.push((out_name.into(), text.into_bytes()));
    }
    let forecasts = count_forecasts(&exp);
    let facts = report::manifest::RunFacts {
        seconds: started.elapsed().as_secs_f64(),
        threads,
        host: std::fs::read_to_string("/etc/hostname")
            .map(|s| s.trim().to_string())
            .unwrap_or_default(),
        started_unix,
        shard: "1/1".into(),
    };
    let cell_facts: Vec<report::manifest::CellFacts> = cells
        .iter()
        .zip(&outputs)
        .map(|(c, o)| report::manifest::CellFacts {
            id: c.id.clone(),
            failure: o.failure.clone(),
            fallbacks: o.fallbacks,
            seconds: o.seconds,
        })
        .collect();
    let manifest = report::manifest::manifest(&exp, &cell_facts, &templates_used, &files, &facts);
    files.push(("manifest.json".into(), manifest));
    output::write_folder(&folder, &files)?;
    Ok(RunSummary {
        folder,
        cells: cells.len(),
        forecasts,
        seconds: started.elapsed().as_secs_f64(),
    })
}
