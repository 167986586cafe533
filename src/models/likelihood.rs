//! The likelihood families (smoothing, arima) as [`Model`]s. Each family
//! estimates on a sample of observations and forecasts from the end of a
//! longer series; [`OnSeries`] adapts that to the origin loop:
//! - a fit holds the estimate and the first position of its sample (the
//!   last `window` observations under a rolling scheme, else position 1);
//! - an update re-estimates warm-started from the previous estimate and,
//!   when that fails, keeps the previous estimate (the loop counts it);
//! - a forecast filters from the sample's start to the origin (beyond the
//!   estimation sample under a fixed scheme) and forecasts beyond it.

use super::{Model, Order, Parameter, Problem, Step};
use crate::numerics::ic::Smallest;

/// A model estimated by maximum likelihood on a sample of observations.
pub(crate) trait Likelihood {
    type Fit: Clone + 'static;
    /// Estimate on `y` (the estimation sample, its first value at position
    /// `start`), optionally warm-started.
    fn estimate(
        &self,
        y: &[f64],
        start: usize,
        warm: Option<&Self::Fit>,
    ) -> Result<Self::Fit, String>;
    /// Filter `y` (starting at position `start`, where the fit's sample
    /// started) and forecast h = 1..=max_h beyond its end: (mean, variance)
    /// per step; fewer steps when a regressor has no value further ahead.
    fn forecast(
        &self,
        fit: &Self::Fit,
        y: &[f64],
        start: usize,
        max_h: usize,
    ) -> Result<Vec<(f64, f64)>, String>;
    /// Mean squared one-step prediction error over the estimation sample.
    fn is_mse(&self, fit: &Self::Fit) -> f64;
    /// One-step prediction errors over `y` (the estimation sample) at the
    /// fit's parameters; by default forecast one step from every prefix.
    fn residuals(&self, fit: &Self::Fit, y: &[f64], start: usize) -> Vec<f64> {
        (2..y.len())
            .filter_map(|t| {
                let f = self.forecast(fit, &y[..t], start, 1).ok()?;
                Some(y[t] - f.first()?.0)
            })
            .collect()
    }
    /// The rows of parameters.csv of an estimate on `y` (its estimation
    /// sample, from position `start`): the chosen order's for a selection.
    fn parameters(&self, fit: &Self::Fit, y: &[f64], start: usize) -> Vec<Parameter>;
    /// The order chosen, for families that select one.
    fn order(&self, _fit: &Self::Fit) -> Option<Order> {
        None
    }
    /// Names of the regressor columns the estimate left out (SPEC §7.1).
    fn left_out(&self, _fit: &Self::Fit) -> Vec<String> {
        Vec::new()
    }
    /// The covariance of the forecast errors at steps 1..=max_h beyond
    /// the end of `y` (see `Model::error_covariance`), where the family
    /// has a closed form.
    fn error_covariance(&self, _fit: &Self::Fit, _y: &[f64], _max_h: usize) -> Option<Vec<f64>> {
        None
    }
}

/// A likelihood model on one target's series.
pub(crate) struct OnSeries<'a, L> {
    pub y: &'a [f64],
    pub model: L,
}

/// An estimate and the first position of its estimation sample.
pub(crate) struct SampleFit<F> {
    fit: F,
    start: usize,
    /// The estimation end.
    end: usize,
}

