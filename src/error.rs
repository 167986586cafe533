//! Errors and diagnostics. Invalid input is collected as a list of
//! diagnostics (so `check` can report every problem in one pass, sorted by
//! location); failures during a run are one typed error per kind. `main`
//! maps each kind to its exit code ([`Error::exit_code`]: 2 for input that
//! is invalid or not outturn's, 1 for a run that failed, 130 interrupted).

use std::fmt;
use std::path::PathBuf;

/// Where a problem was found: a file, and optionally a line and column as an
/// editor shows them (1-based).
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord)]
pub struct Location {
    pub file: PathBuf,
    pub line: Option<usize>,
    pub column: Option<usize>,
}

/// One problem with the experiment file or its data.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Diagnostic {
    pub location: Option<Location>,
    pub message: String,
    /// The page of docs/ that explains it; by default chosen from the file
    /// the problem is in ([`Diagnostic::page`]).
    pub page: Option<&'static str>,
}

/// The reference pages messages point at (tests/docs.rs checks they exist).
pub mod pages {
    pub const EXPERIMENT: &str = "docs/experiment-file.md";
    pub const RESULTS: &str = "docs/results-folder.md";
    pub const COMMANDS: &str = "docs/commands.md";
    pub const REFUSALS: &str = "docs/refusals.md";
    pub const BATCH: &str = "docs/batch.md";
    pub const ARIMA: &str = "docs/arima.md";
    pub const ALL: [&str; 6] = [EXPERIMENT, RESULTS, COMMANDS, REFUSALS, BATCH, ARIMA];
}

impl Diagnostic {
    pub fn new(location: Option<Location>, message: impl Into<String>) -> Self {
        Diagnostic {
            location,
            message: message.into(),
            page: None,
        }
    }

    /// The same problem, explained on `page`.
    pub fn see(mut self, page: &'static str) -> Self {
        self.page = Some(page);
        self
    }

    /// The page that explains this problem: its own, else by the kind of
    /// file it is in — the experiment file or its data, a file of a results
    /// or shard folder, or none (a command's arguments).
    pub fn page(&self) -> &'static str {
        if let Some(p) = self.page {
            return p;
        }
        let Some(loc) = &self.location else {
            return pages::COMMANDS;
        };
        let name = loc
            .file
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_default();
        match name.as_str() {
            "manifest.json" | "cells.txt" => pages::RESULTS,
            _ if name.ends_with(".j2") => pages::COMMANDS,
            _ => pages::EXPERIMENT,
        }
    }
}

impl fmt::Display for Diagnostic {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match &self.location {
            Some(loc) => {
                write!(f, "{}", loc.file.display())?;
                if let Some(line) = loc.line {
                    write!(f, ":{line}")?;
                    if let Some(col) = loc.column {
                        write!(f, ":{col}")?;
                    }
                }
                write!(f, ": {}", self.message)
            }
            None => write!(f, "{}", self.message),
        }?;
        if !self.message.contains("docs/") {
            write!(f, " ({})", self.page())?;
        }
        Ok(())
    }
}

#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// The experiment or its data is invalid; nothing was written.
    #[error("{}", render_diagnostics(.0))]
    Invalid(Vec<Diagnostic>),
    /// A folder to be replaced that outturn did not write; it is left untouched.
    #[error("error: {} exists and is not a results folder outturn wrote: {why}; it is left as it is — choose another --out, or empty or remove it first (docs/refusals.md)", path.display())]
    NotOurs { path: PathBuf, why: String },
    /// Reading or writing a file failed.
    #[error("error: {context}: {source} (docs/commands.md)")]
    Io {
        context: String,
        source: std::io::Error,
    },
    /// The report could not be built from tables the run itself wrote.
    #[error("error: the report could not be built: {0} (docs/commands.md)")]
    Report(String),
    /// The worker threads could not be started.
    #[error("error: cannot start {threads} worker threads: {message} (docs/commands.md)")]
    Threads { threads: usize, message: String },
    /// Something outturn relies on did not hold (a bug: please report it).
    #[error("error: internal: {0} — please report it (docs/commands.md)")]
    Internal(String),
    /// An interrupt stopped the run; earlier results are left as they were.
    #[error("interrupted: earlier results are left as they were")]
    Interrupted,
}

impl Error {
    pub fn invalid(location: Option<Location>, message: impl Into<String>) -> Self {
        Error::Invalid(vec![Diagnostic::new(location, message)])
    }
    pub fn io(context: impl Into<String>, source: std::io::Error) -> Self {
        Error::Io {
            context: context.into(),
            source,
        }
    }
    /// Exit code (SPEC §1, §7.9).
    pub fn exit_code(&self) -> i32 {
        match self {
            Error::Invalid(_) | Error::NotOurs { .. } => 2,
            Error::Interrupted => 130,
            Error::Io { .. } | Error::Report(_) | Error::Threads { .. } | Error::Internal(_) => 1,
        }
    }
}

fn render_diagnostics(diags: &[Diagnostic]) -> String {
    let mut sorted: Vec<&Diagnostic> = diags.iter().collect();
    sorted.sort_by(|a, b| a.location.cmp(&b.location).then(a.message.cmp(&b.message)));
    sorted.dedup_by(|a, b| a == b);
    let lines: Vec<String> = sorted.iter().map(|d| format!("error: {d}")).collect();
    lines.join("\n")
}

pub type Result<T> = std::result::Result<T, Error>;

/// Levenshtein distance, for "did you mean" suggestions.
pub fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    let mut cur = vec![0; b.len() + 1];
    for i in 1..=a.len() {
        cur[0] = i;
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            cur[j] = (prev[j] + 1).min(cur[j - 1] + 1).min(prev[j - 1] + cost);
        }
        std::mem::swap(&mut prev, &mut cur);
    }
    prev[b.len()]
}

/// The closest of `options` to `word`, if any is reasonably close.
pub fn nearest<'a>(word: &str, options: &[&'a str]) -> Option<&'a str> {
    let lw = word.to_lowercase();
    options
        .iter()
        .map(|o| (edit_distance(&lw, &o.to_lowercase()), *o))
        .filter(|(d, o)| *d <= (o.len().max(word.len()) / 2).max(2))
        .min()
        .map(|(_, o)| o)
}

#[cfg(test)]
mod tests {
    use super::*;
    #[test]
    fn edit_distance_known_values() {
        // Classic textbook pair (kitten/sitting = 3), common practice.
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(
            nearest("horizon", &["horizons", "schemes"]),
            Some("horizons")
        );
        assert_eq!(nearest("zzzzzz", &["horizons", "schemes"]), None);
    }
}
