//! The augmented Dickey–Fuller unit-root test (Dickey & Fuller 1979; Said &
//! Dickey 1984) with a constant, the lag length chosen by AIC (Akaike 1974)
//! and the default maximum lag of Schwert (1989), as statsmodels 0.14.4's
//! `adfuller(..., regression='c', autolag='AIC')`: the nested lag
//! regressions share one Householder factorisation.

use super::mackinnon::{mackinnon_crit, mackinnon_p};
use crate::numerics::ic::{gaussian_regression_aic, Smallest};
use crate::numerics::lsq::householder::Householder;

/// Result of [`adf`].
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct AdfResult {
    /// t-statistic of the lagged level in the ADF regression.
    pub statistic: f64,
    /// MacKinnon (1994) approximate p-value (left tail).
    pub p_value: f64,
    /// Number of lagged differences in the final regression.
    pub used_lag: usize,
    /// Observations in the final regression (the `nobs` of statsmodels).
    pub nobs: usize,
    /// MacKinnon (2010) finite-sample critical values at 1 %, 5 %, 10 %
    /// for `nobs`.
    pub critical_values: [f64; 3],
    /// Largest lag considered in the search.
    pub max_lag: usize,
    /// Minimised AIC of the lag search (statsmodels' `icbest`).
    pub ic_best: f64,
}

/// Augmented Dickey–Fuller unit-root test (Dickey & Fuller 1979; Said &
/// Dickey 1984) with a constant and the lag length chosen by AIC (Akaike
/// 1974), replicating statsmodels 0.14.4 `adfuller(x, maxlag,
/// regression='c', autolag='AIC')`:
///
/// 1. n = `x.len()`. Default `max_lag` = min(⌈12·(n/100)^{1/4}⌉, ⌊n/2⌋ − 2)
///    (Schwert 1989); an explicit `max_lag` above ⌊n/2⌋ − 2 gives `None`, as
///    statsmodels raises.
/// 2. Lag search on the common sample: Δx_t for t = max_lag+1 … n−1
///    (0-based differences), regressors [1, x_{t}, Δx_{t−1} … Δx_{t−L}],
///    L = 0 … max_lag, each fitted by OLS; AIC = −2·llf + 2k with llf the
///    Gaussian log-likelihood at σ̂² = SSR/rows; the smallest AIC wins (ties
///    to the shorter lag).
/// 3. The chosen lag is re-estimated on the full sample available for it
///    (rows = n − 1 − L); the statistic is the t-value of the lagged level,
///    with σ̂² = SSR/(rows − k).
///
/// p-value: MacKinnon (1994); critical values: MacKinnon (2010) with
/// `nobs` = rows (see `mackinnon`).
///
/// `None` when x has non-finite values, is constant, is too short, or when a
/// regression is rank-deficient or has no residual degrees of freedom.
pub(crate) fn adf(x: &[f64], max_lag: Option<usize>) -> Option<AdfResult> {
    let n = x.len();
    if n < 3 || x.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let (lo, hi) = x
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
            (a.min(v), b.max(v))
        });
    if lo == hi {
        return None;
    }
    let maxlag = lag_cap(n, max_lag)?;
    let xdiff: Vec<f64> = x.windows(2).map(|w| w[1] - w[0]).collect();
    let (ic_best, used_lag) = lag_search(x, &xdiff, maxlag)?;

    // Re-estimate at the chosen lag on its full sample.
    let rows = n - 1 - used_lag;
    let y: Vec<f64> = xdiff[used_lag..].to_vec();
    let mut cols: Vec<Vec<f64>> = Vec::with_capacity(2 + used_lag);
    cols.push(x[used_lag..n - 1].to_vec());
    for j in 1..=used_lag {
        cols.push(xdiff[used_lag - j..n - 1 - j].to_vec());
    }
    cols.push(vec![1.0; rows]);
    let k = cols.len();
    if rows <= k {
        return None;
    }
    let qr = Householder::of_columns(&cols, &y)?;
    let fit = qr.fit(&cols, &y, k)?;
    let s2 = fit.ssr / (rows - k) as f64;
    let se = (s2 * qr.xtx_inv_diag(k)[0]).sqrt();
    let statistic = fit.beta[0] / se;
    if !statistic.is_finite() {
        return None;
    }
    let p_value = mackinnon_p(statistic, 1)?;
    let critical_values = mackinnon_crit(1, Some(rows as f64))?;
    Some(AdfResult {
        statistic,
        p_value,
        used_lag,
        nobs: rows,
        critical_values,
        max_lag: maxlag,
        ic_best,
    })
}

/// The largest lag searched: `max_lag`, or Schwert's (1989) rule, within
/// statsmodels' cap ⌊n/2⌋ − k_d − 1 (k_d = 1 deterministic term).
fn lag_cap(n: usize, max_lag: Option<usize>) -> Option<usize> {
    let cap = (n / 2) as i64 - 1 - 1;
    match max_lag {
        None => {
            let schwert = (12.0 * (n as f64 / 100.0).powf(0.25)).ceil();
            let m = (schwert as i64).min(cap);
            (m >= 0).then_some(m as usize)
        }
        Some(l) => (cap >= 0 && l <= cap as usize).then_some(l),
    }
}

/// The AIC lag search on the common sample (rows = n − 1 − maxlag): the
/// lags' regressions are nested, so one factorisation serves all of them.
/// (smallest AIC, its lag).
fn lag_search(x: &[f64], xdiff: &[f64], maxlag: usize) -> Option<(f64, usize)> {
    let n = x.len();
    let rows = n - 1 - maxlag;
    let y: Vec<f64> = xdiff[maxlag..].to_vec();
    let mut cols: Vec<Vec<f64>> = Vec::with_capacity(2 + maxlag);
    cols.push(vec![1.0; rows]);
    cols.push(x[maxlag..n - 1].to_vec());
    for j in 1..=maxlag {
        cols.push(xdiff[maxlag - j..n - 1 - j].to_vec());
    }
    if rows <= cols.len() {
        return None;
    }
    let qr = Householder::of_columns(&cols, &y)?;
    let mut best = Smallest::default();
    for lag in 0..=maxlag {
        let k = 2 + lag;
        let fit = qr.fit(&cols, &y, k)?;
        let aic = gaussian_regression_aic(fit.ssr, rows, k);
        if !aic.is_finite() {
            return None;
        }
        best.offer(aic, lag);
    }
    best.get()
}
