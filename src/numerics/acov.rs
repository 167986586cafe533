//! Autocovariances and the long-run variances built from them, written
//! once: the sample autocovariance and Bartlett variance that SPEC §4 fixes
//! (Diebold–Mariano, Clark–West), which is also the Newey–West HAC variance
//! of the fluctuation test (with its rule-of-thumb lag), and the
//! stationary-bootstrap kernel variance (the test of superior predictive
//! ability).
//!
//! Every sum runs in time order over the centred series, so a caller that
//! needs the raw lag products (block length, Ljung–Box, Yule–Walker) gets
//! the same numbers bit for bit from [`lag_product_sum`].

/// Arithmetic mean Σx/n (NaN for an empty slice).
pub(crate) fn mean(x: &[f64]) -> f64 {
    x.iter().sum::<f64>() / x.len() as f64
}

/// The deviations x_t − x̄.
pub(crate) fn centred(x: &[f64]) -> Vec<f64> {
    let m = mean(x);
    x.iter().map(|v| v - m).collect()
}

/// Σ_{t=k+1}^{n} u_t·u_{t−k}, summed in time order; 0 for k ≥ n.
pub(crate) fn lag_product_sum(u: &[f64], k: usize) -> f64 {
    let n = u.len();
    if k >= n {
        return 0.0;
    }
    u[k..].iter().zip(&u[..n - k]).map(|(a, b)| a * b).sum()
}

/// Sample autocovariances γ̂_0, …, γ̂_{max_lag} (SPEC §4):
/// γ̂_k = n⁻¹ Σ_{t=k+1}^{n} (x_t − x̄)(x_{t−k} − x̄).
///
/// The divisor is n at every lag. A lag `k ≥ n` is an empty sum and gives 0;
/// an empty series gives NaN at every lag.
pub(crate) fn autocovariances(x: &[f64], max_lag: usize) -> Vec<f64> {
    let n = x.len();
    if n == 0 {
        return vec![f64::NAN; max_lag + 1];
    }
    let u = centred(x);
    (0..=max_lag)
        .map(|k| lag_product_sum(&u, k) / n as f64)
        .collect()
}

/// Bartlett (Newey & West 1987) long-run variance with h−1 lags (SPEC §4):
/// γ̂_0 + 2 Σ_{k=1}^{h−1} (1 − k/h) γ̂_k. `h = 0` is treated as `h = 1`.
pub(crate) fn bartlett_variance(x: &[f64], h: usize) -> f64 {
    bartlett_from(&autocovariances(x, h.saturating_sub(1)), h)
}

/// [`bartlett_variance`] from γ̂_0, …, γ̂_{h−1} already computed.
pub(crate) fn bartlett_from(gamma: &[f64], h: usize) -> f64 {
    // Summed in the order the formula is written: γ̂_0 + 2·(Σ weighted γ̂_k).
    let s: f64 = (1..h).map(|k| (1.0 - k as f64 / h as f64) * gamma[k]).sum();
    gamma[0] + 2.0 * s
}

/// Newey & West (1994) rule-of-thumb truncation lag for the Bartlett kernel,
/// ⌊4·(P/100)^{2/9}⌋, capped at P − 1 (0 for P ≤ 1).
pub(crate) fn newey_west_lags(p: usize) -> usize {
    if p <= 1 {
        return 0;
    }
    let q = (4.0 * (p as f64 / 100.0).powf(2.0 / 9.0)).floor();
    (q as usize).min(p - 1)
}

/// Newey & West (1987) Bartlett-kernel long-run variance of `d` with `lags`
/// lags: [`bartlett_from`] with h = lags + 1, i.e.
/// σ̂² = γ̂₀ + 2 Σ_{j=1}^{q} (1 − j/(q+1)) γ̂_j, γ̂_j = P⁻¹ Σ_{t=j+1}^{P} u_t u_{t−j},
/// with u = d − d̄ when `demean` (else u = d, the form that imposes the null
/// E d_t = 0). `None` for empty or non-finite input or `lags` ≥ P.
pub(crate) fn newey_west_variance(d: &[f64], lags: usize, demean: bool) -> Option<f64> {
    let p = d.len();
    if p == 0 || lags >= p || d.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let u: Vec<f64> = if demean { centred(d) } else { d.to_vec() };
    let gamma: Vec<f64> = (0..=lags)
        .map(|j| lag_product_sum(&u, j) / p as f64)
        .collect();
    let s = bartlett_from(&gamma, lags + 1);
    s.is_finite().then_some(s)
}

/// Long-run variance of a column with the stationary-bootstrap kernel
/// (Politis & Romano 1994; Hansen 2005, as `arch.bootstrap.SPA` 7.2.0):
/// ω̂² = γ̂_0 + 2 Σ_{i=1}^{n−1} κ(n, i) γ̂_i,
/// κ(n, i) = (1 − i/n)(1 − q)^i + (i/n)(1 − q)^{n−i}, q = 1/b.
pub(crate) fn stationary_bootstrap_variance(x: &[f64], block_length: f64) -> f64 {
    let q = 1.0 / block_length;
    let n = x.len();
    let nf = n as f64;
    let e = centred(x);
    let mut v = lag_product_sum(&e, 0) / nf;
    for i in 1..n {
        let fi = i as f64;
        let kappa =
            (1.0 - fi / nf) * (1.0 - q).powf(fi) + (fi / nf) * (1.0 - q).powf((n - i) as f64);
        v += 2.0 * kappa * lag_product_sum(&e, i) / nf;
    }
    v
}

#[cfg(test)]
mod tests {
    use super::*;

    /// By hand from the definitions: x = 1, 2, 3, 4 has x̄ = 2.5 and
    /// deviations −1.5, −0.5, 0.5, 1.5, all exact in binary.
    #[test]
    fn autocovariances_by_hand() {
        let x = [1.0, 2.0, 3.0, 4.0];
        // γ̂_0 = (2.25 + 0.25 + 0.25 + 2.25)/4; γ̂_1 = ((−0.5)(−1.5) + (0.5)(−0.5) + (1.5)(0.5))/4
        let gamma = autocovariances(&x, 4);
        assert_eq!(gamma, vec![1.25, 0.3125, -0.375, -0.5625, 0.0]);
        assert!(autocovariances(&[], 0)[0].is_nan());
        // h = 2: γ̂_0 + 2·(1/2)·γ̂_1
        assert_eq!(bartlett_variance(&x, 2), 1.25 + 0.3125);
        assert_eq!(bartlett_variance(&x, 1), 1.25);
        assert_eq!(bartlett_variance(&x, 0), 1.25);
    }

    #[test]
    fn newey_west_edges() {
        assert_eq!(newey_west_lags(0), 0);
        assert_eq!(newey_west_lags(1), 0);
        assert_eq!(newey_west_lags(2), 1);
        assert_eq!(newey_west_lags(100), 4);
        assert!(newey_west_variance(&[], 0, true).is_none());
        assert_eq!(newey_west_variance(&[1.0, -1.0], 0, true), Some(1.0));
        assert!(newey_west_variance(&[1.0, f64::NAN], 0, true).is_none());
        assert!(newey_west_variance(&[1.0, 2.0], 2, true).is_none());
    }
}
