//! `smoothing(aicc)`: inside every estimation window, each form of the
//! error × trend × season grid is estimated and the one with the smallest AICc
//! forecasts (Hyndman, Koehler, Ord & Snyder 2008, ch. 7, choose by AICc).
//! AICc = −2ℓ + 2k + 2k(k + 1)/(n − k − 1), k the free parameters plus one
//! for σ² (Hurvich & Tsai 1989); a form with n ≤ k + 1 or that cannot be
//! estimated is passed over. Each form warm-starts from its own previous
//! estimate.

use super::{EtsFit, EtsSpec};
use crate::models::likelihood::Likelihood;
use crate::models::Order;
use crate::numerics::ic::{aicc, Smallest};

pub(crate) struct SmoothingSelect {
    pub specs: Vec<EtsSpec>,
    /// The cell's seed, for simulated forecast variances.
    pub seed: u64,
}

#[derive(Clone)]
pub(crate) struct SelectedEts {
    fits: Vec<Option<EtsFit>>,
    chosen: usize,
}

/// AICc of an estimate (free parameters plus σ²).
pub(crate) fn fit_aicc(fit: &EtsFit) -> f64 {
    aicc(fit.loglik, fit.n_params + 1, fit.nobs)
}

impl Likelihood for SmoothingSelect {
    type Fit = SelectedEts;
    fn estimate(
        &self,
        y: &[f64],
        _start: usize,
        warm: Option<&Self::Fit>,
    ) -> Result<Self::Fit, String> {
        let mut fits = Vec::with_capacity(self.specs.len());
        let mut best = Smallest::default();
        let mut last_error = String::from("no smoothing form could be estimated");
        for (i, spec) in self.specs.iter().enumerate() {
            let start = warm.and_then(|w| w.fits[i].as_ref()).map(|f| &f.params);
            match super::estimate(y, spec, start) {
                Ok(fit) => {
                    let value = fit_aicc(&fit);
                    if value.is_finite() {
                        best.offer(value, i);
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
        Ok(SelectedEts { fits, chosen })
    }
    fn forecast(
        &self,
        fit: &Self::Fit,
        y: &[f64],
        start: usize,
        max_h: usize,
    ) -> Result<Vec<(f64, f64)>, String> {
        let chosen = fit.fits[fit.chosen].as_ref().ok_or("no chosen form")?;
        super::forecast(chosen, y, max_h, self.seed, start).map_err(|e| e.to_string())
    }
    fn is_mse(&self, fit: &Self::Fit) -> f64 {
        fit.fits[fit.chosen].as_ref().map_or(f64::NAN, |f| f.is_mse)
    }
    fn error_covariance(&self, fit: &Self::Fit, _y: &[f64], max_h: usize) -> Option<Vec<f64>> {
        super::error_covariance(fit.fits[fit.chosen].as_ref()?, max_h)
    }
    fn residuals(&self, fit: &Self::Fit, y: &[f64], _start: usize) -> Vec<f64> {
        fit.fits[fit.chosen]
            .as_ref()
            .and_then(|f| super::one_step_errors(&f.spec, &f.params, y).ok())
            .unwrap_or_default()
    }
    fn parameters(
        &self,
        fit: &Self::Fit,
        y: &[f64],
        _start: usize,
    ) -> Vec<crate::models::Parameter> {
        fit.fits[fit.chosen]
            .as_ref()
            .map_or_else(Vec::new, |f| super::parameters(f, y))
    }
    fn order(&self, fit: &Self::Fit) -> Option<Order> {
        let s = &self.specs[fit.chosen];
        Some(Order::Smoothing(s.error, s.trend, s.season))
    }
}

#[cfg(test)]
#[path = "select_tests.rs"]
mod tests;
