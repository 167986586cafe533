//! The checked experiment: typed, resolved, and free of raw strings and
//! options that later stages would have to interpret again.

use super::period::{Frequency, LabelStyle};
use std::path::PathBuf;

mod family;
pub use family::*;

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Transform {
    None,
    Log,
    Diff,
    LogDiff,
    PctChange,
    SeasonalDiff,
}

impl Transform {
    pub const NAMES: [&'static str; 6] = [
        "none",
        "log",
        "diff",
        "log_diff",
        "pct_change",
        "seasonal_diff",
    ];
    pub fn parse(s: &str) -> Option<Transform> {
        Some(match s {
            "none" => Transform::None,
            "log" => Transform::Log,
            "diff" => Transform::Diff,
            "log_diff" => Transform::LogDiff,
            "pct_change" => Transform::PctChange,
            "seasonal_diff" => Transform::SeasonalDiff,
            _ => return None,
        })
    }
    pub fn name(self) -> &'static str {
        Self::NAMES[self as usize]
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Trend {
    None,
    Constant,
    Linear,
}

impl Trend {
    pub const NAMES: [&'static str; 3] = ["none", "constant", "linear"];
    pub fn parse(s: &str) -> Option<Trend> {
        Some(match s {
            "none" => Trend::None,
            "constant" => Trend::Constant,
            "linear" => Trend::Linear,
            _ => return None,
        })
    }
    pub fn name(self) -> &'static str {
        Self::NAMES[self as usize]
    }
    /// Number of deterministic regressors.
    pub fn terms(self) -> usize {
        self as usize
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MultiStep {
    Direct,
    Iterated,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Metric {
    Rmse,
    Mae,
    Bias,
    Mape,
    Smape,
    Mase,
    R2Oos,
    Coverage,
    IntervalScore,
    Crps,
    QuantileScore,
    LogScore,
}

impl Metric {
    pub const ALL: [Metric; 12] = [
        Metric::Rmse,
        Metric::Mae,
        Metric::Bias,
        Metric::Mape,
        Metric::Smape,
        Metric::Mase,
        Metric::R2Oos,
        Metric::Coverage,
        Metric::IntervalScore,
        Metric::Crps,
        Metric::QuantileScore,
        Metric::LogScore,
    ];
    pub const NAMES: [&'static str; 12] = [
        "rmse",
        "mae",
        "bias",
        "mape",
        "smape",
        "mase",
        "r2_oos",
        "coverage",
        "interval_score",
        "crps",
        "quantile_score",
        "log_score",
    ];
    pub fn parse(s: &str) -> Option<Metric> {
        Self::NAMES
            .iter()
            .position(|n| *n == s)
            .map(|i| Self::ALL[i])
    }
    pub fn name(self) -> &'static str {
        Self::NAMES[self as usize]
    }
    /// Orientation for ranking: rank 1 is the best value.
    pub fn higher_is_better(self) -> bool {
        matches!(self, Metric::R2Oos)
    }
    /// Metrics with one column per interval level.
    pub fn per_level(self) -> bool {
        matches!(self, Metric::Coverage | Metric::IntervalScore)
    }
}

/// One column of the scores table's metric block: a metric, and for
/// per-level metrics the interval level's index in `Experiment::intervals`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct MetricColumn {
    pub metric: Metric,
    pub level: Option<usize>,
}

/// An interval level c (0 < c < 1) and its column suffix in percent.
#[derive(Debug, Clone, PartialEq)]
pub struct IntervalLevel {
    pub level: f64,
    /// `80` for 0.8, `97.5` for 0.975.
    pub percent: String,
}

/// A quantile column of forecasts.csv and outlook.csv (SPEC §7.6): the
/// probability τ, its header `q<100τ>` and how a Gaussian forecast gives it,
/// forecast + sign·Φ⁻¹(tail)·σ̂_h. An interval level c gives two, tail
/// (1 + c)/2 with sign −1 and +1, so that the bounds are exactly the
/// forecast ∓ z_{(1+c)/2}·σ̂_h of SPEC §4; a listed quantile τ has tail
/// max(τ, 1 − τ).
#[derive(Debug, Clone, PartialEq)]
pub struct QuantileColumn {
    pub prob: f64,
    /// `q10`, `q2.5`, `q97.5`.
    pub name: String,
    pub tail: f64,
    /// The sign of Φ⁻¹(tail): −1 below the median, +1 from it on.
    pub sign: f64,
}

/// The units forecasts are scored in (`scoring.units`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Units {
    /// The target's transformed units (the default).
    #[default]
    Transformed,
    /// The data file's units: forecasts back-transformed to levels.
    Original,
}

impl Units {
    pub const NAMES: [&'static str; 2] = ["transformed", "original"];
    pub fn parse(s: &str) -> Option<Units> {
        Some(match s {
            "transformed" => Units::Transformed,
            "original" => Units::Original,
            _ => return None,
        })
    }
    pub fn name(self) -> &'static str {
        Self::NAMES[self as usize]
    }
}

/// Which point of a log-normal level a back-transformed forecast reports
/// (`scoring.back_transform`; only log and log_diff are affected).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum BackTransform {
    /// exp(û): the median.
    #[default]
    Median,
    /// exp(û + v/2): the mean.
    Mean,
}

