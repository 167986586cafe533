//! The checked experiment: typed, resolved, and free of raw strings and
//! options that later stages would have to interpret again.

use super::period::{Frequency, LabelStyle};
use std::path::PathBuf;

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
}

impl Metric {
    pub const ALL: [Metric; 10] = [
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
    ];
    pub const NAMES: [&'static str; 10] = [
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

/// Forecast-comparison tests requested under `scoring.tests` (SPEC §4).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct TestsSpec {
    pub diebold_mariano: bool,
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

#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Family {
    Naive,
    Mean,
    Drift,
    SeasonalNaive,
    Ar {
        lags: usize,
        trend: Trend,
    },
    /// `predictors` index into [`Experiment::predictors`].
    Ardl {
        lags: usize,
        predictor_lags: usize,
        predictors: Vec<usize>,
        trend: Trend,
    },
    /// ar with its order p ∈ 1..=max_lags chosen inside every training window.
    ArSelect {
        criterion: Criterion,
        max_lags: usize,
        trend: Trend,
    },
    /// arima(p,d,q), or (p,d,q)(P,D,Q)m with `seasonal`, by exact Gaussian
    /// maximum likelihood; `drift` only with d + D ≥ 1; `regressors` (a
    /// regression with ARIMA errors) index the declared predictors followed
    /// by the dummy columns ([`Declaration::regressor_name`]).
    Arima {
        p: usize,
        d: usize,
        q: usize,
        drift: bool,
        seasonal: Option<SeasonalOrder>,
        regressors: Vec<usize>,
    },
    /// arima with (p, q) — and (P, Q) — chosen from the grids inside every
    /// training window by `criterion`; d (and D) by a unit-root test when
    /// several are listed (`aicc` only; the other criteria expand one
    /// candidate per d and D).
    ArimaSelect {
        criterion: ArimaCriterion,
        ps: Vec<usize>,
        ds: Vec<usize>,
        qs: Vec<usize>,
        drift: bool,
        seasonal: Option<SeasonalGrid>,
        regressors: Vec<usize>,
    },
    /// Exponential smoothing with an additive or multiplicative error
    /// (Hyndman et al. 2008).
    Smoothing {
        error: SmoothingError,
        trend: SmoothingTrend,
        season: SmoothingSeason,
    },
    /// smoothing with the form chosen by AICc inside every training window
    /// from an error × trend × season grid.
    SmoothingSelect {
        forms: Vec<(SmoothingError, SmoothingTrend, SmoothingSeason)>,
    },
    /// The theta method (simple exponential smoothing with half the trend
    /// line's slope as drift), on multiplicatively seasonally adjusted data
    /// if `multiplicative`.
    Theta {
        multiplicative: bool,
    },
    /// A combination of other candidates' forecasts; `members` index into the candidates.
    Combination {
        members: Vec<usize>,
        weights: CombinationWeights,
    },
    /// ardl with p ∈ 0..=max_lags and q ∈ 1..=max_lags chosen inside every
    /// training window. (`predictors` of ardl families index the declared
    /// predictors followed by the dummy columns, as arima's `regressors`.)
    ArdlSelect {
        criterion: Criterion,
        max_lags: usize,
        predictors: Vec<usize>,
        trend: Trend,
    },
}

impl Family {
    /// Number of least-squares coefficients, if the family is estimated by least squares.
    pub fn coefficients(&self) -> Option<usize> {
        match self {
            Family::Ar { lags, trend } => Some(trend.terms() + lags),
            Family::Ardl {
                lags,
                predictor_lags,
                predictors,
                trend,
            } => Some(trend.terms() + lags + predictor_lags * predictors.len()),
            Family::ArSelect {
                max_lags, trend, ..
            } => Some(trend.terms() + max_lags),
            Family::ArdlSelect {
                max_lags,
                predictors,
                trend,
                ..
            } => Some(trend.terms() + max_lags * (1 + predictors.len())),
            _ => None,
        }
    }