impl<L: Likelihood> Model for OnSeries<'_, L> {
    type Fit = SampleFit<L::Fit>;
    const STRICT: bool = false;
    const WARM_STARTS: bool = true;

    fn fit(&self, end: usize, window: Option<usize>) -> Result<Self::Fit, String> {
        let start = crate::plan::window_start(end, window);
        let fit = self.model.estimate(&self.y[start - 1..end], start, None)?;
        Ok(SampleFit { fit, start, end })
    }

    fn update(&self, fit: &mut Self::Fit, end: usize, window: Option<usize>) -> Result<(), String> {
        let start = crate::plan::window_start(end, window);
        let next = self
            .model
            .estimate(&self.y[start - 1..end], start, Some(&fit.fit))?;
        *fit = SampleFit {
            fit: next,
            start,
            end,
        };
        Ok(())
    }

    fn forecast(
        &self,
        fit: &mut Self::Fit,
        origin: usize,
        horizons: &[usize],
    ) -> Vec<Result<Step, Problem>> {
        let max_h = horizons.iter().copied().max().unwrap_or(1);
        match self
            .model
            .forecast(&fit.fit, &self.y[fit.start - 1..origin], fit.start, max_h)
        {
            Ok(path) => horizons
                .iter()
                .map(|&h| {
                    let Some(&(mean, var)) = path.get(h - 1) else {
                        return Err(Problem {
                            horizon: h,
                            message: format!(
                                "a known-ahead predictor has no value {h} period(s) after the origin"
                            ),
                        });
                    };
                    Ok(Step {
                        forecast: mean,
                        variance: (var.is_finite() && var >= 0.0).then_some(var),
                        is_mse: Some(self.model.is_mse(&fit.fit)),
                        is_var: None,
                        order: self.model.order(&fit.fit),
                    })
                })
                .collect(),
            Err(message) => horizons
                .iter()
                .map(|&h| {
                    Err(Problem {
                        horizon: h,
                        message: message.clone(),
                    })
                })
                .collect(),
        }
    }

    fn residuals(&self, fit: &mut Self::Fit, end: usize) -> Vec<f64> {
        self.model
            .residuals(&fit.fit, &self.y[fit.start - 1..end], fit.start)
    }

    fn left_out(&self, fit: &mut Self::Fit) -> Vec<String> {
        self.model.left_out(&fit.fit)
    }

    fn error_covariance(
        &self,
        fit: &mut Self::Fit,
        origin: usize,
        count: usize,
    ) -> Option<Vec<f64>> {
        self.model
            .error_covariance(&fit.fit, &self.y[fit.start - 1..origin], count)
    }

    fn parameters(&self, fit: &mut Self::Fit) -> Vec<Parameter> {
        self.model
            .parameters(&fit.fit, &self.y[fit.start - 1..fit.end], fit.start)
    }
}

/// Exponential smoothing through [`super::smoothing`].
pub(crate) struct Smoothing {
    pub spec: super::smoothing::EtsSpec,
    /// The cell's seed, for simulated forecast variances.
    pub seed: u64,
}

impl Likelihood for Smoothing {
    type Fit = super::smoothing::EtsFit;
    fn estimate(
        &self,
        y: &[f64],
        _start: usize,
        warm: Option<&Self::Fit>,
    ) -> Result<Self::Fit, String> {
        super::smoothing::estimate(y, &self.spec, warm.map(|f| &f.params))
            .map_err(|e| e.to_string())
    }
    fn forecast(
        &self,
        fit: &Self::Fit,
        y: &[f64],
        start: usize,
        max_h: usize,
    ) -> Result<Vec<(f64, f64)>, String> {
        super::smoothing::forecast(fit, y, max_h, self.seed, start).map_err(|e| e.to_string())
    }
    fn is_mse(&self, fit: &Self::Fit) -> f64 {
        fit.is_mse
    }
    fn residuals(&self, fit: &Self::Fit, y: &[f64], _start: usize) -> Vec<f64> {
        super::smoothing::one_step_errors(&fit.spec, &fit.params, y).unwrap_or_default()
    }
    fn error_covariance(&self, fit: &Self::Fit, _y: &[f64], max_h: usize) -> Option<Vec<f64>> {
        super::smoothing::error_covariance(fit, max_h)
    }
    fn parameters(&self, fit: &Self::Fit, y: &[f64], _start: usize) -> Vec<Parameter> {
        super::smoothing::parameters(fit, y)
    }
}

/// The theta method through [`super::theta`]: estimated in closed form
/// and by a one-dimensional search, so a warm start has nothing to add.
impl Likelihood for super::theta::Theta {
    type Fit = super::theta::ThetaFit;
    fn estimate(
        &self,
        y: &[f64],
        _start: usize,
        _warm: Option<&Self::Fit>,
    ) -> Result<Self::Fit, String> {
        super::theta::Theta::estimate(self, y)
    }
    fn forecast(
        &self,
        fit: &Self::Fit,
        y: &[f64],
        _start: usize,
        max_h: usize,
    ) -> Result<Vec<(f64, f64)>, String> {
        Ok(super::theta::Theta::forecast(self, fit, y, max_h))
    }
    fn is_mse(&self, fit: &Self::Fit) -> f64 {
        fit.is_mse
    }
    fn residuals(&self, fit: &Self::Fit, y: &[f64], _start: usize) -> Vec<f64> {
        self.one_step_errors(fit, y).1
    }
    fn parameters(&self, fit: &Self::Fit, y: &[f64], _start: usize) -> Vec<Parameter> {
        super::theta::Theta::parameters(self, fit, y)
    }
}

