//! score: pure functions from forecast rows to accuracy tables (SPEC §4–§5):
//! the metrics, the pooled `all` horizon, ranks, and the in-sample versus
//! out-of-sample comparison.

pub mod bootstrap;
pub mod calibration;
pub mod comparison;
pub mod diagnostics;
pub mod efficiency;
pub mod pairwise;
pub mod past_errors;
pub mod stability;
pub mod summary;

#[cfg(test)]
mod density_tests;
#[cfg(test)]
mod refdata;
#[cfg(test)]
mod reference_metrics_tests;

use crate::backtest::CellOutput;
use crate::numerics::dist::{normal_cdf, normal_pdf, normal_quantile};
use crate::plan::Cell;
use crate::spec::{
    Experiment, Family, IntervalsFrom, Metric, MetricColumn, MultiStep, QuantileColumn, Scheme,
};

/// Forecast errors of one candidate on one target × scheme × horizon.
#[derive(Debug, Clone, Default)]
pub struct Errors {
    pub actual: Vec<f64>,
    pub forecast: Vec<f64>,
    pub is_mse: Vec<Option<f64>>,
    pub is_var: Vec<Option<f64>>,
    /// Forecast variances σ̂_h², where the family provides them.
    pub variance: Vec<Option<f64>>,
    /// Ordinal of the forecast's target period, for sub-period scores.
    pub period: Vec<i64>,
    /// Under `intervals_from: past_errors`: the probabilities of the
    /// quantile columns (empty otherwise) …
    pub offset_probs: Vec<f64>,
    /// … and per forecast the empirical quantiles of its past errors at
    /// them (None before enough errors are known).
    pub offsets: Vec<Option<Vec<f64>>>,
    /// Under `units: original` with a log-based transform: the forecast
    /// distribution is log-normal (its variance that of the log level).
    pub shape: Shape,
}

/// The forecast distribution a forecast and its variance describe.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Shape {
    /// N(forecast, variance).
    #[default]
    Gaussian,
    /// A log-normal level whose log has variance v, the forecast being its
    /// median exp(μ) …
    LogMedian,
    /// … or its mean exp(μ + v/2).
    LogMean,
}

impl Shape {
    /// The shape of candidate `c`'s forecasts.
    pub fn of(exp: &Experiment, c: usize) -> Shape {
        use crate::spec::{BackTransform, Units};
        if exp.units != Units::Original || !crate::models::level::logged(exp.transform_of(c)) {
            return Shape::Gaussian;
        }
        match exp.back_transform {
            BackTransform::Median => Shape::LogMedian,
            BackTransform::Mean => Shape::LogMean,
        }
    }

    /// μ of a log-normal forecast with standard deviation `sd` of its log.
    fn log_location(self, forecast: f64, sd: f64) -> f64 {
        match self {
            Shape::LogMean => forecast.ln() - sd * sd / 2.0,
            _ => forecast.ln(),
        }
    }

    /// The quantile forecast + z·sd of a Gaussian forecast, or
    /// exp(μ + z·sd) of a log-normal one (z a standard-normal quantile).
    pub fn quantile(self, forecast: f64, sd: f64, z: f64) -> f64 {
        match self {
            Shape::Gaussian => forecast + z * sd,
            _ => (self.log_location(forecast, sd) + z * sd).exp(),
        }
    }

    /// The standardised outturn Φ⁻¹(PIT): (y − f)/sd, or (ln y − μ)/sd.
    fn standardised(self, forecast: f64, sd: f64, y: f64) -> f64 {
        match self {
            Shape::Gaussian => (y - forecast) / sd,
            _ => (y.ln() - self.log_location(forecast, sd)) / sd,
        }
    }
}

