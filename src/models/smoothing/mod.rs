//! `smoothing`: additive-error exponential smoothing (ETS) state space models.
//!
//! The innovations state space models of Hyndman, Koehler, Ord & Snyder (2008),
//! *Forecasting with Exponential Smoothing: the State Space Approach*, with an
//! additive error: ETS(A,N,N), (A,A,N), (A,Ad,N), (A,N,A), (A,A,A), (A,Ad,A),
//! (A,N,M), (A,A,M) and (A,Ad,M).
//!
//! # Model
//!
//! With u_t = l_{t−1} + φ b_{t−1} and s = s_{t−m} (the seasonal state one season back):
//!
//! | season | ŷ_t | l_t | b_t | s_t |
//! | --- | --- | --- | --- | --- |
//! | none / additive | u_t + s | u_t + α e_t | φ b_{t−1} + β e_t | s + γ e_t |
//! | multiplicative | u_t · s | u_t + α e_t / s | φ b_{t−1} + β e_t / s | s + γ e_t / u_t |
//!
//! e_t = y_t − ŷ_t ~ N(0, σ²). No trend means b ≡ 0 (β = 0, φ = 1); an undamped
//! trend has φ = 1; no season means s ≡ 0 (γ = 0).
//!
//! # Conventions
//!
//! * Initial states (l_0, b_0, s_{1−m}, …, s_0) belong to the period *before*
//!   the first observation y_1. [`EtsParams::season0`] lists them oldest first:
//!   `season0[j]` is s_{1−m+j}, so `season0[m−1]` = s_0 is the most recent.
//!   Estimation normalises them (additive: sum 0; multiplicative: mean 1); the
//!   filter accepts any values, the normalisation loses no fit because the
//!   likelihood is invariant to moving a constant between level and season
//!   (additive) or a factor (multiplicative).
//! * Admissible region: the traditional constraints, statsmodels' defaults,
//!   closed at 1e-4 from the edges: α ∈ [1e-4, 1−1e-4], β/α ∈ [1e-4, 1−1e-4]
//!   (so 0 < β < α), γ/(1−α) ∈ [1e-4, 1−1e-4] (so 0 < γ < 1 − α),
//!   φ ∈ [0.8, 0.98]. Initial states are unbounded.
//! * Likelihood: Gaussian with σ² concentrated out, σ̂² = SSE/n, so maximum
//!   likelihood is minimum SSE (equivalently minimum n·ln(SSE/n));
//!   `loglik` = −n/2·(ln(2π σ̂²) + 1). `is_mse` = `sigma2` = SSE/n (no
//!   degrees-of-freedom correction), the σ² that the forecast variances use
//!   (as statsmodels' ETSModel does).
//! * `n_params` counts the free smoothing parameters and the free initial
//!   states (m − 1 seasonal ones), not σ².
//! * Point forecasts are the deterministic path (all future errors zero), the
//!   usual convention (statsmodels, R's forecast).
//! * Forecast variances: the state covariance is propagated through the model
//!   linearised along that path, P_j = F P_{j−1} Fᵀ + σ² g_j g_jᵀ and
//!   v_h = σ² + w_h P_{h−1} w_hᵀ. For the six linear models (class 1) this is
//!   exact and identical to the closed forms of Hyndman et al. (2008) ch. 6
//!   (σ²[1 + Σ_{j<h} c_j²]); a unit test checks them against each other. For
//!   the multiplicative season with additive error (no closed form in the
//!   book; statsmodels and R's forecast simulate) it is a simulation-free
//!   approximation: exact for h ≤ m (the seasonal factor used is then known at
//!   the origin and the model is linear in the errors), and for h > m the
//!   first-order term is complemented by the Gaussian product term
//!   Var(u)·Var(s) + Cov(u,s)² of the predicted level u and seasonal factor s.
//!
//! * The multiplicative seasonal update divides by u_t = l_{t−1} + φ b_{t−1}
//!   as in the book (Table 2.3). statsmodels 0.14.4
//!   divides by the updated level l_t instead; on the reference data the two
//!   give in-sample MSEs within ~1e-6 of each other (a test checks both).
//! * [`forecast`] reruns the filter from the initial states, so its `y` must
//!   start at the first period of the estimation sample (for a rolling window:
//!   the window's first period) and may run on past the sample's end.
//! * A perfect fit (SSE = 0, e.g. constant data) has no finite likelihood and
//!   is reported as [`EtsError::NonFinite`].
//!
//! # Estimation
//!
//! The initial states are concentrated out: for given (α, β, γ, φ) the
//! one-step errors of the linear models are affine in the initial states, so
//! the best initial states are a least-squares problem, solved exactly by one
//! Gauss–Newton step (Householder QR) with the Jacobian from a forward-mode
//! (tangent) pass of the filter. For the multiplicative season the same
//! residuals are nearly affine and a Levenberg–Marquardt loop solves the inner
//! problem, warm-started from the best initial states found so far. What is
//! left for the outer optimiser is the ≤ 4 smoothing parameters in a box.
//!
//! Outer optimiser: Nelder–Mead on the box, with multi-start and restarts.
//! Justification: after concentrating out the initial states the problem has
//! at most four dimensions and a cheap objective; the optimum frequently lies
//! on the box's edge (β → 1e-4, φ → 0.98, α → 1 − 1e-4), where a projected
//! simplex behaves well and a finite-difference gradient is unreliable; and the
//! profile likelihood is often multimodal (statsmodels' L-BFGS reaches
//! different minima from different starts on the reference data), which a
//! coarse grid of starts plus restarts handles more robustly than one local
//! quasi-Newton run. A warm start (the previous fit's parameters) is tried
//! first with a smaller simplex; the grid is still scanned (cheap) and
//! explored only if it beats the warm result.
//!
//! Everything is deterministic: the same inputs (including the warm start)
//! give the same bits. A warm-started refit can land in a different local
//! optimum than a cold one, so a caller that must be reproducible should
//! warm-start from a fixed predecessor (the previous origin of the same
//! cell), never from whichever fit happened to finish first.

