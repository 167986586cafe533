//! Every claim of a report follows from its tests.csv: runs the demo, the
//! demo as a single-origin holdout, and a seeded set of generated
//! experiments on statsmodels' macrodata (tests/reference/data/macro.csv),
//! and reads back report.md. For each verdict sentence about a test it
//! finds that test's row and checks that a rejection is claimed exactly
//! when the row shows p < 5% with the sign stated, that the p-value quoted
//! is the row's, and that the snooping reading names the row's candidate;
//! for the verdict table that ✓✓ and ✓ rest on such rows; for the rankings
//! that ▲ ▼ † ◆ do. The property holds by construction of the claims
//! module (src/report/claims.rs); this checks it on whole reports.

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::process::Command;

const LEVEL: f64 = 0.05;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("outturn-claims-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("scratch");
    dir
}

/// Runs `outturn run yaml --out dir/results` from the yaml's folder.
fn run(yaml: &Path, dir: &Path) -> PathBuf {
    let out = dir.join("results");
    let o = Command::new(env!("CARGO_BIN_EXE_outturn"))
        .arg("run")
        .arg(yaml)
        .arg("--out")
        .arg(&out)
        .arg("--quiet")
        .output()
        .expect("spawn outturn");
    assert!(
        o.status.success(),
        "{}: {}",
        yaml.display(),
        String::from_utf8_lossy(&o.stderr)
    );
    out
}

/// A tests.csv row, keyed by (scheme, horizon, test, candidate, versus).
#[derive(Debug, Clone)]
struct Row {
    statistic: Option<f64>,
    p: Option<f64>,
    in_set: Option<bool>,
    p_lower: Option<f64>,
}

type Key = (String, String, String, String, String);

fn tests_csv(dir: &Path) -> HashMap<Key, Row> {
    let mut r = csv::Reader::from_path(dir.join("tests.csv")).expect("tests.csv");
    let h: Vec<String> = r
        .headers()
        .expect("header")
        .iter()
        .map(String::from)
        .collect();
    let col = |n: &str| h.iter().position(|c| c == n).expect(n);
    let (sc, ho, te, ca, ve) = (
        col("scheme"),
        col("horizon"),
        col("test"),
        col("candidate"),
        col("versus"),
    );
    let (st, pv, is, pl) = (
        col("statistic"),
        col("p_value"),
        col("in_set"),
        col("p_lower"),
    );
    let num = |s: &str| (!s.is_empty()).then(|| s.parse::<f64>().expect("number"));
    let mut out = HashMap::new();
    for rec in r.records() {
        let rec = rec.expect("record");
        // Candidate ids are written formula-safe: a leading ' is taken off.
        let id = |i: usize| rec[i].trim_start_matches('\'').to_string();
        out.insert(
            (id(sc), id(ho), id(te), id(ca), id(ve)),
            Row {
                statistic: num(&rec[st]),
                p: num(&rec[pv]),
                in_set: (!rec[is].is_empty()).then(|| &rec[is] == "true"),
                p_lower: num(&rec[pl]),
            },
        );
    }
    out
}

/// "p = 0.123", "p = 0.0498" or "p < 0.001", as the report writes them.
fn p_is(p: f64) -> String {
    if p < 0.001 {
        "p < 0.001".into()
    } else if (0.0495..=0.0505).contains(&p) {
        format!("p = {p:.4}")
    } else {
        format!("p = {p:.3}")
    }
}

fn shows(r: Option<&Row>, sign: f64) -> bool {
    matches!(r, Some(Row { statistic: Some(s), p: Some(p), .. }) if *p < LEVEL && s * sign > 0.0)
}

/// The text between `from` and the next of `ends` (or the end).
fn clause<'a>(text: &'a str, from: &str, ends: &[&str]) -> Option<&'a str> {
    let start = text.find(from)?;
    let rest = &text[start..];
    let end = ends
        .iter()
        .filter_map(|e| rest[1..].find(e).map(|i| i + 1))
        .min()
        .unwrap_or(rest.len());
    Some(&rest[..end])
}

const HEADS: [&str; 3] = ["Diebold–Mariano, ", "Clark–West, ", "Snooping test"];

