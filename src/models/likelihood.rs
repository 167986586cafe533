//! The likelihood families (smoothing, arima) as [`Model`]s. Each family
//! estimates on a sample of observations and forecasts from the end of a
//! longer series; [`OnSeries`] adapts that to the origin loop:
//! - a fit holds the estimate and the first position of its sample (the
//!   last `window` observations under a rolling scheme, else position 1);
//! - an update re-estimates warm-started from the previous estimate and,
//!   when that fails, keeps the previous estimate (the loop counts it);
//! - a forecast filters from the sample's start to the origin (beyond the
//!   estimation sample under a fixed scheme) and forecasts beyond it.

use super::{Model, Order, Problem, Step};
use crate::numerics::ic::Smallest;

/// A model estimated by maximum likelihood on a sample of observations.
pub(crate) trait Likelihood {
    type Fit: Clone;
    /// Estimate on `y` (the estimation sample), optionally warm-started.
    fn estimate(&self, y: &[f64], warm: Option<&Self::Fit>) -> Result<Self::Fit, String>;
    /// Filter `y` (starting where the fit's sample started) and forecast
    /// h = 1..=max_h beyond its end: (mean, variance) per step.
    fn forecast(&self, fit: &Self::Fit, y: &[f64], max_h: usize)
        -> Result<Vec<(f64, f64)>, String>;
    /// Mean squared one-step prediction error over the estimation sample.
    fn is_mse(&self, fit: &Self::Fit) -> f64;
    /// One-step prediction errors over `y` (the estimation sample) at the
    /// fit's parameters; by default forecast one step from every prefix.
    fn residuals(&self, fit: &Self::Fit, y: &[f64]) -> Vec<f64> {
        (2..y.len())
            .filter_map(|t| {
                let f = self.forecast(fit, &y[..t], 1).ok()?;
                Some(y[t] - f[0].0)
            })
            .collect()
    }
    /// The order chosen, for families that select one.
    fn order(&self, _fit: &Self::Fit) -> Option<Order> {
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
}

impl<L: Likelihood> Model for OnSeries<'_, L> {
    type Fit = SampleFit<L::Fit>;
    const STRICT: bool = false;

    fn fit(&self, end: usize, window: Option<usize>) -> Result<Self::Fit, String> {
        let start = crate::plan::window_start(end, window);
        let fit = self.model.estimate(&self.y[start - 1..end], None)?;
        Ok(SampleFit { fit, start })
    }

