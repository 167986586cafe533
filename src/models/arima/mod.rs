//! ARIMA(p, d, q) by exact Gaussian maximum likelihood (SPEC §4 `arima`).
//!
//! # Model and likelihood convention
//!
//! The series `y` is differenced `d` times, `w = Δ^d y` (n − d values), and a
//! stationary, invertible ARMA(p, q) is fitted to `w`:
//!
//! ```text
//! φ(L) (w_t − μ) = θ(L) ε_t,   ε_t ~ N(0, σ²),
//! φ(L) = 1 − φ_1 L − … − φ_p L^p,   θ(L) = 1 + θ_1 L + … + θ_q L^q
//! ```
//!
//! μ is the mean when d = 0, the drift (the constant of the differenced series)
//! when d ≥ 1 and `drift` is set, and 0 otherwise. The likelihood is the exact
//! Gaussian likelihood of `w` computed by the Kalman filter on Harvey's (1989)
//! state-space form with the stationary initial state covariance (Durbin &
//! Koopman 2001, §3.4 and §5.6).
//!
//! This is exactly the likelihood of statsmodels 0.14
//! `ARIMA(w, order=(p, 0, q), trend='c' | 'n')`, and it equals — up to the
//! additive constant −d/2·ln 2π that statsmodels assigns to the d diffuse
//! periods — the likelihood of `ARIMA(y, order=(p, d, q), trend='n' | 't')`
//! with an *exact* diffuse initialisation, so the maximisers coincide (the
//! drift of `trend='t'` on the level is the constant of the differenced
//! series). statsmodels' default level model uses an approximate diffuse prior
//! (variance 1e6, first d periods burnt); its likelihood differs slightly, so it
//! is not the reference. The reference values live in
//! `tests/reference/arima/` (generator `generate_arima.py`).
//!
//! # Estimation
//!
//! * μ is concentrated out by generalised least squares (the filter runs on the
//!   data and on a column of ones in lockstep) and σ² is concentrated out in
//!   closed form, so the numerical search is over the p + q ARMA coefficients
//!   only; the result is the joint MLE of (φ, θ, μ, σ²).
//! * Stationarity and invertibility are enforced by reparametrisation
//!   (Jones 1980; Monahan 1984): unconstrained u ↦ partial autocorrelations
//!   tanh(u) ∈ (−1, 1) ↦ coefficients by the Durbin–Levinson recursion. For the
//!   MA part θ = −(coefficients), which makes θ(z) invertible.
//! * Starting values: Hannan–Rissanen (long Yule–Walker AR, then least squares
//!   on lagged values and lagged residuals), the origin (white noise), starts
//!   near an AR / MA unit root at z = 1, and 4–8 fixed space-filling starts
//!   (ARMA likelihoods are often multimodal: an MA(1) on an over-differenced
//!   series, Nile ARIMA(2,1,2)). Each gets 12 BFGS iterations, the best 3 are
//!   run to convergence and the best optimum is kept; all deterministic.
//! * Warm start: with `warm` (the previous window's estimate) that start is
//!   run to convergence first; the structured cold starts (Hannan–Rissanen,
//!   zero, near a unit root) are still screened with short runs, and any that
//!   is already better than the warm optimum is continued.
//!   A warm start alone could stay on the mode the previous window chose where
//!   the likelihood has two close modes (seen on ARMA(2,1) and ARIMA(0,1,1)
//!   expanding windows); the screen catches the cases where another mode is
//!   clearly higher, at a fraction of a cold fit's cost.
//! * The unconstrained parameters are bounded at |u| ≤ 10 (|partial
//!   autocorrelation| ≤ 1 − 4e-9), so MLEs on the unit-root boundary are
//!   approached to within a negligible log-likelihood (< 1e-8 in the
//!   references) instead of creeping to infinity.
//! * Optimiser: BFGS with central-difference gradients, Armijo backtracking
//!   and step expansion on flat stretches (`numerics::optimise::bfgs`).
//!   Justification: the profile objective is smooth in the unconstrained
//!   parameters and has only p + q dimensions, so BFGS reaches the tight
//!   log-likelihood tolerance (1e-6) in far fewer likelihood evaluations than
//!   Nelder–Mead (see `numerics::optimise` for why it is not replaced).
//!
//! # Forecasts, in-sample MSE, information criteria
//!
//! [`forecast`] filters any `y` (it may extend past the estimation sample: a
//! fixed scheme estimates once and only filters later) and returns, for the
//! *level* of y, the conditional mean and the h-step forecast error variance
//! for h = 1..=max_h, integrating the differenced forecasts and the full
//! covariance of their errors.
//!
//! `is_mse` is the mean squared one-step prediction error over the estimation
//! sample of the modelled (differenced) series, n − d terms, no
//! degrees-of-freedom correction. For d ≥ 1 the one-step errors of w equal the
//! one-step errors of the level, since y_t − ŷ_t = w_t − ŵ_t when the past
//! levels are known. The first d levels have no one-step prediction (they are
//! the diffuse part) and are not counted.
//!
//! `n_params` counts p + q + (1 if μ is estimated) + 1 for σ², as statsmodels'
//! `df_model` does; `nobs` = n − d. AIC = −2ℓ + 2k, BIC = −2ℓ + k ln nobs,
//! HQIC = −2ℓ + 2 ln ln nobs · k (the penalties of `spec::Criterion`).
//!
//! Failures (too few observations, non-finite data, a constant series, an
//! optimiser that does not converge, non-finite intermediate values) are
//! returned as [`ArimaError`]; nothing here panics on data or returns NaN.

