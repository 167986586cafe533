//! Quantile columns, density scores and the forecast tests of
//! `scoring.tests` (calibration, efficiency, encompassing, pairwise
//! Diebold–Mariano) through the whole program, against
//! tests/reference/density/density.json (generate_density.py: numpy 2.1.3,
//! scipy 1.14.1, statsmodels 0.14.4). The experiment backtests naive, the
//! expanding mean and a direct AR(2) on statsmodels' macrodata `infl`
//! (tests/reference/data/macro.csv) from origin 1989Q1 at horizons 1 and 4,
//! the forecasts and Gaussian standard deviations the generator computes
//! independently; every expected number comes from there.

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::process::Command;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn experiment(tests: &str, extra: &str) -> String {
    let data = root().join("tests/reference/data/macro.csv");
    format!(
        "version: 1
experiment: density
data:
  file: {}
  time: period
  frequency: quarterly
target: infl
candidates:
  - family: naive
  - family: mean
  - family: ar
    lags: [2]
{extra}backtest:
  schemes:
    - expanding: {{first_origin: 1989Q1}}
  horizons: [1, 4]
scoring:
  metrics: [rmse, quantile_score, log_score]
  intervals: [0.8, 0.95]
  quantiles: [0.05, 0.5, 0.95]
  tests:
{tests}
report:
  formats: [markdown]
",
        data.display(),
    )
}

fn run(tag: &str, tests: &str) -> PathBuf {
    run_with(tag, tests, "")
}

fn run_with(tag: &str, tests: &str, extra: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("outturn-density-{}-{tag}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    let file = dir.join("exp.yaml");
    let mut text = experiment(tests, extra);
    if tests.contains("past_errors") {
        // past_errors gives no density for log_score (refused with it).
        text = text.replace(", log_score]", "]");
    }
    std::fs::write(&file, text).unwrap();
    let out = dir.join("results");
    let o = Command::new(env!("CARGO_BIN_EXE_outturn"))
        .args([
            "run",
            file.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
            "--quiet",
        ])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    out
}

type Row = HashMap<String, String>;

fn table(path: &Path) -> Vec<Row> {
    let mut r = csv::Reader::from_path(path).unwrap();
    let header: Vec<String> = r.headers().unwrap().iter().map(String::from).collect();
    r.records()
        .map(|rec| {
            let rec = rec.unwrap();
            header
                .iter()
                .cloned()
                .zip(rec.iter().map(String::from))
                .collect()
        })
        .collect()
}

fn reference() -> serde_json::Value {
    let text =
        std::fs::read_to_string(root().join("tests/reference/density/density.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

fn case<'a>(r: &'a serde_json::Value, name: &str) -> &'a serde_json::Value {
    r["cases"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["name"] == name)
        .unwrap_or_else(|| panic!("no case {name}"))
}

fn num(row: &Row, col: &str) -> f64 {
    row[col]
        .parse()
        .unwrap_or_else(|_| panic!("{col} = '{}'", row[col]))
}

fn close(got: f64, want: f64, tol: f64, what: &str) {
    assert!(
        (got - want).abs() <= tol * want.abs().max(1.0),
        "{what}: got {got:e}, want {want:e}"
    );
}

fn test_row<'a>(rows: &'a [Row], test: &str, h: &str, candidate: &str, versus: &str) -> &'a Row {
    rows.iter()
        .find(|r| {
            r["test"] == test
                && r["horizon"] == h
                && r["candidate"] == candidate
                && r["versus"] == versus
        })
        .unwrap_or_else(|| panic!("no {test} row for {candidate} vs '{versus}' at h={h}"))
}

