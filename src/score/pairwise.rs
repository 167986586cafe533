//! Pairwise forecast comparisons (SPEC §4): Diebold & Mariano (1995) with
//! the Harvey, Leybourne & Newbold (1997) correction, Clark & West (2007)
//! for nested models, exactly as SPEC §4 fixes them, and the Spearman
//! (1904) rank correlation with average ranks for ties, as
//! `scipy.stats.spearmanr`. Degenerate inputs (unequal lengths, too few
//! observations, non-finite values, a variance that is not positive) give
//! `None`, which the results tables write as empty cells.

use super::{all_finite, positive_finite};
use crate::numerics::acov::{autocovariances, bartlett_from, bartlett_variance, mean};
use crate::numerics::dist::{normal_cdf, student_t_two_sided};

/// Statistic and p-value of a pairwise test.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TestResult {
    /// Test statistic; positive favours the candidate.
    pub statistic: f64,
    /// p-value (two-sided for Diebold–Mariano, one-sided for Clark–West).
    pub p_value: f64,
}

/// Harvey, Leybourne & Newbold (1997) small-sample factor
/// sqrt((n + 1 − 2h + h(h−1)/n)/n). The radicand equals (n−h)(n−h+1)/n², so
/// it is zero when n = h or n = h − 1; NaN for n = 0.
pub fn hln_factor(n: usize, h: usize) -> f64 {
    let n = n as f64;
    let h = h as f64;
    let r = (n + 1.0 - 2.0 * h + h * (h - 1.0) / n) / n;
    // The exact radicand is never negative for integer n, h; guard rounding.
    if r < 0.0 && r > -1e-12 {
        0.0
    } else {
        r.sqrt()
    }
}

/// Diebold & Mariano (1995) test of equal squared-error accuracy with the
/// Harvey, Leybourne & Newbold (1997) correction, exactly as SPEC §4:
/// d_t = e_versus,t² − e_candidate,t²; variance γ̂_0 + 2 Σ_{k=1}^{h−1} γ̂_k of
/// d, or the Bartlett variance when that is not positive; statistic =
/// d̄ / sqrt(variance/n) · HLN factor; two-sided p-value from Student t with
/// n − 1 degrees of freedom. Positive favours the candidate.
///
/// `None` when the lengths differ, n < 2, h = 0, an input is not finite, or
/// both variances are not positive.
pub fn diebold_mariano(e_candidate: &[f64], e_versus: &[f64], h: usize) -> Option<TestResult> {
    let d = differential(e_candidate, e_versus, h, |v, c| v * v - c * c)?;
    let n = d.len();
    let statistic = hln_mean_statistic(&d, h)?;
    let p_value = student_t_two_sided(statistic.abs(), (n - 1) as f64)?;
    Some(TestResult { statistic, p_value })
}

/// The loss differential d_t = f(e_versus,t, e_candidate,t); `None` when
/// the lengths differ, n < 2, h = 0 or an input is not finite.
fn differential(
    e_candidate: &[f64],
    e_versus: &[f64],
    h: usize,
    f: impl Fn(f64, f64) -> f64,
) -> Option<Vec<f64>> {
    let n = e_candidate.len();
    if n < 2 || e_versus.len() != n || h == 0 || !all_finite(e_candidate) || !all_finite(e_versus) {
        return None;
    }
    Some(
        e_versus
            .iter()
            .zip(e_candidate)
            .map(|(v, c)| f(*v, *c))
            .collect(),
    )
}

/// The studentised mean of a loss differential d with the Harvey,
/// Leybourne & Newbold small-sample factor, as SPEC §4 fixes it for
/// Diebold–Mariano: d̄ / sqrt(variance/n) · HLN factor, the variance
/// γ̂_0 + 2 Σ_{k=1}^{h−1} γ̂_k of d, or the Bartlett variance when that is
/// not positive. `None` when neither is positive.
fn hln_mean_statistic(d: &[f64], h: usize) -> Option<f64> {
    let n = d.len();
    let gamma = autocovariances(d, h - 1);
    let s: f64 = (1..h).map(|k| gamma[k]).sum();
    let mut var = gamma[0] + 2.0 * s;
    if !positive_finite(var) {
        var = bartlett_from(&gamma, h);
    }
    if !positive_finite(var) {
        return None;
    }
    Some(mean(d) / (var / n as f64).sqrt() * hln_factor(n, h))
}