impl Errors {
    pub fn error(&self, i: usize) -> f64 {
        self.actual[i] - self.forecast[i]
    }
    pub fn len(&self) -> usize {
        self.actual.len()
    }
    pub fn is_empty(&self) -> bool {
        self.actual.is_empty()
    }
    pub fn extend(&mut self, other: &Errors) {
        self.actual.extend_from_slice(&other.actual);
        self.forecast.extend_from_slice(&other.forecast);
        self.is_mse.extend_from_slice(&other.is_mse);
        self.is_var.extend_from_slice(&other.is_var);
        self.variance.extend_from_slice(&other.variance);
        self.period.extend_from_slice(&other.period);
        self.offsets.extend_from_slice(&other.offsets);
        self.shape = other.shape;
        if self.offset_probs.is_empty() {
            self.offset_probs.clone_from(&other.offset_probs);
        }
    }

    /// The forecasts whose target period lies in from..=to.
    pub fn within(&self, from: i64, to: i64) -> Errors {
        let mut out = Errors {
            offset_probs: self.offset_probs.clone(),
            shape: self.shape,
            ..Errors::default()
        };
        for i in 0..self.len() {
            if (from..=to).contains(&self.period[i]) {
                out.actual.push(self.actual[i]);
                out.forecast.push(self.forecast[i]);
                out.is_mse.push(self.is_mse[i]);
                out.is_var.push(self.is_var[i]);
                out.variance.push(self.variance[i]);
                out.period.push(self.period[i]);
                if self.past() {
                    out.offsets.push(self.offsets[i].clone());
                }
            }
        }
        out
    }

    /// Whether intervals come from past errors (`intervals_from: past_errors`).
    pub fn past(&self) -> bool {
        !self.offset_probs.is_empty()
    }

    /// Under past_errors, the bounds of forecast i's level-c interval:
    /// the forecast plus the past errors' quantiles at (1 ∓ c)/2.
    fn past_bounds(&self, i: usize, level: f64) -> Option<(f64, f64)> {
        let o = self.offsets[i].as_ref()?;
        let at = |p: f64| self.offset_probs.iter().position(|q| *q == p);
        let (lo, hi) = (at((1.0 - level) / 2.0)?, at((1.0 + level) / 2.0)?);
        Some((self.forecast[i] + o[lo], self.forecast[i] + o[hi]))
    }

    /// The bounds of forecast i's level-c interval: Gaussian from its
    /// variance (SPEC §4), or from past errors.
    pub fn bounds(&self, i: usize, level: f64) -> Option<(f64, f64)> {
        if self.past() {
            return self.past_bounds(i, level);
        }
        let sd = self.variance[i].filter(|v| *v >= 0.0)?.sqrt();
        Some(self.model_bounds(i, sd, level))
    }

    /// The level-c interval of forecast i with standard deviation `sd`:
    /// Gaussian (SPEC §4), or the Gaussian interval of the log level
    /// carried through exp.
    fn model_bounds(&self, i: usize, sd: f64, level: f64) -> (f64, f64) {
        match self.shape {
            Shape::Gaussian => interval(self.forecast[i], sd, level),
            shape => {
                let mu = shape.log_location(self.forecast[i], sd);
                let (lo, hi) = interval(mu, sd, level);
                (lo.exp(), hi.exp())
            }
        }
    }

    /// Φ⁻¹ of forecast i's PIT, for Berkowitz's test.
    pub fn standardised(&self, i: usize, sd: f64) -> f64 {
        self.shape
            .standardised(self.forecast[i], sd, self.actual[i])
    }

    /// Forecast standard deviations, if every forecast has one.
    fn sds(&self) -> Option<Vec<f64>> {
        self.variance
            .iter()
            .map(|v| v.filter(|v| *v >= 0.0).map(f64::sqrt))
            .collect()
    }
}

/// The Gaussian interval at level c: forecast ± z_{(1+c)/2}·σ̂_h (SPEC §4).
pub fn interval(forecast: f64, sd: f64, level: f64) -> (f64, f64) {
    crate::numerics::dist::normal_interval(forecast, sd, level)
}

/// The standard-normal multiplier of a quantile column: sign·Φ⁻¹(tail), so
/// that forecast + multiplier·σ̂_h is its Gaussian quantile (for an interval
/// bound exactly the forecast ∓ z_{(1+c)/2}·σ̂_h of [`interval`]).
pub fn quantile_multiplier(q: &QuantileColumn) -> f64 {
    q.sign * normal_quantile(q.tail)
}

