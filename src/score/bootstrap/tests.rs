//! The bootstrap tests against arch 7.2.0 (tests/reference/compare/,
//! written by generate_compare.py): exact replays with arch's own index
//! vectors, and Monte Carlo comparisons within stated error.

use super::mcs::mcs_from_bootstrap;
use super::spa::{
    spa_differentials, spa_from_bootstrap, spa_variances, superior_predictive_ability_unstudentized,
};
use super::*;
use crate::numerics::acov::mean;
use crate::score::pairwise::{clark_west, diebold_mariano, spearman};
use crate::score::refdata::{assert_rel, f, float_rows, floats, load};
use serde_json::Value;

const COMPARE: &str = "compare";

/// Reference: block_length.json, arch 7.2.0
/// `arch.bootstrap.optimal_block_length(x)["stationary"]` (Politis &
/// White 2004; Patton, Politis & White 2009) on statsmodels `macrodata`
/// and `nile` series and loss differentials. Deterministic: 1e-10 relative.
#[test]
fn block_length_against_arch() {
    let r = load(COMPARE, "block_length.json");
    for c in r["cases"].as_array().expect("cases") {
        let name = c["name"].as_str().expect("name");
        assert_rel(
            optimal_block_length(&floats(&c["x"])),
            f(&c["stationary"]),
            1e-10,
            name,
        );
    }
}

fn mcs_cols(c: &Value) -> Vec<Vec<f64>> {
    float_rows(&c["losses"])
}

fn indices(v: &Value) -> Vec<Vec<usize>> {
    v.as_array()
        .expect("indices")
        .iter()
        .map(|r| {
            r.as_array()
                .expect("row")
                .iter()
                .map(|i| i.as_u64().expect("index") as usize)
                .collect()
        })
        .collect()
}

/// Exact replay: arch 7.2.0 `MCS(method="max", bootstrap="stationary")`
/// run with 200 resamples; its own bootstrap index vectors
/// (`_bootstrap_indices`) are shipped and fed to our elimination code,
/// which must give the same p-values (multiples of 1/200: 1e-12 absolute)
/// and membership. Also checks our block-length rule against arch's
/// `optimal_block_length` on the same series (1e-10 relative).
#[test]
fn mcs_replays_arch_indices_exactly() {
    let r = load(COMPARE, "mcs.json");
    for c in r["cases"].as_array().expect("cases") {
        let name = c["name"].as_str().expect("name");
        let losses = mcs_cols(c);
        let alpha = f(&c["alpha"]);
        let errors: Vec<Vec<f64>> = losses
            .iter()
            .map(|l| {
                let m = mean(l);
                l.iter().map(|v| v - m).collect()
            })
            .collect();
        let boot: Vec<Vec<f64>> = indices(&c["replay"]["indices"])
            .iter()
            .map(|idx| resample_means(&errors, idx))
            .collect();
        let (p, inc) = mcs_from_bootstrap(&losses, alpha, boot).expect("mcs");
        let want = floats(&c["replay"]["p_values"]);
        for (g, w) in p.iter().zip(&want) {
            assert!(
                (g - w).abs() <= 1e-12,
                "{name}: replay p {p:?} vs arch {want:?}"
            );
        }
        let want_inc: Vec<bool> = c["replay"]["included"]
            .as_array()
            .expect("included")
            .iter()
            .map(|b| b.as_bool().expect("bool"))
            .collect();
        assert_eq!(inc, want_inc, "{name}");
        // block length: our rule, computed with arch's optimal_block_length
        let full = model_confidence_set(&losses, alpha, 1, 0).expect("mcs");
        assert_rel(full.block_length, f(&c["block_length"]), 1e-10, name);
    }
}

/// Our resamples in the Monte Carlo comparisons (the references use
/// `mc_resamples`, 100,000).
const OURS: usize = 20_000;

/// The Monte Carlo error bound of a bootstrap p-value: two independent
/// estimates of the same probability p from B₁ and B₂ resamples differ
/// with standard error sqrt(p(1−p)(1/B₁ + 1/B₂)) (binomial proportions);
/// we allow 3 of them, at the reference's p, plus one resample's step 1/B₁
/// (so that p = 0 or 1 is not asked to be exact).
fn monte_carlo_bound(p: f64, reference_resamples: f64) -> f64 {
    let b1 = OURS as f64;
    3.0 * (p * (1.0 - p) * (1.0 / b1 + 1.0 / reference_resamples)).sqrt() + 1.0 / b1
}

