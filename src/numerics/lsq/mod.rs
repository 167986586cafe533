//! Least squares, in one place: one QR core in two forms.
//!
//! - [`givens`]: rows folded one at a time into R by Givens rotations, for
//!   the least-squares families whose estimation window grows (or is
//!   refactorised) origin by origin; rank test and SSR included.
//! - [`householder`]: a whole design at once by Householder reflections,
//!   whose leading blocks serve every leading subset of the columns (the
//!   ADF lag search) and which drops dependent columns (the initial states
//!   of exponential smoothing).
//! - [`normal_equations`]: XᵀX b = Xᵀy by Cholesky, kept for the arima
//!   start values alone (its module says why).

pub(crate) mod givens;
pub(crate) mod householder;
pub(crate) mod normal_equations;

pub(crate) use givens::{LeastSquares, LinalgError, Solution};

#[cfg(test)]
mod incremental_qr_tests;
#[cfg(test)]
mod reference_ols_tests;