impl BackTransform {
    pub const NAMES: [&'static str; 2] = ["median", "mean"];
    pub fn parse(s: &str) -> Option<BackTransform> {
        Some(match s {
            "median" => BackTransform::Median,
            "mean" => BackTransform::Mean,
            _ => return None,
        })
    }
    pub fn name(self) -> &'static str {
        Self::NAMES[self as usize]
    }
}

/// Where intervals and quantiles come from (`scoring.intervals_from`, SPEC §7.6).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum IntervalsFrom {
    /// The model's Gaussian forecast distribution (its forecast variance).
    #[default]
    Model,
    /// Empirical quantiles of the candidate's own earlier errors.
    PastErrors,
}

/// The quantile columns of interval levels and listed quantiles,
/// ascending (see [`Declaration::quantile_columns`]).
pub fn quantile_columns(intervals: &[IntervalLevel], quantiles: &[f64]) -> Vec<QuantileColumn> {
    let mut out: Vec<QuantileColumn> = Vec::new();
    for l in intervals {
        let tail = (1.0 + l.level) / 2.0;
        for (prob, sign) in [((1.0 - l.level) / 2.0, -1.0), (tail, 1.0)] {
            out.push(QuantileColumn {
                prob,
                name: quantile_name(prob),
                tail,
                sign,
            });
        }
    }
    for &prob in quantiles {
        let name = quantile_name(prob);
        if out.iter().all(|q| q.name != name) {
            out.push(QuantileColumn {
                prob,
                name,
                tail: prob.max(1.0 - prob),
                sign: if prob < 0.5 { -1.0 } else { 1.0 },
            });
        }
    }
    out.sort_by(|a, b| a.prob.total_cmp(&b.prob));
    out
}

/// `q10` for 0.1, `q2.5` for 0.025: the header of a quantile column.
pub fn quantile_name(prob: f64) -> String {
    format!("q{}", percent_text(prob))
}

/// `80` for 0.8, `97.5` for 0.975, `2.5` for 0.025: a share in percent,
/// rounded to six decimals, without trailing zeros.
pub fn percent_text(share: f64) -> String {
    let p = format!("{:.6}", share * 100.0);
    p.trim_end_matches('0').trim_end_matches('.').to_string()
}

/// Forecast-comparison tests requested under `scoring.tests` (SPEC §4).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct TestsSpec {
    pub diebold_mariano: bool,
    /// `diebold_mariano: pairs`: every pair of candidates, not only each
    /// against the benchmark (SPEC §7.6).
    pub diebold_mariano_pairs: bool,
    /// Christoffersen's coverage tests per interval level and Berkowitz's
    /// density test (SPEC §7.6).
    pub calibration: bool,
    /// The Mincer–Zarnowitz regression and its Wald test (SPEC §7.6).
    pub efficiency: bool,
    /// Harvey, Leybourne & Newbold (1998): the candidate whose forecasts
    /// are tested for encompassing every other's (the benchmark unless a
    /// rival is named).
    pub encompassing: Option<usize>,
    /// Clark-West for candidates in which the benchmark is nested.
    pub clark_west: bool,
    /// Clark-West for every nested pair, not only those with the benchmark.
    pub clark_west_all_pairs: bool,
    pub confidence_set: Option<ConfidenceSetSpec>,
    pub snooping: Option<SnoopingSpec>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct ConfidenceSetSpec {
    pub alpha: f64,
    pub resamples: usize,
}

#[derive(Debug, Clone, PartialEq)]
pub struct SnoopingSpec {
    pub resamples: usize,
}

/// A named sub-period for scores (`scoring.periods`): target periods from..=to.
#[derive(Debug, Clone, PartialEq)]
pub struct PeriodSet {
    pub name: String,
    pub from: String,
    pub to: String,
    pub from_ordinal: i64,
    pub to_ordinal: i64,
}

/// Information criterion for order selection.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Criterion {
    Aic,
    Bic,
    Hqic,
}

