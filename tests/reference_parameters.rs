//! parameters.csv of `outturn run` against statsmodels.
//!
//! Expected values: `tests/reference/parameters/expected_<name>.csv`, written
//! by `tests/reference/parameters/generate_parameters.py`: for the reference
//! experiments `gdp_direct` and `gdp_iterated` (data:
//! `statsmodels.datasets.macrodata`, see tests/reference_forecasts.rs), every
//! estimation of every ar and ardl cell refitted with statsmodels 0.14.4
//! `sm.OLS`; its `params` and classical `bse`, and `scale` as sigma2.
//!
//! Checks: the ar and ardl rows of parameters.csv are exactly the expected
//! rows (same target, candidate, scheme, horizon, origin and parameter,
//! in the same order), each estimate and standard error within
//! 1e-7·max(1, |ref|) of statsmodels'.

use std::path::{Path, PathBuf};
use std::process::Command;

fn here(rel: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join(rel)
}

fn run_experiment(name: &str) -> PathBuf {
    let out = std::env::temp_dir().join(format!(
        "outturn-reference-parameters-{name}-{}",
        std::process::id()
    ));
    let _ = std::fs::remove_dir_all(&out);
    let yaml = here(&format!("tests/reference/data/{name}.yaml"));
    let o = Command::new(env!("CARGO_BIN_EXE_outturn"))
        .arg("run")
        .arg(&yaml)
        .arg("--out")
        .arg(&out)
        .arg("--quiet")
        .output()
        .expect("spawn outturn");
    assert!(
        o.status.success(),
        "outturn run {name}: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    out
}

fn rows(path: &Path) -> Vec<Vec<String>> {
    let mut rdr = csv::Reader::from_path(path).unwrap_or_else(|e| panic!("{path:?}: {e}"));
    let header: Vec<String> = rdr.headers().unwrap().iter().map(String::from).collect();
    assert_eq!(
        header,
        [
            "target",
            "candidate",
            "scheme",
            "horizon",
            "origin",
            "parameter",
            "estimate",
            "std_error"
        ]
    );
    rdr.records()
        .map(|r| r.unwrap().iter().map(String::from).collect())
        .collect()
}

fn close(ours: &str, theirs: &str) -> bool {
    match (ours.parse::<f64>(), theirs.parse::<f64>()) {
        (Ok(a), Ok(b)) => (a - b).abs() <= 1e-7 * b.abs().max(1.0),
        _ => ours.is_empty() && theirs.is_empty(),
    }
}

fn check(name: &str) {
    let out = run_experiment(name);
    let expected = rows(&here(&format!(
        "tests/reference/parameters/expected_{name}.csv"
    )));
    let least_squares = |c: &str| c.starts_with("ar") || c.starts_with("ardl");
    let ours: Vec<Vec<String>> = rows(&out.join("parameters.csv"))
        .into_iter()
        .filter(|r| least_squares(&r[1]))
        .collect();
    assert_eq!(ours.len(), expected.len(), "{name}: row count");
    let mut worst: f64 = 0.0;
    for (o, e) in ours.iter().zip(&expected) {
        assert_eq!(o[..6], e[..6], "{name}: row keys");
        for col in [6, 7] {
            assert!(
                close(&o[col], &e[col]),
                "{name}: {:?} column {col}: ours {} statsmodels {}",
                &o[..6],
                o[col],
                e[col]
            );
            if let (Ok(a), Ok(b)) = (o[col].parse::<f64>(), e[col].parse::<f64>()) {
                worst = worst.max((a - b).abs() / b.abs().max(1.0));
            }
        }
    }
    eprintln!(
        "{name}: {} rows, worst relative gap {worst:.1e}",
        ours.len()
    );
    let _ = std::fs::remove_dir_all(&out);
}

#[test]
fn direct_ar_and_ardl_match_statsmodels_ols() {
    check("gdp_direct");
}

#[test]
fn iterated_ar_matches_statsmodels_ols() {
    check("gdp_iterated");
}
