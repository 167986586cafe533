//! The augmented Dickey–Fuller unit-root test (Dickey & Fuller 1979; Said &
//! Dickey 1984) with the lag length chosen by AIC (Akaike 1974) and the
//! default maximum lag of Schwert (1989), as statsmodels 0.14.4's
//! `adfuller(..., autolag='AIC')`: the nested lag regressions share one
//! Householder factorisation.

use super::mackinnon::{mackinnon_crit, mackinnon_p};
use crate::numerics::ic::{gaussian_regression_aic, Smallest};
use crate::numerics::lsq::householder::Householder;

/// Deterministic terms of the Dickey–Fuller regression (statsmodels'
/// `regression='c'`, `'ct'`, `'n'`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub(crate) enum AdfRegression {
    /// Intercept (`'c'`).
    Constant,
    /// Intercept and linear time trend (`'ct'`).
    ConstantTrend,
    /// No deterministic terms (`'n'`).
    None,
}

impl AdfRegression {
    fn n_trend(self) -> usize {
        match self {
            AdfRegression::Constant => 1,
            AdfRegression::ConstantTrend => 2,
            AdfRegression::None => 0,
        }
    }
}

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
/// Dickey 1984) with the lag length chosen by AIC (Akaike 1974), replicating
/// statsmodels 0.14.4 `adfuller(x, maxlag, regression, autolag='AIC')`:
///
/// 1. n = `x.len()`, k_d = number of deterministic terms (0, 1, 2).
///    Default `max_lag` = min(⌈12·(n/100)^{1/4}⌉, ⌊n/2⌋ − k_d − 1)
///    (Schwert 1989); an explicit `max_lag` above ⌊n/2⌋ − k_d − 1 gives
///    `None`, as statsmodels raises.
/// 2. Lag search on the common sample: Δx_t for t = max_lag+1 … n−1
///    (0-based differences), regressors [deterministics, x_{t}, Δx_{t−1} …
///    Δx_{t−L}], L = 0 … max_lag, each fitted by OLS; AIC = −2·llf + 2k with
///    llf the Gaussian log-likelihood at σ̂² = SSR/rows; the smallest AIC wins
///    (ties to the shorter lag). The trend regressor is 1, 2, …, rows.
/// 3. The chosen lag is re-estimated on the full sample available for it
///    (rows = n − 1 − L); the statistic is the t-value of the lagged level,
///    with σ̂² = SSR/(rows − k).
///
/// p-value: [`mackinnon_p`] (MacKinnon 1994); critical values:
/// [`mackinnon_crit`] with `nobs` = rows (MacKinnon 2010).
///
/// `None` when x has non-finite values, is constant, is too short, or when a
/// regression is rank-deficient or has no residual degrees of freedom.
pub(crate) fn adf(
    x: &[f64],
    regression: AdfRegression,
    max_lag: Option<usize>,
) -> Option<AdfResult> {
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
    let ntrend = regression.n_trend();
    let cap = (n / 2) as i64 - ntrend as i64 - 1;
    let maxlag = match max_lag {
        None => {
            let schwert = (12.0 * (n as f64 / 100.0).powf(0.25)).ceil();
            let m = (schwert as i64).min(cap);
            if m < 0 {
                return None;
            }
            m as usize
        }
        Some(l) => {
            if cap < 0 || l > cap as usize {
                return None;
            }
            l
        }
    };
    let xdiff: Vec<f64> = x.windows(2).map(|w| w[1] - w[0]).collect();

    // Lag search on the common sample (rows = n − 1 − maxlag).
    let rows = n - 1 - maxlag;
    let y: Vec<f64> = xdiff[maxlag..].to_vec();
    let mut cols: Vec<Vec<f64>> = Vec::with_capacity(ntrend + 1 + maxlag);
    if ntrend >= 1 {
        cols.push(vec![1.0; rows]);
    }
    if ntrend >= 2 {
        cols.push((1..=rows).map(|i| i as f64).collect());
    }
    cols.push(x[maxlag..n - 1].to_vec());
    for j in 1..=maxlag {
        cols.push(xdiff[maxlag - j..n - 1 - j].to_vec());
    }
    let startlag = ntrend + 1;
    let mut best = Smallest::default();
    // The lags' regressions are nested: one factorisation for all of them.
    if rows <= cols.len() {
        return None;
    }
    let qr = Householder::of_columns(&cols, &y)?;
    for lag in 0..=maxlag {
        let k = startlag + lag;
        let fit = qr.fit(&cols, &y, k)?;
        let aic = gaussian_regression_aic(fit.ssr, rows, k);
        if !aic.is_finite() {
            return None;
        }
        best.offer(aic, lag);
    }
    let (ic_best, used_lag) = best.get()?;

    // Re-estimate at the chosen lag on its full sample.
    let rows = n - 1 - used_lag;
    let y: Vec<f64> = xdiff[used_lag..].to_vec();
    let mut cols: Vec<Vec<f64>> = Vec::with_capacity(ntrend + 1 + used_lag);
    cols.push(x[used_lag..n - 1].to_vec());
    for j in 1..=used_lag {
        cols.push(xdiff[used_lag - j..n - 1 - j].to_vec());
    }
    if ntrend >= 1 {
        cols.push(vec![1.0; rows]);
    }
    if ntrend >= 2 {
        cols.push((1..=rows).map(|i| i as f64).collect());
    }
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
    let p_value = mackinnon_p(statistic, regression, 1)?;
    let critical_values = mackinnon_crit(regression, 1, Some(rows as f64))?;
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