/// Share of outturns inside the level-c interval (ends included).
pub fn coverage(e: &Errors, level: f64) -> Option<f64> {
    if e.past() {
        let bounds: Vec<(usize, (f64, f64))> = (0..e.len())
            .filter_map(|i| Some((i, e.past_bounds(i, level)?)))
            .collect();
        let inside = bounds
            .iter()
            .filter(|(i, (lo, hi))| (*lo..=*hi).contains(&e.actual[*i]))
            .count();
        return mean(std::iter::once(inside as f64), bounds.len());
    }
    let sds = e.sds()?;
    let inside = (0..e.len())
        .filter(|&i| {
            let (lo, hi) = e.model_bounds(i, sds[i], level);
            (lo..=hi).contains(&e.actual[i])
        })
        .count();
    mean(std::iter::once(inside as f64), e.len().max(1)).filter(|_| !e.is_empty())
}

/// Mean interval score of the central level-c interval (Gneiting & Raftery
/// 2007, eq. 43): (u − l) + (2/α)(l − y)·1{y < l} + (2/α)(y − u)·1{y > u}, α = 1 − c.
pub fn interval_score(e: &Errors, level: f64) -> Option<f64> {
    let alpha = 1.0 - level;
    let score = |y: f64, lo: f64, hi: f64| {
        (hi - lo) + (2.0 / alpha) * (lo - y).max(0.0) + (2.0 / alpha) * (y - hi).max(0.0)
    };
    if e.past() {
        let scores: Vec<f64> = (0..e.len())
            .filter_map(|i| {
                let (lo, hi) = e.past_bounds(i, level)?;
                Some(score(e.actual[i], lo, hi))
            })
            .collect();
        return mean(scores.iter().copied(), scores.len());
    }
    let sds = e.sds()?;
    mean(
        (0..e.len()).map(|i| {
            let (lo, hi) = e.model_bounds(i, sds[i], level);
            let y = e.actual[i];
            (hi - lo) + (2.0 / alpha) * (lo - y).max(0.0) + (2.0 / alpha) * (y - hi).max(0.0)
        }),
        e.len(),
    )
}

/// CRPS of a Gaussian forecast N(μ, σ²) at outturn y, in closed form
/// (Gneiting & Raftery 2007, eq. 21): σ[z(2Φ(z) − 1) + 2φ(z) − 1/√π], z = (y − μ)/σ.
pub fn crps_gaussian(mu: f64, sd: f64, y: f64) -> f64 {
    if sd <= 0.0 {
        return (y - mu).abs();
    }
    let z = (y - mu) / sd;
    sd * (z * (2.0 * normal_cdf(z) - 1.0) + 2.0 * normal_pdf(z) - 1.0 / std::f64::consts::PI.sqrt())
}

/// Mean Gaussian CRPS (none under past_errors: no density).
pub fn crps(e: &Errors) -> Option<f64> {
    if e.past() {
        return None;
    }
    let sds = e.sds()?;
    mean(
        (0..e.len()).map(|i| match e.shape {
            Shape::Gaussian => crps_gaussian(e.forecast[i], sds[i], e.actual[i]),
            shape => crps_log_normal(
                shape.log_location(e.forecast[i], sds[i]),
                sds[i],
                e.actual[i],
            ),
        }),
        e.len(),
    )
}

/// CRPS of a log-normal forecast (ln X ~ N(μ, σ²)) at outturn y > 0, in
/// closed form (Baran & Lerch 2015, eq. 5): y(2Φ(w) − 1) −
/// 2e^{μ+σ²/2}(Φ(w − σ) + Φ(σ/√2) − 1), w = (ln y − μ)/σ; for y ≤ 0 the
/// distance to the whole distribution, e^{μ+σ²/2} − y.
pub fn crps_log_normal(mu: f64, sd: f64, y: f64) -> f64 {
    let mean = (mu + sd * sd / 2.0).exp();
    if y <= 0.0 {
        return mean - y;
    }
    if sd <= 0.0 {
        return (y - mu.exp()).abs();
    }
    let w = (y.ln() - mu) / sd;
    y * (2.0 * normal_cdf(w) - 1.0)
        - 2.0 * mean * (normal_cdf(w - sd) + normal_cdf(sd / std::f64::consts::SQRT_2) - 1.0)
}

