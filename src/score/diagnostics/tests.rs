//! Ljung–Box, ADF and MacKinnon against statsmodels 0.14.4
//! (tests/reference/diagnostics/, written by generate_diagnostics.py).

use super::fluctuation::{fluctuation_test_with, gr_critical_ratio};
use super::mackinnon::{mackinnon_crit, mackinnon_p};
use super::*;
use crate::numerics::acov::newey_west_variance;
use crate::score::refdata::{f, floats, load, rel};
use serde_json::Value;

const DIAGNOSTICS: &str = "diagnostics";

fn series(name: &str) -> Vec<f64> {
    floats(&load(DIAGNOSTICS, "series.json")["series"][name])
}

/// The reference cases with a constant, the form outturn runs (the
/// generator also writes statsmodels' 'ct' and 'n' forms).
fn with_constant(cases: &Value) -> Vec<&Value> {
    cases
        .as_array()
        .expect("cases")
        .iter()
        .filter(|c| c["regression"] == "Constant")
        .collect()
}

#[test]
fn ljung_box_matches_statsmodels() {
    let refs = load(DIAGNOSTICS, "ljung_box.json");
    let all = load(DIAGNOSTICS, "series.json");
    let cases = refs["cases"].as_array().expect("cases");
    assert!(cases.len() >= 100);
    let (mut worst_q, mut worst_p) = (0.0_f64, 0.0_f64);
    for c in cases {
        let x = floats(&all["series"][c["series"].as_str().expect("series")]);
        let lags = c["lags"].as_u64().expect("lags") as usize;
        let model_df = c["model_df"].as_u64().expect("model_df") as usize;
        let got = ljung_box(&x, lags, model_df);
        if c["p"].is_null() {
            assert!(got.is_none(), "{c}");
            continue;
        }
        let (q, p, df) = got.unwrap_or_else(|| panic!("None for {c}"));
        assert_eq!(df, c["df"].as_u64().expect("df") as usize);
        assert!(rel(q, f(&c["q"])) < 1e-12, "Q {q} vs {c}");
        // observed: Q ≤ 5e-15, p ≤ 1.3e-12 (statrs' incomplete gamma)
        assert!(rel(p, f(&c["p"])) < 1e-10, "p {p} vs {c}");
        worst_q = worst_q.max(rel(q, f(&c["q"])));
        worst_p = worst_p.max(rel(p, f(&c["p"])));
    }
    assert!(worst_q < 1e-12 && worst_p < 1e-10);
}

#[test]
fn ljung_box_edge_cases() {
    let x = [1.0, 2.0, 0.5, 3.0, 2.5, 1.0];
    assert!(ljung_box(&x, 2, 2).is_none());
    assert!(ljung_box(&x, 0, 0).is_none());
    assert!(ljung_box(&x, 6, 0).is_none());
    assert!(ljung_box(&x, 5, 0).is_some());
    assert!(ljung_box(&[], 1, 0).is_none());
    assert!(ljung_box(&[1.0], 1, 0).is_none());
    assert!(ljung_box(&[2.0; 10], 3, 0).is_none());
    assert!(ljung_box(&[1.0, f64::NAN, 2.0, 3.0], 1, 0).is_none());
    assert!(ljung_box(&[1.0, f64::INFINITY, 2.0, 3.0], 1, 0).is_none());
    assert!(ljung_box(&x, usize::MAX, 0).is_none());
}

#[test]
fn adf_matches_statsmodels() {
    let refs = load(DIAGNOSTICS, "adf.json");
    let all = load(DIAGNOSTICS, "series.json");
    let cases = with_constant(&refs["cases"]);
    assert!(cases.len() >= 30);
    let (mut worst_stat, mut worst_p, mut degenerate) = (0.0_f64, 0.0_f64, 0);
    for c in cases {
        let mut x = floats(&all["series"][c["series"].as_str().expect("series")]);
        if let Some(n) = c.get("prefix").and_then(Value::as_u64) {
            x.truncate(n as usize);
        }
        let max_lag = c["max_lag"].as_u64().map(|v| v as usize);
        let got = adf(&x, max_lag);
        if c["degenerate"].as_bool().expect("degenerate") {
            // no residual degrees of freedom: statsmodels' numbers are meaningless
            assert!(got.is_none(), "{c}");
            degenerate += 1;
            continue;
        }
        let r = got.unwrap_or_else(|| panic!("None for {c}"));
        worst_stat = worst_stat.max(rel(r.statistic, f(&c["statistic"])));
        worst_p = worst_p.max(rel(r.p_value, f(&c["p_value"])));
        assert_eq!(
            r.used_lag as u64,
            c["used_lag"].as_u64().expect("used_lag"),
            "{c}"
        );
        assert_eq!(r.nobs as u64, c["nobs"].as_u64().expect("nobs"), "{c}");
        assert!(
            rel(r.statistic, f(&c["statistic"])) < 1e-10,
            "stat {} vs {c}",
            r.statistic
        );
        assert!(
            rel(r.p_value, f(&c["p_value"])) < 1e-8,
            "p {} vs {c}",
            r.p_value
        );
        assert!(
            rel(r.ic_best, f(&c["icbest"])) < 1e-10,
            "aic {} vs {c}",
            r.ic_best
        );
        let bits: Vec<u64> = c["critical_values_bits"]
            .as_array()
            .expect("bits")
            .iter()
            .map(|b| b.as_u64().expect("u64"))
            .collect();
        let got: Vec<u64> = r.critical_values.iter().map(|v| v.to_bits()).collect();
        assert_eq!(got, bits, "critical values {:?} vs {c}", r.critical_values);
    }
    assert!(degenerate < 10);
    // observed: statistic ≤ 3e-12, p-value ≤ 6e-11 (amplified in the far left tail)
    assert!(
        worst_stat < 1e-10 && worst_p < 1e-8,
        "{worst_stat:e} {worst_p:e}"
    );
}