mod estimate;
mod filter;
mod forecast;
mod information;
#[cfg(test)]
mod mult_tests;
mod parameters;
#[cfg(test)]
mod property_tests;
pub(crate) mod select;
mod states;
#[cfg(test)]
mod tests;

pub(crate) use estimate::estimate;
pub(crate) use filter::one_step_errors;
#[cfg(test)]
pub(crate) use forecast::psi_weights;
pub(crate) use forecast::{error_covariance, forecast};
pub(crate) use parameters::parameters;

use crate::spec::{SmoothingError, SmoothingSeason, SmoothingTrend};
use std::fmt;

const PAR_LO: f64 = 1e-4;
const PAR_HI: f64 = 1.0 - 1e-4;
const PHI_LO: f64 = 0.8;
const PHI_HI: f64 = 0.98;

/// The model of a `smoothing(…)` candidate's (error, trend, season) on data
/// whose season length is `season_length` (None for annual and index data).
pub(crate) fn spec_of(
    (error, trend, season): (SmoothingError, SmoothingTrend, SmoothingSeason),
    season_length: Option<usize>,
    frequency: &str,
) -> Result<EtsSpec, String> {
    let period = match (season, season_length) {
        (SmoothingSeason::None, m) => m.unwrap_or(1),
        (_, Some(m)) => m,
        (_, None) => {
            return Err(format!(
                "a seasonal smoothing model needs seasonal data; {frequency} data have no season length"
            ))
        }
    };
    EtsSpec::new(trend, season, period)
        .map(|s| s.with_error(error))
        .map_err(|e| e.to_string())
}

/// Which ETS(·,·,·) model. `period` is the season length m (4 quarterly,
/// 12 monthly, 52 weekly, 7 daily); it is ignored without a season.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub(crate) struct EtsSpec {
    pub error: SmoothingError,
    pub trend: SmoothingTrend,
    pub season: SmoothingSeason,
    pub period: usize,
}