/// Monte-Carlo comparison with arch 7.2.0 `MCS(method="max",
/// bootstrap="stationary")` at 100,000 resamples (numpy PCG64 draws)
/// against ours at 20,000 (ChaCha20 draws), same block length, on the
/// loss matrices of three statsmodels data sets (macrodata, nile, co2):
/// |Δp| within [`monte_carlo_bound`]. Membership must agree wherever arch's
/// p-value is farther than that from alpha.
#[test]
fn mcs_matches_arch_within_monte_carlo_error() {
    let r = load(COMPARE, "mcs.json");
    for c in r["cases"].as_array().expect("cases") {
        let name = c["name"].as_str().expect("name");
        let alpha = f(&c["alpha"]);
        let b2 = f(&c["mc_resamples"]);
        let got = model_confidence_set(&mcs_cols(c), alpha, OURS, 20261201).expect("mcs");
        let want = floats(&c["p_values"]);
        for (i, (g, w)) in got.p_values.iter().zip(&want).enumerate() {
            let bound = monte_carlo_bound(*w, b2);
            assert!(
                (g - w).abs() <= bound,
                "{name} model {i}: {g} vs arch {w} (bound {bound})"
            );
            if (w - alpha).abs() > bound {
                assert_eq!(got.included[i], *w > alpha, "{name} model {i}");
            }
        }
    }
}

#[test]
fn mcs_is_deterministic_and_rejects_degenerate_input() {
    let r = load(COMPARE, "mcs.json");
    let c = &r["cases"][0];
    let a = model_confidence_set(&mcs_cols(c), 0.1, 500, 7);
    let b = model_confidence_set(&mcs_cols(c), 0.1, 500, 7);
    assert_eq!(a, b);
    let l = mcs_cols(c);
    assert!(model_confidence_set(&l[..1], 0.1, 100, 1).is_none());
    assert!(model_confidence_set(&l, 0.1, 0, 1).is_none());
    assert!(model_confidence_set(&l, 1.5, 100, 1).is_none());
    assert!(model_confidence_set(&[l[0].clone(), l[0].clone()], 0.1, 100, 1).is_none());
    assert!(model_confidence_set(&[l[0].clone(), l[1][..5].to_vec()], 0.1, 100, 1).is_none());
}

fn spa_inputs(c: &Value) -> (Vec<f64>, Vec<Vec<f64>>, f64) {
    (
        floats(&c["benchmark_losses"]),
        float_rows(&c["model_losses"]),
        f(&c["block_length"]),
    )
}

/// Deterministic parts of the SPA against spa.json: ω̂_k² and the
/// studentized T^SPA from a from-formula numpy implementation of Hansen
/// (2005) (its ω̂_k² equal arch 7.2.0's `SPA._loss_diff_var`, asserted in
/// the generator); arch's statistic max_k d̄_k; and our default block
/// length rule (Politis & White via arch's `optimal_block_length`).
/// 1e-10 relative.
#[test]
fn spa_statistics_against_reference() {
    let r = load(COMPARE, "spa.json");
    for c in r["cases"].as_array().expect("cases") {
        let name = c["name"].as_str().expect("name");
        let (bench, models, block) = spa_inputs(c);
        let d = spa_differentials(&bench, &models).expect("d");
        assert_eq!(d.len(), models.len());
        for (g, w) in spa_variances(&d, block).iter().zip(floats(&c["omega2"])) {
            assert_rel(*g, w, 1e-10, &format!("{name} omega2"));
        }
        let s = superior_predictive_ability(&bench, &models, 1, 0, None).expect("spa");
        assert_rel(s.block_length, block, 1e-10, &format!("{name} block"));
        // The model attaining the studentised maximum (numpy argmax of
        // √n·d̄_k/ω̂_k), which need not have the lowest mean loss.
        assert_eq!(
            s.driver,
            c["driver"].as_u64().expect("driver") as usize,
            "{name} driver"
        );
        assert_rel(
            s.statistic,
            f(&c["studentized"]["statistic"]),
            1e-10,
            &format!("{name} T"),
        );
        let u = superior_predictive_ability_unstudentized(&bench, &models, 1, 0, Some(block))
            .expect("spa");
        assert_rel(
            u.statistic,
            f(&c["arch"]["statistic"]),
            1e-10,
            &format!("{name} arch T"),
        );
    }
}

/// Exact replay with the stationary-bootstrap index vectors that arch
/// 7.2.0's `StationaryBootstrap(block, ..., seed)` draws (200 resamples):
/// the unstudentized variant must equal `arch.bootstrap.SPA(...).pvalues`
/// and the studentized one the from-formula Hansen (2005) numpy code,
/// exactly (1e-12 absolute on multiples of 1/200).
#[test]
fn spa_replays_arch_indices_exactly() {
    let r = load(COMPARE, "spa.json");
    for c in r["cases"].as_array().expect("cases") {
        let name = c["name"].as_str().expect("name");
        let (bench, models, block) = spa_inputs(c);
        let d = spa_differentials(&bench, &models).expect("d");
        let boot: Vec<Vec<f64>> = indices(&c["replay"]["indices"])
            .iter()
            .map(|idx| resample_means(&d, idx))
            .collect();
        for (studentize, key) in [(true, "studentized"), (false, "arch")] {
            let got = spa_from_bootstrap(&d, block, &boot, studentize).expect("spa");
            let want = &c["replay"][key];
            for (g, w) in [
                (got.p_lower, &want["lower"]),
                (got.p_consistent, &want["consistent"]),
                (got.p_upper, &want["upper"]),
            ] {
                assert!((g - f(w)).abs() <= 1e-12, "{name} {key}: {got:?} vs {want}");
            }
        }
    }
}

