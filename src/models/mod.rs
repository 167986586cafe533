//! models: one file per family behind one trait, and the registry that
//! maps a checked candidate to its model.
//!
//! A [`Model`] estimates on a window ([`Model::fit`]), moves its estimate
//! to a later estimation end ([`Model::update`]: rows folded into a
//! factorisation, or a likelihood warm-started at the previous optimum),
//! forecasts from an origin at the horizons asked for, and gives the
//! residuals of its estimation. The origin loop that drives it under every
//! scheme is written once, in `backtest`. Shared numerics (least squares,
//! the optimisers, autocovariances) live in `numerics`.
//!
//! Adding a family: its file here, one arm in [`visit`], and its entry in
//! `spec` (grammar and id).

pub(crate) mod arima;
pub(crate) mod benchmarks;
pub(crate) mod combination;
pub(crate) mod level;
pub(crate) mod likelihood;
pub(crate) mod linear;
pub(crate) mod smoothing;
pub(crate) mod theta;

use crate::spec::{Experiment, Family, MultiStep, TargetData};

/// One forecast of a backtest.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct ForecastRow {
    pub horizon: usize,
    /// Origin position T.
    pub origin: usize,
    pub forecast: f64,
    /// In-sample MSE of the estimation that produced it (SPEC §4), if any.
    pub is_mse: Option<f64>,
    /// Σ(y − ȳ)²/rows of the dependent values of that estimation, so that
    /// 1 − is_mse/is_var is its centred in-sample R².
    pub is_var: Option<f64>,
    /// Forecast variance σ̂_h² for Gaussian intervals, if the family has one.
    pub variance: Option<f64>,
    /// The order chosen inside the training window, for candidates with `select`.
    pub order: Option<Order>,
}

impl ForecastRow {
    /// The row of a model's forecast `step` at `horizon` from `origin`.
    pub(crate) fn of(horizon: usize, origin: usize, step: Step) -> ForecastRow {
        ForecastRow {
            horizon,
            origin,
            forecast: step.forecast,
            is_mse: step.is_mse,
            is_var: step.is_var,
            variance: step.variance,
            order: step.order,
        }
    }
}

/// The order chosen by a candidate with `select`, written like its id's
/// brackets: `3` for ar(3), `2,1` for ardl(2,1), `1,1,0` for arima(1,1,0),
/// `(0,1,1)(0,1,1)12` for a seasonal arima.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Order {
    Ar(usize),
    Ardl(usize, usize),
    Arima(usize, usize, usize),
    /// The form `smoothing(aicc)` chose, written like a smoothing id's
    /// brackets (the error only when multiplicative).
    Smoothing(
        crate::spec::SmoothingError,
        crate::spec::SmoothingTrend,
        crate::spec::SmoothingSeason,
    ),
    Sarima {
        p: usize,
        d: usize,
        q: usize,
        seasonal_p: usize,
        seasonal_d: usize,
        seasonal_q: usize,
        m: usize,
    },
}

impl std::fmt::Display for Order {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Order::Ar(p) => write!(f, "{p}"),
            Order::Ardl(p, q) => write!(f, "{p},{q}"),
            Order::Arima(p, d, q) => write!(f, "{p},{d},{q}"),
            Order::Smoothing(e, t, s) => {
                if *e == crate::spec::SmoothingError::Multiplicative {
                    write!(f, "mult,")?;
                }
                write!(f, "{},{}", t.name(), s.name())
            }
            Order::Sarima {
                p,
                d,
                q,
                seasonal_p,
                seasonal_d,
                seasonal_q,
                m,
            } => write!(
                f,
                "({p},{d},{q})({seasonal_p},{seasonal_d},{seasonal_q}){m}"
            ),
        }
    }
}

/// One estimated parameter of an estimation (SPEC §7.4), named as
/// parameters.csv names it; `horizon` is Some for a direct model's
/// regression of that horizon, None where the estimate serves every horizon.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Parameter {
    pub horizon: Option<usize>,
    /// Shared: a least-squares model names the same columns at every estimation.
    pub name: std::sync::Arc<str>,
    pub estimate: f64,
    pub std_error: Option<f64>,
}

impl Parameter {
    pub(crate) fn new(
        name: impl Into<std::sync::Arc<str>>,
        estimate: f64,
        std_error: Option<f64>,
    ) -> Self {
        Parameter {
            horizon: None,
            name: name.into(),
            estimate,
            std_error: std_error.filter(|s| s.is_finite()),
        }
    }
}

