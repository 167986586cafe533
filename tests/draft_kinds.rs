//! `outturn draft` proposes an experiment that `outturn check` accepts, and
//! `outturn kinds` lists every family, metric and test named in SPEC §2–§4.
//! Properties of the commands; no numeric expectations.

use std::path::Path;
use std::process::Command;

const BIN: &str = env!("CARGO_BIN_EXE_outturn");

#[test]
fn a_drafted_experiment_passes_check() {
    let dir = std::env::temp_dir().join(format!("outturn-draft-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("experiments/data/water_demand.csv");
    std::fs::copy(&src, dir.join("demand.csv")).unwrap();
    let o = Command::new(BIN)
        .current_dir(&dir)
        .args(["draft", "demand.csv"])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = String::from_utf8(o.stdout).unwrap();
    assert!(text.contains("frequency: monthly"), "{text}");
    assert!(
        text.contains("release_lag: 1"),
        "the ragged rainfall column is seen as published late:\n{text}"
    );
    assert!(
        text.contains("known_ahead: true"),
        "the calendar running past the target is known ahead:\n{text}"
    );
    std::fs::write(dir.join("draft.yaml"), &text).unwrap();
    let o = Command::new(BIN)
        .current_dir(&dir)
        .args(["check", "draft.yaml"])
        .output()
        .unwrap();
    assert!(
        o.status.success(),
        "check refused the draft: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    // Quarterly labels with a dash, and a file without a time column.
    std::fs::write(
        dir.join("q.csv"),
        "when,sales\n2001-Q1,1\n2001-Q2,2\n2001-Q3,3\n2001-Q4,5\n2002-Q1,4\n2002-Q2,6\n",
    )
    .unwrap();
    let o = Command::new(BIN)
        .current_dir(&dir)
        .args(["draft", "q.csv"])
        .output()
        .unwrap();
    assert!(String::from_utf8_lossy(&o.stdout).contains("frequency: quarterly"));
    std::fs::write(dir.join("bad.csv"), "a,b\nx,1\ny,2\n").unwrap();
    let o = Command::new(BIN)
        .current_dir(&dir)
        .args(["draft", "bad.csv"])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn kinds_lists_every_family_metric_and_test() {
    let o = Command::new(BIN).arg("kinds").output().unwrap();
    assert!(o.status.success());
    let text = String::from_utf8(o.stdout).unwrap();
    for name in [
        "naive",
        "mean",
        "drift",
        "seasonal_naive",
        "ar",
        "ardl",
        "arima",
        "smoothing",
        "combination",
        "rmse",
        "mae",
        "bias",
        "mape",
        "smape",
        "mase",
        "r2_oos",
        "coverage",
        "interval_score",
        "crps",
        "diebold_mariano",
        "clark_west",
        "confidence_set",
        "snooping",
        "fluctuation",
        "ljung_box",
        "adf",
    ] {
        assert!(
            text.lines()
                .any(|l| l.split_whitespace().next() == Some(name)),
            "{name} missing from kinds"
        );
    }
}

#[test]
fn the_readme_tour_is_a_valid_experiment() {
    // The README's experiment-file tour, checked against the demo data so the
    // example a newcomer copies stays valid.
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let readme = std::fs::read_to_string(root.join("README.md")).unwrap();
    let start = readme.find("```yaml\n").expect("a yaml block") + 8;
    let end = start + readme[start..].find("```").unwrap();
    let dir = std::env::temp_dir().join(format!("outturn-readme-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(dir.join("data")).unwrap();
    std::fs::copy(
        root.join("experiments/data/water_demand.csv"),
        dir.join("data/water_demand.csv"),
    )
    .unwrap();
    std::fs::write(dir.join("tour.yaml"), &readme[start..end]).unwrap();
    let o = Command::new(BIN)
        .arg("check")
        .arg(dir.join("tour.yaml"))
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let _ = std::fs::remove_dir_all(&dir);
}

/// A period column with a gap is named with the two rows around the gap.
#[test]
fn draft_names_the_rows_around_a_gap() {
    let dir = std::env::temp_dir().join(format!("outturn-draft-gap-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    std::fs::write(
        dir.join("gap.csv"),
        "period,y\n2004-01,1\n2004-02,2\n2004-04,3\n2004-05,4\n",
    )
    .unwrap();
    let o = Command::new(BIN)
        .current_dir(&dir)
        .args(["draft", "gap.csv"])
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("gap.csv:4:1")
            && err.contains("'2004-04' (line 4) comes after '2004-02' (line 3)"),
        "{err}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

/// kinds says which tests are keys of scoring.tests and which always run.
#[test]
fn kinds_says_where_the_diagnostics_appear() {
    let o = Command::new(BIN).arg("kinds").output().unwrap();
    let text = String::from_utf8(o.stdout).unwrap();
    let always = text
        .split("always run (not keys of scoring.tests)")
        .nth(1)
        .expect("a section of tests that always run");
    for t in ["fluctuation", "ljung_box", "adf", "diagnostics.csv"] {
        assert!(always.contains(t), "{t} not in: {always}");
    }
}
