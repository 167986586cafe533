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

use crate::numerics::acov::{centred, lag_product_sum, newey_west_lags, newey_west_variance};
use crate::numerics::dist::{chi2_sf, normal_cdf};
use crate::numerics::ic::{gaussian_regression_aic, Smallest};
use crate::numerics::lsq::householder::Householder;

// ---------------------------------------------------------------------------
// Ljung–Box
// ---------------------------------------------------------------------------

/// Ljung & Box (1978) portmanteau test for autocorrelation up to lag `lags`.
///
/// Q = n(n+2) Σ_{k=1}^{L} r_k² / (n − k), where r_k is the sample
/// autocorrelation around the mean with the biased (divide-by-n)
/// autocovariance, r_k = Σ_{t=k+1}^{n} (x_t − x̄)(x_{t−k} − x̄) / Σ (x_t − x̄)²,
/// exactly as statsmodels' `acf(fft=False)` feeds `acorr_ljungbox`.
///
/// The p-value is the χ² upper tail with df = `lags` − `fitted_params`
/// (statsmodels' `model_df` convention: for ARMA(p, q) residuals pass p + q).
///
/// Returns `(Q, p-value, df)`, or `None` when df ≤ 0, `lags` = 0,
/// `lags` ≥ n, the series is constant, or any value is non-finite.
pub fn ljung_box(resid: &[f64], lags: usize, fitted_params: usize) -> Option<(f64, f64, usize)> {
    let n = resid.len();
    if lags == 0 || lags >= n || fitted_params >= lags {
        return None;
    }
    if resid.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let df = lags - fitted_params;
    let nf = n as f64;
    let xo = centred(resid);
    let c0 = lag_product_sum(&xo, 0);
    if !c0.is_finite() || c0 <= 0.0 {
        return None;
    }
    let mut q = 0.0;
    for k in 1..=lags {
        let rk = lag_product_sum(&xo, k) / c0;
        q += rk * rk / (nf - k as f64);
    }
    q *= nf * (nf + 2.0);
    let p = chi2_sf(q, df as f64)?;
    Some((q, p, df))
}

// ---------------------------------------------------------------------------
// Augmented Dickey–Fuller
// ---------------------------------------------------------------------------

