//! The typed rows of a results folder's tables, read by one reader per
//! table: from a folder on disk (`outturn render`, streaming the large
//! tables and keeping only the targets wanted), or from one target's slice
//! of every table in memory (a run's worker, so that `run` and `render`
//! read the same rows). Slices append in target order to the rows of the
//! whole folder.

use super::grid::Grid;
use super::text::ReadError;
use super::{
    diagnostics, forecasts, outlook, parameters, scores, series, stability, summary, tests,
};
use std::borrow::Cow;
use std::collections::BTreeMap;
use std::io::Read;
use std::path::Path;

/// Tables by file name.
pub type Tables<'a> = BTreeMap<&'a str, &'a [u8]>;

/// The rows of a folder's tables (or of one target's slice of them); rows
/// keep the files' order. A table that is absent has no rows.
#[derive(Debug, Default)]
pub struct Rows {
    /// The metric columns of scores.csv, in order.
    pub metric_names: Vec<String>,
    pub scores: Vec<scores::Row>,
    pub tests: Vec<tests::Row>,
    pub forecasts: forecasts::Forecasts,
    /// The probabilities of forecasts.csv's quantile columns, ascending.
    pub forecast_quantiles: Vec<f64>,
    pub outlook: Vec<outlook::Row>,
    /// parameters.csv's rows (of the targets kept).
    pub parameters: Vec<parameters::Row>,
    pub stability: stability::Stability,
    pub series: Vec<series::Series>,
    pub diagnostics: Vec<diagnostics::Row>,
    /// summary.csv's rows (runs with two or more targets).
    pub summary: Vec<crate::score::summary::SummaryRow>,
    /// Backtest forecasts of the targets whose score rows were let go
    /// ([`Rows::without_target_rows`], [`Rows::forget`]), still counted.
    pub forecasts_let_go: usize,
}

/// The backtest forecasts the score rows count: each listed horizon's
/// count over the whole evaluation sample.
pub fn forecasts_counted(scores: &[scores::Row]) -> usize {
    scores
        .iter()
        .filter(|r| r.horizon.is_some() && r.period_set.is_none())
        .map(|r| r.n)
        .sum()
}

/// Where the tables come from.
enum Source<'a> {
    Memory(&'a Tables<'a>),
    Folder(&'a Path),
}

