//! The look-ahead audit through the command line (docs/commands.md#audit):
//! every model family passes it on tests/audit/families.yaml (by
//! construction: models that keep to the visibility rules move no forecast
//! when hidden data change); `run` with `audit:` records the outcome in the
//! manifest and the report and still verifies; without `audit:` the tables
//! keep their bytes; bad `audit` values are refused with the key and line.
//! That the audit can fail is shown in src/run/audit/tests.rs (a leaky
//! model compiled only in tests).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn outturn(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_outturn"))
        .args(args)
        .output()
        .expect("outturn runs")
}

fn text(bytes: &[u8]) -> String {
    String::from_utf8_lossy(bytes).to_string()
}

/// A scratch folder holding the families experiment (with `extra` appended),
/// its data path made absolute.
fn scratch(tag: &str, extra: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("outturn-audit-{}-{tag}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    let data = root().join("experiments/data/water_demand.csv");
    let yaml = std::fs::read_to_string(root().join("tests/audit/families.yaml"))
        .unwrap()
        .replace(
            "../../experiments/data/water_demand.csv",
            &data.to_string_lossy(),
        );
    std::fs::write(dir.join("exp.yaml"), format!("{yaml}{extra}")).unwrap();
    dir
}

fn path(p: &Path) -> &str {
    p.to_str().unwrap()
}

#[test]
fn every_family_passes_the_audit() {
    let exp = root().join("tests/audit/families.yaml");
    let out = outturn(&["audit", path(&exp), "--origins", "2"]);
    let stdout = text(&out.stdout);
    assert_eq!(out.status.code(), Some(0), "{stdout}{}", text(&out.stderr));
    // 21 candidates × 3 schemes; 2 origins per cell, 1 or 2 horizons each.
    let first = stdout.lines().next().unwrap();
    assert!(
        first.ends_with("checks across 63 cells, 0 forecasts moved"),
        "{first}"
    );
    let checks: usize = first.split(' ').next().unwrap().parse().unwrap();
    assert!((63 * 2..=63 * 4).contains(&checks), "{first}");
    assert!(out.stderr.is_empty(), "{}", text(&out.stderr));
}

#[test]
fn a_run_with_audit_records_it_and_verifies_and_without_it_keeps_its_tables() {
    let plain = scratch("plain", "");
    let audited = scratch("audited", "audit: {origins: 2}\n");
    for dir in [&plain, &audited] {
        let out = outturn(&[
            "run",
            path(&dir.join("exp.yaml")),
            "--out",
            path(&dir.join("out")),
            "--quiet",
            "--no-cache",
        ]);
        assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    }
    let manifest = std::fs::read_to_string(audited.join("out/manifest.json")).unwrap();
    assert!(
        manifest.starts_with("{\n  \"audit\": {\n    \"cells\": 63,"),
        "{manifest}"
    );
    assert!(manifest.contains("\"moved\": [],"), "{manifest}");
    assert!(manifest.contains("\"origins\": 2,"), "{manifest}");
    let plain_manifest = std::fs::read_to_string(plain.join("out/manifest.json")).unwrap();
    assert!(!plain_manifest.contains("\"audit\""));
    let report = std::fs::read_to_string(audited.join("out/report.md")).unwrap();
    assert!(report.contains("- look-ahead audit: "), "no audit line");
    assert!(report.contains("across 63 cells (2 origins per cell"));
    let plain_report = std::fs::read_to_string(plain.join("out/report.md")).unwrap();
    assert!(!plain_report.contains("- look-ahead audit:"));
    // The audit adds its key and its line, and changes no table.
    for table in [
        "forecasts.csv",
        "scores.csv",
        "tests.csv",
        "outlook.csv",
        "series.csv",
        "parameters.csv",
        "diagnostics.csv",
        "stability.csv",
    ] {
        let a = std::fs::read(plain.join("out").join(table)).unwrap();
        let b = std::fs::read(audited.join("out").join(table)).unwrap();
        assert!(a == b, "{table} differs");
    }
    let out = outturn(&["verify", path(&audited.join("out"))]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stdout));
    // A merge of shards audits as the single run does.
    let exp = audited.join("exp.yaml");
    for k in ["1/2", "2/2"] {
        let shard = audited.join(format!("shard{}", &k[..1]));
        let out = outturn(&[
            "run",
            path(&exp),
            "--shard",
            k,
            "--out",
            path(&shard),
            "--quiet",
            "--no-cache",
        ]);
        assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    }
    let merged = audited.join("merged");
    let out = outturn(&[
        "merge",
        path(&audited.join("shard1")),
        path(&audited.join("shard2")),
        "--out",
        path(&merged),
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let audit_of = |m: &str| m[..m.find("\"data\"").unwrap()].to_string();
    let merged_manifest = std::fs::read_to_string(merged.join("manifest.json")).unwrap();
    assert_eq!(audit_of(&merged_manifest), audit_of(&manifest));
    assert_eq!(
        std::fs::read(merged.join("report.md")).unwrap(),
        std::fs::read(audited.join("out/report.md")).unwrap()
    );
    let _ = std::fs::remove_dir_all(&plain);
    let _ = std::fs::remove_dir_all(&audited);
}

#[test]
fn bad_audit_values_are_refused_with_key_and_line() {
    let cases = [
        ("audit: {origin: 3}\n", "origins"),
        ("audit: {origins: 0}\n", "audit.origins must be at least 1"),
        ("audit: {origins: 5000}\n", "at most 1000"),
        (
            "audit: {origins: many}\n",
            "audit.origins must be a whole number",
        ),
    ];
    for (i, (extra, says)) in cases.iter().enumerate() {
        let dir = scratch(&format!("bad{i}"), extra);
        let yaml = std::fs::read_to_string(dir.join("exp.yaml")).unwrap();
        let line = yaml.lines().count();
        for command in ["check", "audit"] {
            let out = outturn(&[command, path(&dir.join("exp.yaml"))]);
            let stderr = text(&out.stderr);
            assert_eq!(out.status.code(), Some(2), "{extra}: {stderr}");
            assert!(stderr.contains(says), "{extra}: {stderr}");
            assert!(
                stderr.contains(&format!(":{line}:")),
                "{extra} (line {line}): {stderr}"
            );
        }
        let _ = std::fs::remove_dir_all(&dir);
    }
    let exp = root().join("tests/audit/families.yaml");
    let out = outturn(&["audit", path(&exp), "--origins", "0"]);
    assert_eq!(out.status.code(), Some(2));
}

/// Multiplicative-error smoothing (levels: its data must be positive),
/// whose seasonal forms simulate their variances with the cell's seed:
/// the from-scratch estimation the audit makes gives the run's bits.
#[test]
fn multiplicative_error_smoothing_passes_the_audit() {
    let dir = std::env::temp_dir().join(format!("outturn-audit-{}-mult", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    let data = root().join("experiments/data/water_demand.csv");
    let yaml = format!(
        "version: 1\nexperiment: audit-mult\ndata: {{file: {}, time: period, frequency: monthly, start: 2013-01}}\n\
         target: demand_ml\ntransform: none\ncandidates:\n  - family: naive\n\
         \x20 - {{family: smoothing, error: [multiplicative], trend: [none, damped], season: [none, multiplicative]}}\n\
         backtest:\n  schemes: [{{fixed: {{test_start: 2022-01}}}}, {{expanding: {{first_origin: 2021-12, refit_every: 6}}}}]\n  horizons: [1, 3]\n\
         scoring: {{benchmark: naive}}\n",
        data.to_string_lossy()
    );
    std::fs::write(dir.join("exp.yaml"), yaml).unwrap();
    let out = outturn(&["audit", path(&dir.join("exp.yaml")), "--origins", "3"]);
    let stdout = text(&out.stdout);
    assert_eq!(out.status.code(), Some(0), "{stdout}{}", text(&out.stderr));
    let first = stdout.lines().next().unwrap();
    assert!(
        first.ends_with("checks across 10 cells, 0 forecasts moved"),
        "{first}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}