/// Deterministic terms of the Dickey–Fuller regression (statsmodels'
/// `regression='c'`, `'ct'`, `'n'`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum AdfRegression {
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
pub struct AdfResult {
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
pub fn adf(x: &[f64], regression: AdfRegression, max_lag: Option<usize>) -> Option<AdfResult> {
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

/// Evaluates a polynomial with coefficients from the highest power down,
/// by Horner's rule in the same order as `numpy.polyval`.
fn polyval_desc(coef_desc: &[f64], x: f64) -> f64 {
    let mut y = 0.0;
    for &c in coef_desc {
        y = y * x + c;
    }
    y
}

/// MacKinnon (1994) approximate p-value of a Dickey–Fuller τ statistic
/// (left tail), for `n_series` = 1 … 6 integrated series (1 for the ADF test;
/// more for Engle–Granger cointegration residuals).
///
/// p = Φ(γ₀ + γ₁τ + γ₂τ² [+ γ₃τ³]) with the "small p" coefficients for
/// τ ≤ τ*, the "large p" coefficients above, 0 below τ_min and 1 above τ_max
/// — MacKinnon (1994) tables as transcribed in statsmodels 0.14.4
/// (`mackinnonp`, which uses these tables for all N).
///
/// `None` for `n_series` outside 1 … 6 or a NaN statistic.
pub fn mackinnon_p(stat: f64, regression: AdfRegression, n_series: usize) -> Option<f64> {
    if stat.is_nan() || !(1..=6).contains(&n_series) {
        return None;
    }
    if stat == f64::INFINITY {
        return Some(1.0);
    }
    if stat == f64::NEG_INFINITY {
        return Some(0.0);
    }
    let i = n_series - 1;
    let (star, min, max, small, large) = match regression {
        AdfRegression::None => (
            &TAU_STAR_NC,
            &TAU_MIN_NC,
            &TAU_MAX_NC,
            &TAU_NC_SMALLP,
            &TAU_NC_LARGEP,
        ),
        AdfRegression::Constant => (
            &TAU_STAR_C,
            &TAU_MIN_C,
            &TAU_MAX_C,
            &TAU_C_SMALLP,
            &TAU_C_LARGEP,
        ),
        AdfRegression::ConstantTrend => (
            &TAU_STAR_CT,
            &TAU_MIN_CT,
            &TAU_MAX_CT,
            &TAU_CT_SMALLP,
            &TAU_CT_LARGEP,
        ),
    };
    if stat > max[i] {
        return Some(1.0);
    }
    if stat < min[i] {
        return Some(0.0);
    }
    let z = if stat <= star[i] {
        let c = small[i];
        // statsmodels scales the small-p table by [1, 1, 1e-2]
        let c = [c[0], c[1], c[2] * 1e-2];
        polyval_desc(&[c[2], c[1], c[0]], stat)
    } else {
        let c = large[i];
        // statsmodels scales the large-p table by [1, 1e-1, 1e-1, 1e-2]
        let c = [c[0], c[1] * 1e-1, c[2] * 1e-1, c[3] * 1e-2];
        polyval_desc(&[c[3], c[2], c[1], c[0]], stat)
    };
    let p = normal_cdf(z);
    p.is_finite().then_some(p)
}

/// MacKinnon (2010) critical values of the Dickey–Fuller τ statistic at
/// 1 %, 5 % and 10 %, for `n_series` = 1 … 12 integrated series
/// (`Constant`, `ConstantTrend`) or 1 (`None`, whose values are MacKinnon's
/// 1996 ones, not updated in 2010), and sample size `nobs`
/// (`None` = asymptotic): c = β_∞ + β₁/T + β₂/T² + β₃/T³ — MacKinnon (2010)
/// tables as transcribed in statsmodels 0.14.4 (`mackinnoncrit`).
///
/// `None` for an unsupported `n_series` or a `nobs` that is not positive
/// and finite.
pub fn mackinnon_crit(
    regression: AdfRegression,
    n_series: usize,
    nobs: Option<f64>,
) -> Option<[f64; 3]> {
    if n_series == 0 {
        return None;
    }
    let i = n_series - 1;
    let table: &[[f64; 4]; 3] = match regression {
        AdfRegression::None => TAU_NC_2010.get(i)?,
        AdfRegression::Constant => TAU_C_2010.get(i)?,
        AdfRegression::ConstantTrend => TAU_CT_2010.get(i)?,
    };
    match nobs {
        None => Some([table[0][0], table[1][0], table[2][0]]),
        Some(t) => {
            if !(t.is_finite() && t > 0.0) {
                return None;
            }
            let x = 1.0 / t;
            let mut out = [0.0; 3];
            for (o, c) in out.iter_mut().zip(table.iter()) {
                *o = polyval_desc(&[c[3], c[2], c[1], c[0]], x);
            }
            Some(out)
        }
    }
}

// ---------------------------------------------------------------------------
// Giacomini–Rossi fluctuation test
// ---------------------------------------------------------------------------

/// Result of [`fluctuation_test`].
#[derive(Debug, Clone, PartialEq)]
pub struct FluctuationResult {
    /// F_t for t = m … P (1-based), i.e. `P − m + 1` values; `path[i]` uses
    /// d_{i+1} … d_{i+m}.
    pub path: Vec<f64>,
    /// max_t |F_t|.
    pub max_abs: f64,
    /// Index into `path` of the maximum (first one on ties).
    pub argmax: usize,
    /// Two-sided 5 % critical value k_{0.05}(μ).
    pub critical_5: f64,
    /// Two-sided 10 % critical value k_{0.10}(μ).
    pub critical_10: f64,
    /// μ = m / P.
    pub mu: f64,
    /// Long-run variance σ̂² of d used for standardising.
    pub sigma2: f64,
    /// HAC truncation lag used.
    pub lags: usize,
}

/// Giacomini & Rossi (2010), Table 1: two-sided critical values k_α of the
/// fluctuation test for μ = 0.1, 0.2, …, 0.9. FROM MEMORY — no installed
/// package carries the table, so these digits were recalled, not read.
const GR_K05: [f64; 9] = [
    3.393, 3.179, 3.012, 2.890, 2.779, 2.634, 2.560, 2.433, 2.248,
];
/// See [`GR_K05`]; α = 0.10.
const GR_K10: [f64; 9] = [
    3.170, 2.948, 2.766, 2.626, 2.500, 2.356, 2.252, 2.130, 1.950,
];

/// Two-sided (5 %, 10 %) critical values of the Giacomini & Rossi (2010)
/// fluctuation test for μ = m/P, linearly interpolated between the μ of
/// their Table 1 (0.1, …, 0.9; values from memory, see [`GR_K05`]). μ within
/// 1e-9 of a tabulated value returns it exactly. `None` outside [0.1, 0.9].
pub fn fluctuation_critical_values(mu: f64) -> Option<(f64, f64)> {
    if !mu.is_finite() || !(0.1 - 1e-9..=0.9 + 1e-9).contains(&mu) {
        return None;
    }
    let t = mu * 10.0 - 1.0; // 0 … 8
    let snapped = t.round();
    if (t - snapped).abs() < 1e-8 {
        let i = (snapped as usize).min(8);
        return Some((GR_K05[i], GR_K10[i]));
    }
    let i = (t.floor().max(0.0) as usize).min(7);
    let f = t - i as f64;
    Some((
        GR_K05[i] + (GR_K05[i + 1] - GR_K05[i]) * f,
        GR_K10[i] + (GR_K10[i + 1] - GR_K10[i]) * f,
    ))
}

/// Giacomini & Rossi (2010) fluctuation test of equal (local) predictive
/// ability with the defaults: HAC variance demeaned, Bartlett kernel,
/// truncation lag [`newey_west_lags`]`(P)`. See [`fluctuation_test_with`].
pub fn fluctuation_test(d: &[f64], window: usize) -> Option<FluctuationResult> {
    fluctuation_test_with(d, window, newey_west_lags(d.len()), true)
}

/// Giacomini & Rossi (2010) fluctuation test.
///
/// `d` are the out-of-sample loss differentials d_t = L(benchmark) −
/// L(candidate), t = 1 … P (positive: the candidate did better), `window` is
/// m. The rolling statistic is
/// F_t = m^{−1/2} Σ_{j=t−m+1}^{t} d_j / σ̂, t = m … P,
/// with σ̂² the Bartlett HAC long-run variance of d on the full sample
/// ([`newey_west_variance`] with `lags` and `demean`). Reject equal predictive
/// ability at every point in time when max_t |F_t| > k_α(μ), μ = m/P
/// ([`fluctuation_critical_values`]).
///
/// Cost O(P·m) (each window summed directly, for accuracy).
/// `None` when μ is outside [0.1, 0.9], `window` = 0, d has non-finite
/// values, `lags` ≥ P, or σ̂² is not positive.
pub fn fluctuation_test_with(
    d: &[f64],
    window: usize,
    lags: usize,
    demean: bool,
) -> Option<FluctuationResult> {
    let p = d.len();
    if window == 0 || window > p {
        return None;
    }
    let mu = window as f64 / p as f64;
    let (critical_5, critical_10) = gr_critical_ratio(window, p)?;
    let sigma2 = newey_west_variance(d, lags, demean)?;
    if sigma2 <= 0.0 {
        return None;
    }
    let scale = (window as f64).sqrt() * sigma2.sqrt();
    let path: Vec<f64> = d
        .windows(window)
        .map(|w| w.iter().sum::<f64>() / scale)
        .collect();
    let mut argmax = 0;
    let mut max_abs = f64::NEG_INFINITY;
    for (i, v) in path.iter().enumerate() {
        if v.abs() > max_abs {
            max_abs = v.abs();
            argmax = i;
        }
    }
    if !max_abs.is_finite() {
        return None;
    }
    Some(FluctuationResult {
        path,
        max_abs,
        argmax,
        critical_5,
        critical_10,
        mu,
        sigma2,
        lags,
    })
}

/// Critical values for μ = m/P computed on the exact ratio: 10m = i·P + r.
fn gr_critical_ratio(m: usize, p: usize) -> Option<(f64, f64)> {
    let ten_m = m.checked_mul(10)?;
    if p == 0 || ten_m < p || ten_m > 9 * p {
        return None;
    }
    let i = ten_m / p; // 1 … 9
    let r = ten_m % p;
    if r == 0 {
        return Some((GR_K05[i - 1], GR_K10[i - 1]));
    }
    let f = r as f64 / p as f64;
    Some((
        GR_K05[i - 1] + (GR_K05[i] - GR_K05[i - 1]) * f,
        GR_K10[i - 1] + (GR_K10[i] - GR_K10[i - 1]) * f,
    ))
}

// ---------------------------------------------------------------------------
// MacKinnon (1994, 2010) tables as transcribed in statsmodels 0.14.4
// (statsmodels/tsa/adfvalues.py), literals unchanged. Index: N − 1.
// ---------------------------------------------------------------------------

const TAU_STAR_NC: [f64; 6] = [-1.04, -1.53, -2.68, -3.09, -3.07, -3.77];
const TAU_MIN_NC: [f64; 6] = [-19.04, -19.62, -21.21, -23.25, -21.63, -25.74];
const TAU_MAX_NC: [f64; 6] = [f64::INFINITY, 1.51, 0.86, 0.88, 1.05, 1.24];
const TAU_STAR_C: [f64; 6] = [-1.61, -2.62, -3.13, -3.47, -3.78, -3.93];
const TAU_MIN_C: [f64; 6] = [-18.83, -18.86, -23.48, -28.07, -25.96, -23.27];
const TAU_MAX_C: [f64; 6] = [2.74, 0.92, 0.55, 0.61, 0.79, 1.0];
const TAU_STAR_CT: [f64; 6] = [-2.89, -3.19, -3.50, -3.65, -3.80, -4.36];
const TAU_MIN_CT: [f64; 6] = [-16.18, -21.15, -25.37, -26.63, -26.53, -26.18];
const TAU_MAX_CT: [f64; 6] = [0.7, 0.63, 0.71, 0.93, 1.19, 1.42];
const TAU_NC_SMALLP: [[f64; 3]; 6] = [
    [0.6344, 1.2378, 3.2496],
    [1.9129, 1.3857, 3.5322],
    [2.7648, 1.4502, 3.4186],
    [3.4336, 1.4835, 3.19],
    [4.0999, 1.5533, 3.59],
    [4.5388, 1.5344, 2.9807],
];
const TAU_C_SMALLP: [[f64; 3]; 6] = [
    [2.1659, 1.4412, 3.8269],
    [2.92, 1.5012, 3.9796],
    [3.4699, 1.4856, 3.164],
    [3.9673, 1.4777, 2.6315],
    [4.5509, 1.5338, 2.9545],
    [5.1399, 1.6036, 3.4445],
];
const TAU_CT_SMALLP: [[f64; 3]; 6] = [
    [3.2512, 1.6047, 4.9588],
    [3.6646, 1.5419, 3.6448],
    [4.0983, 1.5173, 2.9898],
    [4.5844, 1.5338, 2.8796],
    [5.0722, 1.5634, 2.9472],
    [5.53, 1.5914, 3.0392],
];
const TAU_NC_LARGEP: [[f64; 4]; 6] = [
    [0.4797, 9.3557, -0.6999, 3.3066],
    [1.5578, 8.558, -2.083, -3.3549],
    [2.2268, 6.8093, -3.2362, -5.4448],
    [2.7654, 6.4502, -3.0811, -4.4946],
    [3.2684, 6.8051, -2.6778, -3.4972],
    [3.7268, 7.167, -2.3648, -2.8288],
];
const TAU_C_LARGEP: [[f64; 4]; 6] = [
    [1.7339, 9.3202, -1.2745, -1.0368],
    [2.1945, 6.4695, -2.9198, -4.2377],
    [2.5893, 4.5168, -3.6529, -5.0074],
    [3.0387, 4.5452, -3.3666, -4.1921],
    [3.5049, 5.2098, -2.9158, -3.3468],
    [3.9489, 5.8933, -2.5359, -2.721],
];
const TAU_CT_LARGEP: [[f64; 4]; 6] = [
    [2.5261, 6.1654, -3.7956, -6.0285],
    [2.85, 5.272, -3.6622, -5.1695],
    [3.221, 5.255, -3.2685, -4.1501],
    [3.652, 5.9758, -2.7483, -3.2081],
    [4.0712, 6.6428, -2.3464, -2.546],
    [4.4735, 7.1757, -2.0681, -2.1196],
];
const TAU_NC_2010: [[[f64; 4]; 3]; 1] = [[
    [-2.56574, -2.2358, -3.627, 0.0],
    [-1.94100, -0.2686, -3.365, 31.223],
    [-1.61682, 0.2656, -2.714, 25.364],
]];
const TAU_C_2010: [[[f64; 4]; 3]; 12] = [
    [
        [-3.43035, -6.5393, -16.786, -79.433],
        [-2.86154, -2.8903, -4.234, -40.040],
        [-2.56677, -1.5384, -2.809, 0.0],
    ],
    [
        [-3.89644, -10.9519, -33.527, 0.0],
        [-3.33613, -6.1101, -6.823, 0.0],
        [-3.04445, -4.2412, -2.720, 0.0],
    ],
    [
        [-4.29374, -14.4354, -33.195, 47.433],
        [-3.74066, -8.5632, -10.852, 27.982],
        [-3.45218, -6.2143, -3.718, 0.0],
    ],
    [
        [-4.64332, -18.1031, -37.972, 0.0],
        [-4.09600, -11.2349, -11.175, 0.0],
        [-3.81020, -8.3931, -4.137, 0.0],
    ],
    [
        [-4.95756, -21.8883, -45.142, 0.0],
        [-4.41519, -14.0405, -12.575, 0.0],
        [-4.13157, -10.7417, -3.784, 0.0],
    ],
    [
        [-5.24568, -25.6688, -57.737, 88.639],
        [-4.70693, -16.9178, -17.492, 60.007],
        [-4.42501, -13.1875, -5.104, 27.877],
    ],
    [
        [-5.51233, -29.5760, -69.398, 164.295],
        [-4.97684, -19.9021, -22.045, 110.761],
        [-4.69648, -15.7315, -5.104, 27.877],
    ],
    [
        [-5.76202, -33.5258, -82.189, 256.289],
        [-5.22924, -23.0023, -24.646, 144.479],
        [-4.95007, -18.3959, -7.344, 94.872],
    ],
    [
        [-5.99742, -37.6572, -87.365, 248.316],
        [-5.46697, -26.2057, -26.627, 176.382],
        [-5.18897, -21.1377, -9.484, 172.704],
    ],
    [
        [-6.22103, -41.7154, -102.680, 389.33],
        [-5.69244, -29.4521, -30.994, 251.016],
        [-5.41533, -24.0006, -7.514, 163.049],
    ],
    [
        [-6.43377, -46.0084, -106.809, 352.752],
        [-5.90714, -32.8336, -30.275, 249.994],
        [-5.63086, -26.9693, -4.083, 151.427],
    ],
    [
        [-6.63790, -50.2095, -124.156, 579.622],
        [-6.11279, -36.2681, -32.505, 314.802],
        [-5.83724, -29.9864, -2.686, 184.116],
    ],
];
const TAU_CT_2010: [[[f64; 4]; 3]; 12] = [
    [
        [-3.95877, -9.0531, -28.428, -134.155],
        [-3.41049, -4.3904, -9.036, -45.374],
        [-3.12705, -2.5856, -3.925, -22.380],
    ],
    [
        [-4.32762, -15.4387, -35.679, 0.0],
        [-3.78057, -9.5106, -12.074, 0.0],
        [-3.49631, -7.0815, -7.538, 21.892],
    ],
    [
        [-4.66305, -18.7688, -49.793, 104.244],
        [-4.11890, -11.8922, -19.031, 77.332],
        [-3.83511, -9.0723, -8.504, 35.403],
    ],
    [
        [-4.96940, -22.4694, -52.599, 51.314],
        [-4.42871, -14.5876, -18.228, 39.647],
        [-4.14633, -11.2500, -9.873, 54.109],
    ],
    [
        [-5.25276, -26.2183, -59.631, 50.646],
        [-4.71537, -17.3569, -22.660, 91.359],
        [-4.43422, -13.6078, -10.238, 76.781],
    ],
    [
        [-5.51727, -29.9760, -75.222, 202.253],
        [-4.98228, -20.3050, -25.224, 132.03],
        [-4.70233, -16.1253, -9.836, 94.272],
    ],
    [
        [-5.76537, -33.9165, -84.312, 245.394],
        [-5.23299, -23.3328, -28.955, 182.342],
        [-4.95405, -18.7352, -10.168, 120.575],
    ],
    [
        [-6.00003, -37.8892, -96.428, 335.92],
        [-5.46971, -26.4771, -31.034, 220.165],
        [-5.19183, -21.4328, -10.726, 157.955],
    ],
    [
        [-6.22288, -41.9496, -109.881, 466.068],
        [-5.69447, -29.7152, -33.784, 273.002],
        [-5.41738, -24.2882, -8.584, 169.891],
    ],
    [
        [-6.43551, -46.1151, -120.814, 566.823],
        [-5.90887, -33.0251, -37.208, 346.189],
        [-5.63255, -27.2042, -6.792, 177.666],
    ],
    [
        [-6.63894, -50.4287, -128.997, 642.781],
        [-6.11404, -36.4610, -36.246, 348.554],
        [-5.83850, -30.1995, -5.163, 210.338],
    ],
    [
        [-6.83488, -54.7119, -139.800, 736.376],
        [-6.31127, -39.9676, -37.021, 406.051],
        [-6.03650, -33.2381, -6.606, 317.776],
    ],
];

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::Value;

    fn load(name: &str) -> Value {
        let path = format!(
            "{}/{}",
            concat!(env!("CARGO_MANIFEST_DIR"), "/tests/reference/diagnostics"),
            name
        );
        let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"));
        serde_json::from_str(&text).unwrap_or_else(|e| panic!("{path}: {e}"))
    }

    fn f(v: &Value) -> f64 {
        v.as_f64().expect("number")
    }

    fn fvec(v: &Value) -> Vec<f64> {
        v.as_array().expect("array").iter().map(f).collect()
    }

    fn series(name: &str) -> Vec<f64> {
        fvec(&load("series.json")["series"][name])
    }

    fn rel(a: f64, b: f64) -> f64 {
        if a == b {
            0.0
        } else {
            (a - b).abs() / b.abs().max(f64::MIN_POSITIVE)
        }
    }

    fn regression(v: &Value) -> AdfRegression {
        match v.as_str().expect("regression") {
            "Constant" => AdfRegression::Constant,
            "ConstantTrend" => AdfRegression::ConstantTrend,
            "None" => AdfRegression::None,
            other => panic!("unknown regression {other}"),
        }
    }

    // ---------------- Ljung–Box ----------------

    #[test]
    fn ljung_box_matches_statsmodels() {
        let refs = load("ljung_box.json");
        let all = load("series.json");
        let cases = refs["cases"].as_array().expect("cases");
        assert!(cases.len() >= 100);
        let (mut worst_q, mut worst_p) = (0.0_f64, 0.0_f64);
        for c in cases {
            let x = fvec(&all["series"][c["series"].as_str().expect("series")]);
            let lags = c["lags"].as_u64().expect("lags") as usize;
            let model_df = c["model_df"].as_u64().expect("model_df") as usize;
            let got = ljung_box(&x, lags, model_df);
            if c["p"].is_null() {
                assert!(got.is_none(), "{c}");
                continue;
            }
            let (q, p, df) = got.unwrap_or_else(|| panic!("None for {c}"));
            assert_eq!(df, c["df"].as_u64().expect("df") as usize);
            assert!(rel(q, f(&c["q"])) < 1e-12, "Q {q} vs {c}");
            // observed: Q ≤ 5e-15, p ≤ 1.3e-12 (statrs' incomplete gamma)
            assert!(rel(p, f(&c["p"])) < 1e-10, "p {p} vs {c}");
            worst_q = worst_q.max(rel(q, f(&c["q"])));
            worst_p = worst_p.max(rel(p, f(&c["p"])));
        }
        assert!(worst_q < 1e-12 && worst_p < 1e-10);
    }

    #[test]
    fn ljung_box_edge_cases() {
        let x = [1.0, 2.0, 0.5, 3.0, 2.5, 1.0];
        assert!(ljung_box(&x, 2, 2).is_none());
        assert!(ljung_box(&x, 0, 0).is_none());
        assert!(ljung_box(&x, 6, 0).is_none());
        assert!(ljung_box(&x, 5, 0).is_some());
        assert!(ljung_box(&[], 1, 0).is_none());
        assert!(ljung_box(&[1.0], 1, 0).is_none());
        assert!(ljung_box(&[2.0; 10], 3, 0).is_none());
        assert!(ljung_box(&[1.0, f64::NAN, 2.0, 3.0], 1, 0).is_none());
        assert!(ljung_box(&[1.0, f64::INFINITY, 2.0, 3.0], 1, 0).is_none());
        assert!(ljung_box(&x, usize::MAX, 0).is_none());
    }

    // ---------------- ADF ----------------

    #[test]
    fn adf_matches_statsmodels() {
        let refs = load("adf.json");
        let all = load("series.json");
        let cases = refs["cases"].as_array().expect("cases");
        assert!(cases.len() >= 100);
        let (mut worst_stat, mut worst_p, mut degenerate) = (0.0_f64, 0.0_f64, 0);
        for c in cases {
            let mut x = fvec(&all["series"][c["series"].as_str().expect("series")]);
            if let Some(n) = c.get("prefix").and_then(Value::as_u64) {
                x.truncate(n as usize);
            }
            let max_lag = c["max_lag"].as_u64().map(|v| v as usize);
            let got = adf(&x, regression(&c["regression"]), max_lag);
            if c["degenerate"].as_bool().expect("degenerate") {
                // no residual degrees of freedom: statsmodels' numbers are meaningless
                assert!(got.is_none(), "{c}");
                degenerate += 1;
                continue;
            }
            let r = got.unwrap_or_else(|| panic!("None for {c}"));
            worst_stat = worst_stat.max(rel(r.statistic, f(&c["statistic"])));
            worst_p = worst_p.max(rel(r.p_value, f(&c["p_value"])));
            assert_eq!(
                r.used_lag as u64,
                c["used_lag"].as_u64().expect("used_lag"),
                "{c}"
            );
            assert_eq!(r.nobs as u64, c["nobs"].as_u64().expect("nobs"), "{c}");
            assert!(
                rel(r.statistic, f(&c["statistic"])) < 1e-10,
                "stat {} vs {c}",
                r.statistic
            );
            assert!(
                rel(r.p_value, f(&c["p_value"])) < 1e-8,
                "p {} vs {c}",
                r.p_value
            );
            assert!(
                rel(r.ic_best, f(&c["icbest"])) < 1e-10,
                "aic {} vs {c}",
                r.ic_best
            );
            let bits: Vec<u64> = c["critical_values_bits"]
                .as_array()
                .expect("bits")
                .iter()
                .map(|b| b.as_u64().expect("u64"))
                .collect();
            let got: Vec<u64> = r.critical_values.iter().map(|v| v.to_bits()).collect();
            assert_eq!(got, bits, "critical values {:?} vs {c}", r.critical_values);
        }
        assert!(degenerate < 10);
        // observed: statistic ≤ 3e-12, p-value ≤ 6e-11 (amplified in the far left tail)
        assert!(
            worst_stat < 1e-10 && worst_p < 1e-8,
            "{worst_stat:e} {worst_p:e}"
        );
    }

    #[test]
    fn mackinnon_p_matches_statsmodels() {
        let refs = load("mackinnon.json");
        let grid = refs["mackinnonp"].as_array().expect("grid");
        assert!(grid.len() > 1000);
        let mut worst = 0.0_f64;
        for c in grid {
            let n = c["n_series"].as_u64().expect("n") as usize;
            let want = f(&c["p"]);
            let got = mackinnon_p(f(&c["stat"]), regression(&c["regression"]), n)
                .unwrap_or_else(|| panic!("None for {c}"));
            let e = rel(got, want);
            worst = worst.max(e);
            assert!(e < 1e-12, "p {got} vs {c}");
        }
        // observed worst ≈ 6e-14
        assert!(worst < 1e-12);
    }

    #[test]
    fn mackinnon_crit_matches_statsmodels_exactly() {
        let refs = load("mackinnon.json");
        let grid = refs["mackinnoncrit"].as_array().expect("grid");
        assert_eq!(grid.len(), (12 + 12 + 1) * 10);
        for c in grid {
            let n = c["n_series"].as_u64().expect("n") as usize;
            let nobs = c["nobs"].as_u64().map(|v| v as f64);
            let got = mackinnon_crit(regression(&c["regression"]), n, nobs)
                .unwrap_or_else(|| panic!("None for {c}"));
            let bits: Vec<u64> = c["critical_values_bits"]
                .as_array()
                .expect("bits")
                .iter()
                .map(|b| b.as_u64().expect("u64"))
                .collect();
            let got_bits: Vec<u64> = got.iter().map(|v| v.to_bits()).collect();
            assert_eq!(got_bits, bits, "{got:?} vs {c}");
        }
        assert!(mackinnon_crit(AdfRegression::None, 2, None).is_none());
        assert!(mackinnon_crit(AdfRegression::Constant, 13, None).is_none());
        assert!(mackinnon_crit(AdfRegression::Constant, 0, None).is_none());
        assert!(mackinnon_crit(AdfRegression::Constant, 1, Some(0.0)).is_none());
        assert!(mackinnon_crit(AdfRegression::Constant, 1, Some(f64::NAN)).is_none());
        assert!(mackinnon_p(-2.0, AdfRegression::Constant, 7).is_none());
        assert!(mackinnon_p(f64::NAN, AdfRegression::Constant, 1).is_none());
        assert_eq!(
            mackinnon_p(f64::NEG_INFINITY, AdfRegression::Constant, 1),
            Some(0.0)
        );
        assert_eq!(
            mackinnon_p(f64::INFINITY, AdfRegression::None, 1),
            Some(1.0)
        );
    }

    /// MacKinnon's published asymptotic ADF critical values with a constant,
    /// −3.43, −2.86, −2.57 (1 %, 5 %, 10 %), as remembered from his tables
    /// (independent of the coefficients copied from statsmodels).
    #[test]
    fn adf_constant_large_sample_critical_values_from_memory() {
        for nobs in [None, Some(1e7)] {
            let cv = mackinnon_crit(AdfRegression::Constant, 1, nobs).expect("cv");
            for (got, want) in cv.iter().zip([-3.43, -2.86, -2.57]) {
                assert!((got - want).abs() < 0.005, "{cv:?}");
            }
        }
        // and with constant and trend: −3.96, −3.41, −3.13 (also from memory)
        let cv = mackinnon_crit(AdfRegression::ConstantTrend, 1, None).expect("cv");
        for (got, want) in cv.iter().zip([-3.96, -3.41, -3.13]) {
            assert!((got - want).abs() < 0.005, "{cv:?}");
        }
    }

    #[test]
    fn adf_edge_cases() {
        let x = series("nile");
        assert!(adf(&[], AdfRegression::Constant, None).is_none());
        assert!(adf(&[1.0], AdfRegression::Constant, None).is_none());
        assert!(adf(&[1.0, 2.0], AdfRegression::ConstantTrend, None).is_none());
        assert!(adf(&[3.0; 50], AdfRegression::Constant, None).is_none());
        let mut y = x.clone();
        y[10] = f64::NAN;
        assert!(adf(&y, AdfRegression::Constant, None).is_none());
        // explicit maxlag above statsmodels' cap n/2 − ntrend − 1
        assert!(adf(&x, AdfRegression::Constant, Some(49)).is_none());
        assert!(adf(&x, AdfRegression::Constant, Some(48)).is_some());
        assert!(adf(&x, AdfRegression::None, Some(usize::MAX)).is_none());
        // a linear trend: differences are constant → rank-deficient designs
        let line: Vec<f64> = (0..40).map(|i| i as f64).collect();
        for reg in [
            AdfRegression::Constant,
            AdfRegression::ConstantTrend,
            AdfRegression::None,
        ] {
            let _ = adf(&line, reg, None);
        }
        // tiny samples never panic
        for n in 0..12 {
            for reg in [
                AdfRegression::Constant,
                AdfRegression::ConstantTrend,
                AdfRegression::None,
            ] {
                let _ = adf(&x[..n], reg, None);
                let _ = adf(&x[..n], reg, Some(1));
            }
        }
    }

    // ---------------- Fluctuation test ----------------

    #[test]
    fn fluctuation_table_as_transcribed() {
        let refs = load("fluctuation.json");
        let t = &refs["table"];
        assert_eq!(fvec(&t["k_05"]), GR_K05.to_vec());
        assert_eq!(fvec(&t["k_10"]), GR_K10.to_vec());
        for (i, mu) in fvec(&t["mu"]).into_iter().enumerate() {
            assert_eq!(
                fluctuation_critical_values(mu),
                Some((GR_K05[i], GR_K10[i]))
            );
            assert_eq!(gr_critical_ratio(i + 1, 10), Some((GR_K05[i], GR_K10[i])));
            assert_eq!(
                gr_critical_ratio(3 * (i + 1), 30),
                Some((GR_K05[i], GR_K10[i]))
            );
        }
        // the recalled table against the generator's seeded Monte Carlo of the
        // null limit (500-point grid, 20 000 draws): within 0.06 everywhere
        let mc = &refs["monte_carlo_check"];
        for (table, sim) in [(GR_K05, fvec(&mc["k_05"])), (GR_K10, fvec(&mc["k_10"]))] {
            assert_eq!(sim.len(), 9);
            for (a, b) in table.iter().zip(&sim) {
                assert!((a - b).abs() < 0.06, "{a} vs simulated {b}");
            }
        }
        // interpolation halfway between 0.3 and 0.4
        let (k5, k10) = fluctuation_critical_values(0.35).expect("cv");
        assert!((k5 - (3.012 + 2.890) / 2.0).abs() < 1e-12);
        assert!((k10 - (2.766 + 2.626) / 2.0).abs() < 1e-12);
        // the critical values fall with μ
        for w in GR_K05.windows(2).chain(GR_K10.windows(2)) {
            assert!(w[1] < w[0]);
        }
        assert!(fluctuation_critical_values(0.05).is_none());
        assert!(fluctuation_critical_values(0.95).is_none());
        assert!(fluctuation_critical_values(f64::NAN).is_none());
    }

    #[test]
    fn fluctuation_matches_numpy_formula() {
        let refs = load("fluctuation.json");
        let d = fvec(&refs["d"]);
        let cases = refs["cases"].as_array().expect("cases");
        assert!(!cases.is_empty());
        for c in cases {
            let window = c["window"].as_u64().expect("window") as usize;
            let demean = c["demean"].as_bool().expect("demean");
            let r = match c["lags"].as_u64() {
                None if demean => fluctuation_test(&d, window),
                None => fluctuation_test_with(&d, window, newey_west_lags(d.len()), demean),
                Some(l) => fluctuation_test_with(&d, window, l as usize, demean),
            }
            .unwrap_or_else(|| panic!("None for window {window}"));
            assert_eq!(r.lags as u64, c["lags_used"].as_u64().expect("lags_used"));
            assert!(rel(r.mu, f(&c["mu"])) < 1e-15);
            assert!(
                rel(r.sigma2, f(&c["sigma2"])) < 1e-12,
                "{} vs {}",
                r.sigma2,
                c["sigma2"]
            );
            let want = fvec(&c["path"]);
            assert_eq!(r.path.len(), want.len());
            assert_eq!(r.path.len(), d.len() - window + 1);
            for (a, b) in r.path.iter().zip(&want) {
                assert!((a - b).abs() <= 1e-10 * (1.0 + b.abs()), "{a} vs {b}");
            }
            assert!(rel(r.max_abs, f(&c["max_abs"])) < 1e-10);
            assert_eq!(r.max_abs, r.path[r.argmax].abs());
            assert!((r.critical_5 - f(&c["critical_5"])).abs() < 1e-12);
            assert!((r.critical_10 - f(&c["critical_10"])).abs() < 1e-12);
        }
    }

    /// Deterministic pseudo-random inputs (xorshift64*), including extreme
    /// magnitudes and non-finite values: nothing may panic.
    #[test]
    fn no_panic_on_arbitrary_inputs() {
        let mut state: u64 = 0x9E37_79B9_7F4A_7C15;
        let mut next = move || {
            state ^= state >> 12;
            state ^= state << 25;
            state ^= state >> 27;
            state.wrapping_mul(0x2545_F491_4F6C_DD1D)
        };
        let specials = [
            0.0,
            -0.0,
            1e300,
            -1e300,
            1e-310,
            f64::NAN,
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::MAX,
        ];
        for _ in 0..400 {
            let n = (next() % 60) as usize;
            let x: Vec<f64> = (0..n)
                .map(|_| {
                    let r = next();
                    match r % 23 {
                        0 => specials[(r >> 8) as usize % specials.len()],
                        1..=3 => 1.0,
                        _ => (r >> 11) as f64 / (1u64 << 53) as f64 * 10.0 - 5.0,
                    }
                })
                .collect();
            let a = (next() % 70) as usize;
            let b = (next() % 5) as usize;
            let _ = ljung_box(&x, a, b);
            for reg in [
                AdfRegression::Constant,
                AdfRegression::ConstantTrend,
                AdfRegression::None,
            ] {
                let _ = adf(&x, reg, None);
                let _ = adf(&x, reg, Some(a));
            }
            let _ = fluctuation_test(&x, a);
            let _ = fluctuation_test_with(&x, a, b, b < 3);
            let _ = newey_west_variance(&x, b, true);
            let _ = mackinnon_p(
                x.first().copied().unwrap_or(0.0),
                AdfRegression::None,
                b + 1,
            );
            let _ = mackinnon_crit(AdfRegression::ConstantTrend, a, x.first().copied());
            let _ = fluctuation_critical_values(x.first().copied().unwrap_or(0.5));
        }
    }

    #[test]
    fn fluctuation_edge_cases() {
        let d: Vec<f64> = (0..50).map(|i| ((i * 7) % 11) as f64 - 5.0).collect();
        assert!(fluctuation_test(&d, 0).is_none());
        assert!(fluctuation_test(&d, 4).is_none()); // μ = 0.08
        assert!(fluctuation_test(&d, 5).is_some()); // μ = 0.1
        assert!(fluctuation_test(&d, 45).is_some()); // μ = 0.9
        assert!(fluctuation_test(&d, 46).is_none());
        assert!(fluctuation_test(&d, 51).is_none());
        assert!(fluctuation_test(&d, usize::MAX).is_none());
        assert!(fluctuation_test(&[], 1).is_none());
        assert!(fluctuation_test(&[1.0; 20], 10).is_none()); // σ̂² = 0 once demeaned
        assert!(fluctuation_test_with(&[1.0; 20], 10, 2, false).is_some());
        assert!(fluctuation_test_with(&d, 10, 50, true).is_none());
        let mut e = d.clone();
        e[3] = f64::NAN;
        assert!(fluctuation_test(&e, 10).is_none());
        assert_eq!(newey_west_lags(0), 0);
        assert_eq!(newey_west_lags(1), 0);
        assert_eq!(newey_west_lags(2), 1);
        assert_eq!(newey_west_lags(100), 4);
        assert!(newey_west_variance(&[], 0, true).is_none());
        assert_eq!(newey_west_variance(&[1.0, -1.0], 0, true), Some(1.0));
    }
}