    fn update(&self, fit: &mut Self::Fit, end: usize, window: Option<usize>) -> Result<(), String> {
        let start = crate::plan::window_start(end, window);
        let next = self
            .model
            .estimate(&self.y[start - 1..end], Some(&fit.fit))?;
        *fit = SampleFit { fit: next, start };
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
            .forecast(&fit.fit, &self.y[fit.start - 1..origin], max_h)
        {
            Ok(path) => horizons
                .iter()
                .map(|&h| {
                    let (mean, var) = path[h - 1];
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
        self.model.residuals(&fit.fit, &self.y[fit.start - 1..end])
    }
}

/// Exponential smoothing through [`super::smoothing`].
pub(crate) struct Smoothing {
    pub spec: super::smoothing::EtsSpec,
}

impl Likelihood for Smoothing {
    type Fit = super::smoothing::EtsFit;
    fn estimate(&self, y: &[f64], warm: Option<&Self::Fit>) -> Result<Self::Fit, String> {
        super::smoothing::estimate(y, &self.spec, warm.map(|f| &f.params))
            .map_err(|e| e.to_string())
    }
    fn forecast(
        &self,
        fit: &Self::Fit,
        y: &[f64],
        max_h: usize,
    ) -> Result<Vec<(f64, f64)>, String> {
        super::smoothing::forecast(fit, y, max_h).map_err(|e| e.to_string())
    }
    fn is_mse(&self, fit: &Self::Fit) -> f64 {
        fit.is_mse
    }
    fn residuals(&self, fit: &Self::Fit, y: &[f64]) -> Vec<f64> {
        super::smoothing::one_step_errors(&fit.spec, &fit.params, y).unwrap_or_default()
    }
}

/// The theta method through [`super::theta`]: estimated in closed form
/// and by a one-dimensional search, so a warm start has nothing to add.
impl Likelihood for super::theta::Theta {
    type Fit = super::theta::ThetaFit;
    fn estimate(&self, y: &[f64], _warm: Option<&Self::Fit>) -> Result<Self::Fit, String> {
        super::theta::Theta::estimate(self, y)
    }
    fn forecast(
        &self,
        fit: &Self::Fit,
        y: &[f64],
        max_h: usize,
    ) -> Result<Vec<(f64, f64)>, String> {
        Ok(super::theta::Theta::forecast(self, fit, y, max_h))
    }
    fn is_mse(&self, fit: &Self::Fit) -> f64 {
        fit.is_mse
    }
    fn residuals(&self, fit: &Self::Fit, y: &[f64]) -> Vec<f64> {
        self.one_step_errors(fit, y).1
    }
}

/// arima(p,d,q) through [`super::arima`].
pub(crate) struct Arima {
    pub order: super::arima::ArimaOrder,
}

impl Likelihood for Arima {
    type Fit = super::arima::ArimaFit;
    fn estimate(&self, y: &[f64], warm: Option<&Self::Fit>) -> Result<Self::Fit, String> {
        super::arima::estimate(y, &self.order, warm.map(|f| &f.params)).map_err(|e| e.to_string())
    }
    fn forecast(
        &self,
        fit: &Self::Fit,
        y: &[f64],
        max_h: usize,
    ) -> Result<Vec<(f64, f64)>, String> {
        super::arima::forecast(fit, y, max_h).map_err(|e| e.to_string())
    }
    fn is_mse(&self, fit: &Self::Fit) -> f64 {
        fit.is_mse
    }
}

/// arima with (p, q) chosen by an information criterion inside every
/// training window: every order of the grid is estimated on the same
/// window (exact likelihood uses all of it) and warm-started from its own
/// previous estimate.
pub(crate) struct ArimaSelect {
    pub criterion: crate::spec::Criterion,
    pub orders: Vec<super::arima::ArimaOrder>,
}

#[derive(Clone)]
pub(crate) struct SelectedFit {
    fits: Vec<Option<super::arima::ArimaFit>>,
    chosen: usize,
}

impl Likelihood for ArimaSelect {
    type Fit = SelectedFit;
    fn estimate(&self, y: &[f64], warm: Option<&Self::Fit>) -> Result<Self::Fit, String> {
        let mut fits = Vec::with_capacity(self.orders.len());
        let mut best = Smallest::default();
        let mut last_error = String::from("no order could be estimated");
        for (i, order) in self.orders.iter().enumerate() {
            let start = warm.and_then(|w| w.fits[i].as_ref()).map(|f| &f.params);
            match super::arima::estimate(y, order, start) {
                Ok(fit) => {
                    let ic = super::arima::information_criterion(&fit, self.criterion);
                    if ic.is_finite() {
                        best.offer(ic, i);
                    }
                    fits.push(Some(fit));
                }
                Err(e) => {
                    last_error = e.to_string();
                    fits.push(None);
                }
            }
        }
        let (_, chosen) = best.get().ok_or(last_error)?;
        Ok(SelectedFit { fits, chosen })
    }
    fn forecast(
        &self,
        fit: &Self::Fit,
        y: &[f64],
        max_h: usize,
    ) -> Result<Vec<(f64, f64)>, String> {
        let chosen = fit.fits[fit.chosen].as_ref().ok_or("no chosen order")?;
        super::arima::forecast(chosen, y, max_h).map_err(|e| e.to_string())
    }
    fn is_mse(&self, fit: &Self::Fit) -> f64 {
        fit.fits[fit.chosen].as_ref().map_or(f64::NAN, |f| f.is_mse)
    }
    fn order(&self, fit: &Self::Fit) -> Option<Order> {
        let o = &self.orders[fit.chosen];
        Some(Order::Arima(o.p, o.d, o.q))
    }
}
