//! The `outturn` command line: parse arguments, call the library, map errors
//! to exit codes (SPEC §1: 0 success, 1 the run failed, 2 invalid input).

use clap::{Parser, Subcommand};
use std::path::PathBuf;
use std::process::ExitCode;

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
        #[arg(long, value_parser = clap::value_parser!(u16).range(1..))]
        jobs: Option<u16>,
        /// No progress output.
        #[arg(long)]
        quiet: bool,
    },
    /// Validate the experiment and its data; print the grid size; write nothing.
    Check {
        /// The experiment file (YAML).
        file: PathBuf,
    },
}

fn main() -> ExitCode {
    let _ = ctrlc::set_handler(|| {
        outturn::output::cleanup_pending();
        eprintln!("interrupted: earlier results are left as they were");
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
        }),
        Command::Run { file, out, jobs, quiet } => {
            let opts = outturn::RunOptions { out, jobs: jobs.map(usize::from), quiet };
            outturn::run(&file, &opts).map(|s| {
                if !quiet {
                    eprintln!("{} cells, {} forecasts in {:.2} s → {}", s.cells, s.forecasts, s.seconds, s.folder.display());
                }
            })
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