/// Checks one report; returns how many claims it checked.
fn check(dir: &Path, bench: &str) -> usize {
    let rows = tests_csv(dir);
    let md = std::fs::read_to_string(dir.join("report.md")).expect("report.md");
    let get = |s: &str, h: &str, t: &str, c: &str, v: &str| {
        rows.get(&(s.into(), h.into(), t.into(), c.into(), v.into()))
    };
    let mut checked = 0;
    let verdict = md
        .split("## 1. Verdict")
        .nth(1)
        .and_then(|v| v.split("\n## ").next())
        .expect("verdict section");
    for line in verdict.lines().filter(|l| l.starts_with("- **")) {
        // "- **{scheme}, horizon {h}.** text"
        let head = line[4..].split(".**").next().expect("head");
        let (scheme, h) = head.rsplit_once(", horizon ").expect("scheme, horizon");
        let text = &line[4 + head.len() + 3..];
        if text.contains("Not testable with one origin") {
            assert!(!text.contains("rejects"), "{line}");
            checked += 1;
            continue;
        }
        if let Some(c) = clause(text, "Diebold–Mariano, ", &HEADS) {
            let (pair, reading) = c["Diebold–Mariano, ".len()..]
                .split_once(": ")
                .expect("pair");
            let (cand, versus) = pair.split_once(" against ").expect("against");
            let r = get(scheme, h, "diebold_mariano", cand, versus);
            let r = r.unwrap_or_else(|| panic!("{c}: no row"));
            let rejects = reading.starts_with("rejects");
            assert_eq!(
                rejects,
                shows(Some(r), 1.0) || shows(Some(r), -1.0),
                "{c} {r:?}"
            );
            assert_eq!(reading.contains("favour"), shows(Some(r), 1.0), "{c} {r:?}");
            if let Some(p) = r.p {
                assert!(reading.contains(&p_is(p)), "{c} {r:?}");
            }
            checked += 1;
        }
        if let Some(c) = clause(text, "Clark–West, ", &HEADS) {
            let (pair, reading) = c["Clark–West, ".len()..].split_once(": ").expect("pair");
            let pair = pair.trim_end_matches(" (nested in it)");
            let (cand, versus) = pair.split_once(" against ").expect("against");
            let r =
                get(scheme, h, "clark_west", cand, versus).unwrap_or_else(|| panic!("{c}: no row"));
            assert_eq!(
                reading.starts_with("rejects"),
                shows(Some(r), 1.0),
                "{c} {r:?}"
            );
            if reading.contains("favour") {
                assert!(
                    !shows(get(scheme, h, "diebold_mariano", cand, versus), -1.0),
                    "{c}"
                );
            }
            if let Some(p) = r.p {
                assert!(reading.contains(&p_is(p)), "{c} {r:?}");
            }
            checked += 1;
        }
        if let Some(c) = clause(text, "Snooping test", &HEADS) {
            let found: Vec<(&Key, &Row)> = rows
                .iter()
                .filter(|(k, _)| k.0 == scheme && k.1 == h && k.2 == "snooping")
                .collect();
            assert_eq!(found.len(), 1, "{c}");
            let (k, r) = found[0];
            let rejects = c.contains(": rejects");
            assert_eq!(rejects, r.p.is_some_and(|p| p < LEVEL), "{c} {r:?}");
            if let Some(p) = r.p {
                assert!(c.contains(&format!("consistent {}", p_is(p))), "{c} {r:?}");
                assert!(r.p_lower.is_some(), "{c}: the lower p-value is written");
                assert!(
                    c.contains(&format!("{}'s", k.3)) || c.contains(&format!("{} drives it", k.3)),
                    "{c} {k:?}"
                );
            }
            checked += 1;
        }
    }
    // The verdict table: ✓✓ only where the snooping test rejects and names
    // the leader; ✓ only on a pairwise rejection in the leader's favour.
    let schemes_line = verdict.lines().find(|l| l.starts_with("| scheme |"));
    if let Some(header) = schemes_line {
        let hs: Vec<String> = header
            .split('|')
            .skip(2)
            .filter(|c| !c.trim().is_empty())
            .map(|c| c.trim().trim_start_matches("horizon ").to_string())
            .collect();
        for line in verdict
            .lines()
            .skip_while(|l| !l.starts_with("| --- |"))
            .skip(1)
        {
            if !line.starts_with('|') {
                break;
            }
            let cells: Vec<&str> = line.split('|').map(str::trim).collect();
            let scheme = cells[1];
            for (i, h) in hs.iter().enumerate() {
                let cell = cells.get(i + 2).copied().unwrap_or("");
                let Some(leader) = cell.split('`').nth(1) else {
                    continue;
                };
                if cell.starts_with("✓✓") {
                    let sn = rows
                        .iter()
                        .find(|(k, _)| k.0 == scheme && &k.1 == h && k.2 == "snooping")
                        .expect("snooping row");
                    assert_eq!(sn.0 .3, leader, "{line}");
                    assert!(sn.1.p.is_some_and(|p| p < LEVEL), "{line}");
                    checked += 1;
                } else if cell.starts_with('✓') {
                    let dm = get(scheme, h, "diebold_mariano", leader, bench);
                    let cw = get(scheme, h, "clark_west", leader, bench);
                    assert!(
                        shows(dm, 1.0) || (shows(cw, 1.0) && !shows(dm, -1.0)),
                        "{line}"
                    );
                    checked += 1;
                }
            }
        }
    }
    // The rankings: ▲ ▼ † ◆ against their rows.
    let rankings = md
        .split("## 3. Rankings")
        .nth(1)
        .and_then(|v| v.split("\n## ").next())
        .expect("rankings section");
    let mut scheme = String::new();
    let mut columns: Vec<String> = Vec::new();
    for line in rankings.lines() {
        if let Some(s) = line.strip_prefix("### ") {
            let s = s.rsplit(" · ").next().unwrap_or(s);
            scheme = s.trim_end_matches(" scheme").to_string();
        } else if line.starts_with("| # | candidate |") {
            columns = line
                .split('|')
                .skip(3)
                .map(str::trim)
                .filter(|c| !c.is_empty())
                .map(|c| c.trim_start_matches("h = ").to_string())
                .collect();
        } else if line.starts_with("| ") && line.contains('`') && !columns.is_empty() {
            let cells: Vec<&str> = line.split('|').map(str::trim).collect();
            let cand = cells[2].split('`').nth(1).expect("candidate");
            for (i, h) in columns.iter().enumerate() {
                if h == "all horizons" {
                    continue;
                }
                let cell = cells.get(i + 3).copied().unwrap_or("");
                let dm = get(&scheme, h, "diebold_mariano", cand, bench);
                let cw = get(&scheme, h, "clark_west", cand, bench);
                let mcs = get(&scheme, h, "confidence_set", cand, "");
                assert_eq!(cell.contains('▲'), shows(dm, 1.0), "{scheme} h={h} {line}");
                assert_eq!(cell.contains('▼'), shows(dm, -1.0), "{scheme} h={h} {line}");
                assert_eq!(cell.contains('†'), shows(cw, 1.0), "{scheme} h={h} {line}");
                assert_eq!(
                    cell.contains('◆'),
                    mcs.and_then(|r| r.in_set) == Some(true),
                    "{scheme} h={h} {line}"
                );
                checked += 1;
            }
        }
    }
    checked
}