/// Forecast encompassing (Harvey, Leybourne & Newbold 1998): does the
/// `versus` forecast encompass the candidate's, so that the candidate adds
/// nothing to it? d_t = (e_versus,t − e_candidate,t)·e_versus,t, whose mean
/// is zero under encompassing (the optimal weight on the candidate in a
/// combination is zero); the statistic is their modified Diebold–Mariano
/// form (the same variance and small-sample factor as
/// [`diebold_mariano`]), the p-value one-sided, P(T > statistic) for
/// Student t with n − 1 degrees of freedom. Positive: the candidate adds
/// information to `versus`.
///
/// `None` as for [`diebold_mariano`].
pub fn encompassing(e_candidate: &[f64], e_versus: &[f64], h: usize) -> Option<TestResult> {
    let d = differential(e_candidate, e_versus, h, |v, c| (v - c) * v)?;
    let n = d.len();
    let statistic = hln_mean_statistic(&d, h)?;
    let two_sided = student_t_two_sided(statistic.abs(), (n - 1) as f64)?;
    let p_value = if statistic >= 0.0 {
        two_sided / 2.0
    } else {
        1.0 - two_sided / 2.0
    };
    Some(TestResult { statistic, p_value })
}

/// Clark & West (2007) test for nested models, as SPEC §4 (the caller
/// ensures `versus` is nested in the candidate):
/// f_t = e_versus,t² − (e_candidate,t² − (ŷ_versus,t − ŷ_candidate,t)²);
/// statistic = f̄ / sqrt(Bartlett variance of f with h−1 lags / n);
/// p-value 1 − Φ(statistic), computed as Φ(−statistic). Positive favours
/// the candidate.
///
/// `None` when the lengths differ, n < 2, h = 0, an input is not finite, or
/// the variance is not positive.
pub fn clark_west(
    e_candidate: &[f64],
    e_versus: &[f64],
    f_candidate: &[f64],
    f_versus: &[f64],
    h: usize,
) -> Option<TestResult> {
    let n = e_candidate.len();
    if n < 2
        || h == 0
        || e_versus.len() != n
        || f_candidate.len() != n
        || f_versus.len() != n
        || !all_finite(e_candidate)
        || !all_finite(e_versus)
        || !all_finite(f_candidate)
        || !all_finite(f_versus)
    {
        return None;
    }
    let f: Vec<f64> = (0..n)
        .map(|t| {
            let adj = f_versus[t] - f_candidate[t];
            e_versus[t] * e_versus[t] - (e_candidate[t] * e_candidate[t] - adj * adj)
        })
        .collect();
    let var = bartlett_variance(&f, h);
    if !positive_finite(var) {
        return None;
    }
    let statistic = mean(&f) / (var / n as f64).sqrt();
    let p_value = Some(normal_cdf(-statistic)).filter(|p| p.is_finite())?;
    Some(TestResult { statistic, p_value })
}

/// Average ranks (1-based), ties sharing the mean of their positions.
fn average_ranks(x: &[f64]) -> Vec<f64> {
    let n = x.len();
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by(|&a, &b| x[a].total_cmp(&x[b]));
    let mut ranks = vec![0.0; n];
    let mut i = 0;
    while i < n {
        let mut j = i;
        while j + 1 < n && x[order[j + 1]] == x[order[i]] {
            j += 1;
        }
        // positions i..=j (0-based) share rank mean(i+1..=j+1)
        let r = (i + j) as f64 / 2.0 + 1.0;
        for &o in &order[i..=j] {
            ranks[o] = r;
        }
        i = j + 1;
    }
    ranks
}