/// Regressor columns of an arima (known-ahead predictors and dummies) at
/// positions 1.. of the target, with their names; None where a value does
/// not exist (a predictor transform's first periods, the future beyond the
/// data).
pub(crate) struct Regressors {
    pub names: Vec<String>,
    pub values: Vec<Vec<Option<f64>>>,
}

impl Regressors {
    fn at(&self, j: usize, position: usize) -> Option<f64> {
        self.values[j]
            .get(position.checked_sub(1)?)
            .copied()
            .flatten()
    }

    /// The sample from `start` of `len` observations: how many leading
    /// observations are skipped because a regressor does not exist there
    /// yet, and the regressors' columns over the rest.
    fn sample(&self, start: usize, len: usize) -> Result<(usize, Vec<Vec<f64>>), String> {
        let mut skip = 0;
        for j in 0..self.values.len() {
            if let Some(i) = (0..len).rev().find(|&i| self.at(j, start + i).is_none()) {
                skip = skip.max(i + 1);
            }
        }
        if skip >= len {
            return Err("no observation of the estimation window has every regressor".into());
        }
        let columns = (0..self.values.len())
            .map(|j| {
                (skip..len)
                    .map(|i| self.at(j, start + i).unwrap_or(0.0))
                    .collect()
            })
            .collect();
        Ok((skip, columns))
    }

    /// The columns from position `from` to the origin and as many steps
    /// after it (at most `max_h`) as every regressor has values for.
    fn ahead(&self, from: usize, origin: usize, max_h: usize) -> (usize, Vec<Vec<f64>>) {
        let steps = (0..max_h)
            .take_while(|&h| (0..self.values.len()).all(|j| self.at(j, origin + h + 1).is_some()))
            .count();
        let columns = (0..self.values.len())
            .map(|j| {
                (from..=origin + steps)
                    .map(|p| self.at(j, p).unwrap_or(0.0))
                    .collect()
            })
            .collect();
        (steps, columns)
    }

    fn names_of(&self, indices: &[usize]) -> Vec<String> {
        indices
            .iter()
            .filter_map(|&j| self.names.get(j).cloned())
            .collect()
    }
}

/// An estimate and the leading observations of its sample it skipped.
#[derive(Clone)]
pub(crate) struct RegressionFit<F> {
    fit: F,
    skip: usize,
}

/// Forecast an arima fit from the end of `y` (its sample from `start`,
/// less the skipped observations) with the regressors' future values.
fn arima_forecast(
    regressors: &Regressors,
    fit: &super::arima::ArimaFit,
    (y, start, skip): (&[f64], usize, usize),
    max_h: usize,
) -> Result<Vec<(f64, f64)>, String> {
    if regressors.values.is_empty() {
        return super::arima::forecast(fit, y, &[], max_h).map_err(|e| e.to_string());
    }
    let y = y
        .get(skip..)
        .ok_or("the sample is shorter than its skipped start")?;
    let origin = start + skip + y.len() - 1;
    let (steps, columns) = regressors.ahead(start + skip, origin, max_h);
    if steps == 0 {
        return Ok(Vec::new());
    }
    super::arima::forecast(fit, y, &columns, steps).map_err(|e| e.to_string())
}

/// The parameters of an arima fit on its sample `y` from `start`, less
/// the skipped observations, with the regressors' columns over it.
fn arima_parameters(
    regressors: &Regressors,
    fit: &super::arima::ArimaFit,
    (y, start, skip): (&[f64], usize, usize),
) -> Vec<Parameter> {
    if regressors.values.is_empty() {
        return super::arima::parameters(fit, y, &[], &[]);
    }
    let Some(y) = y.get(skip..) else {
        return Vec::new();
    };
    let columns: Vec<Vec<f64>> = (0..regressors.values.len())
        .map(|j| {
            (0..y.len())
                .map(|i| regressors.at(j, start + skip + i).unwrap_or(0.0))
                .collect()
        })
        .collect();
    super::arima::parameters(fit, y, &columns, &regressors.names)
}

