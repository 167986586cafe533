//! The theta family from the command line: ids, refusals and warnings.
//! (Its numbers are checked against statsmodels in tests/reference_theta.rs
//! and src/models/theta/tests.rs.)

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("outturn-theta-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn outturn(args: &[&std::ffi::OsStr]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_outturn"))
        .args(args)
        .output()
        .unwrap()
}

/// A quarterly series (its values only exercise the command line).
fn quarterly(dir: &Path, with_zero: bool) {
    let mut csv = String::from("quarter,y\n");
    for i in 0..60 {
        let v = if with_zero && i == 5 {
            0.0
        } else {
            100.0 + i as f64 + [3.0, -1.0, 2.0, -4.0][i % 4]
        };
        csv.push_str(&format!("{}Q{},{v}\n", 2000 + i / 4, i % 4 + 1));
    }
    std::fs::write(dir.join("q.csv"), csv).unwrap();
}

fn experiment(dir: &Path, frequency: &str, deseasonalise: &str) -> PathBuf {
    let yaml = format!(
        "version: 1\nexperiment: th\ndata: {{file: q.csv, time: quarter, frequency: {frequency}}}\ntarget: y\ncandidates:\n  - family: naive\n  - family: theta\n    deseasonalise: {deseasonalise}\nbacktest:\n  schemes: [{{expanding: {{first_origin: 2008Q4}}}}]\n  horizons: [1, 4]\nscoring: {{metrics: [rmse], benchmark: naive}}\n"
    );
    let p = dir.join("th.yaml");
    std::fs::write(&p, yaml).unwrap();
    p
}

#[test]
fn theta_candidates_are_named_and_run() {
    let dir = scratch("run");
    quarterly(&dir, false);
    let exp = experiment(&dir, "quarterly", "[none, multiplicative]");
    let out = dir.join("res");
    let o = outturn(&[
        "run".as_ref(),
        exp.as_os_str(),
        "--out".as_ref(),
        out.as_os_str(),
        "--quiet".as_ref(),
    ]);
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let scores = std::fs::read_to_string(out.join("scores.csv")).unwrap();
    assert!(scores.contains("\ny,theta,expanding,1,all,"), "{scores}");
    assert!(
        scores.contains("\ny,theta(mult),expanding,4,all,"),
        "{scores}"
    );
    // The gap compares like with like (docs/verdict.md): theta's in-sample
    // error is one step ahead, so it has a gap at horizon 1 only.
    let mut lines = scores.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    let col = |name: &str| header.iter().position(|h| *h == name).unwrap();
    let (cand, hor, gap) = (col("candidate"), col("horizon"), col("gap"));
    let mut seen = 0;
    for line in lines {
        let f: Vec<&str> = line.split(',').collect();
        if f[cand].starts_with("theta") && f[col("period_set")] == "all" {
            seen += 1;
            match f[hor] {
                "1" => assert!(!f[gap].is_empty(), "{line}"),
                _ => assert!(f[gap].is_empty(), "{line}"),
            }
        }
    }
    assert!(seen >= 4, "{scores}");
}

#[test]
fn a_seasonal_adjustment_without_a_season_is_refused_by_check() {
    let dir = scratch("annual");
    let mut csv = String::from("quarter,y\n");
    for i in 0..40 {
        csv.push_str(&format!("{},{}\n", 1980 + i, 100 + i));
    }
    std::fs::write(dir.join("q.csv"), csv).unwrap();
    let exp = experiment(&dir, "annual", "multiplicative");
    let text = std::fs::read_to_string(&exp)
        .unwrap()
        .replace("2008Q4", "2000");
    std::fs::write(&exp, text).unwrap();
    let o = outturn(&["check".as_ref(), exp.as_ref()]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("th.yaml:7")
            && err.contains("theta(mult)")
            && err.contains("no season length"),
        "{err}"
    );
}

#[test]
fn check_warns_when_the_first_estimation_fails() {
    let dir = scratch("zero");
    quarterly(&dir, true);
    let exp = experiment(&dir, "quarterly", "multiplicative");
    let o = outturn(&["check".as_ref(), exp.as_os_str()]);
    assert_eq!(o.status.code(), Some(0));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("warning: candidate theta(mult)") && err.contains("observation 6"),
        "{err}"
    );
    // The run records the failing cell and exits 3.
    let out = dir.join("res");
    let o = outturn(&[
        "run".as_ref(),
        exp.as_os_str(),
        "--out".as_ref(),
        out.as_os_str(),
        "--quiet".as_ref(),
    ]);
    assert_eq!(
        o.status.code(),
        Some(3),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
}

#[test]
fn an_unknown_deseasonalising_is_located_with_the_nearest_value() {
    let dir = scratch("key");
    quarterly(&dir, false);
    let exp = experiment(&dir, "quarterly", "multiplicativ");
    let o = outturn(&["check".as_ref(), exp.as_os_str()]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("th.yaml:8") && err.contains("multiplicative"),
        "{err}"
    );
}