#[test]
fn the_demo_report_claims_nothing_its_tests_do_not_show() {
    let dir = scratch("demo");
    let out = run(&root().join("experiments/water_demand.yaml"), &dir);
    let n = check(&out, "naive");
    assert!(n > 100, "only {n} claims checked");
    let md = std::fs::read_to_string(out.join("report.md")).expect("md");
    assert!(!md.contains("0 of the 0"), "no empty counts");
    // The outlook's leaders come from the verdict's first row, and say so.
    assert!(
        md.contains(
            "for the three leaders of the fixed scheme at horizon 1 (the verdict's first row)"
        ),
        "outlook leaders"
    );
    // The rankings show the ranked metric's value and the benchmark's.
    assert!(md.contains("`naive`'s RMSE: h = 1 "), "benchmark values");
    // Sub-period headers give the span actually scored.
    assert!(md.contains("before_programme (scored 2015-"), "scored span");
    // Horizons 1 and 3: the outlook holds horizon 2 too, so no gap is noted.
    let html = std::fs::read_to_string(out.join("report.html")).expect("html");
    assert!(!html.contains("Only the listed horizons were forecast"));
    assert!(
        md.contains("| 2 | 2025-02 |"),
        "the outlook table has horizon 2"
    );
    let _ = std::fs::remove_dir_all(dir);
}

