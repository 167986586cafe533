//! outturn: declarative forecast experiments.
//!
//! An experiment flows one way through stages, each a folder that imports
//! only from the stages before it (`tests/architecture.rs` checks this):
//!
//! ```text
//! numerics ─► spec ─► plan ─► models ─► backtest ─► score ─► results ─► report ─► run
//! ```
//!
//! - `numerics`: least squares, the optimisers, autocovariances, distributions;
//! - `spec`: the experiment file and its data → a checked `Experiment` (the
//!   only code that reads YAML);
//! - `plan`: cells, ids, origins, estimation windows, shards;
//! - `models`: one file per family behind one trait, and the registry;
//! - `backtest`: the origin loop, run over cells in parallel; the cache;
//! - `score`: metrics, tests and diagnostics as pure functions;
//! - `results`: every output table (columns, writer, reader), the manifest,
//!   the atomic results folder;
//! - `report`: a typed view of the results laid out by the templates;
//! - `run`: the commands as thin orchestration.
//!
//! `error`, `digest` and `progress` are shared by all. The library returns typed errors
//! and never prints: progress goes through [`Progress`], which the command
//! line owns.

mod backtest;
mod digest;
pub mod error;
mod models;
mod numerics;
mod plan;
mod progress;
mod report;
mod results;
mod run;
mod score;
mod spec;

pub use error::{Error, Result};
pub use results::shard::MAX_SHARDS;
pub use run::audit::{audit, AuditOptions, AuditOutcome, Moved};
pub use run::draft::draft;
pub use run::kinds::text as kinds;
pub use run::merge::merge;
pub use run::render::render_folder as render;
pub use run::verify::{verify, Inputs as VerifyInputs, Verdict};
pub use run::{check, interrupted, run, CheckSummary, Progress, RunOptions, RunSummary, Silent};