impl Criterion {
    pub const NAMES: [&'static str; 3] = ["aic", "bic", "hqic"];
    pub fn parse(s: &str) -> Option<Criterion> {
        Some(match s {
            "aic" => Criterion::Aic,
            "bic" => Criterion::Bic,
            "hqic" => Criterion::Hqic,
            _ => return None,
        })
    }
    pub fn name(self) -> &'static str {
        Self::NAMES[self as usize]
    }
    /// Penalty per parameter for a sample of n rows: 2, ln n, 2 ln ln n.
    pub fn penalty(self, n: usize) -> f64 {
        let n = n as f64;
        match self {
            Criterion::Aic => 2.0,
            Criterion::Bic => n.ln(),
            Criterion::Hqic => 2.0 * n.ln().ln(),
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SchemeKind {
    Fixed,
    Expanding,
    Rolling,
}

/// How the first origin T0 of a scheme is set (SPEC §4).
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum SchemeStart {
    /// T0 = ⌊N/2⌋.
    Half,
    /// First target period for h = 1: T0 = its position − 1.
    TestStart { label: String, ordinal: i64 },
    /// T0's own period.
    FirstOrigin { label: String, ordinal: i64 },
    /// T0 = ⌊f·N⌋ with f = numerator/denominator read exactly from its decimal text.
    TrainShare {
        text: String,
        numerator: u128,
        denominator: u128,
    },
}

#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Scheme {
    pub id: String,
    pub kind: SchemeKind,
    pub start: SchemeStart,
    pub window: Option<usize>,
    pub refit_every: usize,
    pub origins_first: bool,
    pub line: usize,
}

#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Predictor {
    pub column: String,
    pub transform: Transform,
    pub release_lag: usize,
    pub known_ahead: bool,
    pub line: usize,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ReportFormat {
    Html,
    Markdown,
}

/// One target's data in position space (SPEC §4): index i holds position i + 1.
#[derive(Debug, Clone, PartialEq)]
pub struct TargetData {
    pub name: String,
    /// N: the last position with a target value.
    pub n: usize,
    /// The transformed target at positions 1..N.
    pub y: Vec<f64>,
    /// Period labels of positions 1..N+F, as written in the data file (F
    /// future rows); shared by the targets (they have the same rows).
    pub labels: std::sync::Arc<[String]>,
    /// Period ordinals of positions 1..N+F.
    pub ordinals: Vec<i64>,
    /// Transformed predictor values at positions 1..N+F, one vector per declared predictor.
    pub predictors: Vec<Vec<Option<f64>>>,
    /// First origin T0 per scheme (same order as [`Experiment::schemes`]).
    pub first_origins: Vec<usize>,
    /// Raw (untransformed) target values at positions 1..N, for the report's data chart.
    pub raw: Vec<f64>,
    /// The data file's values this target was made from, before any
    /// transform (what the look-ahead audit perturbs, see `resolve::remade`).
    pub source: RawSource,
    /// Real-time data (`data.layout: vintages` or `vintage_columns`): every
    /// vintage of this target and the outturns scored; None for the
    /// ordinary layout. The fields above then hold the last vintage.
    pub vintages: Option<std::sync::Arc<Vintages>>,
    /// `scoring.units: original`: forecasts are scored against the data
    /// file's values (`raw`), not the transformed target.
    pub in_levels: bool,
    /// The transformed target of each other transform the candidates ask
    /// for (`transform:` on a candidate), at the same positions 1..N.
    pub alternates: Vec<(Transform, Vec<f64>)>,
}

impl TargetData {
    /// The outturn scored at position `pos` (1-based): the data file's
    /// value under `units: original`, the chosen release under vintages
    /// (NaN where the file has no such release yet), else the target itself.
    pub fn actual(&self, pos: usize) -> f64 {
        match &self.vintages {
            _ if self.in_levels => self.raw[pos - 1],
            Some(v) => v.actual[pos - 1],
            None => self.y[pos - 1],
        }
    }

    /// The series forecasts are scored in, positions 1..N: the data file's
    /// values under `units: original`, else the transformed target.
    pub fn scored(&self) -> &[f64] {
        if self.in_levels {
            &self.raw
        } else {
            &self.y
        }
    }

    /// The last `count` (or as many as there are) of the data file's
    /// values at positions up to `pos` and the rows before position 1 (what
    /// a transform lost): the levels a back-transform starts from (NaN for
    /// an empty cell).
    pub fn levels_through(&self, pos: usize, count: usize) -> Vec<f64> {
        let known = &self.source.target[..self.source.lag + pos];
        known[known.len().saturating_sub(count)..]
            .iter()
            .map(|v| v.unwrap_or(f64::NAN))
            .collect()
    }

    /// The transformed target a model with transform `t` sees (`None`: the
    /// experiment's).
    pub fn series(&self, t: Option<Transform>) -> &[f64] {
        t.and_then(|t| self.alternates.iter().find(|(a, _)| *a == t))
            .map_or(&self.y, |(_, v)| v)
    }
}

/// The vintages of one target (docs/experiment-file.md#vintages), in the target's
/// position space: every vintage starts at the same period as the last.
#[derive(Debug, Clone, PartialEq)]
pub struct Vintages {
    /// Each vintage's label as written in the data file, in label order.
    pub labels: Vec<String>,
    /// Each vintage's label as a period ordinal (ascending).
    pub ordinals: Vec<i64>,
    /// Each vintage's target, predictors and raw values, resolved as an
    /// ordinary data file holding that vintage's rows only (its `n` is its
    /// last target value; its `first_origins` are empty).
    pub data: Vec<TargetData>,
    /// The vintage seen at origin position p (index p − 1): the one
    /// labelled with p's period, None where the file has none.
    pub at_origin: Vec<Option<usize>>,
    /// The outturn scored at position p (index p − 1): the transformed
    /// value at p in the vintage of the chosen release, NaN when the file
    /// holds no such release.
    pub actual: Vec<f64>,
    /// The vintage that release comes from, per position.
    pub actual_release: Vec<Option<usize>>,
}

/// How the data file lays out its rows (docs/experiment-file.md).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Layout {
    /// One row per period (the default).
    Periods,
    /// Rows (period, vintage): each vintage's data in rows of its own.
    Vintages,
    /// One row per period, one target column per vintage (`<target>@<vintage>`).
    VintageColumns,
}

impl Layout {
    pub const NAMES: [&'static str; 3] = ["periods", "vintages", "vintage_columns"];
    pub fn parse(s: &str) -> Option<Layout> {
        Some(match s {
            "periods" => Layout::Periods,
            "vintages" => Layout::Vintages,
            "vintage_columns" => Layout::VintageColumns,
            _ => return None,
        })
    }
    pub fn name(self) -> &'static str {
        Self::NAMES[self as usize]
    }
}

/// Which release of a period counts as its outturn (`scoring.actual`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Release {
    /// The period's value in the last vintage of the file.
    Latest,
    /// The k-th vintage (k ≥ 1) in which the period appears; 1 is `first`.
    Nth(usize),
}