/// Pinball (quantile) loss of quantile q at probability τ for outturn y:
/// (y − q)(τ − 1{y < q}) (Koenker & Bassett 1978; the quantile score of
/// Gneiting & Raftery 2007, section 6, up to their factor 2).
pub fn pinball(y: f64, q: f64, tau: f64) -> f64 {
    let indicator = if y < q { 1.0 } else { 0.0 };
    (y - q) * (tau - indicator)
}

/// Mean pinball loss over every forecast and every quantile column, the
/// Gaussian quantiles forecast + multiplier·σ̂_h; None without quantile
/// columns or without a variance for every forecast.
pub fn quantile_score(e: &Errors, quantiles: &[QuantileColumn]) -> Option<f64> {
    if e.past() {
        let mut losses = Vec::new();
        for (i, o) in e.offsets.iter().enumerate() {
            let Some(o) = o else { continue };
            for (p, off) in e.offset_probs.iter().zip(o) {
                losses.push(pinball(e.actual[i], e.forecast[i] + off, *p));
            }
        }
        return mean(losses.iter().copied(), losses.len());
    }
    let sds = e.sds()?;
    if quantiles.is_empty() {
        return None;
    }
    let zs: Vec<f64> = quantiles.iter().map(quantile_multiplier).collect();
    mean(
        (0..e.len()).flat_map(|i| {
            let (f, sd, y, shape) = (e.forecast[i], sds[i], e.actual[i], e.shape);
            quantiles
                .iter()
                .zip(&zs)
                .map(move |(q, z)| pinball(y, shape.quantile(f, sd, *z), q.prob))
        }),
        e.len() * quantiles.len(),
    )
}

/// Log score of a Gaussian forecast N(μ, σ²) at outturn y: the negative
/// log density, ½ln(2π) + ln σ + ½((y − μ)/σ)², so that lower is better and
/// it ranks like a loss (common practice; Gneiting & Raftery 2007, section
/// 4.1, with the sign turned). None for σ = 0.
pub fn log_score_gaussian(mu: f64, sd: f64, y: f64) -> Option<f64> {
    if !positive_finite(sd) {
        return None;
    }
    let z = (y - mu) / sd;
    Some(0.5 * (2.0 * std::f64::consts::PI).ln() + sd.ln() + 0.5 * z * z)
}

/// Mean Gaussian log score; None when a forecast has no positive variance.
pub fn log_score(e: &Errors) -> Option<f64> {
    if e.past() {
        return None;
    }
    let sds = e.sds()?;
    let scores: Option<Vec<f64>> = (0..e.len())
        .map(|i| match e.shape {
            Shape::Gaussian => log_score_gaussian(e.forecast[i], sds[i], e.actual[i]),
            // The density of y is that of ln y over y.
            shape => (e.actual[i] > 0.0)
                .then(|| {
                    let (y, mu) = (e.actual[i], shape.log_location(e.forecast[i], sds[i]));
                    log_score_gaussian(mu, sds[i], y.ln()).map(|s| s + y.ln())
                })
                .flatten(),
        })
        .collect();
    mean(scores?.into_iter(), e.len())
}

