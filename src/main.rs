//! The `outturn` command line: parse arguments, call the library, map errors
//! to exit codes (SPEC §1: 0 success, 1 the run failed, 2 invalid input).

use clap::{Parser, Subcommand};
use std::path::PathBuf;
use std::process::ExitCode;

/// The most worker threads a run starts (more only adds waiting).
const MAX_JOBS: i64 = 1024;

#[derive(Parser)]
#[command(
    name = "outturn",
    version,
    about = "Run declarative forecast experiments: backtest a grid of models without look-ahead, score and report."
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Check, run, and write the results folder.
    Run {
        /// The experiment file (YAML).
        file: PathBuf,
        /// Results folder (default: results/<experiment>/).
        #[arg(long)]
        out: Option<PathBuf>,
        /// Worker threads (default: all cores).
        #[arg(long, value_parser = clap::value_parser!(u16).range(1..=MAX_JOBS))]
        jobs: Option<u16>,
        /// No progress output.
        #[arg(long)]
        quiet: bool,
        /// Run one shard of the cells and write a shard folder: K/N, or
        /// `slurm` (SLURM_ARRAY_TASK_ID, SLURM_ARRAY_TASK_COUNT), or `k8s`
        /// (JOB_COMPLETION_INDEX with the count from OUTTURN_SHARDS, or `k8s/N`).
        #[arg(long)]
        shard: Option<String>,
        /// Do not read or write the resume cache of finished cells.
        #[arg(long)]
        no_cache: bool,
    },
    /// Check that no forecast depends on data hidden at its origin; write nothing.
    Audit {
        /// The experiment file (YAML).
        file: PathBuf,
        /// Origins audited per cell (default: the experiment's audit.origins, else 3).
        #[arg(long, value_parser = clap::value_parser!(u16).range(1..=1000))]
        origins: Option<u16>,
        /// Worker threads (default: all cores).
        #[arg(long, value_parser = clap::value_parser!(u16).range(1..=MAX_JOBS))]
        jobs: Option<u16>,
    },
    /// Validate the experiment and its data; print the grid size; write nothing.
    Check {
        /// The experiment file (YAML).
        file: PathBuf,
    },
    /// Rerun the experiment recorded in a results folder and compare every output byte for byte.
    Verify {
        /// The results folder.
        dir: PathBuf,
        /// Worker threads (default: all cores).
        #[arg(long, value_parser = clap::value_parser!(u16).range(1..=MAX_JOBS))]
        jobs: Option<u16>,
        /// A folder holding the data file, for a results folder copied to
        /// another machine (else it is looked for beside the recorded
        /// experiment file and the results folder).
        #[arg(long)]
        data: Option<PathBuf>,
        /// The templates the reports were rendered with, if not the built-in
        /// ones (after `render --templates`).
        #[arg(long)]
        templates: Option<PathBuf>,
    },
    /// Join the shard folders of one experiment into one results folder.
    Merge {
        /// Shard folders written by `run --shard`.
        #[arg(required = true)]
        dirs: Vec<PathBuf>,
        /// The results folder to write.
        #[arg(long)]
        out: PathBuf,
    },
    /// Re-render the reports of a results folder from its stored tables.
    Render {
        /// The results folder.
        dir: PathBuf,
        /// A folder holding your own report.md.j2 and report.html.j2.
        #[arg(long)]
        templates: Option<PathBuf>,
    },
    /// Inspect a CSV and print a commented starter experiment file.
    Draft {
        /// The data file (CSV with a header row).
        data: PathBuf,
    },
    /// List model families, metrics and tests with one line each.
    Kinds,
}

/// Print the audit's outcome on standard output; true when a forecast moved.
fn print_audit(a: &outturn::AuditOutcome) -> bool {
    println!(
        "{} checks across {} cells, {} forecasts moved",
        a.checks,
        a.cells,
        a.moved.len()
    );
    for m in &a.moved {
        println!(
            "moved: target {}, candidate {}, scheme {}, horizon {}, origin {}: {}",
            m.target, m.candidate, m.scheme, m.horizon, m.origin, m.what
        );
    }
    if a.path_differences > 0 {
        println!("{} forecasts of the run differ from the same estimation made from scratch on the same data (reached another way; docs/commands.md#audit)", a.path_differences);
    }
    if a.unchecked > 0 {
        println!(
            "{} checks not made: the estimation fails at that origin with and without the change",
            a.unchecked
        );
    }
    !a.moved.is_empty()
}

