//! Reading the reference values that tests/reference/ holds (tests only):
//! JSON written by the generator scripts there, with pinned versions.

use serde_json::Value;

/// tests/reference/<dir>/<name>, parsed.
pub(crate) fn load(dir: &str, name: &str) -> Value {
    let path = format!(
        "{}/tests/reference/{dir}/{name}",
        env!("CARGO_MANIFEST_DIR")
    );
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{path}: {e}"))
}

pub(crate) fn f(v: &Value) -> f64 {
    v.as_f64().expect("number")
}

pub(crate) fn floats(v: &Value) -> Vec<f64> {
    v.as_array().expect("array").iter().map(f).collect()
}

pub(crate) fn float_rows(v: &Value) -> Vec<Vec<f64>> {
    v.as_array().expect("array").iter().map(floats).collect()
}

/// |a − b| / |b| (0 when equal).
pub(crate) fn rel(a: f64, b: f64) -> f64 {
    if a == b {
        0.0
    } else {
        (a - b).abs() / b.abs().max(f64::MIN_POSITIVE)
    }
}

pub(crate) fn assert_rel(got: f64, want: f64, tol: f64, what: &str) {
    let scale = want.abs().max(1e-300);
    let ok = got == want || ((got - want).abs() / scale) <= tol || (got - want).abs() <= 1e-300;
    assert!(ok, "{what}: got {got:e}, want {want:e} (rel tol {tol:e})");
}