impl EtsSpec {
    /// A validated additive-error spec: a seasonal model needs `period` ≥ 2.
    pub(crate) fn new(
        trend: SmoothingTrend,
        season: SmoothingSeason,
        period: usize,
    ) -> Result<Self, EtsError> {
        let spec = EtsSpec {
            error: SmoothingError::Additive,
            trend,
            season,
            period,
        };
        spec.validate()?;
        Ok(spec)
    }

    pub(crate) fn validate(&self) -> Result<(), EtsError> {
        if self.has_season() && self.period < 2 {
            return Err(EtsError::InvalidSpec {
                reason: format!(
                    "a seasonal model needs a season length of at least 2, got {}",
                    self.period
                ),
            });
        }
        Ok(())
    }

    /// The same model with error `error`.
    pub(crate) fn with_error(self, error: SmoothingError) -> Self {
        EtsSpec { error, ..self }
    }

    /// Whether the error is multiplicative: y_t = ŷ_t (1 + ε_t).
    pub(crate) fn mult_error(&self) -> bool {
        self.error == SmoothingError::Multiplicative
    }

    pub(crate) fn has_trend(&self) -> bool {
        self.trend != SmoothingTrend::None
    }

    pub(crate) fn has_season(&self) -> bool {
        self.season != SmoothingSeason::None
    }

    fn multiplicative(&self) -> bool {
        self.season == SmoothingSeason::Multiplicative
    }

    /// Whether the best initial states are a nonlinear least-squares
    /// problem (a multiplicative season or error), solved iteratively and
    /// warm-started.
    fn nonlinear_states(&self) -> bool {
        self.multiplicative() || self.mult_error()
    }

    /// Number of seasonal slots in the filter (1 without a season).
    fn slots(&self) -> usize {
        if self.has_season() {
            self.period
        } else {
            1
        }
    }

    /// Free smoothing parameters (α, β, γ, φ as present).
    pub(crate) fn n_smoothing(&self) -> usize {
        1 + usize::from(self.has_trend())
            + usize::from(self.has_season())
            + usize::from(self.trend == SmoothingTrend::Damped)
    }

    /// Free initial states: level, trend, m − 1 seasonal states.
    pub(crate) fn n_initial(&self) -> usize {
        1 + usize::from(self.has_trend())
            + if self.has_season() {
                self.period - 1
            } else {
                0
            }
    }

    /// Free parameters: smoothing parameters plus free initial states (σ² not counted).
    pub(crate) fn n_params(&self) -> usize {
        self.n_smoothing() + self.n_initial()
    }

    /// Fewest observations `estimate` accepts: `n_params + 4`, and two full
    /// seasons for a seasonal model.
    pub(crate) fn min_obs(&self) -> usize {
        let base = self.n_params() + 4;
        if self.has_season() {
            base.max(2 * self.period)
        } else {
            base
        }
    }

    /// `ETS(A,Ad,M)` style name, for test messages.
    #[cfg(test)]
    pub(crate) fn short_name(&self) -> String {
        let t = match self.trend {
            SmoothingTrend::None => "N",
            SmoothingTrend::Additive => "A",
            SmoothingTrend::Damped => "Ad",
        };
        let s = match self.season {
            SmoothingSeason::None => "N",
            SmoothingSeason::Additive => "A",
            SmoothingSeason::Multiplicative => "M",
        };
        let e = if self.mult_error() { "M" } else { "A" };
        format!("ETS({e},{t},{s})")
    }
}

/// Smoothing parameters and initial states. Absent components hold their
/// neutral values: β = 0 and φ = 1 and `trend0` = 0 without a trend, φ = 1 for
/// an undamped trend, γ = 0 and `season0` empty without a season.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct EtsParams {
    pub alpha: f64,
    pub beta: f64,
    pub gamma: f64,
    pub phi: f64,
    /// l_0
    pub level0: f64,
    /// b_0
    pub trend0: f64,
    /// s_{1−m}, …, s_0 (oldest first; m values or none).
    pub season0: Vec<f64>,
}