impl Release {
    /// As the report and docs say it.
    pub fn describe(self) -> String {
        match self {
            Release::Latest => "the latest release (the last vintage in the file)".into(),
            Release::Nth(1) => "the first release (the first vintage holding the period)".into(),
            Release::Nth(k) => format!(
                "release {k} (counting the vintages that hold the period, the first being 1)"
            ),
        }
    }
}

/// Real-time data: the layout, the vintage column and the outturn's release.
#[derive(Debug, Clone, PartialEq)]
pub struct VintageSpec {
    /// `Vintages` or `VintageColumns`.
    pub layout: Layout,
    /// The column holding the vintage labels (long layout).
    pub column: String,
    pub actual: Release,
}

/// A target's values as read from the data file, before transforms: the
/// selected rows from the first (row 0) on, position p being row
/// `lag + p - 1` (`lag` the target transform's lag).
#[derive(Debug, Clone, PartialEq)]
pub struct RawSource {
    pub lag: usize,
    /// The target column, rows 0..=lag + N - 1.
    pub target: Vec<Option<f64>>,
    /// Each declared predictor's column over every selected row (empty
    /// cells, and rows a predictor does not use, None).
    pub predictors: Vec<Vec<Option<f64>>>,
}

/// What an experiment file declares, checked, before any data is read:
/// everything a report needs to describe a stored experiment.
#[derive(Debug, Clone)]
pub struct Declaration {
    pub name: String,
    pub notes: Option<String>,
    pub title: String,
    pub source_path: PathBuf,
    pub source_text: String,
    /// The data file as written (relative to the experiment file).
    pub data_file: String,
    pub frequency: Frequency,
    pub transform: Transform,
    pub predictors: Vec<Predictor>,
    /// The columns of the built-in regressors of `dummies` (SPEC §7.1).
    pub dummy_columns: Vec<DummyColumn>,
    pub candidates: Vec<Candidate>,
    pub schemes: Vec<Scheme>,
    pub horizons: Vec<usize>,
    pub multi_step: MultiStep,
    pub metrics: Vec<Metric>,
    /// Interval levels of `scoring.intervals`, ascending.
    pub intervals: Vec<IntervalLevel>,
    /// Probabilities of `scoring.quantiles`, ascending (SPEC §7.6).
    pub quantiles: Vec<f64>,
    pub intervals_from: IntervalsFrom,
    /// `scoring.units`: transformed (default) or the data file's.
    pub units: Units,
    /// `scoring.back_transform`: the centre of a log-based level.
    pub back_transform: BackTransform,
    pub tests: TestsSpec,
    /// Named sub-periods of `scoring.periods`, in file order.
    pub periods: Vec<PeriodSet>,
    /// Window (in forecasts) of rolling accuracy and the fluctuation test; None: ⌈0.3·P⌉.
    pub rolling_window: Option<usize>,
    pub rank_by: Metric,
    /// Index into `candidates`.
    pub benchmark: usize,
    pub formats: Vec<ReportFormat>,
    /// `report.targets`: at most this many targets get detailed sections
    /// (those with the largest gain over the benchmark when there are more).
    pub report_targets: usize,
    pub seed: u64,
    /// `audit.origins`: the look-ahead audit's origins per cell, when the
    /// run is to audit itself.
    pub audit: Option<usize>,
    /// Real-time data (`data.layout: vintages | vintage_columns`), None for
    /// the ordinary layout.
    pub vintages: Option<VintageSpec>,
    /// What the file asks that outturn does differently than it may seem
    /// (said by `check` and `run`, never an error), with the file and line.
    pub warnings: Vec<String>,
}