#[test]
fn a_single_origin_holdout_is_not_testable() {
    // The demo with one origin per scheme: n = 1 forecast per horizon.
    let dir = scratch("holdout");
    let demo = root().join("experiments");
    let text = std::fs::read_to_string(demo.join("water_demand.yaml")).expect("demo");
    let text = text
        .replace("- fixed: {test_start: 2015-01}", "- fixed: {test_start: 2015-01, origins: first}")
        .replace(
            "    - expanding: {first_origin: 2014-12, refit_every: 1}\n    - rolling: {window: 72, first_origin: 2014-12}\n",
            "",
        );
    assert!(text.contains("origins: first"));
    // Beside a copy of the demo's data, in the scratch folder.
    std::fs::create_dir_all(dir.join("data")).expect("data");
    for f in std::fs::read_dir(demo.join("data")).expect("demo data") {
        let f = f.expect("entry").path();
        std::fs::copy(&f, dir.join("data").join(f.file_name().expect("name"))).expect("copy");
    }
    let yaml = dir.join("holdout.yaml");
    std::fs::write(&yaml, text).expect("write");
    let out = run(&yaml, &dir);
    check(&out, "naive");
    let md = std::fs::read_to_string(out.join("report.md")).expect("md");
    assert!(md.contains("not testable with one origin"), "{md}");
    // Neither the verdict's table and sentences nor the rankings carry a mark.
    let claims: String = md
        .lines()
        .filter(|l| l.starts_with("| ") || l.starts_with("- **"))
        .collect::<Vec<_>>()
        .join("\n");
    for mark in ["✓", "~ `", "▲", "▼", "†", "◆"] {
        assert!(!claims.contains(mark), "{mark} in {claims}");
    }
    assert!(!claims.contains("not significant"), "{claims}");
    assert!(
        !md.contains("0 of 20") && !md.contains("0 of the 0"),
        "{md}"
    );
    let _ = std::fs::remove_dir_all(dir);
}

/// A seeded set of experiments on macrodata (statsmodels.datasets,
/// tests/reference/data/macro.csv): random candidate lists, schemes,
/// horizons and tests; every report's claims checked.
#[test]
fn generated_experiments_claim_nothing_their_tests_do_not_show() {
    let mut state: u64 = 0x2545_F491_4F6C_DD1D;
    let mut next = move |n: u64| {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        state % n
    };
    let targets = ["realgdp", "infl", "unemp", "tbilrate"];
    let families = [
        "  - family: mean\n",
        "  - family: drift\n",
        "  - family: ar\n    lags: [1, 2, 4]\n",
        "  - family: ar\n    lags: {from: 6, to: 8}\n",
        "  - family: ardl\n    lags: [1, 2]\n    predictors: [m1]\n    predictor_lags: [1]\n",
        "  - family: arima\n    p: [1]\n    d: [0]\n    q: [1]\n",
    ];
    let mut total = 0;
    for case in 0..6 {
        let target = targets[next(4) as usize];
        let transform = if target == "realgdp" {
            "log_diff"
        } else {
            "none"
        };
        let mut cands = String::from("  - family: naive\n");
        for f in families {
            if next(3) > 0 {
                cands.push_str(f);
            }
        }
        let schemes = [
            "    - fixed: {test_start: 1995Q1}\n",
            "    - expanding: {first_origin: 1990Q4}\n",
            "    - rolling: {window: 60, first_origin: 1990Q4}\n",
        ];
        let mut sch = String::new();
        for s in schemes {
            if next(2) == 0 || sch.is_empty() {
                sch.push_str(s);
            }
        }
        let horizons = ["[1]", "[1, 4]", "[2, 8]", "[1, 2, 4]"][next(4) as usize];
        let cw = ["true", "all_pairs"][next(2) as usize];
        let yaml = format!(
            "version: 1\nexperiment: claims-{case}\ndata:\n  file: macro.csv\n  time: period\n  frequency: quarterly\n\
             target: {target}\ntransform: {transform}\npredictors:\n  - column: m1\n    transform: log_diff\n\
             candidates:\n{cands}backtest:\n  schemes:\n{sch}  horizons: {horizons}\n\
             scoring:\n  metrics: [rmse, mae]\n  benchmark: naive\n  tests:\n    diebold_mariano: true\n    clark_west: {cw}\n\
             \x20   confidence_set: {{alpha: 0.1, resamples: 300}}\n    snooping: {{resamples: 300}}\n\
             report:\n  formats: [markdown]\nseed: {case}\n"
        );
        let dir = scratch(&format!("gen{case}"));
        std::fs::copy(
            root().join("tests/reference/data/macro.csv"),
            dir.join("macro.csv"),
        )
        .expect("copy macro.csv");
        let file = dir.join("experiment.yaml");
        std::fs::write(&file, &yaml).expect("write");
        let out = run(&file, &dir);
        total += check(&out, "naive");
        let _ = std::fs::remove_dir_all(dir);
    }
    assert!(total > 50, "only {total} claims checked");
}
