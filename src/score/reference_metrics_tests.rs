//! Interval and probabilistic scores, normal quantiles and ψ-weights against
//! outside sources.
//!
//! Sources, named again beside every check:
//! - interval score: Gneiting & Raftery (2007), "Strictly proper scoring
//!   rules, prediction, and estimation", JASA 102, eq. (43):
//!   S(l, u; y) = (u − l) + (2/α)(l − y)·1{y < l} + (2/α)(y − u)·1{y > u},
//!   for the central (1 − α) interval; cases computed by hand below.
//! - Gaussian CRPS: the definition CRPS(F, y) = ∫ (F(x) − 1{x ≥ y})² dx
//!   (Gneiting & Raftery 2007, eq. 20), integrated numerically in this file,
//!   and the known value CRPS(N(0,1), 0) = 2φ(0) − 1/√π.
//! - normal quantiles: scipy 1.14.1 `scipy.stats.norm.ppf`, recorded by
//!   `tests/reference/select/generate_select.py` in `normal_quantiles.json`.
//! - ψ-weights: statsmodels 0.14.4 `ArmaProcess(np.r_[1, -phi], [1]).arma2ma(count)`,
//!   recorded by the same generator in `psi_weights.json`.

use crate::models::linear::psi_weights;
use crate::numerics::dist::normal_quantile;
use crate::score::{coverage, crps, crps_gaussian, interval, interval_score, Errors};
use std::path::PathBuf;

fn reference_file(name: &str) -> serde_json::Value {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/reference/select")
        .join(name);
    let text =
        std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("read {}: {e}", path.display()));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("parse {}: {e}", path.display()))
}

/// Gaussian forecasts (mean, standard deviation) with their outturns.
fn errors(cases: &[(f64, f64, f64)]) -> Errors {
    Errors {
        actual: cases.iter().map(|c| c.2).collect(),
        forecast: cases.iter().map(|c| c.0).collect(),
        is_mse: vec![None; cases.len()],
        is_var: vec![None; cases.len()],
        variance: cases.iter().map(|c| Some(c.1 * c.1)).collect(),
        period: (0..cases.len() as i64).collect(),
        ..Errors::default()
    }
}

fn close(ours: f64, expected: f64, rel: f64) -> bool {
    (ours - expected).abs() <= rel * expected.abs().max(1.0)
}

#[track_caller]
fn assert_close(ours: f64, expected: f64, rel: f64, what: &str) {
    assert!(
        close(ours, expected, rel),
        "{what}: ours {ours:.17}, expected {expected:.17}, diff {:e}",
        ours - expected
    );
}

// z_{0.9} = 1.2815515655446004 and z_{0.75} = 0.6744897501960817:
// scipy.stats.norm.ppf(0.9) and norm.ppf(0.75), in normal_quantiles.json
// (`normal_quantiles_match_scipy` checks that file against these constants).
const Z90: f64 = 1.2815515655446004;
const Z75: f64 = 0.6744897501960817;

