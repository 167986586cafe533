//! Real-time data (docs/experiment-file.md#vintages) through the command line. No
//! real-time data set ships with any registry package pinned here, so the
//! vintage machinery is checked by properties that hold by construction,
//! on vintage files made here from the demo's invented series (which
//! supply no expected value, only the two runs compared):
//! (a) vintages that all equal the final data (vintage T holding the rows
//!     up to T) reproduce the ordinary run's forecasts.csv, and the wide
//!     layout gives the long layout's bytes;
//! (b) a value changed only in vintages after T moves no forecast from an
//!     origin ≤ T;
//! (c) `scoring.actual: first` against `latest` changes outturns and
//!     errors only, never a forecast;
//! and the refusals of docs/refusals.md#real-time-data, and the second
//! demo experiment (invented revisions) runs, audits and verifies.

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

fn path(p: &Path) -> &str {
    p.to_str().unwrap()
}

fn scratch(tag: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("outturn-vint-{}-{tag}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// The demo's data: header and rows (period, demand, rain deficit, school days).
fn demo_rows() -> (String, Vec<Vec<String>>) {
    let csv = std::fs::read_to_string(root().join("experiments/data/water_demand.csv")).unwrap();
    let mut lines = csv.lines();
    let header = lines.next().unwrap().to_string();
    let rows = lines
        .map(|l| l.split(',').map(String::from).collect())
        .collect();
    (header, rows)
}

/// The experiment: every family the property covers, three schemes,
/// a release-lagged and a known-ahead predictor.
fn experiment(data: &str, data_keys: &str, scoring: &str) -> String {
    format!(
        "version: 1
experiment: vintages
data:
  file: {data}
  time: period
  frequency: monthly
{data_keys}
target: demand_ml
transform: seasonal_diff
predictors:
  - column: rain_deficit_mm
    transform: seasonal_diff
    release_lag: 1
  - column: school_holiday_days
    transform: seasonal_diff
    known_ahead: true
candidates:
  - family: naive
  - family: ar
    lags: [1, 2]
  - family: ardl
    lags: [1]
    predictors: [rain_deficit_mm, school_holiday_days]
    predictor_lags: [1]
  - family: arima
    p: [1]
    d: [0]
    q: [0]
  - family: smoothing
    trend: [none]
  - family: combination
    members: [\"ar(1)\", \"naive\"]
    weights: equal
backtest:
  schemes:
    - fixed: {{first_origin: 2019-12}}
    - expanding: {{first_origin: 2019-12}}
    - rolling: {{window: 96, first_origin: 2019-12}}
  horizons: [1, 3]
scoring:
  metrics: [rmse, mae]
  intervals: [0.8]
{scoring}
seed: 7
"
    )
}

/// Index of the first row whose period is `label`.
fn row_of(rows: &[Vec<String>], label: &str) -> usize {
    rows.iter().position(|r| r[0] == label).unwrap()
}

/// A long-layout file in which vintage v holds the final data up to v
/// (the target and the release-lagged predictor; the known-ahead
/// calendar on every row), for vintages from `first` on; `edit` may change
/// a cell of a vintage (vintage index, row index, column) → value.
fn long_file(first: &str, edit: &dyn Fn(usize, usize, usize, &str) -> String) -> String {
    let (header, rows) = demo_rows();
    let cols: Vec<&str> = header.split(',').collect();
    let mut out = format!("period,vintage,{}\n", cols[1..].join(","));
    let last = rows.iter().rposition(|r| !r[1].is_empty()).unwrap();
    for v in row_of(&rows, first)..=last {
        for (i, r) in rows.iter().enumerate() {
            let mut cells: Vec<String> = r.clone();
            if i > v {
                cells[1].clear();
                cells[2].clear();
                if cells[3].is_empty() {
                    continue;
                }
            }
            for (c, cell) in cells.iter_mut().enumerate().skip(1) {
                *cell = edit(v, i, c, cell);
            }
            out.push_str(&format!(
                "{},{},{}\n",
                r[0],
                rows[v][0],
                cells[1..].join(",")
            ));
        }
    }
    out
}

/// The same vintages in the wide layout: one target column per vintage,
/// the predictors as final columns.
fn wide_file(first: &str) -> String {
    let (_, rows) = demo_rows();
    let last = rows.iter().rposition(|r| !r[1].is_empty()).unwrap();
    let vintages: Vec<usize> = (row_of(&rows, first)..=last).collect();
    let mut out = String::from("period");
    for &v in &vintages {
        out.push_str(&format!(",demand_ml@{}", rows[v][0]));
    }
    out.push_str(",rain_deficit_mm,school_holiday_days\n");
    for (i, r) in rows.iter().enumerate() {
        out.push_str(&r[0]);
        for &v in &vintages {
            out.push(',');
            if i <= v {
                out.push_str(&r[1]);
            }
        }
        out.push_str(&format!(",{},{}\n", r[2], r[3]));
    }
    out
}

/// Run an experiment in `dir`; the folder written.
fn run(dir: &Path, name: &str, yaml: &str) -> PathBuf {
    let exp = dir.join(format!("{name}.yaml"));
    std::fs::write(&exp, yaml).unwrap();
    let out_dir = dir.join(format!("out-{name}"));
    let out = outturn(&[
        "run",
        path(&exp),
        "--out",
        path(&out_dir),
        "--quiet",
        "--no-cache",
    ]);
    assert_eq!(out.status.code(), Some(0), "{name}: {}", text(&out.stderr));
    out_dir
}

/// forecasts.csv as rows of cells.
fn forecasts(dir: &Path) -> Vec<Vec<String>> {
    table(dir, "forecasts.csv")
}

/// A table of the folder as rows of cells.
fn table(dir: &Path, file: &str) -> Vec<Vec<String>> {
    std::fs::read_to_string(dir.join(file))
        .unwrap()
        .lines()
        .map(|l| {
            // Candidate ids with commas are quoted; none of these has one
            // inside a field other than the id.
            let mut cells = Vec::new();
            let mut cur = String::new();
            let mut quoted = false;
            for ch in l.chars() {
                match ch {
                    '"' => quoted = !quoted,
                    ',' if !quoted => cells.push(std::mem::take(&mut cur)),
                    c => cur.push(c),
                }
            }
            cells.push(cur);
            cells
        })
        .collect()
}

/// The tables a run on vintages writes with the ordinary run's bytes when
/// every vintage equals the final data.
const SAME_TABLES: [&str; 6] = [
    "scores.csv",
    "tests.csv",
    "stability.csv",
    "diagnostics.csv",
    "series.csv",
    "outlook.csv",
];

/// manifest.json without what names the inputs (the experiment and data
/// files, their hashes), the `run` section (paths and timings, different
/// in any two runs) and the entries of the outputs that legitimately
/// differ.
fn manifest_less_inputs(dir: &Path, differing: &[&str]) -> serde_json::Value {
    let text = std::fs::read_to_string(dir.join("manifest.json")).unwrap();
    let mut m: serde_json::Value = serde_json::from_str(&text).unwrap();
    let o = m.as_object_mut().unwrap();
    for key in ["data", "experiment", "run"] {
        assert!(o.remove(key).is_some(), "{key}");
    }
    let outputs = o["outputs"].as_array_mut().unwrap();
    outputs.retain(|e| !differing.contains(&e["file"].as_str().unwrap()));
    m
}

#[test]
fn vintages_equal_to_the_final_data_reproduce_the_ordinary_run() {
    // Holds by construction: at origin T the vintage holds exactly what the
    // ordinary run lets origin T see (plus values the rules hide anyway);
    // least squares and the benchmarks estimate every origin from scratch,
    // which gives their incremental path's bits, and arima and smoothing
    // estimate as the ordinary run does: from scratch at the first origin,
    // then warm-started from the previous estimate where the sample moves
    // and the previous estimate used again where it holds the same values
    // (docs/arithmetic.md#vintages). So every family under every scheme
    // gives the ordinary run's bytes. What differs, legitimately: the two
    // vintage columns of forecasts.csv; experiment.yaml, the copy of an
    // experiment file that names another data file and layout; in
    // manifest.json the input files' names and hashes, and the hashes of
    // the files that differ; the reports, which say that the data are
    // real-time and quote the experiment file and the hashes; and
    // parameters.csv, which lists every origin's estimation with its
    // vintage (several share an end E under fixed and refit schemes) where
    // the ordinary run lists each E once: less its vintage column and the
    // repeated estimations, the ordinary run's bytes.
    let dir = scratch("equal");
    let data = root().join("experiments/data/water_demand.csv");
    let plain = run(&dir, "plain", &experiment(path(&data), "", ""));
    std::fs::write(
        dir.join("long.csv"),
        long_file("2019-12", &|_, _, _, c| c.into()),
    )
    .unwrap();
    std::fs::write(dir.join("wide.csv"), wide_file("2019-12")).unwrap();
    let long = run(
        &dir,
        "long",
        &experiment("long.csv", "  layout: vintages", ""),
    );
    let wide = run(
        &dir,
        "wide",
        &experiment("wide.csv", "  layout: vintage_columns", ""),
    );
    let (a, b) = (forecasts(&plain), forecasts(&long));
    assert_eq!(a.len(), b.len());
    assert_eq!(&b[0][b[0].len() - 2..], ["vintage", "actual_release"]);
    for (x, y) in a.iter().zip(&b).skip(1) {
        assert_eq!(y[y.len() - 2], x[4], "the vintage used is the origin's");
        assert_eq!(x.as_slice(), &y[..y.len() - 2], "byte for byte");
    }
    // Every family under every scheme, arima and smoothing included.
    for family in [
        "naive",
        "ar(",
        "ardl(",
        "arima(",
        "smoothing(",
        "combination(",
    ] {
        for scheme in ["fixed", "expanding", "rolling(96)"] {
            let rows = b
                .iter()
                .filter(|r| r[1].starts_with(family) && r[2] == scheme)
                .count();
            assert!(rows > 50, "{family} {scheme}: {rows}");
        }
    }
    for table in SAME_TABLES {
        assert!(
            std::fs::read(plain.join(table)).unwrap() == std::fs::read(long.join(table)).unwrap(),
            "{table} differs"
        );
    }
    let (pa, pb) = (
        std::fs::read_to_string(plain.join("parameters.csv")).unwrap(),
        std::fs::read_to_string(long.join("parameters.csv")).unwrap(),
    );
    assert!(pa.starts_with("target,candidate,scheme,horizon,origin,parameter,estimate,std_error\n"));
    assert!(pb.starts_with(
        "target,candidate,scheme,horizon,origin,parameter,estimate,std_error,vintage\n"
    ));
    let mut seen = std::collections::HashSet::new();
    let mut once = String::new();
    let mut listed = std::collections::HashMap::<String, usize>::new();
    for line in pb.lines() {
        let (row, vintage) = line.rsplit_once(',').unwrap();
        if seen.insert(row.to_string()) {
            once.push_str(row);
            once.push('\n');
        }
        *listed.entry(vintage.to_string()).or_default() += 1;
    }
    assert_eq!(
        pa, once,
        "parameters.csv less its vintage column and repeats"
    );
    // Every origin's vintage lists its estimations (the header's "vintage" besides).
    let origins: std::collections::HashSet<&String> = a.iter().skip(1).map(|r| &r[4]).collect();
    assert_eq!(listed.len(), origins.len() + 1, "{listed:?}");
    let differing = [
        "forecasts.csv",
        "parameters.csv",
        "experiment.yaml",
        "report.md",
        "report.html",
    ];
    assert_eq!(
        manifest_less_inputs(&plain, &differing),
        manifest_less_inputs(&long, &differing)
    );
    // The reports differ in the vintage sentence, the run record and the
    // vintage of the leaders' last estimations only.
    let (ra, rb) = (
        std::fs::read_to_string(plain.join("report.md")).unwrap(),
        std::fs::read_to_string(long.join("report.md")).unwrap(),
    );
    assert_eq!(ra.lines().count(), rb.lines().count());
    let mut changed = 0;
    for (x, y) in ra.lines().zip(rb.lines()).filter(|(x, y)| x != y) {
        changed += 1;
        let expected = y.contains("Real-time data (layout vintages)")
            || y.starts_with(&format!("{}, as vintage ", x.trim_end_matches('.')))
            || (x.contains("sha256") && y.contains("sha256"))
            || y.trim_start().starts_with("file:")
            || y.trim_start().starts_with("layout:");
        assert!(expected, "{x}\n{y}");
    }
    assert!(changed >= 3, "{changed}");
    let folder: Vec<String> = std::fs::read_dir(&long)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .filter(|f| !SAME_TABLES.contains(&f.as_str()) && !differing.contains(&f.as_str()))
        .collect();
    assert_eq!(folder, ["manifest.json"], "every file compared");
    // The wide layout is the same data: the same table, byte for byte.
    assert_eq!(
        std::fs::read(long.join("forecasts.csv")).unwrap(),
        std::fs::read(wide.join("forecasts.csv")).unwrap()
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_value_changed_only_in_later_vintages_moves_no_earlier_forecast() {
    // Holds by construction: origin T sees vintage T only. Vintages after
    // 2021-06 revise the demand of 2020-03 (and with it two seasonal
    // differences) and the rain deficit of 2020-05.
    let dir = scratch("later");
    let (_, rows) = demo_rows();
    let cut = row_of(&rows, "2021-06");
    let (demand, rain) = (row_of(&rows, "2020-03"), row_of(&rows, "2020-05"));
    std::fs::write(
        dir.join("base.csv"),
        long_file("2019-12", &|_, _, _, c| c.into()),
    )
    .unwrap();
    let revised = long_file("2019-12", &|v, i, c, cell| {
        if v > cut && ((i == demand && c == 1) || (i == rain && c == 2)) {
            format!("{}", cell.parse::<f64>().unwrap() * 1.25 + 3.0)
        } else {
            cell.to_string()
        }
    });
    std::fs::write(dir.join("revised.csv"), revised).unwrap();
    let keys = "  layout: vintages";
    let base = forecasts(&run(&dir, "base", &experiment("base.csv", keys, "")));
    let changed = forecasts(&run(&dir, "revised", &experiment("revised.csv", keys, "")));
    let (mut same, mut moved_later) = (0, 0);
    for (x, y) in base.iter().zip(&changed).skip(1) {
        // Everything the model made: forecast, in-sample MSE, intervals.
        let made = |r: &[String]| -> Vec<String> { [&r[..7], &r[9..12]].concat() };
        if x[4].as_str() <= "2021-06" {
            assert_eq!(made(x), made(y), "origin {}", x[4]);
            same += 1;
        } else if made(x) != made(y) {
            moved_later += 1;
        }
    }
    assert!(same > 500, "{same}");
    assert!(moved_later > 0, "the revision reaches the later origins");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_revision_inside_a_fixed_sample_is_estimated_again_and_listed_by_vintage() {
    // A fixed scheme estimates over the data up to 2019-12. Vintages after
    // 2021-06 revise the demand of 2018-06: up to 2021-06 every vintage
    // publishes the sample unchanged, so the first estimate is used again
    // (one set of values listed under every vintage); the first vintage
    // after it is estimated again on the revised sample (warm-started from
    // the previous estimate for arima and smoothing, from scratch for
    // least squares), and the vintages after that publish that revised
    // sample unchanged again: two sets of values, the switch at 2021-07.
    let dir = scratch("fixed");
    let (_, rows) = demo_rows();
    let cut = row_of(&rows, "2021-06");
    let revised_row = row_of(&rows, "2018-06");
    let revised = long_file("2019-12", &|v, i, c, cell| {
        if v > cut && i == revised_row && c == 1 {
            format!("{}", cell.parse::<f64>().unwrap() * 1.1)
        } else {
            cell.to_string()
        }
    });
    std::fs::write(dir.join("revised.csv"), revised).unwrap();
    let out = run(
        &dir,
        "revised",
        &experiment("revised.csv", "  layout: vintages", ""),
    );
    let params = table(&out, "parameters.csv");
    assert_eq!(params[0].last().unwrap(), "vintage");
    for candidate in ["arima(1,0,0)", "smoothing(none,none)", "ar(2)"] {
        // (vintage, the values of that vintage's estimation); a direct
        // model's horizon-1 regression.
        let mut by_vintage: Vec<(String, Vec<String>)> = Vec::new();
        let mine = params
            .iter()
            .filter(|r| r[1] == candidate && r[2] == "fixed" && (r[3].is_empty() || r[3] == "1"));
        for r in mine {
            assert_eq!(r[4], "2019-12", "one estimation end");
            let values = format!("{} {} {}", r[5], r[6], r[7]);
            match by_vintage.last_mut() {
                Some((v, list)) if *v == r[8] => list.push(values),
                _ => by_vintage.push((r[8].clone(), vec![values])),
            }
        }
        assert!(by_vintage.len() > 50, "{candidate}: one per vintage");
        let switch = by_vintage
            .iter()
            .position(|(v, _)| v.as_str() > "2021-06")
            .unwrap();
        assert_eq!(by_vintage[switch].0, "2021-07");
        let (before, after) = by_vintage.split_at(switch);
        assert!(before.iter().all(|(_, l)| *l == before[0].1), "{candidate}");
        assert!(after.iter().all(|(_, l)| *l == after[0].1), "{candidate}");
        assert_ne!(before[0].1, after[0].1, "{candidate}: estimated again");
    }
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn the_release_scored_changes_outturns_and_errors_only() {
    // Holds by construction: the release scored is not data any origin sees.
    let dir = scratch("release");
    let (_, rows) = demo_rows();
    // Revisions: every vintage after a period's first revises it by +1 %.
    let revised = long_file("2019-12", &|v, i, c, cell| {
        if c == 1 && !cell.is_empty() && v > i {
            format!("{}", cell.parse::<f64>().unwrap() * 1.01)
        } else {
            cell.to_string()
        }
    });
    let _ = rows;
    std::fs::write(dir.join("v.csv"), revised).unwrap();
    let keys = "  layout: vintages";
    let latest = forecasts(&run(
        &dir,
        "latest",
        &experiment("v.csv", keys, "  actual: latest"),
    ));
    let first = forecasts(&run(
        &dir,
        "first",
        &experiment("v.csv", keys, "  actual: first"),
    ));
    let second = forecasts(&run(
        &dir,
        "second",
        &experiment("v.csv", keys, "  actual: {release: 2}"),
    ));
    assert_eq!(latest.len(), first.len());
    let mut differ = 0;
    for ((x, y), z) in latest.iter().zip(&first).zip(&second).skip(1) {
        let made = |r: &[String]| -> Vec<String> { [&r[..7], &r[9..12]].concat() };
        assert_eq!(made(x), made(y));
        assert_eq!(made(x), made(z));
        // First release: the vintage of the forecast period itself.
        assert_eq!(y[13], y[5], "{y:?}");
        differ += usize::from(x[7] != y[7]);
        // The second release comes a period later; the last periods have
        // none in the file and are left out of the scores.
        if z[7].is_empty() {
            assert!(z[8].is_empty() && z[13].is_empty());
        }
    }
    assert!(differ > 100, "{differ}");
    assert!(second.iter().any(|r| r[7].is_empty()));
    let _ = std::fs::remove_dir_all(&dir);
}

/// A vintage file with one problem: exit 2, nothing written, the message.
fn refused(tag: &str, csv: &str, data_keys: &str, scoring: &str, expect: &[&str]) {
    let dir = scratch(tag);
    std::fs::write(dir.join("v.csv"), csv).unwrap();
    let exp = dir.join("exp.yaml");
    std::fs::write(&exp, experiment("v.csv", data_keys, scoring)).unwrap();
    let out_dir = dir.join("out");
    let out = outturn(&["run", path(&exp), "--out", path(&out_dir), "--quiet"]);
    let stderr = text(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{tag}: {stderr}");
    for e in expect {
        assert!(stderr.contains(e), "{tag}: {e} not in {stderr}");
    }
    assert!(!out_dir.exists());
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn bad_vintage_files_are_refused_by_file_row_and_column() {
    let good = long_file("2019-12", &|_, _, _, c| c.into());
    let lines: Vec<&str> = good.lines().collect();
    let keys = "  layout: vintages";
    refused(
        "no-column",
        &good.replacen("period,vintage,", "period,release,", 1),
        keys,
        "",
        &["v.csv:1", "column 'vintage'", "data.vintage"],
    );
    // Line 3 of the file: its vintage label edited.
    let mut bad = lines.clone();
    let edited = lines[2].replacen(",2019-12,", ",2019-13,", 1);
    bad[2] = &edited;
    refused(
        "label",
        &(bad.join("\n") + "\n"),
        keys,
        "",
        &["v.csv:3:2", "column 'vintage'", "month must be 01 to 12"],
    );
    let mut dup = lines.clone();
    dup.insert(3, lines[2]);
    refused(
        "duplicate",
        &(dup.join("\n") + "\n"),
        keys,
        "",
        &[
            "v.csv:4:1",
            "appears twice in vintage '2019-12'",
            "lines 3 and 4",
        ],
    );
    // A vintage holding no value of the target.
    let empty: String = lines
        .iter()
        .map(|l| {
            let c: Vec<&str> = l.split(',').collect();
            if c[1] == "2020-01" {
                format!("{},{},,{},{}\n", c[0], c[1], c[3], c[4])
            } else {
                format!("{l}\n")
            }
        })
        .collect();
    refused(
        "empty",
        &empty,
        keys,
        "",
        &[
            "v.csv:",
            "vintage '2020-01' holds no value of target 'demand_ml'",
        ],
    );
    // Vintages from 2020-06 only: the origins from 2019-12 have none.
    refused(
        "before",
        &long_file("2020-06", &|_, _, _, c| c.into()),
        keys,
        "",
        &["scheme fixed", "comes before the first vintage '2020-06'"],
    );
    refused(
        "actual-without-vintages",
        &good,
        "",
        "  actual: first",
        &["scoring.actual", "data.layout vintages"],
    );
    refused(
        "wide-plain-column",
        &good,
        "  layout: vintage_columns",
        "",
        &["v.csv:1:3", "a plain column 'demand_ml'", "demand_ml@"],
    );
    refused(
        "wide-without-columns",
        &good.replacen(",demand_ml,", ",demand,", 1),
        "  layout: vintage_columns",
        "",
        &["target 'demand_ml' has no vintage columns", "demand_ml@"],
    );
    let wide = wide_file("2019-12");
    refused(
        "wide-label",
        &wide.replacen("demand_ml@2019-12", "demand_ml@2019Q4", 1),
        "  layout: vintage_columns",
        "",
        &[
            "v.csv:1:2",
            "column 'demand_ml@2019Q4'",
            "not a monthly period label",
        ],
    );
}

#[test]
fn the_regional_output_demo_runs_audits_and_verifies() {
    let dir = scratch("demo");
    let exp = root().join("experiments/regional_output.yaml");
    let out_dir = dir.join("out");
    let out = outturn(&[
        "run",
        path(&exp),
        "--out",
        path(&out_dir),
        "--quiet",
        "--no-cache",
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let report = std::fs::read_to_string(out_dir.join("report.md")).unwrap();
    assert!(
        report.contains("the outturn scored is the first release"),
        "the report says which release counts"
    );
    let rows = forecasts(&out_dir);
    let header = &rows[0];
    assert_eq!(&header[header.len() - 2..], ["vintage", "actual_release"]);
    let params = table(&out_dir, "parameters.csv");
    assert_eq!(params[0].last().unwrap(), "vintage");
    assert!(params.iter().skip(1).all(|r| !r[8].is_empty()));
    let verify = outturn(&["verify", path(&out_dir)]);
    assert_eq!(verify.status.code(), Some(0), "{}", text(&verify.stdout));
    // Two shards merged give the single run's folder (the manifest's `run`
    // section aside), and a re-render its reports.
    for k in ["1/2", "2/2"] {
        let shard = dir.join(format!("shard{}", &k[..1]));
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
    let merged = dir.join("merged");
    let out = outturn(&[
        "merge",
        path(&dir.join("shard1")),
        path(&dir.join("shard2")),
        "--out",
        path(&merged),
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let less_run = |d: &Path| {
        let text = std::fs::read_to_string(d.join("manifest.json")).unwrap();
        let mut m: serde_json::Value = serde_json::from_str(&text).unwrap();
        m.as_object_mut().unwrap().remove("run");
        m
    };
    assert_eq!(less_run(&out_dir), less_run(&merged));
    let mut files = 0;
    for entry in std::fs::read_dir(&out_dir).unwrap() {
        let name = entry.unwrap().file_name();
        if name != "manifest.json" {
            files += 1;
            assert!(
                std::fs::read(out_dir.join(&name)).unwrap()
                    == std::fs::read(merged.join(&name)).unwrap(),
                "{name:?} differs after the merge"
            );
        }
    }
    assert!(files >= 11, "{files}");
    let before = std::fs::read(out_dir.join("report.html")).unwrap();
    let render = outturn(&["render", path(&out_dir)]);
    assert_eq!(render.status.code(), Some(0), "{}", text(&render.stderr));
    assert!(std::fs::read(out_dir.join("report.html")).unwrap() == before);
    let audit = outturn(&["audit", path(&exp), "--origins", "2"]);
    let said = text(&audit.stdout);
    assert_eq!(audit.status.code(), Some(0), "{said}");
    assert!(
        said.contains("checks across 33 cells, 0 forecasts moved"),
        "{said}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}