#[test]
fn mackinnon_p_matches_statsmodels() {
    let refs = load(DIAGNOSTICS, "mackinnon.json");
    let grid = with_constant(&refs["mackinnonp"]);
    assert!(grid.len() > 400);
    let mut worst = 0.0_f64;
    for c in grid {
        let n = c["n_series"].as_u64().expect("n") as usize;
        let want = f(&c["p"]);
        let got = mackinnon_p(f(&c["stat"]), n).unwrap_or_else(|| panic!("None for {c}"));
        let e = rel(got, want);
        worst = worst.max(e);
        assert!(e < 1e-12, "p {got} vs {c}");
    }
    // observed worst ≈ 6e-14
    assert!(worst < 1e-12);
}

#[test]
fn mackinnon_crit_matches_statsmodels_exactly() {
    let refs = load(DIAGNOSTICS, "mackinnon.json");
    let grid = with_constant(&refs["mackinnoncrit"]);
    assert_eq!(grid.len(), 12 * 10);
    for c in grid {
        let n = c["n_series"].as_u64().expect("n") as usize;
        let nobs = c["nobs"].as_u64().map(|v| v as f64);
        let got = mackinnon_crit(n, nobs).unwrap_or_else(|| panic!("None for {c}"));
        let bits: Vec<u64> = c["critical_values_bits"]
            .as_array()
            .expect("bits")
            .iter()
            .map(|b| b.as_u64().expect("u64"))
            .collect();
        let got_bits: Vec<u64> = got.iter().map(|v| v.to_bits()).collect();
        assert_eq!(got_bits, bits, "{got:?} vs {c}");
    }
    assert!(mackinnon_crit(13, None).is_none());
    assert!(mackinnon_crit(0, None).is_none());
    assert!(mackinnon_crit(1, Some(0.0)).is_none());
    assert!(mackinnon_crit(1, Some(f64::NAN)).is_none());
    assert!(mackinnon_p(-2.0, 7).is_none());
    assert!(mackinnon_p(f64::NAN, 1).is_none());
    assert_eq!(mackinnon_p(f64::NEG_INFINITY, 1), Some(0.0));
    assert_eq!(mackinnon_p(f64::INFINITY, 1), Some(1.0));
}

/// MacKinnon's published asymptotic ADF critical values with a constant,
/// −3.43, −2.86, −2.57 (1 %, 5 %, 10 %), as remembered from his tables
/// (independent of the coefficients copied from statsmodels).
#[test]
fn adf_constant_large_sample_critical_values_from_memory() {
    for nobs in [None, Some(1e7)] {
        let cv = mackinnon_crit(1, nobs).expect("cv");
        for (got, want) in cv.iter().zip([-3.43, -2.86, -2.57]) {
            assert!((got - want).abs() < 0.005, "{cv:?}");
        }
    }
}

#[test]
fn adf_edge_cases() {
    let x = series("nile");
    assert!(adf(&[], None).is_none());
    assert!(adf(&[1.0], None).is_none());
    assert!(adf(&[1.0, 2.0], None).is_none());
    assert!(adf(&[3.0; 50], None).is_none());
    let mut y = x.clone();
    y[10] = f64::NAN;
    assert!(adf(&y, None).is_none());
    // explicit maxlag above statsmodels' cap n/2 − 2
    assert!(adf(&x, Some(49)).is_none());
    assert!(adf(&x, Some(48)).is_some());
    assert!(adf(&x, Some(usize::MAX)).is_none());
    // a linear trend: differences are constant → rank-deficient designs
    let line: Vec<f64> = (0..40).map(|i| i as f64).collect();
    let _ = adf(&line, None);
    // tiny samples never panic
    for n in 0..12 {
        let _ = adf(&x[..n], None);
        let _ = adf(&x[..n], Some(1));
    }
}

/// Deterministic pseudo-random inputs (xorshift64*), including extreme
/// magnitudes and non-finite values: nothing may panic.
#[test]
fn no_panic_on_arbitrary_inputs() {
    let mut state: u64 = 0x9E37_79B9_7F4A_7C15;
    let mut next = move || {
        state ^= state >> 12;
        state ^= state << 25;
        state ^= state >> 27;
        state.wrapping_mul(0x2545_F491_4F6C_DD1D)
    };
    let specials = [
        0.0,
        -0.0,
        1e300,
        -1e300,
        1e-310,
        f64::NAN,
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::MAX,
    ];
    for _ in 0..400 {
        let n = (next() % 60) as usize;
        let x: Vec<f64> = (0..n)
            .map(|_| {
                let r = next();
                match r % 23 {
                    0 => specials[(r >> 8) as usize % specials.len()],
                    1..=3 => 1.0,
                    _ => (r >> 11) as f64 / (1u64 << 53) as f64 * 10.0 - 5.0,
                }
            })
            .collect();
        let a = (next() % 70) as usize;
        let b = (next() % 5) as usize;
        let _ = ljung_box(&x, a, b);
        let _ = adf(&x, None);
        let _ = adf(&x, Some(a));
        let _ = fluctuation_test(&x, a);
        let _ = fluctuation_test_with(&x, a, b, b < 3);
        let _ = newey_west_variance(&x, b, true);
        let _ = mackinnon_p(x.first().copied().unwrap_or(0.0), b + 1);
        let _ = mackinnon_crit(a, x.first().copied());
        let _ = gr_critical_ratio(a, n);
    }
}
