//! Density scores and the forecast tests of SPEC §7.6 against
//! tests/reference/density/density.json, written by generate_density.py
//! (numpy 2.1.3, scipy 1.14.1, statsmodels 0.14.4) from forecasts of
//! naive, mean and direct AR(2) models on statsmodels' macrodata (infl,
//! tbilrate, unemp) and nile data sets; the sources of each number are
//! named at its check.

use super::calibration::{berkowitz, christoffersen};
use super::efficiency::mincer_zarnowitz;
use super::pairwise::{diebold_mariano, encompassing};
use super::refdata::{f, floats, load};
use super::{interval, log_score, pinball, quantile_score, Errors};
use crate::spec::{quantile_columns, IntervalLevel};
use serde_json::Value;

/// |got − want| ≤ tol·max(1, |want|).
fn close(got: f64, want: f64, tol: f64, what: &str) {
    assert!(
        (got - want).abs() <= tol * want.abs().max(1.0),
        "{what}: got {got:e}, want {want:e}"
    );
}

fn errors(c: &Value) -> Errors {
    let actual = floats(&c["actual"]);
    let n = actual.len();
    Errors {
        actual,
        forecast: floats(&c["forecast"]),
        is_mse: vec![None; n],
        is_var: vec![None; n],
        variance: floats(&c["sd"]).iter().map(|s| Some(s * s)).collect(),
        period: vec![0; n],
        ..Errors::default()
    }
}

fn levels() -> Vec<IntervalLevel> {
    [(0.8, "80"), (0.95, "95")]
        .map(|(level, p)| IntervalLevel {
            level,
            percent: p.into(),
        })
        .to_vec()
}

fn cases() -> Vec<Value> {
    load("density", "density.json")["cases"]
        .as_array()
        .expect("cases")
        .clone()
}

#[test]
fn pinball_loss_by_hand() {
    // Koenker & Bassett (1978): ρ_τ(u) = u(τ − 1{u < 0}), u = y − q.
    // y = 3, q = 1, τ = 0.9: 2·0.9 = 1.8; y = 1, q = 3, τ = 0.9: −2·(−0.1) = 0.2.
    assert!((pinball(3.0, 1.0, 0.9) - 1.8).abs() < 1e-15);
    assert!((pinball(1.0, 3.0, 0.9) - 0.2).abs() < 1e-15);
    assert_eq!(pinball(2.0, 2.0, 0.3), 0.0);
}

#[test]
fn quantile_and_log_scores_against_scipy() {
    // quantile_score: numpy mean pinball loss at scipy.stats.norm.ppf(τ, μ, σ);
    // log_score: −scipy.stats.norm.logpdf(y, μ, σ), averaged.
    let intervals = quantile_columns(&levels(), &[]);
    let more = quantile_columns(&levels(), &[0.05, 0.5, 0.95]);
    assert_eq!(
        more.iter().map(|q| q.name.as_str()).collect::<Vec<_>>(),
        ["q2.5", "q5", "q10", "q50", "q90", "q95", "q97.5"]
    );
    for c in cases() {
        let name = c["name"].as_str().unwrap();
        let e = errors(&c);
        let got = quantile_score(&e, &intervals).unwrap();
        close(got, f(&c["quantile_score_intervals"]), 1e-12, name);
        let got = quantile_score(&e, &more).unwrap();
        close(got, f(&c["quantile_score_more"]), 1e-12, name);
        close(log_score(&e).unwrap(), f(&c["log_score"]), 1e-12, name);
    }
}

#[test]
fn mincer_zarnowitz_against_statsmodels_hac() {
    // statsmodels OLS(actual, add_constant(forecast)).fit(cov_type='HAC',
    // cov_kwds={'maxlags': h − 1}) (Bartlett, use_correction=False):
    // params, bse, wald_test(use_f=False), t_test p-values.
    for c in cases() {
        let name = c["name"].as_str().unwrap();
        let want = &c["efficiency"];
        assert_eq!(want["use_correction"], Value::Bool(false));
        let h = c["h"].as_u64().unwrap() as usize;
        let got = mincer_zarnowitz(&floats(&c["actual"]), &floats(&c["forecast"]), h);
        let Some(got) = got else {
            panic!("{name}: no regression");
        };
        let params = floats(&want["params"]);
        let bse = floats(&want["bse"]);
        close(got.intercept, params[0], 1e-9, name);
        close(got.slope, params[1], 1e-9, name);
        close(got.se_intercept, bse[0], 1e-9, name);
        close(got.se_slope, bse[1], 1e-9, name);
        close(got.wald, f(&want["wald"]), 1e-8, name);
        close(got.p_wald, f(&want["p_wald"]), 1e-9, name);
        close(got.p_intercept, f(&want["p_intercept"]), 1e-9, name);
        close(got.p_slope, f(&want["p_slope"]), 1e-9, name);
    }
    // Forecasts that do not vary leave the slope unidentified.
    assert_eq!(mincer_zarnowitz(&[1.0, 2.0, 3.0], &[2.0; 3], 1), None);
}