/// An estimated model.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct EtsFit {
    pub spec: EtsSpec,
    pub params: EtsParams,
    /// Sum of squared one-step errors over the estimation sample.
    pub sse: f64,
    /// SSE / n.
    pub is_mse: f64,
    /// Maximum-likelihood σ² (used by the forecast variances): SSE / n with
    /// an additive error, Σ ε_t² / n of the relative errors
    /// ε_t = (y_t − ŷ_t)/ŷ_t with a multiplicative one.
    pub sigma2: f64,
    /// Concentrated Gaussian log-likelihood −n/2·(ln(2π σ²) + 1), less
    /// Σ ln ŷ_t with a multiplicative error.
    pub loglik: f64,
    /// Free parameters (smoothing + initial states; σ² not counted).
    pub n_params: usize,
    pub nobs: usize,
    /// Objective evaluations spent (each solves the inner initial-state problem).
    pub evaluations: usize,
}

/// Why a model could not be estimated or forecast.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum EtsError {
    /// The spec itself is invalid (a season of length < 2).
    InvalidSpec { reason: String },
    /// Fewer observations than [`EtsSpec::min_obs`].
    TooShort { needed: usize, got: usize },
    /// A multiplicative season needs strictly positive data.
    NonPositive { index: usize, value: f64 },
    /// A multiplicative error needs strictly positive data.
    NonPositiveForError { index: usize, value: f64 },
    /// The optimiser did not meet its tolerances within its budget.
    NonConvergence { evaluations: usize, detail: String },
    /// A non-finite input, state, likelihood or forecast.
    NonFinite { what: String },
}

impl fmt::Display for EtsError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            EtsError::InvalidSpec { reason } => write!(f, "invalid smoothing model: {reason}"),
            EtsError::TooShort { needed, got } => write!(
                f,
                "smoothing model needs at least {needed} observations, got {got}"
            ),
            EtsError::NonPositive { index, value } => write!(
                f,
                "multiplicative season needs positive data; observation {} is {value}",
                index + 1
            ),
            EtsError::NonPositiveForError { index, value } => write!(
                f,
                "a multiplicative error needs positive data; observation {} is {value}",
                index + 1
            ),
            EtsError::NonConvergence {
                evaluations,
                detail,
            } => write!(
                f,
                "smoothing estimation did not converge after {evaluations} evaluations: {detail}"
            ),
            EtsError::NonFinite { what } => write!(f, "smoothing model: non-finite {what}"),
        }
    }
}

impl std::error::Error for EtsError {}

fn check_data(spec: &EtsSpec, y: &[f64]) -> Result<(), EtsError> {
    if let Some(i) = y.iter().position(|v| !v.is_finite()) {
        return Err(EtsError::NonFinite {
            what: format!("observation {} ({})", i + 1, y[i]),
        });
    }
    if spec.multiplicative() || spec.mult_error() {
        if let Some(i) = y.iter().position(|&v| v <= 0.0) {
            let (index, value) = (i, y[i]);
            return Err(if spec.multiplicative() {
                EtsError::NonPositive { index, value }
            } else {
                EtsError::NonPositiveForError { index, value }
            });
        }
    }
    Ok(())
}

fn check_params(spec: &EtsSpec, p: &EtsParams) -> Result<(), EtsError> {
    if spec.has_season() && p.season0.len() != spec.period {
        return Err(EtsError::InvalidSpec {
            reason: format!(
                "{} seasonal initial states for a season of length {}",
                p.season0.len(),
                spec.period
            ),
        });
    }
    let all = [p.alpha, p.beta, p.gamma, p.phi, p.level0, p.trend0];
    if all.iter().chain(p.season0.iter()).any(|v| !v.is_finite()) {
        return Err(EtsError::NonFinite {
            what: "parameter".into(),
        });
    }
    Ok(())
}