/// rmse = sqrt(mean e²)
pub fn rmse(e: &Errors) -> Option<f64> {
    mean((0..e.len()).map(|i| e.error(i).powi(2)), e.len()).map(f64::sqrt)
}
/// mae = mean |e|
pub fn mae(e: &Errors) -> Option<f64> {
    mean((0..e.len()).map(|i| e.error(i).abs()), e.len())
}
/// bias = mean e (positive: forecasts too low on average)
pub fn bias(e: &Errors) -> Option<f64> {
    mean((0..e.len()).map(|i| e.error(i)), e.len())
}
/// mape = 100·mean |e/actual|; undefined when an actual is 0.
pub fn mape(e: &Errors) -> Option<f64> {
    if e.actual.contains(&0.0) {
        return None;
    }
    mean(
        (0..e.len()).map(|i| (e.error(i) / e.actual[i]).abs()),
        e.len(),
    )
    .map(|v| 100.0 * v)
}
/// smape = 200·mean |e|/(|actual|+|forecast|); a 0/0 term counts as 0.
pub fn smape(e: &Errors) -> Option<f64> {
    mean(
        (0..e.len()).map(|i| {
            let den = e.actual[i].abs() + e.forecast[i].abs();
            if den == 0.0 {
                0.0
            } else {
                e.error(i).abs() / den
            }
        }),
        e.len(),
    )
    .map(|v| 200.0 * v)
}
/// mase (Hyndman & Koehler 2006) = mae / scale.
pub fn mase(e: &Errors, scale: Option<f64>) -> Option<f64> {
    match (mae(e), scale) {
        (Some(m), Some(s)) if s > 0.0 => Some(m / s),
        _ => None,
    }
}
/// r2_oos (Campbell & Thompson 2008) = 1 − Σe²/Σe_benchmark².
pub fn r2_oos(e: &Errors, benchmark: &Errors) -> Option<f64> {
    if e.len() != benchmark.len() || e.is_empty() {
        return None;
    }
    let num: f64 = (0..e.len()).map(|i| e.error(i).powi(2)).sum();
    let den: f64 = (0..benchmark.len())
        .map(|i| benchmark.error(i).powi(2))
        .sum();
    if den > 0.0 {
        Some(1.0 - num / den)
    } else {
        None
    }
}

fn all_finite(x: &[f64]) -> bool {
    x.iter().all(|v| v.is_finite())
}

/// `x > 0` and finite (false for NaN).
fn positive_finite(x: f64) -> bool {
    x.is_finite() && x > 0.0
}

fn mean(values: impl Iterator<Item = f64>, n: usize) -> Option<f64> {
    if n == 0 {
        return None;
    }
    Some(values.sum::<f64>() / n as f64)
}

/// The MASE scale: mean |y_t − y_{t−m}| over the estimation sample of the
/// scheme's first origin (positions a..=T0), m the season length or 1.
pub fn mase_scale(
    y: &[f64],
    scheme: &Scheme,
    first_origin: usize,
    season: Option<usize>,
) -> Option<f64> {
    let m = season.unwrap_or(1);
    let start = crate::plan::sample_start(scheme, first_origin);
    let terms: Vec<f64> = ((start + m)..=first_origin)
        .map(|t| (y[t - 1] - y[t - 1 - m]).abs())
        .collect();
    mean(terms.iter().copied(), terms.len())
}

/// In-sample R² of the estimations behind the forecasts: 1 − Σ is_mse / Σ is_var
/// (the centred R², pooled over the estimation windows).
pub fn in_sample_r2(e: &Errors) -> Option<f64> {
    let mut mse = 0.0;
    let mut var = 0.0;
    for (m, v) in e.is_mse.iter().zip(&e.is_var) {
        mse += (*m)?;
        var += (*v)?;
    }
    (var > 0.0 && !e.is_empty()).then(|| 1.0 - mse / var)
}

/// In-sample rmse: the square root of the mean of `is_mse` over the forecasts (SPEC §4).
pub fn in_sample_rmse(e: &Errors) -> Option<f64> {
    let vals: Vec<f64> = e.is_mse.iter().filter_map(|v| *v).collect();
    if vals.len() != e.len() || vals.is_empty() {
        return None;
    }
    Some((vals.iter().sum::<f64>() / vals.len() as f64).sqrt())
}