/// The fit rows of a Gaussian likelihood ℓ with k parameters (σ² counted)
/// on n observations: loglik, aic, aicc, bic, estimates only (aicc is
/// left out when n ≤ k + 1, where it does not exist).
pub(crate) fn fit_rows(loglik: f64, k: usize, n: usize) -> Vec<Parameter> {
    use crate::numerics::ic;
    let bic = ic::from_loglik(loglik, k, (n as f64).ln());
    [
        Parameter::new("loglik", loglik, None),
        Parameter::new("aic", ic::from_loglik(loglik, k, 2.0), None),
        Parameter::new("aicc", ic::aicc(loglik, k, n), None),
        Parameter::new("bic", bic, None),
    ]
    .into_iter()
    .filter(|p| p.estimate.is_finite())
    .collect()
}

/// One forecast beyond the data, from origin N.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct OutlookRow {
    pub horizon: usize,
    /// None when an input it needs is not in the data (a known-ahead predictor's future value).
    pub forecast: Option<f64>,
    pub variance: Option<f64>,
}

/// A forecast from one origin at one horizon, as a model gives it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Step {
    pub forecast: f64,
    /// Forecast variance σ̂_h² for Gaussian intervals, if the family has one.
    pub variance: Option<f64>,
    /// In-sample MSE of the estimation that produced it (SPEC §4), if any.
    pub is_mse: Option<f64>,
    /// Σ(y − ȳ)²/rows of that estimation's dependent values (for in-sample R²).
    pub is_var: Option<f64>,
    /// The order chosen inside the training window, for candidates with `select`.
    pub order: Option<Order>,
}

/// Why a forecast could not be made: the horizon of the estimation that
/// failed (an iterated model's one-step regression reports horizon 1) and why.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Problem {
    pub horizon: usize,
    pub message: String,
}

/// Why a cell could not be estimated at some origin.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct EstimationProblem {
    pub horizon: usize,
    pub origin: usize,
    pub message: String,
}

/// One family's estimation and forecasts for one target (positions 1..N of
/// SPEC §4). `window` is the scheme's rolling window (regression rows for
/// least squares, observations otherwise; see `plan`), `None` for all.
pub(crate) trait Model {
    /// An estimate, and whatever it needs to forecast (factorisations, filter
    /// states); owned, so a run on vintages can carry it from one vintage's
    /// model to the next (`backtest::vintage`).
    type Fit: 'static;
    /// Whether a failed estimation makes the experiment invalid (SPEC §4:
    /// least squares and the benchmarks, found by `check`), rather than
    /// being recorded in the cell (likelihood families keep their previous
    /// estimate, or fail the cell when there is none).
    const STRICT: bool;
    /// Whether [`Model::update`] to E = N carries the backtest's estimate
    /// on to the outlook exactly as a fresh fit would give it (cheaper).
    const CARRIES: bool = false;
    /// Whether [`Model::update`] re-estimates over its whole sample from the
    /// model's own data and takes nothing from the previous estimate but
    /// its starting point (a warm start), so that it may move an estimate
    /// made on one vintage's data to another's. Least squares folds rows
    /// into a factorisation instead: false.
    const WARM_STARTS: bool = false;

    /// Estimate with estimation end `end`, from scratch.
    fn fit(&self, end: usize, window: Option<usize>) -> Result<Self::Fit, String>;

    /// Move the estimate to a later estimation end. On failure the estimate
    /// is left as it was.
    fn update(&self, fit: &mut Self::Fit, end: usize, window: Option<usize>) -> Result<(), String> {
        *fit = self.fit(end, window)?;
        Ok(())
    }

    /// Forecasts from `origin` at each of `horizons` (ascending), one result each.
    fn forecast(
        &self,
        fit: &mut Self::Fit,
        origin: usize,
        horizons: &[usize],
    ) -> Vec<Result<Step, Problem>>;

    /// In-sample residuals of the estimate at estimation end `end` (the
    /// cell's last estimation, with the scheme's window), in time order, for
    /// residual diagnostics: one-step prediction errors of the likelihood
    /// families, the one-step regression of least squares (a direct model's
    /// h = 1 regression, estimated for this when 1 is not a horizon), the
    /// benchmarks' in-sample one-step errors.
    fn residuals(&self, fit: &mut Self::Fit, end: usize) -> Vec<f64>;

