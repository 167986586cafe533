//! The fluctuation test against a from-formula numpy implementation
//! (tests/reference/diagnostics/fluctuation.json).

use super::fluctuation::{fluctuation_test_with, gr_critical_ratio, GR_K05, GR_K10};
use super::*;
use crate::numerics::acov::{newey_west_lags, newey_west_variance};
use crate::score::refdata::{f, floats, load, rel};

const DIAGNOSTICS: &str = "diagnostics";

#[test]
fn fluctuation_table_as_transcribed() {
    let refs = load(DIAGNOSTICS, "fluctuation.json");
    let t = &refs["table"];
    assert_eq!(floats(&t["k_05"]), GR_K05.to_vec());
    assert_eq!(floats(&t["k_10"]), GR_K10.to_vec());
    for i in 0..floats(&t["mu"]).len() {
        assert_eq!(gr_critical_ratio(i + 1, 10), Some((GR_K05[i], GR_K10[i])));
        assert_eq!(
            gr_critical_ratio(3 * (i + 1), 30),
            Some((GR_K05[i], GR_K10[i]))
        );
    }
    // the recalled table against the generator's seeded Monte Carlo of the
    // null limit (500-point grid, 20 000 draws): within 0.06 everywhere
    let mc = &refs["monte_carlo_check"];
    for (table, sim) in [(GR_K05, floats(&mc["k_05"])), (GR_K10, floats(&mc["k_10"]))] {
        assert_eq!(sim.len(), 9);
        for (a, b) in table.iter().zip(&sim) {
            assert!((a - b).abs() < 0.06, "{a} vs simulated {b}");
        }
    }
    // interpolation halfway between 0.3 and 0.4
    let (k5, k10) = gr_critical_ratio(7, 20).expect("cv");
    assert!((k5 - (3.012 + 2.890) / 2.0).abs() < 1e-12);
    assert!((k10 - (2.766 + 2.626) / 2.0).abs() < 1e-12);
    // the critical values fall with μ
    for w in GR_K05.windows(2).chain(GR_K10.windows(2)) {
        assert!(w[1] < w[0]);
    }
    assert!(gr_critical_ratio(1, 20).is_none());
    assert!(gr_critical_ratio(19, 20).is_none());
    assert!(gr_critical_ratio(0, 0).is_none());
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