/// arima(p,d,q)(P,D,Q)m, with regressors, through [`super::arima`].
pub(crate) struct Arima {
    pub order: super::arima::ArimaOrder,
    pub regressors: Regressors,
}

impl Likelihood for Arima {
    type Fit = RegressionFit<super::arima::ArimaFit>;
    fn estimate(
        &self,
        y: &[f64],
        start: usize,
        warm: Option<&Self::Fit>,
    ) -> Result<Self::Fit, String> {
        let warm = warm.map(|f| &f.fit.params);
        if self.regressors.values.is_empty() {
            let fit =
                super::arima::estimate(y, &self.order, warm, &[]).map_err(|e| e.to_string())?;
            return Ok(RegressionFit { fit, skip: 0 });
        }
        let (skip, columns) = self.regressors.sample(start, y.len())?;
        let fit = super::arima::estimate(&y[skip..], &self.order, warm, &columns)
            .map_err(|e| e.to_string())?;
        Ok(RegressionFit { fit, skip })
    }
    fn forecast(
        &self,
        fit: &Self::Fit,
        y: &[f64],
        start: usize,
        max_h: usize,
    ) -> Result<Vec<(f64, f64)>, String> {
        arima_forecast(&self.regressors, &fit.fit, (y, start, fit.skip), max_h)
    }
    fn is_mse(&self, fit: &Self::Fit) -> f64 {
        fit.fit.is_mse
    }
    fn left_out(&self, fit: &Self::Fit) -> Vec<String> {
        self.regressors.names_of(&fit.fit.left_out)
    }
    fn parameters(&self, fit: &Self::Fit, y: &[f64], start: usize) -> Vec<Parameter> {
        arima_parameters(&self.regressors, &fit.fit, (y, start, fit.skip))
    }
    fn error_covariance(&self, fit: &Self::Fit, y: &[f64], max_h: usize) -> Option<Vec<f64>> {
        super::arima::forecast::error_covariance(&fit.fit, y.get(fit.skip..)?, max_h).ok()
    }
}

/// arima with (p, q) — and (P, Q) — chosen by a criterion inside every
/// training window: every order of the grid with the window's d and D is
/// estimated on the same window (exact likelihood uses all of it) and
/// warm-started from its own previous estimate. With `aicc` and several d
/// (or D) listed, d and D are chosen first by the tests of
/// `numerics::stationarity` (D by Canova–Hansen on the first differences
/// when some listed d is ≥ 1, else on the series; then d by KPSS on the
/// seasonally differenced series), each raised while its test rejects.
pub(crate) struct ArimaSelect {
    pub criterion: crate::spec::ArimaCriterion,
    pub orders: Vec<super::arima::ArimaOrder>,
    /// The listed d and D, ascending.
    pub ds: Vec<usize>,
    pub seasonal_ds: Vec<usize>,
    pub m: usize,
    pub regressors: Regressors,
}

#[derive(Clone)]
pub(crate) struct SelectedFit {
    /// Every order's latest estimate (kept for warm starts while other
    /// differences are chosen) and whether it is of this window.
    fits: Vec<Option<super::arima::ArimaFit>>,
    current: Vec<bool>,
    chosen: usize,
    skip: usize,
}

impl ArimaSelect {
    /// (d, D) for this window's sample.
    fn differences(&self, y: &[f64]) -> (usize, usize) {
        use super::arima::differenced;
        use crate::numerics::stationarity::{canova_hansen_rejects, kpss_rejects};
        let tested = self.criterion == crate::spec::ArimaCriterion::Aicc;
        let mut sd = self.seasonal_ds[0];
        if tested && self.seasonal_ds.len() > 1 {
            // Canova–Hansen needs no unit root at frequency 0: when the
            // listed d allow one, it sees the first differences.
            let first = usize::from(self.ds.iter().any(|&d| d >= 1));
            let base = differenced(y, first, self.m, 0);
            for &next in &self.seasonal_ds[1..] {
                if !canova_hansen_rejects(&differenced(&base, 0, self.m, sd), self.m) {
                    break;
                }
                sd = next;
            }
        }
        let mut d = self.ds[0];
        if tested && self.ds.len() > 1 {
            for &next in &self.ds[1..] {
                if !kpss_rejects(&differenced(y, d, self.m, sd)) {
                    break;
                }
                d = next;
            }
        }
        (d, sd)
    }