    /// Names of the regressor columns the current estimate left out because
    /// they are constant in its window (SPEC §7.1); asked after the
    /// forecasts of each estimation end.
    fn left_out(&self, _fit: &mut Self::Fit) -> Vec<String> {
        Vec::new()
    }

    /// The covariance (row-major `count` × `count`, innovation variance
    /// included) of the errors of the forecasts from `origin` at horizons
    /// 1..=count, for the variance of a cumulated level (`models::level`);
    /// None where the family has no such closed form.
    fn error_covariance(
        &self,
        _fit: &mut Self::Fit,
        _origin: usize,
        _count: usize,
    ) -> Option<Vec<f64>> {
        None
    }

    /// The parameters of the current estimate (SPEC §7.4), asked after the
    /// forecasts of each estimation end: for a model that selects its
    /// order, the chosen order's; a direct model only the horizons it
    /// estimated at this end.
    fn parameters(&self, fit: &mut Self::Fit) -> Vec<Parameter>;
}

/// What runs a model: the registry hands it the concrete model of a cell.
pub(crate) trait Visitor {
    type Out;
    fn visit<M: Model>(self, model: &M) -> Self::Out;
}

/// Which model runs a cell: the families ([`Families`]), or, in tests, a
/// registry that swaps a model of its own in (the look-ahead audit's
/// deliberately leaky model).
pub(crate) trait Registry: Sync {
    fn visit<V: Visitor>(&self, cell: &CellModel, visitor: V) -> Result<V::Out, String>;
}

/// The registry of the model families: [`visit`].
pub(crate) struct Families;

impl Registry for Families {
    fn visit<V: Visitor>(&self, cell: &CellModel, visitor: V) -> Result<V::Out, String> {
        visit(cell, visitor)
    }
}

/// Everything a model of a cell is built from.
pub(crate) struct CellModel<'a> {
    pub exp: &'a Experiment,
    pub family: &'a Family,
    pub target: &'a TargetData,
    /// The cell's own seed (from the experiment's seed and the cell id),
    /// for a model that simulates.
    pub seed: u64,
}

/// A cell's seed: the first 8 bytes of SHA-256 of "seed/cell id", so it
/// does not depend on the order or the thread cells run in.
pub(crate) fn cell_seed(experiment_seed: u64, cell_id: &str) -> u64 {
    use sha2::{Digest, Sha256};
    let d = Sha256::digest(format!("{experiment_seed}/{cell_id}").as_bytes());
    u64::from_le_bytes(d[..8].try_into().expect("8 bytes"))
}

/// The registry: build the model of a cell and hand it to `visitor`.
/// `Err` when the candidate cannot be modelled on these data at all
/// (e.g. a seasonal model on data without a season); combinations are
/// formed from their members' rows and have no model.
///
/// One arm per family, each a few lines: the length is the family count.
pub(crate) fn visit<V: Visitor>(cell: &CellModel, visitor: V) -> Result<V::Out, String> {
    let exp = cell.exp;
    Ok(match cell.family {
        Family::Naive | Family::Mean | Family::Drift | Family::SeasonalNaive => visitor.visit(
            &benchmarks::Benchmark::new(cell.family, cell.target, exp.season_length())?,
        ),
        Family::Ar { .. }
        | Family::Ardl { .. }
        | Family::ArSelect { .. }
        | Family::ArdlSelect { .. } => {
            let iterated = exp.multi_step == MultiStep::Iterated
                && matches!(cell.family, Family::Ar { .. } | Family::ArSelect { .. });
            visitor.visit(&linear::Linear::new(cell, iterated)?)
        }
        Family::Arima {
            p,
            d,
            q,
            drift,
            seasonal,
            regressors,
        } => visitor.visit(&likelihood::OnSeries {
            y: &cell.target.y,
            model: likelihood::Arima {
                order: arima::ArimaOrder {
                    p: *p,
                    d: *d,
                    q: *q,
                    drift: *drift,
                    seasonal: seasonal.map(season_of),
                },
                regressors: regressor_columns(exp, cell.target, regressors),
            },
        }),
        Family::ArimaSelect {
            criterion,
            ps,
            ds,
            qs,
            drift,
            seasonal,
            regressors,
        } => visitor.visit(&likelihood::OnSeries {
            y: &cell.target.y,
            model: arima_select(
                exp,
                cell.target,
                (*criterion, ps, ds, qs, *drift),
                seasonal.as_ref(),
                regressors,
            ),
        }),
        Family::Smoothing {
            error,
            trend,
            season,
        } => visitor.visit(&likelihood::OnSeries {
            y: &cell.target.y,
            model: likelihood::Smoothing {
                spec: smoothing::spec_of(
                    (*error, *trend, *season),
                    exp.season_length(),
                    exp.frequency.name(),
                )?,
                seed: cell.seed,
            },
        }),
        Family::SmoothingSelect { forms } => visitor.visit(&likelihood::OnSeries {
            y: &cell.target.y,
            model: smoothing::select::SmoothingSelect {
                specs: forms
                    .iter()
                    .map(|&form| {
                        smoothing::spec_of(form, exp.season_length(), exp.frequency.name())
                    })
                    .collect::<Result<_, _>>()?,
                seed: cell.seed,
            },
        }),
        Family::Theta { multiplicative } => visitor.visit(&likelihood::OnSeries {
            y: &cell.target.y,
            model: theta::Theta {
                season: match (*multiplicative, exp.season_length()) {
                    (false, _) => None,
                    (true, Some(m)) if m >= 2 => Some(m),
                    (true, _) => {
                        return Err(format!(
                            "theta with deseasonalise: multiplicative needs seasonal data; {} data have no season length",
                            exp.frequency.name()
                        ))
                    }
                },
            },
        }),
        Family::Combination { .. } => return Err("a combination is formed from its members".into()),
    })
}