/// Whether a candidate's in-sample errors measure the same thing as its
/// forecast errors at `horizon` (None: the pooled horizons), so that the
/// overfitting gap and the in-sample/out-of-sample rank correlation
/// compare like with like. `is_mse` (SPEC §4) is a one-step measure for
/// arima, smoothing, drift and iterated ar: for them only h = 1 compares.
/// Direct least squares measure the h-step regression itself, and the
/// mean's deviations do not depend on the horizon.
pub fn in_sample_comparable(exp: &Experiment, candidate: usize, horizon: Option<usize>) -> bool {
    let one_step_only = match &exp.candidates[candidate].family {
        Family::Drift | Family::Arima { .. } | Family::ArimaSelect { .. } => true,
        Family::Smoothing { .. } | Family::SmoothingSelect { .. } | Family::Theta { .. } => true,
        Family::Ar { .. } | Family::ArSelect { .. } => exp.multi_step == MultiStep::Iterated,
        _ => false,
    };
    !one_step_only || horizon == Some(1)
}

#[derive(Debug, Clone, PartialEq)]
pub struct ScoreRow {
    pub target: usize,
    pub candidate: usize,
    pub scheme: usize,
    /// None is the pooled `all` horizon.
    pub horizon: Option<usize>,
    /// None is `all`; Some(i) is `Experiment::periods[i]`.
    pub period_set: Option<usize>,
    pub n: usize,
    /// One value per `Experiment::metric_columns()`, in that order.
    pub metrics: Vec<Option<f64>>,
    pub is_rmse: Option<f64>,
    pub gap: Option<f64>,
    pub rank: usize,
    pub is_r2: Option<f64>,
}

/// Errors per cell and horizon: `[cell][horizon index]`.
pub fn cell_errors(exp: &Experiment, cells: &[Cell], outputs: &[CellOutput]) -> Vec<Vec<Errors>> {
    cells
        .iter()
        .zip(outputs)
        .map(|(cell, out)| {
            let target = &exp.targets[cell.target];
            let past = exp.intervals_from == IntervalsFrom::PastErrors;
            let offsets = if past {
                past_errors::for_forecasts(exp, target, out)
            } else {
                Vec::new()
            };
            let offset_probs: Vec<f64> = match past {
                true => exp.quantile_columns().iter().map(|q| q.prob).collect(),
                false => Vec::new(),
            };
            exp.horizons
                .iter()
                .map(|&h| {
                    let mut e = Errors {
                        offset_probs: offset_probs.clone(),
                        shape: Shape::of(exp, cell.candidate),
                        ..Errors::default()
                    };
                    for (k, r) in out
                        .forecasts
                        .iter()
                        .enumerate()
                        .filter(|(_, r)| r.horizon == h)
                    {
                        if past {
                            e.offsets.push(offsets[k].clone());
                        }
                        let pos = r.origin + h;
                        let actual = target.actual(pos);
                        // No outturn yet (a release the vintages do not
                        // hold): left out of every score.
                        if actual.is_nan() {
                            continue;
                        }
                        e.actual.push(actual);
                        e.forecast.push(r.forecast);
                        e.is_mse.push(r.is_mse);
                        e.is_var.push(r.is_var);
                        e.variance.push(r.variance);
                        e.period.push(target.ordinals[pos - 1]);
                    }
                    e
                })
                .collect()
        })
        .collect()
}

fn metric_value(
    exp: &Experiment,
    col: &MetricColumn,
    e: &Errors,
    bench: &Errors,
    scale: Option<f64>,
) -> Option<f64> {
    let level = || col.level.map(|l| exp.intervals[l].level);
    match col.metric {
        Metric::Rmse => rmse(e),
        Metric::Mae => mae(e),
        Metric::Bias => bias(e),
        Metric::Mape => mape(e),
        Metric::Smape => smape(e),
        Metric::Mase => mase(e, scale),
        Metric::R2Oos => r2_oos(e, bench),
        Metric::Coverage => coverage(e, level()?),
        Metric::IntervalScore => interval_score(e, level()?),
        Metric::Crps => crps(e),
        Metric::QuantileScore => quantile_score(e, &exp.quantile_columns()),
        Metric::LogScore => log_score(e),
    }
}

