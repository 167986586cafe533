//! Ljung & Box (1978)'s portmanteau test of residual autocorrelation, as
//! statsmodels 0.14.4's `acorr_ljungbox`.

use crate::numerics::acov::{centred, lag_product_sum};
use crate::numerics::dist::chi2_sf;

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
pub(crate) fn ljung_box(
    resid: &[f64],
    lags: usize,
    fitted_params: usize,
) -> Option<(f64, f64, usize)> {
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
