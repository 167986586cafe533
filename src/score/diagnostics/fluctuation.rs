//! The fluctuation test of Giacomini & Rossi (2010): rolling standardised
//! sums of loss differentials against the two-sided critical values of the
//! test's limiting null distribution, with the Newey–West variance.

use crate::numerics::acov::{newey_west_lags, newey_west_variance};

/// Result of [`fluctuation_test`].
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct FluctuationResult {
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

/// Two-sided critical values k_α of the fluctuation test for μ = 0.1, 0.2,
/// …, 0.9: Giacomini & Rossi (2010), Table 1, α = 0.05. FROM MEMORY — the
/// paper is not at hand and no installed package carries the table, so
/// these digits are recalled, not read. `fluctuation_tests.rs` checks them
/// against a seeded simulation of the limiting null distribution.
pub(super) const GR_K05: [f64; 9] = [
    3.393, 3.179, 3.012, 2.890, 2.779, 2.634, 2.560, 2.433, 2.248,
];
/// Giacomini & Rossi (2010), Table 1, α = 0.10; FROM MEMORY, see [`GR_K05`].
pub(super) const GR_K10: [f64; 9] = [
    3.170, 2.948, 2.766, 2.626, 2.500, 2.356, 2.252, 2.130, 1.950,
];

/// Giacomini & Rossi (2010) fluctuation test of equal (local) predictive
/// ability with the defaults: HAC variance demeaned, Bartlett kernel,
/// truncation lag [`newey_west_lags`]`(P)`. See [`fluctuation_test_with`].
pub(crate) fn fluctuation_test(d: &[f64], window: usize) -> Option<FluctuationResult> {
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
/// ([`gr_critical_ratio`]).
///
/// Cost O(P·m) (each window summed directly, for accuracy).
/// `None` when μ is outside [0.1, 0.9], `window` = 0, d has non-finite
/// values, `lags` ≥ P, or σ̂² is not positive.
pub(super) fn fluctuation_test_with(
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

/// Two-sided (5 %, 10 %) critical values for μ = m/P, linearly interpolated
/// between the μ = 0.1, …, 0.9 of the table ([`GR_K05`], [`GR_K10`]) on the
/// exact ratio 10m = i·P + r; `None` outside [0.1, 0.9].
pub(super) fn gr_critical_ratio(m: usize, p: usize) -> Option<(f64, f64)> {
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