impl Source<'_> {
    /// A small table whole, or None when it is absent.
    fn bytes(&self, file: &'static str) -> Result<Option<Cow<'_, [u8]>>, ReadError> {
        match self {
            Source::Memory(tables) => Ok(tables.get(file).map(|b| Cow::Borrowed(*b))),
            Source::Folder(dir) => match std::fs::read(dir.join(file)) {
                Ok(bytes) => Ok(Some(Cow::Owned(bytes))),
                Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(None),
                Err(source) => Err(ReadError::Io { file, source }),
            },
        }
    }

    /// A large table to read row by row, or None when it is absent.
    fn stream(&self, file: &'static str) -> Result<Option<Box<dyn Read + '_>>, ReadError> {
        match self {
            Source::Memory(tables) => Ok(tables.get(file).map(|b| Box::new(*b) as Box<dyn Read>)),
            Source::Folder(dir) => match std::fs::File::open(dir.join(file)) {
                Ok(f) => Ok(Some(Box::new(std::io::BufReader::with_capacity(
                    1 << 20,
                    f,
                )))),
                Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(None),
                Err(source) => Err(ReadError::Io { file, source }),
            },
        }
    }
}

/// Which rows a folder's reading keeps: the targets of the large tables,
/// and the (target, candidate) pairs of parameters.csv.
pub type Keep<'a> = (&'a dyn Fn(usize) -> bool, &'a dyn Fn(usize, usize) -> bool);

impl Rows {
    /// The rows of `tables` (`scores.csv` required) against `grid`.
    pub fn read(tables: &Tables, grid: &Grid) -> Result<Rows, ReadError> {
        Rows::read_from(
            &Source::Memory(tables),
            None,
            grid,
            (&|_| true, &|_, _| true),
        )
    }

    /// The rows of the folder `dir` against `grid`, given its scores.csv
    /// (read already, for the grid). Of forecasts.csv, stability.csv and
    /// series.csv only the targets `keep` accepts are kept (every predictor
    /// series is), of parameters.csv only the (target, candidate) pairs
    /// `keep_parameters` accepts.
    pub fn read_folder(
        dir: &Path,
        scores: &[u8],
        grid: &Grid,
        keep: Keep<'_>,
    ) -> Result<Rows, ReadError> {
        Rows::read_from(&Source::Folder(dir), Some(scores), grid, keep)
    }

    fn read_from(
        source: &Source,
        scores: Option<&[u8]>,
        grid: &Grid,
        (keep, keep_parameters): Keep<'_>,
    ) -> Result<Rows, ReadError> {
        let lookup = grid.lookup();
        let scores = match scores {
            Some(bytes) => scores::read(bytes, &lookup)?,
            None => match source.bytes(scores::FILE)? {
                Some(bytes) => scores::read(&bytes, &lookup)?,
                None => {
                    return Err(ReadError::invalid(
                        scores::FILE,
                        None,
                        "the results folder has no scores.csv",
                    ))
                }
            },
        };
        let small = |file: &'static str| source.bytes(file);
        let mut rows = Rows {
            metric_names: scores.metric_names,
            scores: scores.rows,
            ..Rows::default()
        };
        if let Some(bytes) = small(tests::FILE)? {
            rows.tests = tests::read(&bytes, &lookup)?;
        }
        if let Some(input) = source.stream(forecasts::FILE)? {
            (rows.forecasts, rows.forecast_quantiles) = forecasts::read(input, &lookup, keep)?;
        }
        if let Some(bytes) = small(outlook::FILE)? {
            rows.outlook = outlook::read(&bytes, &lookup)?;
        }
        if let Some(input) = source.stream(parameters::FILE)? {
            rows.parameters = parameters::read(input, &lookup, keep_parameters)?;
        }
        if let Some(input) = source.stream(stability::FILE)? {
            rows.stability = stability::read(input, &lookup, keep)?;
        }
        if let Some(input) = source.stream(series::FILE)? {
            rows.series = series::read(input, &lookup, keep)?;
        }
        if let Some(bytes) = small(diagnostics::FILE)? {
            rows.diagnostics = diagnostics::read(&bytes)?;
        }
        if let Some(bytes) = small(summary::FILE)? {
            rows.summary = summary::read(&bytes, &lookup)?;
        }
        Ok(rows)
    }

    /// Add the rows of the next slice (a later target's): the same as
    /// reading the two slices' tables joined.
    pub fn append(&mut self, next: Rows) {
        if self.metric_names.is_empty() {
            self.metric_names = next.metric_names;
        }
        self.scores.extend(next.scores);
        self.tests.extend(next.tests);
        if self.forecast_quantiles.is_empty() {
            self.forecast_quantiles = next.forecast_quantiles;
        }
        for (k, v) in next.forecasts {
            self.forecasts.entry(k).or_default().extend(v);
        }
        self.outlook.extend(next.outlook);
        self.parameters.extend(next.parameters);
        for (k, v) in next.stability {
            self.stability.entry(k).or_default().extend(v);
        }
        for x in next.series {
            match self
                .series
                .iter_mut()
                .find(|s| s.name == x.name && s.role == x.role)
            {
                Some(s) => s.extend(x),
                None => self.series.push(x),
            }
        }
        self.diagnostics.extend(next.diagnostics);
        self.summary.extend(next.summary);
        self.forecasts_let_go += next.forecasts_let_go;
    }

    /// What a target shown without detail leaves for the whole report: the
    /// tables' column facts and the diagnostics (predictors' rows come with
    /// the first target); its own rows are dropped.
    pub fn without_target_rows(self) -> Rows {
        Rows {
            forecasts_let_go: self.forecasts_let_go + forecasts_counted(&self.scores),
            metric_names: self.metric_names,
            forecast_quantiles: self.forecast_quantiles,
            // The report reads a target's own diagnostics only in its
            // detail; the predictors' rows serve every target.
            diagnostics: self
                .diagnostics
                .into_iter()
                .filter(|d| d.kind == "predictor")
                .collect(),
            ..Rows::default()
        }
    }

    /// Drop target `t`'s rows from every table: for a target that lost its
    /// detail (the predictors' diagnostics stay; they serve every target).
    pub fn forget(&mut self, t: usize, grid: &Grid) {
        let name = grid.targets[t].as_str();
        // Its diagnostics' subjects: the target, and its cells' ids.
        let cells: std::collections::HashSet<String> = grid
            .candidates
            .iter()
            .flat_map(|c| grid.schemes.iter().map(move |s| format!("{name}/{c}/{s}")))
            .collect();
        let own = |subject: &str| subject == name || cells.contains(subject);
        self.diagnostics
            .retain(|d| d.kind == "predictor" || !own(&d.subject));
        let (gone, kept): (Vec<_>, Vec<_>) = std::mem::take(&mut self.scores)
            .into_iter()
            .partition(|r| r.target == t);
        self.forecasts_let_go += forecasts_counted(&gone);
        self.scores = kept;
        self.tests.retain(|r| r.target != t);
        self.forecasts.retain(|k, _| k.0 != t);
        self.outlook.retain(|r| r.target != t);
        self.parameters.retain(|r| r.target != t);
        self.stability.retain(|k, _| k.0 != t);
        self.series
            .retain(|x| !(x.role == "target" && x.name == name));
    }
}
