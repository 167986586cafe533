//! Likelihood-based families (smoothing, arima) under the backtest schemes.
//! One small trait — estimate on a sample, forecast from the end of a longer
//! series — and one schedule loop shared by both:
//! - fixed: estimate once on 1..=T0, then only filter up to each origin;
//! - expanding: re-estimate at every estimation end, warm-started from the
//!   previous estimate;
//! - rolling: estimate on the last `window` observations.
//!
//! When a re-estimation fails (no convergence, non-finite likelihood) and an
//! earlier estimate exists, that estimate is kept and the fallback counted;
//! the count is recorded per cell in the manifest and the report. When the
//! first estimation fails the cell fails as a whole and is recorded, never
//! dropped silently.

use super::{ForecastRow, Order, OutlookRow, Schedule};

/// A model fitted by maximum likelihood.
pub trait Likelihood {
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

/// What a likelihood cell produced.
#[derive(Debug, Clone, Default)]
pub struct Outcome {
    pub forecasts: Vec<ForecastRow>,
    /// One-step errors of the last estimation, for residual diagnostics.
    pub residuals: Vec<f64>,
    /// Origins at which re-estimation failed and the previous estimate was kept.
    pub fallbacks: usize,
    /// Why the cell failed as a whole, if it did.
    pub failure: Option<String>,
}

pub fn backtest<M: Likelihood>(
    model: &M,
    y: &[f64],
    sched: &Schedule,
    horizons: &[usize],
) -> Outcome {
    let mut out = Outcome::default();
    let max_h = horizons.iter().copied().max().unwrap_or(1);
    let first = sched.first_origin;
    let last = *sched.origins(horizons[0]).end();
    // (fit, first position of its estimation sample)
    let mut current: Option<(M::Fit, usize)> = None;
    let mut last_end = None;
    let mut per_h: Vec<Vec<ForecastRow>> = vec![Vec::new(); horizons.len()];
    for origin in first..=last {
        let wanted: Vec<usize> = (0..horizons.len())
            .filter(|&i| sched.origins(horizons[i]).contains(&origin))
            .collect();
        if wanted.is_empty() {
            continue;
        }
        let end = sched.estimation_end(origin);
        if last_end != Some(end) {
            let start = crate::plan::sample_start(sched.scheme, end);
            let warm = current.as_ref().map(|(f, _)| f);
            match model.estimate(&y[start - 1..end], warm) {
                Ok(fit) => current = Some((fit, start)),
                Err(e) if current.is_some() => {
                    let _ = e;
                    out.fallbacks += 1;
                }
                Err(e) => {
                    out.failure = Some(format!(
                        "estimation failed at the first estimation end (position {end}): {e}"
                    ));
                    return out;
                }
            }
            last_end = Some(end);
        }
        let Some((fit, start)) = &current else {
            continue;
        };
        match model.forecast(fit, &y[start - 1..origin], max_h) {
            Ok(path) => {
                for i in wanted {
                    let h = horizons[i];
                    let (mean, var) = path[h - 1];
                    per_h[i].push(ForecastRow {
                        horizon: h,
                        origin,
                        forecast: mean,
                        is_mse: Some(model.is_mse(fit)),
                        is_var: None,
                        variance: (var.is_finite() && var >= 0.0).then_some(var),
                        order: model.order(fit),
                    });
                }
            }
            Err(e) => {
                out.failure = Some(format!(
                    "forecasting failed at origin position {origin}: {e}"
                ));
                return out;
            }
        }
    }
    out.forecasts = per_h.into_iter().flatten().collect();
    if let (Some((fit, start)), Some(end)) = (&current, last_end) {
        out.residuals = model.residuals(fit, &y[start - 1..end]);
    }
    out
}

/// Forecasts beyond the data from origin N with E = N (the last `window`
/// observations when given).
pub fn outlook<M: Likelihood>(
    model: &M,
    y: &[f64],
    window: Option<usize>,
    horizons: &[usize],
) -> Vec<OutlookRow> {
    let n = y.len();
    let start = match window {
        Some(w) if n > w => n - w + 1,
        _ => 1,
    };
    let max_h = horizons.iter().copied().max().unwrap_or(1);
    let path = model
        .estimate(&y[start - 1..n], None)
        .and_then(|fit| model.forecast(&fit, &y[start - 1..n], max_h))
        .ok();
    horizons
        .iter()
        .map(|&h| {
            let step = path.as_ref().map(|p| p[h - 1]);
            OutlookRow {
                horizon: h,
                forecast: step.map(|s| s.0),
                variance: step.and_then(|s| (s.1.is_finite() && s.1 >= 0.0).then_some(s.1)),
            }
        })
        .collect()
}

/// Exponential smoothing through [`super::smoothing`].
pub struct Smoothing {
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

/// arima(p,d,q) through [`super::arima`].
pub struct Arima {
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
pub struct ArimaSelect {
    pub criterion: crate::spec::Criterion,
    pub orders: Vec<super::arima::ArimaOrder>,
}

#[derive(Clone)]
pub struct SelectedFit {
    fits: Vec<Option<super::arima::ArimaFit>>,
    chosen: usize,
}

impl Likelihood for ArimaSelect {
    type Fit = SelectedFit;
    fn estimate(&self, y: &[f64], warm: Option<&Self::Fit>) -> Result<Self::Fit, String> {
        let mut fits = Vec::with_capacity(self.orders.len());
        let mut best: Option<(f64, usize)> = None;
        let mut last_error = String::from("no order could be estimated");
        for (i, order) in self.orders.iter().enumerate() {
            let start = warm.and_then(|w| w.fits[i].as_ref()).map(|f| &f.params);
            match super::arima::estimate(y, order, start) {
                Ok(fit) => {
                    let (aic, bic, hqic) = super::arima::information_criteria(&fit);
                    let ic = match self.criterion {
                        crate::spec::Criterion::Aic => aic,
                        crate::spec::Criterion::Bic => bic,
                        crate::spec::Criterion::Hqic => hqic,
                    };
                    if ic.is_finite() && best.is_none_or(|(b, _)| ic < b) {
                        best = Some((ic, i));
                    }
                    fits.push(Some(fit));
                }
                Err(e) => {
                    last_error = e.to_string();
                    fits.push(None);
                }
            }
        }
        let (_, chosen) = best.ok_or(last_error)?;
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
