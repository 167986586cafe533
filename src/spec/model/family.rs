//! The candidates' families, with their ids' parts, parameter counts and
//! the settings each family carries (seasonal orders, dummies, smoothing
//! forms, combination weights).

use super::*;

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
    /// predictors only: `check` refuses dummies in ardl.)
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
    /// The candidate's own `transform` (only with `scoring.units:
    /// original`); None: the experiment's.
    pub transform: Option<super::Transform>,
}
