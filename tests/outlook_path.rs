//! outlook.csv holds every horizon 1..max(horizons), listed or not. A
//! property, not a reference value: an unlisted horizon's outlook (a direct
//! model estimates a regression for it only for the outlook) must be what
//! the same experiment gives when that horizon is listed. Each family's own
//! numbers are checked against outside sources elsewhere (the whole 1..24
//! path of seasonal arima against statsmodels in tests/reference_sarima.rs).

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::Command;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("outturn-outlook-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(d.join("data")).unwrap();
    for f in std::fs::read_dir(root().join("experiments/data")).unwrap() {
        let f = f.unwrap().path();
        std::fs::copy(&f, d.join("data").join(f.file_name().unwrap())).unwrap();
    }
    d
}

/// (candidate, horizon) → the row's fields after `horizon`.
type Outlook = BTreeMap<(String, usize), Vec<String>>;

fn run_demo(dir: &Path, horizons: &str) -> Outlook {
    let text = std::fs::read_to_string(root().join("experiments/water_demand.yaml")).unwrap();
    let text = text.replace("horizons: [1, 3]", &format!("horizons: {horizons}"));
    assert!(text.contains(horizons));
    std::fs::write(dir.join("exp.yaml"), text).unwrap();
    let out = Command::new(env!("CARGO_BIN_EXE_outturn"))
        .current_dir(dir)
        .args(["run", "exp.yaml", "--out", "res", "--quiet", "--no-cache"])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let mut rdr = csv::Reader::from_path(dir.join("res/outlook.csv")).unwrap();
    rdr.records()
        .map(|r| {
            let r = r.unwrap();
            let fields: Vec<String> = r.iter().skip(3).map(String::from).collect();
            ((r[1].to_string(), r[2].parse().unwrap()), fields)
        })
        .collect()
}

fn close(a: &str, b: &str) -> bool {
    match (a.parse::<f64>(), b.parse::<f64>()) {
        (Ok(x), Ok(y)) => (x - y).abs() <= 1e-9 * x.abs().max(y.abs()).max(1.0),
        _ => a == b,
    }
}

#[test]
fn unlisted_horizons_are_forecast_as_if_listed() {
    let dir = scratch("path");
    let gapped = run_demo(&dir, "[1, 3]");
    let listed = run_demo(&dir, "[1, 2, 3]");
    // Every candidate has rows at 1, 2 and 3 in both.
    assert_eq!(
        gapped.keys().collect::<Vec<_>>(),
        listed.keys().collect::<Vec<_>>()
    );
    assert!(gapped.keys().any(|(_, h)| *h == 2));
    let mut compared = 0;
    for ((candidate, h), row) in &gapped {
        // Inverse-MSE weights at an unlisted horizon come from the next
        // listed one (no errors are scored at h = 2 there).
        if candidate.starts_with("combination(") {
            continue;
        }
        let other = &listed[&(candidate.clone(), *h)];
        assert!(
            row.iter().zip(other).all(|(a, b)| close(a, b)),
            "{candidate} h={h}: {row:?} vs {other:?} when listed"
        );
        compared += 1;
    }
    // The demo's direct ar and ardl candidates are among them.
    assert!(gapped.contains_key(&("ardl_cal(1,2)".to_string(), 2)));
    assert!(compared > 90, "{compared}");
    let _ = std::fs::remove_dir_all(dir);
}
