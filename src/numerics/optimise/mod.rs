//! The optimisers, side by side: each serves a problem of a different
//! shape, and each family keeps the one that suits it.
//!
//! - [`bfgs`]: a smooth, unconstrained objective of a few dimensions — the
//!   ARIMA profile likelihood in its reparametrised coefficients — where
//!   curvature information reaches a tight tolerance in few evaluations.
//! - [`nelder_mead`]: a derivative-free search in a box — the at most four
//!   smoothing parameters of exponential smoothing — whose optimum often
//!   lies on the box's edge, where finite-difference gradients mislead.
//! - [`levenberg_marquardt`]: a nonlinear least-squares problem with its
//!   Jacobian — the initial states of a multiplicative season.

pub(crate) mod bfgs;
pub(crate) mod levenberg_marquardt;
pub(crate) mod nelder_mead;