/// Monte-Carlo comparison at 20,000 of our resamples against 100,000 of
/// the reference (arch 7.2.0 `SPA` for the unstudentized variant; the
/// from-formula Hansen (2005) studentised code on arch's
/// `StationaryBootstrap` draws for ours), same block length, on loss
/// matrices of macrodata, nile and co2: the consistent, lower and upper
/// p-values within [`monte_carlo_bound`].
#[test]
fn spa_matches_reference_within_monte_carlo_error() {
    let r = load(COMPARE, "spa.json");
    for c in r["cases"].as_array().expect("cases") {
        let name = c["name"].as_str().expect("name");
        let (bench, models, block) = spa_inputs(c);
        let b2 = f(&c["mc_resamples"]);
        let s =
            superior_predictive_ability(&bench, &models, OURS, 20261201, Some(block)).expect("spa");
        let u =
            superior_predictive_ability_unstudentized(&bench, &models, OURS, 20261201, Some(block))
                .expect("spa");
        for (got, key) in [(s, "studentized"), (u, "arch")] {
            let want = &c[key];
            for (g, w) in [
                (got.p_lower, &want["lower"]),
                (got.p_consistent, &want["consistent"]),
                (got.p_upper, &want["upper"]),
            ] {
                let bound = monte_carlo_bound(f(w), b2);
                assert!(
                    (g - f(w)).abs() <= bound,
                    "{name} {key}: {got:?} vs {want} (bound {bound})"
                );
            }
        }
    }
}

#[test]
fn spa_degenerate_inputs() {
    let b = [1.0, 2.0, 3.0, 4.0];
    assert!(superior_predictive_ability(&b, &[b.to_vec()], 10, 1, None).is_none());
    assert!(superior_predictive_ability(&b[..2], &[vec![0.0, 1.0]], 10, 1, None).is_none());
    assert!(superior_predictive_ability(&b, &[vec![0.0; 3]], 10, 1, None).is_none());
    assert!(superior_predictive_ability(&b, &[vec![0.0, 1.0, 0.5, 2.0]], 0, 1, None).is_none());
    assert!(
        superior_predictive_ability(&b, &[vec![0.0, 1.0, 0.5, 2.0]], 10, 1, Some(0.5)).is_none()
    );
}

/// Short samples must not panic (the SPEC lets n be as small as 2).
#[test]
fn short_samples_do_not_panic() {
    let r = load(COMPARE, "block_length.json");
    let x = floats(&r["cases"][3]["x"]); // nile volume
    for n in 0..40 {
        let b = optimal_block_length(&x[..n]);
        assert!(b.is_nan() || b > 0.0, "n = {n}: {b}");
        let cols = vec![x[..n].to_vec(), x[1..=n].to_vec(), x[2..n + 2].to_vec()];
        let _ = model_confidence_set(&cols, 0.1, 50, 3);
        let _ = superior_predictive_ability(&cols[0], &cols[1..], 50, 3, None);
        let _ = superior_predictive_ability(&cols[0], &cols[1..], 50, 3, Some(1e9));
        let _ = diebold_mariano(&cols[0], &cols[1], 5);
        let _ = clark_west(&cols[0], &cols[1], &cols[2], &cols[1], 5);
        let _ = spearman(&cols[0], &cols[1]);
    }
}

#[test]
fn stationary_indices_are_in_range_and_reproducible() {
    let mut a = ChaCha20Rng::seed_from_u64(42);
    let mut b = ChaCha20Rng::seed_from_u64(42);
    let mut x = vec![0usize; 37];
    let mut y = vec![0usize; 37];
    for _ in 0..100 {
        stationary_indices(&mut a, 0.2, &mut x);
        stationary_indices(&mut b, 0.2, &mut y);
        assert_eq!(x, y);
        assert!(x.iter().all(|&i| i < 37));
    }
    // p = 1/b with b = 1: every index a fresh draw; huge b: one block.
    let mut rng = ChaCha20Rng::seed_from_u64(1);
    stationary_indices(&mut rng, 1e-300, &mut x);
    assert!(x.windows(2).all(|w| w[1] == (w[0] + 1) % 37));
}