    /// Whether the family has a multiplicative error (smoothing), whose
    /// model needs a series above 0.
    pub fn multiplicative_error(&self) -> bool {
        let mult = SmoothingError::Multiplicative;
        match self {
            Family::Smoothing { error, .. } => *error == mult,
            Family::SmoothingSelect { forms } => forms.iter().any(|f| f.0 == mult),
            _ => false,
        }
    }

    /// Whether the family's order is chosen inside each training window.
    pub fn selects(&self) -> bool {
        matches!(
            self,
            Family::ArSelect { .. }
                | Family::ArdlSelect { .. }
                | Family::ArimaSelect { .. }
                | Family::SmoothingSelect { .. }
        )
    }

    /// Parameters counted for the complexity curve: least-squares
    /// coefficients, 1 for mean and drift, 0 for naive and seasonal naive.
    pub fn parameters(&self) -> usize {
        match self {
            Family::Naive | Family::SeasonalNaive | Family::Combination { .. } => 0,
            Family::Mean | Family::Drift => 1,
            Family::Arima {
                p,
                d,
                q,
                drift,
                seasonal,
                regressors,
            } => {
                let s = seasonal.map_or((0, 0, 0), |s| (s.p, s.d, s.q));
                p + q + s.0 + s.2 + usize::from(*d + s.1 == 0 || *drift) + regressors.len()
            }
            Family::ArimaSelect {
                ps,
                ds,
                qs,
                drift,
                seasonal,
                regressors,
                ..
            } => {
                let max = |v: &[usize]| v.iter().copied().max().unwrap_or(0);
                let (sp, sd, sq) = seasonal
                    .as_ref()
                    .map_or((0, 0, 0), |s| (max(&s.ps), max(&s.ds), max(&s.qs)));
                let undifferenced = ds.iter().min().copied().unwrap_or(0) == 0 && sd == 0;
                max(ps)
                    + max(qs)
                    + sp
                    + sq
                    + usize::from(undifferenced || *drift)
                    + regressors.len()
            }
            // smoothing parameters plus free initial states (level, trend, m − 1 seasonal)
            Family::Smoothing { trend, season, .. } => {
                let t = match trend {
                    SmoothingTrend::None => 0,
                    SmoothingTrend::Additive => 2,
                    SmoothingTrend::Damped => 3,
                };
                2 + t + usize::from(*season != SmoothingSeason::None)
            }
            // the largest form of the grid
            Family::SmoothingSelect { forms } => forms
                .iter()
                .map(|&(error, trend, season)| {
                    Family::Smoothing {
                        error,
                        trend,
                        season,
                    }
                    .parameters()
                })
                .max()
                .unwrap_or(0),
            // α and b0 (ℓ0 is the first value), and m − 1 free seasonal
            // indices are not counted: like smoothing's season, one.
            Family::Theta { multiplicative } => 2 + usize::from(*multiplicative),
            _ => self.coefficients().unwrap_or(0),
        }
    }
}

/// The seasonal orders (P, D, Q) of an arima candidate at the period m of
/// the data (SPEC §7.2).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct SeasonalOrder {
    pub p: usize,
    pub d: usize,
    pub q: usize,
    pub m: usize,
}

/// The seasonal grids of an arima candidate that selects its order.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub struct SeasonalGrid {
    pub ps: Vec<usize>,
    pub ds: Vec<usize>,
    pub qs: Vec<usize>,
    pub m: usize,
}

/// The criterion of an arima that selects its order: one of the lag
/// families' criteria, or AICc (Hurvich & Tsai 1989), which also lets a
/// unit-root test choose d and D.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ArimaCriterion {
    Ic(Criterion),
    Aicc,
}

impl ArimaCriterion {
    pub const NAMES: [&'static str; 4] = ["aic", "bic", "hqic", "aicc"];
    pub fn parse(s: &str) -> Option<ArimaCriterion> {
        match s {
            "aicc" => Some(ArimaCriterion::Aicc),
            _ => Criterion::parse(s).map(ArimaCriterion::Ic),
        }
    }
    pub fn name(self) -> &'static str {
        match self {
            ArimaCriterion::Ic(c) => c.name(),
            ArimaCriterion::Aicc => "aicc",
        }
    }
}