/// `--shard` as (K, N), 1-based.
fn parse_shard(text: &str) -> Result<(usize, usize), String> {
    let env = |name: &str| -> Result<usize, String> {
        std::env::var(name)
            .map_err(|_| format!("--shard {text}: the environment variable {name} is not set"))?
            .trim()
            .parse::<usize>()
            .map_err(|_| format!("--shard {text}: {name} is not a whole number"))
    };
    let (k, n) = if text == "slurm" {
        // Array ids may start at 0 or 1 (--array=0-3 or 1-4); count from the smallest.
        let id = env("SLURM_ARRAY_TASK_ID")?;
        let min = env("SLURM_ARRAY_TASK_MIN").unwrap_or(if id == 0 { 0 } else { 1 });
        (
            id.checked_sub(min)
                .ok_or("--shard slurm: SLURM_ARRAY_TASK_ID is below SLURM_ARRAY_TASK_MIN")?
                + 1,
            env("SLURM_ARRAY_TASK_COUNT")?,
        )
    } else if let Some(rest) = text.strip_prefix("k8s") {
        let n = match rest.strip_prefix('/') {
            Some(n) => n.parse().map_err(|_| {
                format!("--shard {text}: the count after k8s/ is not a whole number")
            })?,
            None if rest.is_empty() => env("OUTTURN_SHARDS")?,
            None => return Err(format!("--shard {text}: write k8s or k8s/N")),
        };
        (env("JOB_COMPLETION_INDEX")? + 1, n)
    } else {
        let (k, n) = text
            .split_once('/')
            .ok_or_else(|| format!("--shard {text}: write K/N, e.g. 2/8, or slurm, or k8s"))?;
        let k = k
            .trim()
            .parse()
            .map_err(|_| format!("--shard {text}: K is not a whole number"))?;
        let n = n
            .trim()
            .parse()
            .map_err(|_| format!("--shard {text}: N is not a whole number"))?;
        (k, n)
    };
    if n > outturn::MAX_SHARDS {
        return Err(format!(
            "--shard {text}: at most {} shards (docs/refusals.md)",
            outturn::MAX_SHARDS
        ));
    }
    if n == 0 || k == 0 || k > n {
        return Err(format!(
            "--shard {text}: shard {k} of {n} does not exist (K runs from 1 to N)"
        ));
    }
    Ok((k, n))
}

/// The progress bar on a terminal (nothing with `--quiet` or when stderr
/// is not a terminal), and developer timing under OUTTURN_DEBUG_TIMING.
struct Bar {
    show: bool,
    timing: bool,
    bar: std::sync::OnceLock<indicatif::ProgressBar>,
    cells: std::sync::atomic::AtomicUsize,
    total_cells: std::sync::atomic::AtomicUsize,
}

impl Bar {
    fn new(quiet: bool) -> Bar {
        use std::io::IsTerminal;
        Bar {
            show: !quiet && std::io::stderr().is_terminal(),
            timing: std::env::var_os("OUTTURN_DEBUG_TIMING").is_some(),
            bar: std::sync::OnceLock::new(),
            cells: std::sync::atomic::AtomicUsize::new(0),
            total_cells: std::sync::atomic::AtomicUsize::new(0),
        }
    }
}

impl outturn::Progress for Bar {
    fn begin(&self, cells: usize, forecasts: usize) {
        if !self.show {
            return;
        }
        self.total_cells
            .store(cells, std::sync::atomic::Ordering::Relaxed);
        // Counted in forecasts, so a long cell moves as its origins go by;
        // the clock and the estimate of the time left tick every second.
        let pb = indicatif::ProgressBar::new(forecasts as u64);
        pb.set_style(
            indicatif::ProgressStyle::with_template(
                "{spinner} backtesting [{bar:30}] {pos}/{len} forecasts, {msg} · {elapsed} elapsed, about {eta} left",
            )
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar())
            .progress_chars("=> "),
        );
        pb.set_message(format!("0/{cells} cells"));
        pb.enable_steady_tick(std::time::Duration::from_millis(500));
        let _ = self.bar.set(pb);
    }
    fn forecasts_done(&self, forecasts: usize) {
        if let Some(b) = self.bar.get() {
            b.inc(forecasts as u64);
        }
    }
    fn cell_done(&self) {
        if let Some(b) = self.bar.get() {
            use std::sync::atomic::Ordering;
            let done = self.cells.fetch_add(1, Ordering::Relaxed) + 1;
            b.set_message(format!(
                "{done}/{} cells",
                self.total_cells.load(Ordering::Relaxed)
            ));
        }
    }
    fn end(&self) {
        if let Some(b) = self.bar.get() {
            b.finish_and_clear();
        }
    }
    fn step(&self, step: &str, seconds: f64) {
        if self.timing {
            eprintln!("timing: {step} at {seconds:.3} s");
        }
    }
}