/// Sort key so that rank 1 is best: smaller loss, larger r2_oos, smaller |bias|.
fn rank_key(metric: Metric, v: Option<f64>) -> f64 {
    match v {
        None => f64::INFINITY,
        Some(v) if metric.higher_is_better() => -v,
        Some(v) if metric == Metric::Bias => v.abs(),
        Some(v) => v,
    }
}

/// Index of a cell in plan order.
pub fn cell_index(exp: &Experiment, target: usize, candidate: usize, scheme: usize) -> usize {
    (target * exp.candidates.len() + candidate) * exp.schemes.len() + scheme
}

/// The errors of one candidate on a horizon (None: all horizons pooled) and
/// period set (None: all forecasts).
pub fn group_errors(
    exp: &Experiment,
    errors: &[Vec<Errors>],
    target: usize,
    candidate: usize,
    scheme: usize,
    horizon: Option<usize>,
    period_set: Option<usize>,
) -> Errors {
    let per_h = &errors[cell_index(exp, target, candidate, scheme)];
    let e = match horizon {
        Some(i) => per_h[i].clone(),
        None => {
            let mut all = Errors::default();
            per_h.iter().for_each(|e| all.extend(e));
            all
        }
    };
    match period_set {
        Some(p) => e.within(exp.periods[p].from_ordinal, exp.periods[p].to_ordinal),
        None => e,
    }
}

/// Horizon indices scored: each horizon, then the pooled `all` when there are several.
pub fn scored_horizons(exp: &Experiment) -> Vec<Option<usize>> {
    let mut horizons: Vec<Option<usize>> = (0..exp.horizons.len()).map(Some).collect();
    if exp.horizons.len() > 1 {
        horizons.push(None);
    }
    horizons
}

/// The scores table in output order (SPEC §5).
pub fn scores(exp: &Experiment, errors: &[Vec<Errors>]) -> Vec<ScoreRow> {
    let n_c = exp.candidates.len();
    let columns = exp.metric_columns();
    let rank_pos = columns
        .iter()
        .position(|c| c.metric == exp.rank_by && c.level.is_none());
    let period_sets: Vec<Option<usize>> = std::iter::once(None)
        .chain((0..exp.periods.len()).map(Some))
        .collect();
    let mut rows = Vec::new();
    for (t, target) in exp.targets.iter().enumerate() {
        for (s, scheme) in exp.schemes.iter().enumerate() {
            let scale = mase_scale(
                target.scored(),
                scheme,
                target.first_origins[s],
                exp.season_length(),
            );
            for hi in scored_horizons(exp) {
                for &ps in &period_sets {
                    let bench = group_errors(exp, errors, t, exp.benchmark, s, hi, ps);
                    let mut group: Vec<ScoreRow> = (0..n_c)
                        .map(|c| {
                            let e = group_errors(exp, errors, t, c, s, hi, ps);
                            let metrics = columns
                                .iter()
                                .map(|col| metric_value(exp, col, &e, &bench, scale))
                                .collect();
                            let is_rmse = in_sample_rmse(&e);
                            let comparable =
                                in_sample_comparable(exp, c, hi.map(|i| exp.horizons[i]));
                            let gap = match (rmse(&e), is_rmse) {
                                (Some(o), Some(i)) if i > 0.0 && comparable => Some(o / i),
                                _ => None,
                            };
                            ScoreRow {
                                target: t,
                                candidate: c,
                                scheme: s,
                                horizon: hi.map(|i| exp.horizons[i]),
                                period_set: ps,
                                n: e.len(),
                                metrics,
                                is_rmse,
                                gap,
                                rank: 0,
                                is_r2: in_sample_r2(&e),
                            }
                        })
                        .collect();
                    let mut order: Vec<usize> = (0..n_c).collect();
                    order.sort_by(|&a, &b| {
                        let va = rank_pos
                            .map(|p| rank_key(exp.rank_by, group[a].metrics[p]))
                            .unwrap_or(0.0);
                        let vb = rank_pos
                            .map(|p| rank_key(exp.rank_by, group[b].metrics[p]))
                            .unwrap_or(0.0);
                        va.total_cmp(&vb)
                            .then_with(|| exp.candidates[a].id.cmp(&exp.candidates[b].id))
                    });
                    for (r, &c) in order.iter().enumerate() {
                        group[c].rank = r + 1;
                    }
                    rows.extend(group);
                }
            }
        }
    }
    // Output order: targets, candidates, schemes, horizons (all last), period sets (all first).
    rows.sort_by_key(|r| {
        (
            r.target,
            r.candidate,
            r.scheme,
            r.horizon.map_or(usize::MAX, |h| h),
            r.period_set.map_or(0, |p| p + 1),
        )
    });
    rows
}