#[test]
fn scores_and_tests_match_the_reference_end_to_end() {
    let r = reference();
    let out = run(
        "bench",
        "    diebold_mariano: pairs\n    calibration: true\n    efficiency: true\n    encompassing: true",
    );
    // Quantile columns: every interval bound and listed quantile, ascending.
    let header = std::fs::read_to_string(out.join("forecasts.csv")).unwrap();
    assert!(header.starts_with(
        "target,candidate,scheme,horizon,origin,period,forecast,actual,error,is_mse,q2.5,q5,q10,q50,q90,q95,q97.5\n"
    ));
    let scores = table(&out.join("scores.csv"));
    let tests = table(&out.join("tests.csv"));
    for h in ["1", "4"] {
        for model in ["naive", "mean", "ar(2)"] {
            let c = case(&r, &format!("macrodata.infl {model} h={h}"));
            let n = c["actual"].as_array().unwrap().len();
            let s = scores
                .iter()
                .find(|s| s["candidate"] == model && s["horizon"] == h && s["period_set"] == "all")
                .unwrap();
            assert_eq!(s["n"], n.to_string());
            // numpy pinball loss at scipy norm.ppf over the seven quantiles.
            close(
                num(s, "quantile_score"),
                c["quantile_score_more"].as_f64().unwrap(),
                1e-9,
                model,
            );
            // −scipy.stats.norm.logpdf, averaged.
            close(
                num(s, "log_score"),
                c["log_score"].as_f64().unwrap(),
                1e-9,
                model,
            );
            // statsmodels OLS HAC (maxlags h − 1): Wald test, params, p-values.
            let e = &c["efficiency"];
            let w = test_row(&tests, "efficiency", h, model, "");
            close(
                num(w, "statistic"),
                e["wald"].as_f64().unwrap(),
                1e-8,
                model,
            );
            close(
                num(w, "p_value"),
                e["p_wald"].as_f64().unwrap(),
                1e-8,
                model,
            );
            let a = test_row(&tests, "efficiency_intercept", h, model, "");
            close(
                num(a, "statistic"),
                e["params"][0].as_f64().unwrap(),
                1e-8,
                model,
            );
            close(
                num(a, "p_value"),
                e["p_intercept"].as_f64().unwrap(),
                1e-8,
                model,
            );
            let b = test_row(&tests, "efficiency_slope", h, model, "");
            close(
                num(b, "statistic"),
                e["params"][1].as_f64().unwrap(),
                1e-8,
                model,
            );
            close(
                num(b, "p_value"),
                e["p_slope"].as_f64().unwrap(),
                1e-8,
                model,
            );
            // Christoffersen LR from the paper's formulas, scipy chi2.sf.
            for cal in c["calibration"].as_array().unwrap() {
                let level = if cal["level"].as_f64().unwrap() == 0.8 {
                    "80"
                } else {
                    "95"
                };
                for (t, stat, p) in [
                    ("uc", "lr_uc", "p_uc"),
                    ("ind", "lr_ind", "p_ind"),
                    ("cc", "lr_cc", "p_cc"),
                ] {
                    let row = test_row(&tests, &format!("calibration_{t}_{level}"), h, model, "");
                    close(
                        num(row, "statistic"),
                        cal[stat].as_f64().unwrap(),
                        1e-8,
                        model,
                    );
                    close(num(row, "p_value"), cal[p].as_f64().unwrap(), 1e-8, model);
                }
            }
            // Berkowitz LR: statsmodels OLS AR(1), scipy norm.logpdf, chi2.sf.
            let pit = test_row(&tests, "calibration_pit", h, model, "");
            close(
                num(pit, "statistic"),
                c["berkowitz"]["lr"].as_f64().unwrap(),
                1e-7,
                model,
            );
            close(
                num(pit, "p_value"),
                c["berkowitz"]["p"].as_f64().unwrap(),
                1e-8,
                model,
            );
        }
        // HLN (1998) in numpy: does naive (the benchmark) encompass ar(2)?
        let enc = r["encompassing"]
            .as_array()
            .unwrap()
            .iter()
            .find(|e| e["name"] == format!("macrodata.infl ar(2) h={h}: naive encompasses ar(2)"))
            .unwrap();
        let row = test_row(&tests, "encompassing", h, "ar(2)", "naive");
        close(
            num(row, "statistic"),
            enc["statistic"].as_f64().unwrap(),
            1e-8,
            "encompassing",
        );
        close(
            num(row, "p_value"),
            enc["p_value"].as_f64().unwrap(),
            1e-8,
            "encompassing",
        );
    }
}

#[test]
fn a_named_rival_and_the_pairwise_matrix() {
    let r = reference();
    let rival = run(
        "rival",
        "    encompassing: ar(2)\n    diebold_mariano: true",
    );
    let tests = table(&rival.join("tests.csv"));
    for h in ["1", "4"] {
        for other in ["naive", "mean"] {
            let want = r["encompassing"]
                .as_array()
                .unwrap()
                .iter()
                .find(|e| {
                    e["name"] == format!("macrodata.infl ar(2) h={h}: ar(2) encompasses {other}")
                })
                .unwrap();
            let row = test_row(&tests, "encompassing", h, other, "ar(2)");
            close(
                num(row, "statistic"),
                want["statistic"].as_f64().unwrap(),
                1e-8,
                other,
            );
            close(
                num(row, "p_value"),
                want["p_value"].as_f64().unwrap(),
                1e-8,
                other,
            );
        }
    }
    // `pairs` keeps every row of `true` byte for byte and adds the pairs
    // without the benchmark (here mean against ar(2)).
    let pairs = run("pairs", "    diebold_mariano: pairs");
    let plain = run("plain", "    diebold_mariano: true");
    let text = |p: &PathBuf| std::fs::read_to_string(p.join("tests.csv")).unwrap();
    let (pairs_text, plain_text) = (text(&pairs), text(&plain));
    let extra: Vec<&str> = pairs_text
        .lines()
        .filter(|l| !plain_text.lines().any(|p| p == *l))
        .collect();
    assert!(plain_text
        .lines()
        .all(|l| pairs_text.lines().any(|p| p == l)));
    assert_eq!(extra.len(), 2, "{extra:?}");
    assert!(
        extra
            .iter()
            .all(|l| l.contains(",diebold_mariano,mean,ar(2),")),
        "{extra:?}"
    );
}