mod covariance;
mod estimate;
pub(crate) mod forecast;
mod kalman;
mod parameters;
pub(crate) mod poly;
mod regression;
mod reparam;
#[cfg(test)]
mod sarima_tests;
mod start;
#[cfg(test)]
mod tests;

use crate::spec::Criterion;
pub(crate) use estimate::estimate;
pub(crate) use forecast::forecast;
pub(crate) use parameters::parameters;
use reparam::coef_to_pacf;
use std::fmt;

/// The seasonal part (P, D, Q) at period m of a multiplicative seasonal
/// ARIMA (SPEC §7.2).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct SeasonalOrder {
    pub p: usize,
    pub d: usize,
    pub q: usize,
    pub m: usize,
}

/// Orders of an ARIMA(p, d, q)(P, D, Q)m model; `drift` (d + D ≥ 1 only)
/// adds a constant to the differenced series.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct ArimaOrder {
    pub p: usize,
    pub d: usize,
    pub q: usize,
    pub drift: bool,
    /// None: the non-seasonal model, computed exactly as before seasons existed.
    pub seasonal: Option<SeasonalOrder>,
}

impl ArimaOrder {
    /// The seasonal orders, (0, 0, 0) at period 1 when there are none.
    pub fn season(&self) -> SeasonalOrder {
        self.seasonal.unwrap_or(SeasonalOrder {
            p: 0,
            d: 0,
            q: 0,
            m: 1,
        })
    }

    /// Whether μ (mean for d + D = 0, drift otherwise) is estimated.
    pub fn has_mean(&self) -> bool {
        self.differences() == 0 || self.drift
    }

    /// Observations the differencing uses up: d + m·D.
    pub fn differences(&self) -> usize {
        let s = self.season();
        self.d + s.m * s.d
    }

    /// ARMA coefficients searched: p + q + P + Q.
    pub fn coefficients(&self) -> usize {
        let s = self.season();
        self.p + self.q + s.p + s.q
    }
}

/// Parameters in the sign convention of the module docs:
/// φ(L)Φ(L^m)(w_t − μ − β′Dx_t) = θ(L)Θ(L^m)ε_t with φ(L) = 1 − Σφ_i L^i,
/// θ(L) = 1 + Σθ_j L^j and likewise Φ, Θ in L^m.
#[derive(Debug, Clone, PartialEq)]
pub struct ArimaParams {
    pub ar: Vec<f64>,
    pub ma: Vec<f64>,
    /// Seasonal AR coefficients Φ_1..Φ_P (empty without a season).
    pub sar: Vec<f64>,
    /// Seasonal MA coefficients Θ_1..Θ_Q (empty without a season).
    pub sma: Vec<f64>,
    /// Mean of the series (d + D = 0) or drift (constant of the differenced
    /// series, with `drift`); 0 when not estimated.
    pub mean_or_drift: f64,
    /// Regression coefficients β, one per regressor column (0 for a column
    /// left out of this estimation).
    pub beta: Vec<f64>,
    /// Innovation variance σ².
    pub sigma2: f64,
}

