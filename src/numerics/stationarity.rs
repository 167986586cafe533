//! Stationarity tests that choose an ARIMA's differencing (SPEC §7.2):
//! KPSS for d and Canova–Hansen for D. Both are the same Nyblom–Hansen
//! statistic L = n⁻² Σ_t F_t′ Ω̂⁻¹ F_t on the partial sums F_t = Σ_{i≤t} f_i ê_i
//! of a regression's residuals ê times regressors f, with Ω̂ the long-run
//! covariance of f ê by Bartlett weights 1 − k/(l + 1):
//!
//! - KPSS (Kwiatkowski, Phillips, Schmidt & Shin 1992): f = 1, ê the series
//!   minus its mean; H0 level stationarity; reject at 5 % when η_μ >
//!   0.463 (their Table 1).
//! - Canova & Hansen (1995): f the m − 1 seasonal trigonometric terms
//!   cos(2πjt/m), sin(2πjt/m), j = 1..⌊m/2⌋ (no sine at j = m/2), ê the
//!   residuals of the series on a constant and f; H0 a deterministic
//!   (stationary) season; L → VM(m − 1) and the test rejects at 5 % above
//!   the critical value of their Table 1 for m − 1 restrictions.
//!
//! The lag truncation is l = ⌊4 (n/100)^{1/4}⌋, KPSS's "l4".

/// KPSS (1992) Table 1, 5 % critical value of η_μ (level stationarity).
pub(crate) const KPSS_CRITICAL_5: f64 = 0.463;

/// Canova & Hansen (1995) Table 1, 5 % critical values of L for 1..=12
/// restrictions (from memory; tests/reference/select checks them against a
/// simulation of the VM limit).
pub(crate) const CH_CRITICAL_5: [f64; 12] = [
    0.470, 0.749, 1.01, 1.24, 1.47, 1.68, 1.90, 2.11, 2.32, 2.54, 2.75, 2.96,
];

/// KPSS's short lag truncation ⌊4 (n/100)^{1/4}⌋.
pub(crate) fn bartlett_lags(n: usize) -> usize {
    (4.0 * (n as f64 / 100.0).powf(0.25)).floor() as usize
}

/// The KPSS level-stationarity statistic η_μ with `lags` Bartlett lags;
/// None when it is undefined (fewer than 3 values, a constant series).
pub(crate) fn kpss(x: &[f64], lags: usize) -> Option<f64> {
    let n = x.len();
    if n < 3 {
        return None;
    }
    let mean = x.iter().sum::<f64>() / n as f64;
    let e: Vec<Vec<f64>> = x.iter().map(|v| vec![v - mean]).collect();
    nyblom_hansen(&e, lags)
}

/// The Canova–Hansen statistic for a season of `m` periods (all seasonal
/// frequencies jointly), `lags` Bartlett lags; None when undefined.
pub(crate) fn canova_hansen(x: &[f64], m: usize, lags: usize) -> Option<f64> {
    let n = x.len();
    if m < 2 || n < 2 * m {
        return None;
    }
    let f: Vec<Vec<f64>> = (0..n).map(|t| trig_terms(t + 1, m)).collect();
    // Residuals of x on a constant and the trigonometric terms.
    let rows: Vec<Vec<f64>> = f
        .iter()
        .map(|ft| std::iter::once(1.0).chain(ft.iter().copied()).collect())
        .collect();
    let beta = super::lsq::normal_equations::least_squares(&rows, x)?;
    let fe: Vec<Vec<f64>> = rows
        .iter()
        .zip(x)
        .zip(&f)
        .map(|((row, y), ft)| {
            let e = y - row.iter().zip(&beta).map(|(a, b)| a * b).sum::<f64>();
            ft.iter().map(|v| v * e).collect()
        })
        .collect();
    nyblom_hansen(&fe, lags)
}

/// cos(2πjt/m), sin(2πjt/m) for j = 1..⌊m/2⌋, the sine left out at j = m/2.
fn trig_terms(t: usize, m: usize) -> Vec<f64> {
    let mut out = Vec::with_capacity(m - 1);
    for j in 1..=m / 2 {
        let a = std::f64::consts::TAU * (j * t) as f64 / m as f64;
        out.push(a.cos());
        if 2 * j != m {
            out.push(a.sin());
        }
    }
    out
}

/// L = n⁻² Σ_t F_t′ Ω̂⁻¹ F_t for the moment series u_t (rows), F_t = Σ_{i≤t} u_i,
/// Ω̂ = Γ_0 + Σ_{k=1}^{l} (1 − k/(l + 1)) (Γ_k + Γ_k′), Γ_k = n⁻¹ Σ u_t u_{t−k}′.
fn nyblom_hansen(u: &[Vec<f64>], lags: usize) -> Option<f64> {
    let n = u.len();
    let q = u.first()?.len();
    let mut omega = nalgebra::DMatrix::<f64>::zeros(q, q);
    for k in 0..=lags.min(n - 1) {
        let w = if k == 0 {
            1.0
        } else {
            1.0 - k as f64 / (lags + 1) as f64
        };
        for t in k..n {
            for a in 0..q {
                for b in 0..q {
                    let g = u[t][a] * u[t - k][b] / n as f64;
                    omega[(a, b)] += w * g;
                    if k > 0 {
                        omega[(b, a)] += w * g;
                    }
                }
            }
        }
    }
    let inverse = omega.cholesky()?.inverse();
    let mut partial = nalgebra::DVector::<f64>::zeros(q);
    let mut total = 0.0;
    for ut in u {
        for a in 0..q {
            partial[a] += ut[a];
        }
        total += (partial.transpose() * &inverse * &partial)[(0, 0)];
    }
    let l = total / (n as f64 * n as f64);
    l.is_finite().then_some(l)
}

/// Whether KPSS rejects level stationarity at 5 %.
pub(crate) fn kpss_rejects(x: &[f64]) -> bool {
    kpss(x, bartlett_lags(x.len())).is_some_and(|s| s > KPSS_CRITICAL_5)
}

/// Whether Canova–Hansen rejects a stationary season at 5 %; false when the
/// test is undefined or m − 1 exceeds the table.
pub(crate) fn canova_hansen_rejects(x: &[f64], m: usize) -> bool {
    let Some(&critical) = CH_CRITICAL_5.get(m.wrapping_sub(2)) else {
        return false;
    };
    canova_hansen(x, m, bartlett_lags(x.len())).is_some_and(|s| s > critical)
}