    fn score(&self, fit: &super::arima::ArimaFit) -> f64 {
        match self.criterion {
            crate::spec::ArimaCriterion::Ic(c) => super::arima::information_criterion(fit, c),
            crate::spec::ArimaCriterion::Aicc => super::arima::aicc(fit),
        }
    }
}

impl Likelihood for ArimaSelect {
    type Fit = SelectedFit;
    fn estimate(
        &self,
        y: &[f64],
        start: usize,
        warm: Option<&Self::Fit>,
    ) -> Result<Self::Fit, String> {
        let (skip, columns) = if self.regressors.values.is_empty() {
            (0, Vec::new())
        } else {
            self.regressors.sample(start, y.len())?
        };
        let y = &y[skip..];
        let (d, sd) = self.differences(y);
        let mut fits = Vec::with_capacity(self.orders.len());
        let mut current = Vec::with_capacity(self.orders.len());
        let mut best = Smallest::default();
        let mut last_error = String::from("no order could be estimated");
        for (i, order) in self.orders.iter().enumerate() {
            let previous = warm.and_then(|w| w.fits[i].as_ref());
            if order.d != d || order.season().d != sd {
                fits.push(previous.cloned());
                current.push(false);
                continue;
            }
            match super::arima::estimate(y, order, previous.map(|f| &f.params), &columns) {
                Ok(fit) => {
                    let ic = self.score(&fit);
                    if ic.is_finite() {
                        best.offer(ic, i);
                    }
                    fits.push(Some(fit));
                    current.push(true);
                }
                Err(e) => {
                    last_error = e.to_string();
                    fits.push(None);
                    current.push(false);
                }
            }
        }
        let (_, chosen) = best.get().ok_or(last_error)?;
        Ok(SelectedFit {
            fits,
            current,
            chosen,
            skip,
        })
    }
    fn forecast(
        &self,
        fit: &Self::Fit,
        y: &[f64],
        start: usize,
        max_h: usize,
    ) -> Result<Vec<(f64, f64)>, String> {
        let chosen = fit.fits[fit.chosen].as_ref().ok_or("no chosen order")?;
        arima_forecast(&self.regressors, chosen, (y, start, fit.skip), max_h)
    }
    fn is_mse(&self, fit: &Self::Fit) -> f64 {
        fit.fits[fit.chosen].as_ref().map_or(f64::NAN, |f| f.is_mse)
    }
    fn order(&self, fit: &Self::Fit) -> Option<Order> {
        let o = &self.orders[fit.chosen];
        debug_assert!(fit.current[fit.chosen]);
        Some(match o.seasonal {
            None => Order::Arima(o.p, o.d, o.q),
            Some(s) => Order::Sarima {
                p: o.p,
                d: o.d,
                q: o.q,
                seasonal_p: s.p,
                seasonal_d: s.d,
                seasonal_q: s.q,
                m: s.m,
            },
        })
    }
    fn left_out(&self, fit: &Self::Fit) -> Vec<String> {
        fit.fits[fit.chosen]
            .as_ref()
            .map_or_else(Vec::new, |f| self.regressors.names_of(&f.left_out))
    }
    fn parameters(&self, fit: &Self::Fit, y: &[f64], start: usize) -> Vec<Parameter> {
        fit.fits[fit.chosen].as_ref().map_or_else(Vec::new, |f| {
            arima_parameters(&self.regressors, f, (y, start, fit.skip))
        })
    }
    fn error_covariance(&self, fit: &Self::Fit, y: &[f64], max_h: usize) -> Option<Vec<f64>> {
        let chosen = fit.fits[fit.chosen].as_ref()?;
        super::arima::forecast::error_covariance(chosen, y.get(fit.skip..)?, max_h).ok()
    }
}
