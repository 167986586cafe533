//! The optimisers, side by side. The hand-written ones stay because they
//! serve problems of different shape, and replacing any of them (by one of
//! the others, or by the `argmin` crate's) would move every estimate of its
//! family beyond rounding: a change in only the last bits of arima's start
//! values already moved its forecasts by up to 1.5e-4 relative (measured;
//! see `lsq::normal_equations`), while no reference test asks for a better
//! optimum than these reach.
//!
//! - [`bfgs`]: a smooth, unconstrained objective of a few dimensions — the
//!   ARIMA profile likelihood in its reparametrised coefficients — where
//!   curvature information reaches a tight tolerance in few evaluations.
//! - [`nelder_mead`]: a derivative-free search in a box — the at most four
//!   smoothing parameters of exponential smoothing — whose optimum often
//!   lies on the box's edge, where finite-difference gradients mislead.
//! - [`levenberg_marquardt`]: a nonlinear least-squares problem with its
//!   exact Jacobian — the initial states of a multiplicative season.
//! - [`brent`]: one parameter on an interval — the theta method's smoothing
//!   weight — where a grid to find the basin and Brent's parabolic search
//!   inside it reach the interval's best point (an edge included) to a
//!   tolerance of 1e-10 in a few dozen evaluations.

pub(crate) mod bfgs;
pub(crate) mod brent;
pub(crate) mod levenberg_marquardt;
pub(crate) mod nelder_mead;

pub(crate) use brent::brent_minimise;