#[test]
fn christoffersen_and_berkowitz_against_the_published_formulas() {
    // Christoffersen (1998) LR_uc, LR_ind, LR_cc and Berkowitz (2001) LR
    // recomputed from the papers' likelihoods in generate_density.py, the
    // AR(1) by statsmodels OLS, p-values scipy.stats.chi2.sf.
    let mut zero_misses = 0;
    for c in cases() {
        let name = c["name"].as_str().unwrap();
        let e = errors(&c);
        for want in c["calibration"].as_array().unwrap() {
            let level = f(&want["level"]);
            let misses: Vec<bool> = (0..e.len())
                .map(|i| {
                    let sd = e.variance[i].unwrap().sqrt();
                    let (lo, hi) = interval(e.forecast[i], sd, level);
                    !(lo..=hi).contains(&e.actual[i])
                })
                .collect();
            let n1 = misses.iter().filter(|m| **m).count();
            assert_eq!(n1 as u64, want["misses"].as_u64().unwrap(), "{name}");
            zero_misses += usize::from(n1 == 0);
            let got = christoffersen(&misses, level).unwrap();
            let what = format!("{name} at {level}");
            close(got.unconditional.statistic, f(&want["lr_uc"]), 1e-9, &what);
            close(got.unconditional.p_value, f(&want["p_uc"]), 1e-9, &what);
            close(got.independence.statistic, f(&want["lr_ind"]), 1e-9, &what);
            close(got.independence.p_value, f(&want["p_ind"]), 1e-9, &what);
            close(got.conditional.statistic, f(&want["lr_cc"]), 1e-9, &what);
            close(got.conditional.p_value, f(&want["p_cc"]), 1e-9, &what);
        }
        let z: Vec<f64> = (0..e.len())
            .map(|i| e.error(i) / e.variance[i].unwrap().sqrt())
            .collect();
        let got = berkowitz(&z).unwrap();
        let want = &c["berkowitz"];
        close(got.statistic, f(&want["lr"]), 1e-8, name);
        close(got.p_value, f(&want["p"]), 1e-9, name);
    }
    // The cases include intervals with no miss at all (0·ln 0 = 0).
    assert!(zero_misses > 0);
}

#[test]
fn encompassing_against_the_hln_formula() {
    // Harvey, Leybourne & Newbold (1998) modified statistic written in
    // numpy in generate_density.py, one-sided p = scipy.stats.t.sf(stat, n − 1).
    let r = load("density", "density.json");
    for c in r["encompassing"].as_array().unwrap() {
        let name = c["name"].as_str().unwrap();
        let h = c["h"].as_u64().unwrap() as usize;
        let got = encompassing(&floats(&c["e_candidate"]), &floats(&c["e_versus"]), h).unwrap();
        close(got.statistic, f(&c["statistic"]), 1e-10, name);
        close(got.p_value, f(&c["p_value"]), 1e-10, name);
    }
}

#[test]
fn a_pair_swapped_negates_the_diebold_mariano_statistic() {
    // By construction: swapping candidate and versus negates d_t, hence
    // its mean, and leaves its autocovariances: the statistic changes sign
    // bit for bit and the p-value is the same, so every entry of the
    // pairwise matrix is the single-pair test.
    let r = load("density", "density.json");
    for c in r["encompassing"].as_array().unwrap() {
        let h = c["h"].as_u64().unwrap() as usize;
        let (a, b) = (floats(&c["e_candidate"]), floats(&c["e_versus"]));
        let ab = diebold_mariano(&a, &b, h).unwrap();
        let ba = diebold_mariano(&b, &a, h).unwrap();
        assert_eq!(ab.statistic, -ba.statistic);
        assert_eq!(ab.p_value, ba.p_value);
    }
}