impl ArimaParams {
    /// The expanded polynomials φ(L)Φ(L^m) and θ(L)Θ(L^m) as coefficient
    /// lists in the state-space convention (AR with a minus sign in the
    /// polynomial, MA with a plus); the non-seasonal ones as they are.
    pub(crate) fn expanded(&self, m: usize) -> (Vec<f64>, Vec<f64>) {
        if self.sar.is_empty() && self.sma.is_empty() {
            return (self.ar.clone(), self.ma.clone());
        }
        (
            poly::multiply_ar(&self.ar, &self.sar, m),
            poly::multiply_ma(&self.ma, &self.sma, m),
        )
    }
}

/// A fitted model.
#[derive(Debug, Clone, PartialEq)]
pub struct ArimaFit {
    pub order: ArimaOrder,
    pub params: ArimaParams,
    /// Exact Gaussian log-likelihood of the differenced series at the estimate.
    pub loglik: f64,
    /// = `params.sigma2`.
    pub sigma2: f64,
    /// Mean squared one-step prediction error over the modelled values.
    pub is_mse: f64,
    /// p + q + P + Q + (1 if mean/drift) + regressors used + 1 (σ²), as
    /// statsmodels' `df_model`.
    pub n_params: usize,
    /// Number of observations in the likelihood: n − d − m·D.
    pub nobs: usize,
    /// BFGS iterations used by the optimum kept (0 when nothing to optimise).
    pub iterations: usize,
    /// Regressor columns left out of this estimation: constant in its
    /// sample, or zero once differenced (SPEC §7.1).
    pub left_out: Vec<usize>,
}

