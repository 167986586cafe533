//! The fluctuation test against a from-formula numpy implementation
//! (tests/reference/diagnostics/fluctuation.json), and the recalled critical
//! values against a simulation of the test's limiting null distribution.

use super::fluctuation::{fluctuation_test_with, gr_critical_ratio, GR_K05, GR_K10};
use super::*;
use crate::numerics::acov::{newey_west_lags, newey_west_variance};
use crate::score::refdata::{f, floats, load, rel};

const DIAGNOSTICS: &str = "diagnostics";

/// The table's own arithmetic: the tabulated μ are returned exactly on exact
/// ratios, the interpolation is linear in μ (halfway between 0.3 and 0.4),
/// the values fall with μ, and μ outside [0.1, 0.9] has none (by
/// construction of `gr_critical_ratio`).
#[test]
fn critical_values_interpolate_the_table() {
    for i in 0..9 {
        assert_eq!(gr_critical_ratio(i + 1, 10), Some((GR_K05[i], GR_K10[i])));
        assert_eq!(
            gr_critical_ratio(3 * (i + 1), 30),
            Some((GR_K05[i], GR_K10[i]))
        );
    }
    let (k5, k10) = gr_critical_ratio(7, 20).expect("cv");
    assert!((k5 - (GR_K05[2] + GR_K05[3]) / 2.0).abs() < 1e-12);
    assert!((k10 - (GR_K10[2] + GR_K10[3]) / 2.0).abs() < 1e-12);
    for w in GR_K05.windows(2).chain(GR_K10.windows(2)) {
        assert!(w[1] < w[0]);
    }
    assert!(gr_critical_ratio(1, 20).is_none());
    assert!(gr_critical_ratio(19, 20).is_none());
    assert!(gr_critical_ratio(0, 0).is_none());
}

/// Draws of sup_{r ∈ [μ, 1]} |B(r) − B(r − μ)| / √μ for μ = 0.1, …, 0.9, B a
/// standard Brownian motion on a grid of `steps` equal steps (partial sums
/// of N(0, 1/steps) by Box–Muller from a seeded ChaCha20 stream): the null
/// limit of the fluctuation statistic that Giacomini & Rossi (2010) derive
/// and tabulate. `draws[j]` holds the `reps` suprema for μ = (j + 1)/10,
/// sorted.
fn simulate_null_limit(steps: usize, reps: usize, seed: u64) -> Vec<Vec<f64>> {
    use rand_chacha::ChaCha20Rng;
    use rand_core::{RngCore, SeedableRng};
    assert_eq!(steps % 10, 0, "μ·steps must be whole");
    let mut rng = ChaCha20Rng::seed_from_u64(seed);
    // uniform in (0, 1]
    let mut uniform = || ((rng.next_u64() >> 11) + 1) as f64 / (1u64 << 53) as f64;
    let sd = (1.0 / steps as f64).sqrt();
    let mut b = vec![0.0; steps + 1];
    let mut draws: Vec<Vec<f64>> = (0..9).map(|_| Vec::with_capacity(reps)).collect();
    for _ in 0..reps {
        for i in (1..=steps).step_by(2) {
            let radius = (-2.0 * uniform().ln()).sqrt() * sd;
            let angle = 2.0 * std::f64::consts::PI * uniform();
            b[i] = b[i - 1] + radius * angle.cos();
            if i < steps {
                b[i + 1] = b[i] + radius * angle.sin();
            }
        }
        for (j, out) in draws.iter_mut().enumerate() {
            let mu = (j + 1) as f64 / 10.0;
            let m = steps * (j + 1) / 10;
            let sup = (m..=steps)
                .map(|k| (b[k] - b[k - m]).abs())
                .fold(0.0, f64::max);
            out.push(sup / mu.sqrt());
        }
    }
    for d in &mut draws {
        d.sort_by(f64::total_cmp);
    }
    draws
}

/// Checks GR_K05 and GR_K10 against [`simulate_null_limit`] on `steps` grid
/// steps with `reps` draws, with two allowances stated here:
///
/// - Monte Carlo error: a distribution-free interval for the p-quantile,
///   the order statistics at ranks R·p ∓ 4·√(R·p·(1 − p)) (the binomial
///   count below the quantile, ±4 standard deviations).
/// - The downward bias of a discrete grid: the supremum over grid points
///   falls short of the continuous one. By the continuity correction of
///   Broadie, Glasserman & Kou (1997) the quantile of the discretely
///   monitored supremum is the continuous one less β·σ·√Δ, β =
///   −ζ(½)/√(2π) ≈ 0.5826, σ²Δ = 2Δ/μ the variance of one step of
///   B(r) − B(r − μ) scaled by 1/√μ. The continuous limit is therefore (to
///   that first order) at most the simulated upper bound plus
///   b(steps) = β·√(2/(steps·μ)); and
///   since a published table is itself a simulation on some grid (its grid
///   is not in what we recall), the table may lie below the limit by up to
///   b(250), the bias of a grid as coarse as 250 steps.
///
/// So every tabulated k must satisfy
/// q_lo + b(steps) − b(250) ≤ k ≤ q_hi + b(steps).
fn check_table_against_the_limit(steps: usize, reps: usize, seed: u64) {
    const BETA: f64 = 0.5826;
    const COARSEST_GRID: f64 = 250.0;
    let draws = simulate_null_limit(steps, reps, seed);
    let r = reps as f64;
    let mut failures = Vec::new();
    for (j, sorted) in draws.iter().enumerate() {
        let mu = (j + 1) as f64 / 10.0;
        let bias = |grid: f64| BETA * (2.0 / (grid * mu)).sqrt();
        for (p, table) in [(0.95, GR_K05), (0.90, GR_K10)] {
            let half = 4.0 * (r * p * (1.0 - p)).sqrt();
            let lo_rank = (r * p - half).floor() as usize; // 1-based
            let hi_rank = ((r * p + half).ceil() as usize).min(reps);
            let lower = sorted[lo_rank - 1] + bias(steps as f64) - bias(COARSEST_GRID);
            let upper = sorted[hi_rank - 1] + bias(steps as f64);
            let k = table[j];
            eprintln!(
                "μ = {mu:.1}, {:.0} %: {lower:.3} ≤ {k} ≤ {upper:.3}",
                100.0 * p
            );
            if !(lower <= k && k <= upper) {
                failures.push(format!(
                    "μ = {mu:.1}, p = {p}: {k} outside [{lower}, {upper}]"
                ));
            }
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

/// Giacomini & Rossi (2010), Table 1 (recalled digits) against a seeded
/// simulation of the limit on 1000 grid steps, 4000 draws: fast enough for
/// unoptimised builds. See [`check_table_against_the_limit`] for the
/// tolerances.
#[test]
fn table_lies_within_the_simulated_null_limit() {
    check_table_against_the_limit(1000, 4000, 20100401);
}

/// The same on 2000 steps with 20 000 draws: tighter Monte Carlo bounds, a
/// few seconds optimised. `cargo test --release -- --ignored null_limit`.
#[test]
#[ignore]
fn table_lies_within_the_simulated_null_limit_fine() {
    check_table_against_the_limit(2000, 20_000, 20100402);
}

#[test]
fn fluctuation_matches_numpy_formula() {
    let refs = load(DIAGNOSTICS, "fluctuation.json");
    let d = floats(&refs["d"]);
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
        let want = floats(&c["path"]);
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