fn season_of(s: crate::spec::SeasonalOrder) -> arima::SeasonalOrder {
    arima::SeasonalOrder {
        p: s.p,
        d: s.d,
        q: s.q,
        m: s.m,
    }
}

/// The regressor columns of an arima candidate over positions 1..N + the
/// largest horizon: a known-ahead predictor's values (its future rows
/// where the data have them), a dummy's everywhere.
fn regressor_columns(
    exp: &Experiment,
    target: &TargetData,
    indices: &[usize],
) -> likelihood::Regressors {
    let len = target.n + exp.horizons.iter().copied().max().unwrap_or(1);
    likelihood::Regressors {
        names: indices
            .iter()
            .map(|&i| exp.regressor_name(i).to_string())
            .collect(),
        values: indices
            .iter()
            .map(|&i| match i.checked_sub(exp.predictors.len()) {
                None => target.predictors[i].clone(),
                Some(c) => crate::spec::dummies::column_values(exp, target, c, len),
            })
            .collect(),
    }
}

/// The grid of an arima that selects its order: (d, D, p, q, P, Q) with d
/// outermost and Q innermost, so that without a season the orders come in
/// the (p, q) order they always had.
fn arima_select(
    exp: &Experiment,
    target: &TargetData,
    (criterion, ps, ds, qs, drift): (
        crate::spec::ArimaCriterion,
        &[usize],
        &[usize],
        &[usize],
        bool,
    ),
    seasonal: Option<&crate::spec::SeasonalGrid>,
    regressors: &[usize],
) -> likelihood::ArimaSelect {
    let mut ds = ds.to_vec();
    ds.sort_unstable();
    let (sps, mut sds, sqs, m) = match seasonal {
        Some(g) => (g.ps.clone(), g.ds.clone(), g.qs.clone(), g.m),
        None => (vec![0], vec![0], vec![0], 1),
    };
    sds.sort_unstable();
    let mut orders = Vec::new();
    for &d in &ds {
        for &sd in &sds {
            for &p in ps {
                for &q in qs {
                    for &sp in &sps {
                        for &sq in &sqs {
                            orders.push(arima::ArimaOrder {
                                p,
                                d,
                                q,
                                drift,
                                seasonal: seasonal.map(|_| arima::SeasonalOrder {
                                    p: sp,
                                    d: sd,
                                    q: sq,
                                    m,
                                }),
                            });
                        }
                    }
                }
            }
        }
    }
    likelihood::ArimaSelect {
        criterion,
        orders,
        ds,
        seasonal_ds: sds,
        m,
        regressors: regressor_columns(exp, target, regressors),
    }
}

/// Whether a family is estimated by maximum likelihood (its failures are
/// recorded per cell; `check` does not run it).
pub(crate) fn is_likelihood(family: &Family) -> bool {
    matches!(
        family,
        Family::Arima { .. }
            | Family::ArimaSelect { .. }
            | Family::Smoothing { .. }
            | Family::SmoothingSelect { .. }
            | Family::Theta { .. }
    )
}