/// Typed failures of estimation and forecasting.
#[derive(Debug, Clone, PartialEq)]
pub enum ArimaError {
    /// Fewer observations than the model needs.
    TooShort { needed: usize, got: usize },
    /// The optimiser stopped at its iteration limit with a large gradient.
    NonConvergence { iterations: usize, gradient: f64 },
    /// Non-finite input or intermediate value.
    NonFinite { context: &'static str },
    /// Zero-variance (flat) data: the likelihood is unbounded.
    Degenerate { reason: &'static str },
    /// Order not allowed (e.g. drift with d = 0).
    InvalidOrder { reason: &'static str },
    /// Parameters outside the stationary/invertible region or of wrong length.
    InvalidParams { reason: &'static str },
}

impl fmt::Display for ArimaError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ArimaError::TooShort { needed, got } => write!(
                f,
                "arima: too few observations ({got} after differencing, need at least {needed})"
            ),
            ArimaError::NonConvergence {
                iterations,
                gradient,
            } => write!(
                f,
                "arima: likelihood maximisation did not converge after {iterations} iterations \
                 (gradient norm {gradient:e})"
            ),
            ArimaError::NonFinite { context } => {
                write!(f, "arima: non-finite value in {context}")
            }
            ArimaError::Degenerate { reason } => write!(f, "arima: degenerate data: {reason}"),
            ArimaError::InvalidOrder { reason } => write!(f, "arima: invalid order: {reason}"),
            ArimaError::InvalidParams { reason } => {
                write!(f, "arima: invalid parameters: {reason}")
            }
        }
    }
}

impl std::error::Error for ArimaError {}

/// `x > 0`, false for NaN (written as a function for readability of `!`).
fn positive(x: f64) -> bool {
    x > 0.0
}

fn difference(y: &[f64], d: usize) -> Vec<f64> {
    let mut w = y.to_vec();
    for _ in 0..d {
        if w.len() < 2 {
            return Vec::new();
        }
        w = w.windows(2).map(|s| s[1] - s[0]).collect();
    }
    w
}

/// x_t − x_{t−m}, `times` times.
fn seasonal_difference(x: &[f64], m: usize, times: usize) -> Vec<f64> {
    let mut w = x.to_vec();
    for _ in 0..times {
        if w.len() <= m {
            return Vec::new();
        }
        w = (m..w.len()).map(|t| w[t] - w[t - m]).collect();
    }
    w
}

/// The modelled series Δ^d Δ_m^D y (differencing outside the state space).
fn difference_order(y: &[f64], order: &ArimaOrder) -> Vec<f64> {
    let w = difference(y, order.d);
    match order.seasonal {
        Some(s) if s.d > 0 => seasonal_difference(&w, s.m, s.d),
        _ => w,
    }
}

fn check_params(params: &ArimaParams, order: &ArimaOrder) -> Result<(), ArimaError> {
    let s = order.season();
    if params.ar.len() != order.p
        || params.ma.len() != order.q
        || params.sar.len() != s.p
        || params.sma.len() != s.q
    {
        return Err(ArimaError::InvalidParams {
            reason: "coefficient counts do not match the order",
        });
    }
    let all = params
        .ar
        .iter()
        .chain(&params.ma)
        .chain(&params.sar)
        .chain(&params.sma)
        .chain(&params.beta)
        .chain([&params.mean_or_drift, &params.sigma2]);
    if !all.into_iter().all(|x| x.is_finite()) {
        return Err(ArimaError::NonFinite {
            context: "parameters",
        });
    }
    if !positive(params.sigma2) {
        return Err(ArimaError::InvalidParams {
            reason: "sigma2 must be positive",
        });
    }
    if coef_to_pacf(&params.ar).is_none() || coef_to_pacf(&params.sar).is_none() {
        return Err(ArimaError::InvalidParams {
            reason: "AR part is not stationary",
        });
    }
    let neg: Vec<f64> = params.ma.iter().map(|x| -x).collect();
    let sneg: Vec<f64> = params.sma.iter().map(|x| -x).collect();
    if coef_to_pacf(&neg).is_none() || coef_to_pacf(&sneg).is_none() {
        return Err(ArimaError::InvalidParams {
            reason: "MA part is not invertible",
        });
    }
    Ok(())
}

fn check_order(order: &ArimaOrder) -> Result<(), ArimaError> {
    if order.drift && order.differences() == 0 {
        return Err(ArimaError::InvalidOrder {
            reason: "drift needs d >= 1 (d = 0 estimates a mean)",
        });
    }
    if order.seasonal.is_some_and(|s| s.m < 2) {
        return Err(ArimaError::InvalidOrder {
            reason: "a seasonal period needs m >= 2",
        });
    }
    Ok(())
}

/// The information criterion −2ℓ + penalty·k with k = `n_params` (σ²
/// included) and the penalty for `nobs` = n − d observations, as statsmodels
/// reports AIC, BIC and HQIC for the model of the differenced series.
pub(crate) fn information_criterion(fit: &ArimaFit, criterion: Criterion) -> f64 {
    crate::numerics::ic::from_loglik(fit.loglik, fit.n_params, criterion.penalty(fit.nobs))
}

/// AICc = −2ℓ + 2k + 2k(k + 1)/(n − k − 1) (Hurvich & Tsai 1989), with k =
/// `n_params` (σ² included) and n = `nobs`; infinite when n ≤ k + 1, so such
/// an order is never chosen.
pub(crate) fn aicc(fit: &ArimaFit) -> f64 {
    let k = fit.n_params as f64;
    let n = fit.nobs as f64;
    if n <= k + 1.0 {
        return f64::INFINITY;
    }
    -2.0 * fit.loglik + 2.0 * k + 2.0 * k * (k + 1.0) / (n - k - 1.0)
}

/// Δ^d Δ_m^D y, for the unit-root tests that choose d and D.
pub(crate) fn differenced(y: &[f64], d: usize, m: usize, seasonal_d: usize) -> Vec<f64> {
    seasonal_difference(&difference(y, d), m, seasonal_d)
}