#[test]
fn interval_score_inside_below_above() {
    // Source: Gneiting & Raftery (2007), eq. 43; hand computations.
    //
    // (a) inside: N(0, 1), level 0.8 (α = 0.2), y = 0.5.
    //     [l, u] = ±z_{0.9} = ±1.2815515655446004; y inside, so
    //     S = u − l = 2·1.2815515655446004 = 2.5631031310892008.
    let s = interval_score(&errors(&[(0.0, 1.0, 0.5)]), 0.8).unwrap();
    assert_close(
        s,
        2.5631031310892008,
        1e-12,
        "interval score, inside (G&R 2007 eq. 43, by hand)",
    );

    // (b) below: N(0, 1), level 0.8, y = −2.
    //     S = 2z + (2/0.2)(l − y) = 2z + 10(−z + 2) = 20 − 8z
    //       = 20 − 10.252412524356803 = 9.747587475643197.
    let s = interval_score(&errors(&[(0.0, 1.0, -2.0)]), 0.8).unwrap();
    assert_close(
        s,
        9.747587475643197,
        1e-12,
        "interval score, below (G&R 2007 eq. 43, by hand)",
    );

    // (c) above: N(1, 2²), level 0.5 (α = 0.5), y = 3.
    //     [l, u] = 1 ± 2·z_{0.75} = 1 ± 1.3489795003921634, u = 2.3489795003921634;
    //     S = (u − l) + (2/0.5)(y − u) = 2.6979590007843268 + 4·0.6510204996078366
    //       = 2.6979590007843268 + 2.6040819984313464 = 5.302040999215673.
    let s = interval_score(&errors(&[(1.0, 2.0, 3.0)]), 0.5).unwrap();
    assert_close(
        s,
        5.302040999215673,
        1e-12,
        "interval score, above (G&R 2007 eq. 43, by hand)",
    );

    // (d) the mean over forecasts: (a) and (b) together at level 0.8:
    //     (2.5631031310892008 + 9.747587475643197)/2 = 6.155345303366199.
    let s = interval_score(&errors(&[(0.0, 1.0, 0.5), (0.0, 1.0, -2.0)]), 0.8).unwrap();
    assert_close(s, 6.155345303366199, 1e-12, "mean interval score (by hand)");

    // No variance, no interval: undefined.
    let mut e = errors(&[(0.0, 1.0, 0.5)]);
    e.variance[0] = None;
    assert_eq!(interval_score(&e, 0.8), None);
}

#[test]
fn coverage_hand_case() {
    // Hand computation, level 0.8, N(0, 1) forecasts so [l, u] = ±1.2816
    // (z_{0.9}, scipy): outturns 0.0, 1.0, −1.2, 1.5, −3.0, 2.0 shifted by
    // forecast means 0, 0, 0, 0, 0, 1 → inside: 0.0, 1.0, −1.2 and 2.0 − 1 = 1.0;
    // outside: 1.5, −3.0. Coverage = 4/6.
    let e = errors(&[
        (0.0, 1.0, 0.0),
        (0.0, 1.0, 1.0),
        (0.0, 1.0, -1.2),
        (0.0, 1.0, 1.5),
        (0.0, 1.0, -3.0),
        (1.0, 1.0, 2.0),
    ]);
    let c = coverage(&e, 0.8).unwrap();
    assert_close(c, 4.0 / 6.0, 1e-15, "coverage (by hand: 4 of 6 inside)");
    // Wider: level 0.95 (z = 1.959963984540054, scipy) also takes 1.5 → 5/6.
    let c = coverage(&e, 0.95).unwrap();
    assert_close(
        c,
        5.0 / 6.0,
        1e-15,
        "coverage at 0.95 (by hand: 5 of 6 inside)",
    );
    // Standard deviation 2 on every forecast: ±2.563 at 0.8, −3.0 still outside → 5/6.
    let mut wide = e.clone();
    wide.variance = vec![Some(4.0); 6];
    let c = coverage(&wide, 0.8).unwrap();
    assert_close(
        c,
        5.0 / 6.0,
        1e-15,
        "coverage with sd 2 (by hand: 5 of 6 inside)",
    );
    assert_eq!(
        coverage(&Errors::default(), 0.8),
        None,
        "no forecasts, no coverage"
    );
}

#[test]
fn crps_standard_normal_at_zero() {
    // Known value: CRPS(N(0,1), 0) = 2φ(0) − 1/√π = 2/√(2π) − 1/√π
    // = 0.7978845608028654 − 0.5641895835477563 = 0.2336949772551091
    // (≈ 0.23369497725; Gneiting & Raftery 2007 eq. 21 at z = 0).
    let v = crps_gaussian(0.0, 1.0, 0.0);
    assert_close(v, 0.2336949772551091, 1e-14, "CRPS(N(0,1), 0) known value");
    let by_constants =
        2.0 / (2.0 * std::f64::consts::PI).sqrt() - 1.0 / std::f64::consts::PI.sqrt();
    assert_close(v, by_constants, 1e-14, "CRPS(N(0,1), 0) = 2φ(0) − 1/√π");
}