#[cfg(test)]
mod tests {
    use super::*;

    fn errs(actual: &[f64], forecast: &[f64]) -> Errors {
        Errors {
            actual: actual.to_vec(),
            forecast: forecast.to_vec(),
            is_mse: vec![None; actual.len()],
            is_var: vec![None; actual.len()],
            variance: vec![None; actual.len()],
            period: vec![0; actual.len()],
            ..Errors::default()
        }
    }

    #[test]
    fn metrics_by_hand() {
        // Hand-computed from the SPEC §4 definitions: actual 2, 4, 5; forecast 1, 5, 5 → e = 1, −1, 0.
        let e = errs(&[2.0, 4.0, 5.0], &[1.0, 5.0, 5.0]);
        assert!((rmse(&e).unwrap() - (2.0f64 / 3.0).sqrt()).abs() < 1e-15);
        assert!((mae(&e).unwrap() - 2.0 / 3.0).abs() < 1e-15);
        assert_eq!(bias(&e), Some(0.0));
        // mape = 100·(1/2 + 1/4 + 0)/3 = 25
        assert!((mape(&e).unwrap() - 25.0).abs() < 1e-12);
        // smape = 200·(1/3 + 1/9 + 0)/3 = 200·4/27
        assert!((smape(&e).unwrap() - 800.0 / 27.0).abs() < 1e-12);
        assert!((mase(&e, Some(2.0)).unwrap() - 1.0 / 3.0).abs() < 1e-15);
        // benchmark errors 2, 2, 2 → Σe² = 2, Σe_b² = 12 → r2_oos = 1 − 2/12
        let b = errs(&[2.0, 4.0, 5.0], &[0.0, 2.0, 3.0]);
        assert!((r2_oos(&e, &b).unwrap() - (1.0 - 2.0 / 12.0)).abs() < 1e-15);
    }

    #[test]
    fn undefined_cases() {
        // mape with a zero actual is undefined (SPEC §4); smape counts 0/0 as 0.
        let e = errs(&[0.0, 1.0], &[0.0, 2.0]);
        assert_eq!(mape(&e), None);
        assert!((smape(&e).unwrap() - 200.0 * (0.0 + 1.0 / 3.0) / 2.0).abs() < 1e-12);
        assert_eq!(rmse(&Errors::default()), None);
    }

    #[test]
    fn mase_scale_uses_the_first_estimation_sample() {
        use crate::spec::{SchemeKind, SchemeStart};
        let s = Scheme {
            id: "expanding".into(),
            kind: SchemeKind::Expanding,
            start: SchemeStart::Half,
            window: None,
            refit_every: 1,
            origins_first: false,
            line: 1,
        };
        // y = 1, 3, 2, 6, 5; T0 = 4, m = 1: mean(|3−1|, |2−3|, |6−2|) = 7/3
        let y = [1.0, 3.0, 2.0, 6.0, 5.0];
        assert!((mase_scale(&y, &s, 4, None).unwrap() - 7.0 / 3.0).abs() < 1e-15);
        // m = 2: mean(|2−1|, |6−3|) = 2
        assert!((mase_scale(&y, &s, 4, Some(2)).unwrap() - 2.0).abs() < 1e-15);
    }
}
