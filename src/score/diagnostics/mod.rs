//! Statistical diagnostics for forecast evaluation: residual autocorrelation
//! (Ljung–Box), unit roots (augmented Dickey–Fuller with MacKinnon p-values
//! and critical values) and predictive ability under instability
//! (Giacomini–Rossi fluctuation test).
//!
//! Pure functions: no I/O, no printing, and no panics on any input — every
//! entry point returns `Option` and yields `None` where the statistic is
//! undefined (too few observations, non-finite input, a constant series, a
//! rank-deficient regression, …).
//!
//! Sources:
//! - Ljung, G. M. & Box, G. E. P. (1978), "On a measure of lack of fit in time
//!   series models", *Biometrika* 65(2), 297–303.
//! - Dickey, D. A. & Fuller, W. A. (1979), "Distribution of the estimators for
//!   autoregressive time series with a unit root", *JASA* 74, 427–431; Said,
//!   S. E. & Dickey, D. A. (1984), *Biometrika* 71, 599–607 (augmentation).
//! - MacKinnon, J. G. (1994), "Approximate asymptotic distribution functions
//!   for unit-root and cointegration tests", *JBES* 12(2), 167–176 (p-values);
//!   MacKinnon, J. G. (2010), "Critical values for cointegration tests",
//!   Queen's University Economics WP 1227 (critical values). The coefficient
//!   tables are MacKinnon (1994, 2010) tables as transcribed in statsmodels
//!   0.14.4 (`statsmodels/tsa/adfvalues.py`), copied literally (including the
//!   scaling factors applied there at run time).
//! - Akaike, H. (1974), *IEEE Trans. Automatic Control* 19(6), 716–723 (AIC);
//!   Schwert, G. W. (1989), *JBES* 7(2), 147–159 (default maximum lag).
//! - Giacomini, R. & Rossi, B. (2010), "Forecast comparisons in unstable
//!   environments", *Journal of Applied Econometrics* 25(4), 595–620.
//! - Newey, W. K. & West, K. D. (1987), *Econometrica* 55(3), 703–708
//!   (Bartlett-kernel HAC variance); Newey, W. K. & West, K. D. (1994),
//!   *Review of Economic Studies* 61(4), 631–653 (bandwidth rule of thumb).

mod adf;
mod fluctuation;
#[cfg(test)]
mod fluctuation_tests;
mod ljung_box;
mod mackinnon;
#[cfg(test)]
mod tests;

pub(crate) use adf::adf;
pub(crate) use fluctuation::fluctuation_test;
pub(crate) use ljung_box::ljung_box;