/// "0.4 s", "3 min", "2.5 h".
fn duration_words(seconds: f64) -> String {
    if seconds < 90.0 {
        format!("{:.1} s", seconds.max(0.1))
    } else if seconds < 5400.0 {
        format!("{:.0} min", seconds / 60.0)
    } else {
        format!("{:.1} h", seconds / 3600.0)
    }
}

/// Results were written but some cells failed (exit 3): said on stderr even
/// under `--quiet`, so a scheduled job's log shows it.
fn partial(failed: &[(String, String)], cells: usize, folder: &std::path::Path) {
    eprintln!(
        "error: {} of {cells} cells could not be estimated; {} holds the results of the others, and its report and manifest list these (docs/commands.md, exit code 3):",
        failed.len(),
        folder.display()
    );
    for (id, why) in failed.iter().take(20) {
        eprintln!("  {id}: {why}");
    }
    if failed.len() > 20 {
        eprintln!("  … and {} more (see manifest.json)", failed.len() - 20);
    }
}

/// One match over the commands, each arm a few lines that parse the flags and
/// call the library: the length is the number of commands, not logic.
fn main() -> ExitCode {
    let _ = ctrlc::set_handler(|| {
        if outturn::interrupted() {
            eprintln!("interrupted after the results folder was swapped in: it holds this run's complete results");
        } else {
            eprintln!("interrupted: earlier results are left as they were; nothing of this run was written");
        }
        std::process::exit(130);
    });
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    let result = match cli.command {
        Command::Check { file } => outturn::check(&file).map(|s| {
            println!(
                "{}: valid. {} target(s) × {} candidate(s) × {} scheme(s) = {} cells; {} horizon(s); {} forecasts to compute.",
                s.experiment, s.targets, s.candidates, s.schemes, s.cells, s.horizons, s.forecasts
            );
            println!(
                "estimated run time: about {} on {} thread(s) (an estimate: least-squares and benchmark cells timed here, arima, smoothing and theta cells from one timed estimation each)",
                duration_words(s.estimated_seconds),
                s.threads
            );
            for w in &s.warnings {
                eprintln!("warning: {w}");
            }
        }),
        Command::Run { file, out, jobs, quiet, shard, no_cache } => {
            let shard = match shard.as_deref().map(parse_shard).transpose() {
                Ok(s) => s,
                Err(msg) => {
                    eprintln!("error: {msg}");
                    return ExitCode::from(2);
                }
            };
            let opts = outturn::RunOptions { out, jobs: jobs.map(usize::from), shard, no_cache };
            match outturn::run(&file, &opts, &Bar::new(quiet)) {
                Ok(s) => {
                    if !quiet {
                        for w in &s.warnings {
                            eprintln!("warning: {w}");
                        }
                        eprintln!("{} cells, {} forecasts in {:.2} s → {}", s.cells, s.forecasts, s.seconds, s.folder.display());
                    }
                    if !s.failed_cells.is_empty() {
                        partial(&s.failed_cells, s.cells, &s.folder);
                        return ExitCode::from(3);
                    }
                    Ok(())
                }
                Err(e) => Err(e),
            }
        }
        Command::Audit { file, origins, jobs } => {
            let opts = outturn::AuditOptions {
                origins: origins.map(usize::from),
                jobs: jobs.map(usize::from),
            };
            match outturn::audit(&file, &opts) {
                Ok(a) if print_audit(&a) => return ExitCode::from(1),
                Ok(_) => Ok(()),
                Err(e) => Err(e),
            }
        }
        Command::Verify { dir, jobs, data, templates } => match outturn::verify(
            &dir,
            jobs.map(usize::from),
            &outturn::VerifyInputs { data: data.as_deref(), templates: templates.as_deref() },
        ) {
            Ok(v) if v.differences.is_empty() => {
                println!("verified: all {} outputs of {} are byte-identical to a rerun", v.files, dir.display());
                Ok(())
            }
            Ok(v) => {
                for d in &v.differences {
                    println!("DIFFERENT: {d}");
                }
                return ExitCode::from(1);
            }
            Err(e) => Err(e),
        },
        Command::Merge { dirs, out } => match outturn::merge(&dirs, &out) {
            Ok((cells, failed)) => {
                eprintln!("merged {} shard folder(s), {cells} cells → {}", dirs.len(), out.display());
                if !failed.is_empty() {
                    partial(&failed, cells, &out);
                    return ExitCode::from(3);
                }
                Ok(())
            }
            Err(e) => Err(e),
        },
        Command::Render { dir, templates } => outturn::render(&dir, templates.as_deref()),
        Command::Draft { data } => outturn::draft(&data).map(|text| print!("{text}")),
        Command::Kinds => {
            print!("{}", outturn::kinds());
            Ok(())
        }
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("{e}");
            ExitCode::from(e.exit_code() as u8)
        }
    }
}