/// CRPS by its definition ∫ (F(x) − 1{x ≥ y})² dx, F the N(μ, σ²) CDF,
/// trapezoid rule on [μ − 14σ, y] and [y, μ + 14σ] (split at the jump, each
/// piece with `steps` intervals). Beyond ±14σ the integrand is below 1e-40.
fn crps_by_integration(mu: f64, sd: f64, y: f64, steps: usize) -> f64 {
    use statrs::distribution::{ContinuousCDF, Normal};
    let n = Normal::new(mu, sd).unwrap();
    let a = (mu - 14.0 * sd).min(y);
    let b = (mu + 14.0 * sd).max(y);
    let trapezoid = |lo: f64, hi: f64, f: &dyn Fn(f64) -> f64| -> f64 {
        if hi <= lo {
            return 0.0;
        }
        let h = (hi - lo) / steps as f64;
        let mut s = 0.5 * (f(lo) + f(hi));
        for i in 1..steps {
            s += f(lo + h * i as f64);
        }
        s * h
    };
    // below y: F(x)²; above y: (1 − F(x))² = Φ(−z)², via the survival function.
    trapezoid(a, y, &|x| n.cdf(x).powi(2)) + trapezoid(y, b, &|x| n.sf(x).powi(2))
}

#[test]
fn crps_closed_form_matches_numerical_integration() {
    // Source: the definition of CRPS (Gneiting & Raftery 2007, eq. 20),
    // integrated in this test; the closed form (eq. 21) must agree.
    let cases = [
        (0.0, 1.0, 0.0),
        (0.0, 1.0, 1.3),
        (2.5, 0.4, 1.7),
        (-1.0, 3.0, 4.0),
        (10.0, 0.05, 10.02),
        (0.3, 2.0, -7.5),
    ];
    for &(mu, sd, y) in &cases {
        let ours = crps_gaussian(mu, sd, y);
        let numeric = crps_by_integration(mu, sd, y, 400_000);
        assert!(
            (ours - numeric).abs() <= 1e-8 * sd.max(numeric),
            "CRPS N({mu}, {sd}²) at {y}: closed form {ours:.15}, integral of the definition {numeric:.15}"
        );
    }
}

#[test]
fn crps_mean_and_degenerate_forecast() {
    // The mean CRPS is the mean of the per-forecast values (definition of a mean score).
    let cases = [(0.0, 1.0, 0.0), (2.5, 0.4, 1.7), (-1.0, 3.0, 4.0)];
    let e = errors(&cases);
    let expected = cases
        .iter()
        .map(|&(m, s, y)| crps_by_integration(m, s, y, 400_000))
        .sum::<f64>()
        / 3.0;
    assert_close(
        crps(&e).unwrap(),
        expected,
        1e-8,
        "mean CRPS against the integrated definition",
    );
    // σ = 0: the forecast is a point mass and the definition gives
    // ∫ (1{x ≥ μ} − 1{x ≥ y})² dx = |y − μ| (Gneiting & Raftery 2007, §4.2:
    // the CRPS generalises the absolute error); by hand |1.25 − 3| = 1.75.
    assert_close(
        crps_gaussian(3.0, 0.0, 1.25),
        1.75,
        1e-15,
        "CRPS of a point forecast = |y − μ|",
    );
}

