//! `smoothing` with `select: aicc` from the command line: one candidate,
//! the chosen form written per forecast, and the grammar's refusals. (The
//! choice itself is checked against statsmodels in
//! src/models/smoothing/select_tests.rs.)

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("outturn-smsel-{name}-{}", std::process::id()));
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

fn experiment(dir: &Path, select: &str) -> PathBuf {
    let mut csv = String::from("quarter,y\n");
    for i in 0..60 {
        let v = 100.0 + i as f64 + [3.0, -1.0, 2.0, -4.0][i % 4] + ((i * 7) % 5) as f64;
        csv.push_str(&format!("{}Q{},{v}\n", 2000 + i / 4, i % 4 + 1));
    }
    std::fs::write(dir.join("q.csv"), csv).unwrap();
    let yaml = format!(
        "version: 1\nexperiment: sel\ndata: {{file: q.csv, time: quarter, frequency: quarterly}}\ntarget: y\ncandidates:\n  - family: naive\n  - family: smoothing\n    select: {select}\n    trend: [none, additive]\n    season: [none, additive]\nbacktest:\n  schemes: [{{expanding: {{first_origin: 2008Q4}}}}]\n  horizons: [1]\nscoring: {{metrics: [rmse], benchmark: naive}}\n"
    );
    let p = dir.join("sel.yaml");
    std::fs::write(&p, yaml).unwrap();
    p
}

#[test]
fn one_candidate_writes_the_form_it_chose_at_every_origin() {
    let dir = scratch("run");
    let exp = experiment(&dir, "aicc");
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
    let forecasts = std::fs::read_to_string(out.join("forecasts.csv")).unwrap();
    let rows: Vec<&str> = forecasts
        .lines()
        .filter(|l| l.contains(",smoothing(aicc),"))
        .collect();
    assert_eq!(
        rows.len(),
        24,
        "origins 2008Q4 .. 2014Q3 (positions 36 .. 59)"
    );
    let forms = [
        "\"none,none\"",
        "\"none,additive\"",
        "\"additive,none\"",
        "\"additive,additive\"",
    ];
    for r in &rows {
        assert!(forms.iter().any(|f| r.ends_with(f)), "{r}");
    }
}

#[test]
fn select_takes_aicc_only_and_says_where() {
    let dir = scratch("bad");
    let exp = experiment(&dir, "bic");
    let o = outturn(&["check".as_ref(), exp.as_os_str()]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("sel.yaml:8") && err.contains("aicc"), "{err}");
}