#[test]
fn past_errors_give_every_candidate_empirical_quantiles() {
    // numpy.quantile (type 7) of the ar(2) errors known at each origin
    // (T′ + h ≤ T, at least 10), generate_density.py's `past` cases.
    let r = reference();
    let out = run_with(
        "past",
        "    calibration: true\n  intervals_from: past_errors",
        "  - family: combination\n    members: [naive, \"ar(2)\"]\n",
    );
    let rows = table(&out.join("forecasts.csv"));
    let taus = ["q2.5", "q5", "q10", "q50", "q90", "q95", "q97.5"];
    for h in ["1", "4"] {
        let want = r["past"]
            .as_array()
            .unwrap()
            .iter()
            .find(|c| c["name"] == format!("macrodata.infl ar(2) h={h}"))
            .unwrap();
        let ours: Vec<&Row> = rows
            .iter()
            .filter(|r| r["candidate"] == "ar(2)" && r["horizon"] == h)
            .collect();
        let quantiles = want["quantiles"].as_array().unwrap();
        assert_eq!(ours.len(), quantiles.len());
        for (row, q) in ours.iter().zip(quantiles) {
            if q.is_null() {
                assert!(taus.iter().all(|t| row[*t].is_empty()), "{row:?}");
                continue;
            }
            for (t, v) in taus.iter().zip(q.as_array().unwrap()) {
                let want = num(row, "forecast") + v.as_f64().unwrap();
                close(num(row, t), want, 1e-9, t);
            }
        }
        // The combination, which has no variance, gets them from its
        // errors from the same origin on (h + 9 forecasts without).
        let first = want["first"].as_u64().unwrap() as usize;
        let comb: Vec<&Row> = rows
            .iter()
            .filter(|r| r["candidate"] == "combination(equal)" && r["horizon"] == h)
            .collect();
        assert!(comb[..first].iter().all(|r| r["q10"].is_empty()));
        assert!(comb[first..]
            .iter()
            .all(|r| !r["q10"].is_empty() && !r["q97.5"].is_empty()));
    }
    let outlook = table(&out.join("outlook.csv"));
    // Listed horizons have past errors; the outlook's unlisted ones (2, 3)
    // were never backtested and have none.
    for r in &outlook {
        let listed = r["horizon"] == "1" || r["horizon"] == "4";
        assert_eq!(!r["q50"].is_empty(), listed, "{r:?}");
    }
    let tests = table(&out.join("tests.csv"));
    assert!(tests
        .iter()
        .any(|t| t["test"] == "calibration_uc_80" && t["candidate"] == "combination(equal)"));
    assert!(!tests.iter().any(|t| t["test"] == "calibration_pit"));
}

#[test]
fn the_report_shows_what_ran_and_the_verdict_reads_only_its_own_tests() {
    // By construction: the verdict reads the benchmark's Diebold–Mariano,
    // Clark–West and snooping rows only, so adding the pairs, calibration,
    // efficiency and encompassing rows leaves its section byte for byte.
    let plain = run("report-plain", "    diebold_mariano: true");
    let all = run(
        "report-all",
        "    diebold_mariano: pairs\n    calibration: true\n    efficiency: true\n    encompassing: true",
    );
    let report = |p: &PathBuf| std::fs::read_to_string(p.join("report.md")).unwrap();
    let (plain, all) = (report(&plain), report(&all));
    let verdict = |r: &str| {
        let from = r.find("## 1. Verdict").unwrap();
        let to = r.find("## 2.").unwrap();
        r[from..to].to_string()
    };
    assert_eq!(verdict(&plain), verdict(&all));
    for (text, present) in [(&plain, false), (&all, true)] {
        assert_eq!(
            text.contains("Calibration: share of outturns inside"),
            present
        );
        assert_eq!(text.contains("Every pair (Diebold–Mariano)"), present);
    }
    // The matrix holds both halves of a pair, the sign turned (2 rows,
    // header and rule for 3 candidates: every off-diagonal cell filled).
    let from = all.find("| row against column |").unwrap();
    let matrix: Vec<&str> = all[from..]
        .lines()
        .filter(|l| l.trim_start().starts_with('|'))
        .take(5)
        .collect();
    assert_eq!(matrix.len(), 5, "{matrix:?}");
}