/// A built-in regressor (SPEC §7.1): its name and kind; each gives one or
/// more columns ([`DummyColumn`]).
#[derive(Debug, Clone, PartialEq)]
pub struct Dummy {
    pub name: String,
    pub kind: DummyKind,
    pub line: usize,
}

#[derive(Debug, Clone, PartialEq)]
pub enum DummyKind {
    /// 1 in the period with this ordinal, 0 elsewhere.
    Pulse { label: String, ordinal: i64 },
    /// 0 before the period, 1 from it on.
    Step { label: String, ordinal: i64 },
    /// 0 before the period, then 1, 2, 3, … from it on.
    Ramp { label: String, ordinal: i64 },
    /// K sine/cosine pairs at `period` (m unless overridden).
    Fourier { pairs: usize, period: f64 },
    /// m − 1 season indicators, the first season left out.
    Seasonal { m: usize },
}

/// One column of a dummy, as the models use it.
#[derive(Debug, Clone, PartialEq)]
pub struct DummyColumn {
    /// `tariff`; `season_sin1`, `season_cos1`; `quarter_2` … `quarter_m`.
    pub name: String,
    /// Index of its dummy in [`Declaration::dummies`].
    pub dummy: usize,
    pub shape: ColumnShape,
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ColumnShape {
    Pulse(i64),
    Step(i64),
    Ramp(i64),
    Sin {
        k: usize,
        period: f64,
    },
    Cos {
        k: usize,
        period: f64,
    },
    /// Indicator of season s (1-based; 1 is left out).
    Season {
        s: usize,
        m: usize,
    },
}

/// The error of a smoothing model: y = ŷ + e, or y = ŷ(1 + ε).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum SmoothingError {
    Additive,
    Multiplicative,
}

impl SmoothingError {
    pub const NAMES: [&'static str; 2] = ["additive", "multiplicative"];
    pub fn name(self) -> &'static str {
        Self::NAMES[self as usize]
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum SmoothingTrend {
    None,
    Additive,
    Damped,
}

impl SmoothingTrend {
    pub const NAMES: [&'static str; 3] = ["none", "additive", "damped"];
    pub fn name(self) -> &'static str {
        Self::NAMES[self as usize]
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum SmoothingSeason {
    None,
    Additive,
    Multiplicative,
}

impl SmoothingSeason {
    pub const NAMES: [&'static str; 3] = ["none", "additive", "multiplicative"];
    pub fn name(self) -> &'static str {
        Self::NAMES[self as usize]
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CombinationWeights {
    Equal,
    InverseMse,
    Trimmed,
}

impl CombinationWeights {
    pub const NAMES: [&'static str; 3] = ["equal", "inverse_mse", "trimmed"];
    pub fn name(self) -> &'static str {
        Self::NAMES[self as usize]
    }
}

#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Candidate {
    pub id: String,
    pub family: Family,
    /// Line of the candidate entry in the experiment file.
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
    pub tests: TestsSpec,
    /// Named sub-periods of `scoring.periods`, in file order.
    pub periods: Vec<PeriodSet>,
    /// Window (in forecasts) of rolling accuracy and the fluctuation test; None: ⌈0.3·P⌉.
    pub rolling_window: Option<usize>,
    pub rank_by: Metric,
    /// Index into `candidates`.
    pub benchmark: usize,
    pub formats: Vec<ReportFormat>,
    pub seed: u64,
    /// `audit.origins`: the look-ahead audit's origins per cell, when the
    /// run is to audit itself.
    pub audit: Option<usize>,
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

    pub fn metric_column_name(&self, col: &MetricColumn) -> String {
        match col.level {
            Some(l) => format!("{}_{}", col.metric.name(), self.intervals[l].percent),
            None => col.metric.name().to_string(),
        }
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