/// Spearman (1904) rank correlation: the Pearson correlation of the average
/// ranks (ties get the mean of the ranks they span), as
/// `scipy.stats.spearmanr`.
///
/// `None` when the lengths differ, n < 2, a value is not finite, or either
/// series is constant.
pub fn spearman(a: &[f64], b: &[f64]) -> Option<f64> {
    let n = a.len();
    if n < 2 || b.len() != n || !all_finite(a) || !all_finite(b) {
        return None;
    }
    let ra = average_ranks(a);
    let rb = average_ranks(b);
    let ma = mean(&ra);
    let mb = mean(&rb);
    let (mut sab, mut saa, mut sbb) = (0.0, 0.0, 0.0);
    for (x, y) in ra.iter().zip(&rb) {
        sab += (x - ma) * (y - mb);
        saa += (x - ma) * (x - ma);
        sbb += (y - mb) * (y - mb);
    }
    if !positive_finite(saa) || !positive_finite(sbb) {
        return None;
    }
    Some((sab / (saa * sbb).sqrt()).clamp(-1.0, 1.0))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::score::refdata::{assert_rel, f, floats, load};
    use serde_json::Value;

    const COMPARE: &str = "compare";

    /// Reference: pairwise.json, written by generate_compare.py from a
    /// from-formula numpy implementation of SPEC §4 (numpy 2.1.3) with
    /// p-values from scipy 1.14.1 `scipy.stats.t.sf` and `scipy.stats.norm.sf`;
    /// inputs are forecast errors of naive, mean, drift and direct AR(p)
    /// models on statsmodels 0.14.4's `macrodata` (infl, realgdp, tbilrate)
    /// and `nile` data sets. Deterministic: 1e-10 relative.
    #[test]
    fn pairwise_against_reference() {
        let r = load(COMPARE, "pairwise.json");
        let cases = r["cases"].as_array().expect("cases");
        let mut fallback = 0;
        for c in cases {
            let name = c["name"].as_str().expect("name");
            let h = c["h"].as_u64().expect("h") as usize;
            let ec = floats(&c["e_candidate"]);
            let ev = floats(&c["e_versus"]);
            let fc = floats(&c["f_candidate"]);
            let fv = floats(&c["f_versus"]);
            let d: Vec<f64> = ev.iter().zip(&ec).map(|(v, c)| v * v - c * c).collect();
            let want_gamma = floats(&c["loss_diff_autocov"]);
            let gamma = autocovariances(&d, want_gamma.len().saturating_sub(1));
            for (k, want) in want_gamma.iter().enumerate() {
                assert_rel(gamma[k], *want, 1e-10, &format!("{name} autocov {k}"));
            }
            assert_rel(
                bartlett_variance(&d, h),
                f(&c["loss_diff_bartlett"]),
                1e-10,
                &format!("{name} bartlett"),
            );
            assert_rel(
                hln_factor(d.len(), h),
                f(&c["hln_factor"]),
                1e-10,
                &format!("{name} hln"),
            );
            let dm = diebold_mariano(&ec, &ev, h);
            match (&c["diebold_mariano"], dm) {
                (Value::Null, None) => {}
                (want, Some(got)) if !want.is_null() => {
                    if want["bartlett"].as_bool() == Some(true) {
                        fallback += 1;
                    }
                    assert_rel(
                        got.statistic,
                        f(&want["statistic"]),
                        1e-10,
                        &format!("{name} DM stat"),
                    );
                    assert_rel(
                        got.p_value,
                        f(&want["p_value"]),
                        1e-10,
                        &format!("{name} DM p"),
                    );
                }
                (want, got) => panic!("{name} DM: want {want}, got {got:?}"),
            }
            if !c["clark_west"].is_null() {
                let got = clark_west(&ec, &ev, &fc, &fv, h).expect("CW defined");
                assert_rel(
                    got.statistic,
                    f(&c["clark_west"]["statistic"]),
                    1e-10,
                    &format!("{name} CW stat"),
                );
                assert_rel(
                    got.p_value,
                    f(&c["clark_west"]["p_value"]),
                    1e-10,
                    &format!("{name} CW p"),
                );
            }
        }
        // The reference includes real-data cases that take the Bartlett fallback.
        assert!(fallback >= 1);
    }

    /// SPEC §4: a test with n < 2 or a non-positive variance is empty.
    #[test]
    fn degenerate_pairwise_inputs_are_empty() {
        let e = [1.0, -2.0, 0.5, 3.0];
        assert!(diebold_mariano(&e, &e, 1).is_none()); // d ≡ 0
        assert!(diebold_mariano(&e[..1], &e[..1], 1).is_none());
        assert!(diebold_mariano(&e, &e[..3], 1).is_none());
        assert!(diebold_mariano(&e, &e, 0).is_none());
        assert!(diebold_mariano(&[f64::NAN, 1.0], &[1.0, 2.0], 1).is_none());
        assert!(clark_west(&e, &e, &e, &e, 1).is_none()); // f ≡ 0
        assert!(clark_west(&e[..1], &e[..1], &e[..1], &e[..1], 1).is_none());
        assert!(autocovariances(&[], 0)[0].is_nan());
        assert_eq!(autocovariances(&e, 4)[4], 0.0);
        assert_eq!(hln_factor(4, 4), 0.0);
        assert_eq!(hln_factor(3, 4), 0.0);
    }

    /// Reference: spearman.json, scipy 1.14.1 `scipy.stats.spearmanr`
    /// (average ranks for ties) on statsmodels `macrodata` / `nile` columns,
    /// several with heavy ties. Deterministic: 1e-10 relative.
    #[test]
    fn spearman_against_scipy() {
        let r = load(COMPARE, "spearman.json");
        for c in r["cases"].as_array().expect("cases") {
            let name = c["name"].as_str().expect("name");
            let got = spearman(&floats(&c["a"]), &floats(&c["b"]));
            match (&c["rho"], got) {
                (Value::Null, None) => {}
                (want, Some(g)) if !want.is_null() => assert_rel(g, f(want), 1e-10, name),
                (want, g) => panic!("{name}: want {want}, got {g:?}"),
            }
        }
        assert!(spearman(&[1.0, 1.0, 1.0], &[1.0, 2.0, 3.0]).is_none());
        assert!(spearman(&[1.0], &[1.0]).is_none());
        assert_eq!(
            spearman(&[1.0, 2.0, 2.0, 3.0], &[1.0, 2.0, 2.0, 3.0]),
            Some(1.0)
        );
    }
}