#[test]
fn normal_quantiles_match_scipy() {
    // Source: scipy 1.14.1 scipy.stats.norm.ppf (normal_quantiles.json, generate_select.py).
    let json = reference_file("normal_quantiles.json");
    let cases = json["cases"].as_array().expect("cases");
    assert!(cases.len() >= 5);
    for c in cases {
        let p = c["p"].as_f64().unwrap();
        let q = c["quantile"].as_f64().unwrap();
        assert_close(
            normal_quantile(p),
            q,
            1e-13,
            &format!("normal_quantile({p}) vs scipy norm.ppf"),
        );
    }
    // The 97.5% quantile quoted everywhere: 1.959963984540054 (scipy norm.ppf(0.975)).
    assert_close(
        normal_quantile(0.975),
        1.959963984540054,
        1e-14,
        "z_0.975 vs scipy",
    );
    // The hand computations above use z_{0.9} and z_{0.75} from the same source.
    let from_file = |p: f64| {
        cases
            .iter()
            .find(|c| c["p"].as_f64() == Some(p))
            .expect("p in file")["quantile"]
            .as_f64()
            .unwrap()
    };
    assert_eq!(from_file(0.9), Z90, "Z90 constant is scipy's norm.ppf(0.9)");
    assert_eq!(
        from_file(0.75),
        Z75,
        "Z75 constant is scipy's norm.ppf(0.75)"
    );
}

#[test]
fn interval_is_symmetric_with_the_normal_quantile() {
    // SPEC §4: forecast ± z_{(1+c)/2}·σ̂_h; z_{0.975} = 1.959963984540054 (scipy norm.ppf).
    let (lo, hi) = interval(0.0, 1.0, 0.95);
    assert_close(hi, 1.959963984540054, 1e-14, "upper 95% of N(0,1) vs scipy");
    assert_close(
        lo,
        -1.959963984540054,
        1e-14,
        "lower 95% of N(0,1) vs scipy",
    );
    for &(f, sd, c) in &[(3.2, 0.7, 0.8), (-120.0, 15.0, 0.95), (0.001, 1e-3, 0.5)] {
        let (lo, hi) = interval(f, sd, c);
        let z = normal_quantile((1.0 + c) / 2.0);
        assert_close(
            (lo + hi) / 2.0,
            f,
            1e-14,
            "interval midpoint is the forecast",
        );
        assert_close(hi - f, z * sd, 1e-14, "upper half-width z·σ");
        assert_close(f - lo, z * sd, 1e-14, "lower half-width z·σ");
    }
    // z_{0.9}·2 at level 0.8 around 5: 5 ± 2.5631031310892008 (scipy norm.ppf(0.9), by hand).
    let (lo, hi) = interval(5.0, 2.0, 0.8);
    assert_close(lo, 5.0 - 2.0 * Z90, 1e-14, "lower 80%");
    assert_close(hi, 5.0 + 2.0 * Z90, 1e-14, "upper 80%");
}

#[test]
fn psi_weights_match_statsmodels() {
    // Source: statsmodels 0.14.4 ArmaProcess(np.r_[1, -phi], [1]).arma2ma(count)
    // (psi_weights.json, generate_select.py).
    let json = reference_file("psi_weights.json");
    let cases = json["cases"].as_array().expect("cases");
    assert!(cases.len() >= 4);
    for c in cases {
        let phi: Vec<f64> = c["phi"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        let count = c["count"].as_u64().unwrap() as usize;
        let expected: Vec<f64> = c["psi"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        let ours = psi_weights(&phi, count);
        assert_eq!(ours.len(), expected.len(), "psi count for phi {phi:?}");
        for (j, (a, b)) in ours.iter().zip(&expected).enumerate() {
            assert!(
                (a - b).abs() <= 1e-12 * b.abs().max(1.0),
                "psi_{j} for phi {phi:?}: ours {a}, statsmodels arma2ma {b}"
            );
        }
    }
    // By hand, AR(1) φ = 0.5: ψ_j = 0.5^j → 1, 0.5, 0.25, 0.125.
    assert_eq!(psi_weights(&[0.5], 4), vec![1.0, 0.5, 0.25, 0.125]);
}
