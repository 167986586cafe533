//! spec: the experiment file (SPEC §2) and its data, parsed and checked into
//! a typed [`Experiment`] — the only code that reads YAML. Raw strings and
//! options never leave this module: periods are resolved to positions,
//! candidate ids are built, and every problem points at a key, line or row.
//!
//! `experiment` holds the top level (what the file declares, then the
//! data), `candidates` and `families` the model entries, `schemes` and
//! `scoring` their sections; `data`, `period` and `resolve` read the CSV
//! and place it on positions; `yaml` and `decode` are the typed YAML layer.

mod candidates;
pub mod data;
pub mod decode;
pub mod dummies;
mod experiment;
mod families;
mod limits;
pub mod model;
pub mod period;
mod predictors;
pub mod resolve;
mod schemes;
mod scoring;
mod theta;
pub mod yaml;

pub use limits::{DEFAULT_AUDIT_ORIGINS, MAX_AUDIT_ORIGINS};
pub use model::*;

use crate::error::{Diagnostic, Error, Location, Result};
use decode::Ctx;
use std::path::Path;

/// The experiment file's text and YAML tree, or the problem that stops there.
fn parse_file(path: &Path) -> Result<(String, yaml::Node)> {
    let file_loc = || {
        Some(Location {
            file: path.to_path_buf(),
            line: None,
            column: None,
        })
    };
    regular_file(path).map_err(|m| Error::invalid(file_loc(), m))?;
    let bytes = std::fs::read(path)
        .map_err(|e| Error::invalid(file_loc(), format!("cannot read the experiment file: {e}")))?;
    let text = String::from_utf8(bytes)
        .map_err(|_| Error::invalid(file_loc(), "the experiment file is not UTF-8 text"))?;
    let root = parse_text(path, &text)?;
    Ok((text, root))
}

/// Refuse what exists but is not a regular file (a folder, a FIFO, a
/// device): reading it could block or never end. What does not exist is
/// left to the read, whose message says so.
pub(crate) fn regular_file(path: &Path) -> std::result::Result<(), String> {
    match std::fs::metadata(path) {
        Ok(m) if !m.is_file() => Err(format!(
            "{} is not a regular file (a folder, a pipe or a device cannot be read as one)",
            path.display()
        )),
        _ => Ok(()),
    }
}

fn parse_text(path: &Path, text: &str) -> Result<yaml::Node> {
    // A byte-order mark some editors write is not part of the YAML.
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    yaml::parse(text).map_err(|e| {
        Error::invalid(
            Some(Location {
                file: path.to_path_buf(),
                line: Some(e.line),
                column: Some(e.column),
            }),
            format!("the file is not valid YAML: {}", e.message),
        )
    })
}

/// The problems collected, or a generic one when none says more.
fn invalid(path: &Path, mut ctx: Ctx) -> Error {
    if ctx.diags.is_empty() {
        ctx.diags.push(Diagnostic::new(
            Some(Location {
                file: path.to_path_buf(),
                line: None,
                column: None,
            }),
            "the experiment is invalid",
        ));
    }
    Error::Invalid(ctx.diags)
}

/// Read, parse and check an experiment file and its data.
pub fn load(path: &Path) -> Result<Experiment> {
    let (text, root) = parse_file(path)?;
    let mut ctx = Ctx::new(path);
    let exp = experiment::decode(&mut ctx, &root)
        .and_then(|d| experiment::with_data(&mut ctx, d, path, &text, None));
    match exp {
        Some(exp) if ctx.diags.is_empty() => Ok(exp),
        _ => Err(invalid(path, ctx)),
    }
}

/// An experiment from its text, with its data file read from `data_at`
/// (not looked for beside `path`, which names the file in messages and the
/// manifest): what `verify` uses on a results folder copied elsewhere.
pub fn load_text(path: &Path, text: &str, data_at: &Path) -> Result<Experiment> {
    let root = parse_text(path, text)?;
    let mut ctx = Ctx::new(path);
    let exp = experiment::decode(&mut ctx, &root)
        .and_then(|d| experiment::with_data(&mut ctx, d, path, text, Some(data_at)));
    match exp {
        Some(exp) if ctx.diags.is_empty() => Ok(exp),
        _ => Err(invalid(path, ctx)),
    }
}

/// Check an experiment file's text without reading its data: what a results
/// folder's stored `experiment.yaml` declares (`path` names it in messages).
pub fn declaration(path: &Path, text: &str) -> Result<Declaration> {
    let root = parse_text(path, text)?;
    let mut ctx = Ctx::new(path);
    let declared =
        experiment::decode(&mut ctx, &root).and_then(|d| d.declaration(&ctx, path, text));
    match declared {
        Some(d) if ctx.diags.is_empty() => Ok(d),
        _ => Err(invalid(path, ctx)),
    }
}