/// The checked experiment: its declaration and its data, resolved to positions.
#[derive(Debug, Clone)]
pub struct Experiment {
    pub declared: Declaration,
    pub data_path: PathBuf,
    pub data_bytes_sha256: String,
    pub label_style: LabelStyle,
    pub targets: Vec<TargetData>,
}

impl std::ops::Deref for Experiment {
    type Target = Declaration;
    fn deref(&self) -> &Declaration {
        &self.declared
    }
}

impl Experiment {
    /// The same experiment restricted to one target (for processing target
    /// by target; candidate, scheme and benchmark indices are unchanged).
    pub fn for_target(&self, t: usize) -> Experiment {
        Experiment {
            declared: self.declared.clone(),
            data_path: self.data_path.clone(),
            data_bytes_sha256: self.data_bytes_sha256.clone(),
            label_style: self.label_style,
            targets: vec![self.targets[t].clone()],
        }
    }

    pub fn period_label(&self, target: &TargetData, position: usize) -> String {
        if position >= 1 && position <= target.labels.len() {
            return target.labels[position - 1].clone();
        }
        let last = target.ordinals.len();
        let base = target.ordinals[last - 1];
        let steps = position as i64 - last as i64;
        super::period::format_label(
            self.frequency,
            base + steps * self.frequency.step(),
            self.label_style,
        )
    }
}

impl Declaration {
    /// The metric columns of the scores table, in order: each metric, and
    /// per-level metrics once per interval level.
    pub fn metric_columns(&self) -> Vec<MetricColumn> {
        let mut out = Vec::new();
        for &metric in &self.metrics {
            if metric.per_level() {
                for level in 0..self.intervals.len() {
                    out.push(MetricColumn {
                        metric,
                        level: Some(level),
                    });
                }
            } else {
                out.push(MetricColumn {
                    metric,
                    level: None,
                });
            }
        }
        out
    }

    /// The quantile columns of forecasts.csv and outlook.csv, ascending:
    /// both bounds of every interval level and every listed quantile, a
    /// quantile that is also an interval bound once (as the bound).
    pub fn quantile_columns(&self) -> Vec<QuantileColumn> {
        quantile_columns(&self.intervals, &self.quantiles)
    }

    pub fn metric_column_name(&self, col: &MetricColumn) -> String {
        match col.level {
            Some(l) => format!("{}_{}", col.metric.name(), self.intervals[l].percent),
            None => col.metric.name().to_string(),
        }
    }

    /// The transform candidate `c`'s model sees: its own, else the experiment's.
    pub fn transform_of(&self, c: usize) -> Transform {
        self.candidates[c].transform.unwrap_or(self.transform)
    }

    pub fn season_length(&self) -> Option<usize> {
        self.frequency.season_length()
    }

    /// The name of regressor `i` of an arima or ardl candidate: a declared
    /// predictor's column for i < predictors.len(), else a dummy column's name.
    pub fn regressor_name(&self, i: usize) -> &str {
        match self.predictors.get(i) {
            Some(p) => &p.column,
            None => self
                .dummy_columns
                .get(i - self.predictors.len())
                .map_or("", |c| c.name.as_str()),
        }
    }
}
