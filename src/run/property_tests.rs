//! Property tests (issue 3): no input reaches a panic. YAML text → experiment,
//! CSV bytes → series, and period labels are generated at random and near
//! valid inputs; each property runs a bounded number of cases so the suite
//! stays quick (set PROPTEST_CASES to run more). Properties hold by
//! construction of the contract: invalid input is an `Error::Invalid`,
//! never a panic, and a valid experiment never yields a non-finite forecast.

use crate::error::Error;
use crate::spec::data::read_table;
use crate::spec::period::{format_label, parse_label, Frequency, LabelStyle};
use proptest::prelude::*;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicUsize, Ordering};

const BASE: &str = "\
version: 1
experiment: prop
data:
  file: data.csv
  time: period
  frequency: quarterly
target: y
predictors:
  - column: x
    release_lag: 1
candidates:
  - family: naive
  - family: mean
  - family: ar
    lags: [1, 2]
  - family: ardl
    lags: [1]
    predictors: [x]
    predictor_lags: [1]
backtest:
  schemes:
    - expanding: {first_origin: 1995Q4}
    - rolling: {window: 12, test_start: 1997Q1}
  horizons: [1, 2]
scoring:
  metrics: [rmse, mae, coverage]
  intervals: [0.8]
  periods:
    early: [1996Q1, 1998Q4]
";

static COUNTER: AtomicUsize = AtomicUsize::new(0);

/// A fresh folder per case (cases run in one process, one after another).
fn scratch(tag: &str) -> PathBuf {
    let n = COUNTER.fetch_add(1, Ordering::SeqCst);
    let dir = std::env::temp_dir().join(format!("outturn-prop-{}-{tag}-{n}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temporary folder");
    dir
}

/// 40 quarters from 1990Q1 with the given values (cycled).
fn csv_with(values: &[f64]) -> String {
    let mut s = String::from("period,y,x\n");
    for i in 0..40 {
        let v = values[i % values.len()];
        let w = values[(i * 7 + 3) % values.len()];
        s.push_str(&format!("{}Q{},{v},{w}\n", 1990 + i / 4, i % 4 + 1));
    }
    s
}

fn base_csv() -> String {
    let values: Vec<f64> = (0..40)
        .map(|i| 100.0 + i as f64 * 0.7 + ((i * 37) % 11) as f64 * 0.3)
        .collect();
    csv_with(&values)
}

fn config(cases: u32) -> ProptestConfig {
    ProptestConfig {
        cases,
        failure_persistence: None,
        ..ProptestConfig::default()
    }
}

/// Load an experiment; any error must be a typed one with a message.
fn load_never_panics(dir: &Path, yaml: &str, csv: &str) -> Result<(), TestCaseError> {
    std::fs::write(dir.join("exp.yaml"), yaml).expect("write");
    std::fs::write(dir.join("data.csv"), csv).expect("write");
    let result = std::panic::catch_unwind(|| crate::spec::load(&dir.join("exp.yaml")));
    let _ = std::fs::remove_dir_all(dir);
    match result {
        Err(_) => Err(TestCaseError::fail(format!(
            "panic on:\n{yaml}\n---\n{csv}"
        ))),
        Ok(Ok(_)) => Ok(()),
        Ok(Err(Error::Invalid(diags))) => {
            prop_assert!(!diags.is_empty());
            prop_assert!(diags.iter().all(|d| !d.message.is_empty()));
            Ok(())
        }
        Ok(Err(other)) => Err(TestCaseError::fail(format!(
            "loading gave a non-input error {other} on:\n{yaml}"
        ))),
    }
}

/// Small edits that keep a file close to valid, so the decoder gets deep.
#[derive(Debug, Clone)]
enum Edit {
    DeleteLine(usize),
    DuplicateLine(usize),
    SwapLines(usize, usize),
    Replace(usize, &'static str),
    Insert(usize, &'static str),
}

const PIECES: &[&str] = &[
    ":",
    "-",
    "[",
    "]",
    "{",
    "}",
    ",",
    "'",
    "\"",
    "#",
    " ",
    "\t",
    "\n",
    "&a ",
    "*a",
    "!!str ",
    "? ",
    "|",
    ">",
    "0",
    "-1",
    "99999999999999999999",
    "1.5",
    "1e400",
    "nan",
    "~",
    "null",
    "true",
    "2000Q5",
    "1995Q4",
    "2030Q1",
    "y",
    "x",
    "family: ar",
    "lags: {from: 3, to: 1}",
    "lags: []",
    "window: 0",
    "horizons: [0]",
    "transform: log",
    "transform: seasonal_diff",
    "known_ahead: true",
    "select: bic",
    "max_lags: 40",
    "members: [naive]",
    "weights: trimmed",
    "family: combination",
    "family: seasonal_naive",
    "frequency: annual",
    "frequency: index",
    "release_lag: 99",
    "trend: linear",
    "train_share: 0.99",
    "origins: first",
    "é",
    "\u{0}",
    "\u{feff}",
];

fn edit() -> impl Strategy<Value = Edit> {
    prop_oneof![
        (0..40usize).prop_map(Edit::DeleteLine),
        (0..40usize).prop_map(Edit::DuplicateLine),
        (0..40usize, 0..40usize).prop_map(|(a, b)| Edit::SwapLines(a, b)),
        (0..1200usize, prop::sample::select(PIECES)).prop_map(|(at, p)| Edit::Replace(at, p)),
        (0..1200usize, prop::sample::select(PIECES)).prop_map(|(at, p)| Edit::Insert(at, p)),
    ]
}

fn apply(text: &str, edits: &[Edit]) -> String {
    let mut text = text.to_string();
    for e in edits {
        let mut lines: Vec<String> = text.lines().map(String::from).collect();
        let n = lines.len().max(1);
        match e {
            Edit::DeleteLine(i) if !lines.is_empty() => {
                lines.remove(i % n);
            }
            Edit::DuplicateLine(i) if !lines.is_empty() => {
                let l = lines[i % n].clone();
                lines.insert(i % n, l);
            }
            Edit::SwapLines(a, b) if !lines.is_empty() => lines.swap(a % n, b % n),
            Edit::Replace(at, piece) | Edit::Insert(at, piece) => {
                let chars: Vec<char> = text.chars().collect();
                let at = at % (chars.len() + 1);
                let rest = if matches!(e, Edit::Replace(..)) {
                    (at + 1).min(chars.len())
                } else {
                    at
                };
                let mut out: String = chars[..at].iter().collect();
                out.push_str(piece);
                out.extend(&chars[rest..]);
                text = out;
                continue;
            }
            _ => {}
        }
        text = lines.join("\n") + "\n";
    }
    text
}

proptest! {
    #![proptest_config(config(256))]

    /// Any text at all: the YAML layer returns a tree or a positioned error.
    #[test]
    fn any_text_parses_or_fails_cleanly(text in "\\PC{0,200}") {
        if let Err(e) = crate::spec::yaml::parse(&text) {
            prop_assert!(e.line >= 1 && e.column >= 1);
        }
    }

    /// Near-valid experiment files: the whole spec layer, data included.
    #[test]
    fn edited_experiments_load_or_fail_cleanly(edits in prop::collection::vec(edit(), 1..4)) {
        let yaml = apply(BASE, &edits);
        load_never_panics(&scratch("yaml"), &yaml, &base_csv())?;
    }
}

/// Cells a messy spreadsheet holds.
const CELLS: &[&str] = &[
    "",
    " ",
    "1",
    "-1",
    "0",
    "0.5",
    "1e5",
    "1e400",
    "-1e-300",
    "NaN",
    "inf",
    "-inf",
    "NA",
    "abc",
    "1,5",
    "\"1,5\"",
    "\"",
    "\"\"",
    "1990Q1",
    "1990Q5",
    "1990-Q2",
    "2004-13",
    "2004-01-05",
    "17",
    "é",
    "\u{feff}",
    "\r",
    "1 000",
    "$5",
    "5%",
    "+3",
    ".5",
    "5.",
    "0x10",
];

fn table() -> impl Strategy<Value = String> {
    (
        prop::collection::vec(
            prop::sample::select(&["period", "y", "x", "", "y", "z"][..]),
            0..5,
        ),
        prop::collection::vec(
            prop::collection::vec(prop::sample::select(CELLS), 0..6),
            0..12,
        ),
        prop::sample::select(&["\n", "\r\n", "\n\n"][..]),
    )
        .prop_map(|(header, rows, eol)| {
            let mut s = header.join(",");
            for r in rows {
                s.push_str(eol);
                s.push_str(&r.join(","));
            }
            s
        })
}

/// Valid quarterly labels with one cell of the table disturbed.
fn near_valid_csv() -> impl Strategy<Value = String> {
    (0..40usize, 0..3usize, prop::sample::select(CELLS)).prop_map(|(row, col, cell)| {
        let csv = base_csv();
        let mut lines: Vec<String> = csv.lines().map(String::from).collect();
        let mut cells: Vec<String> = lines[row + 1].split(',').map(String::from).collect();
        cells[col] = cell.to_string();
        lines[row + 1] = cells.join(",");
        lines.join("\n") + "\n"
    })
}

proptest! {
    #![proptest_config(config(256))]

    /// CSV bytes → a table or a diagnostic naming the file.
    #[test]
    fn any_csv_reads_or_fails_cleanly(bytes in prop::collection::vec(any::<u8>(), 0..200)) {
        if let Err(d) = read_table(Path::new("d.csv"), &bytes) {
            prop_assert!(d.location.is_some());
        }
    }

    /// Tables of messy cells, through the whole spec layer.
    #[test]
    fn messy_tables_load_or_fail_cleanly(csv in table()) {
        load_never_panics(&scratch("csv"), BASE, &csv)?;
    }

    /// One disturbed cell in valid data: every refusal names the data file's line and column.
    #[test]
    fn one_bad_cell_is_named_by_line_and_column(csv in near_valid_csv()) {
        let dir = scratch("cell");
        std::fs::write(dir.join("exp.yaml"), BASE).expect("write");
        std::fs::write(dir.join("data.csv"), &csv).expect("write");
        let result = crate::spec::load(&dir.join("exp.yaml"));
        let _ = std::fs::remove_dir_all(&dir);
        if let Err(Error::Invalid(diags)) = result {
            for d in diags {
                let loc = d.location.clone().expect("a location");
                if loc.file.ends_with("data.csv") {
                    prop_assert!(loc.line.is_some(), "{d}");
                }
            }
        }
    }
}

const FREQUENCIES: [Frequency; 6] = [
    Frequency::Annual,
    Frequency::Quarterly,
    Frequency::Monthly,
    Frequency::Weekly,
    Frequency::Daily,
    Frequency::Index,
];

proptest! {
    #![proptest_config(config(256))]

    /// Any label, any frequency: an ordinal or an error, never a panic.
    #[test]
    fn any_label_parses_or_fails_cleanly(label in "\\PC{0,16}", f in 0..6usize) {
        let _ = parse_label(FREQUENCIES[f], &label);
    }

    /// Label-shaped strings near the accepted forms.
    #[test]
    fn label_shaped_strings_parse_or_fail_cleanly(
        label in "[0-9]{0,5}[-Q]{0,2}[0-9]{0,3}(-[0-9]{0,3})?", f in 0..6usize
    ) {
        let _ = parse_label(FREQUENCIES[f], &label);
    }

    /// Writing a period and reading it back gives the same period (for
    /// four-digit years), in both quarterly styles.
    #[test]
    fn labels_round_trip(year in 1000i64..9999, step in 0i64..366, f in 0..6usize, dash in any::<bool>()) {
        let freq = FREQUENCIES[f];
        let style = if dash { LabelStyle::QuarterDash } else { LabelStyle::Plain };
        let ordinal = match freq {
            Frequency::Annual | Frequency::Index => year,
            Frequency::Quarterly => year * 4 + step % 4,
            Frequency::Monthly => year * 12 + step % 12,
            Frequency::Weekly | Frequency::Daily => {
                crate::spec::period::days_from_civil(year, 1, 1) + step
            }
        };
        let label = format_label(freq, ordinal, style);
        let (back, _) = parse_label(freq, &label).expect("a written label reads back");
        prop_assert_eq!(back, ordinal);
    }
}

proptest! {
    #![proptest_config(config(24))]

    /// Whatever the values (constant, zero, tiny, huge, mixed signs), a full
    /// check either refuses the experiment or estimates every cell; and a run
    /// that writes forecasts writes only finite numbers.
    #[test]
    fn any_values_give_finite_forecasts_or_a_refusal(
        values in prop::collection::vec(
            prop_oneof![
                Just(0.0), Just(1.0), Just(-1.0), Just(5.0), Just(1e-120), Just(1e90),
                -1000.0f64..1000.0,
            ],
            1..12,
        )
    ) {
        let dir = scratch("values");
        std::fs::write(dir.join("exp.yaml"), BASE).expect("write");
        std::fs::write(dir.join("data.csv"), csv_with(&values)).expect("write");
        let opts = crate::run::RunOptions {
            out: Some(dir.join("res")),
            jobs: Some(1),
            shard: None,
            no_cache: true,
        };
        let result = std::panic::catch_unwind(|| crate::run::run(&dir.join("exp.yaml"), &opts, &crate::run::Silent));
        let forecasts = std::fs::read_to_string(dir.join("res/forecasts.csv")).ok();
        let _ = std::fs::remove_dir_all(&dir);
        match result {
            Err(_) => return Err(TestCaseError::fail(format!("panic on values {values:?}"))),
            Ok(Err(e)) => prop_assert!(e.exit_code() == 2, "values {values:?}: {e}"),
            Ok(Ok(_)) => {
                let text = forecasts.expect("a run that succeeds writes forecasts.csv");
                let lower = text.to_ascii_lowercase();
                prop_assert!(!lower.contains("nan") && !lower.contains("inf"), "values {values:?}");
            }
        }
    }
}

/// A real cell text and manifests to disturb: what a shard folder holds.
fn written_files() -> (String, Vec<u8>, Vec<u8>) {
    use crate::backtest::{cellio, CellOutput};
    use crate::models::{ForecastRow, OutlookRow};
    let out = CellOutput {
        forecasts: (0..4)
            .map(|i| ForecastRow {
                horizon: 1 + i % 2,
                origin: 10 + i,
                forecast: 0.5 * i as f64,
                is_mse: Some(1.25),
                is_var: None,
                variance: Some(2.0),
                order: None,
            })
            .collect(),
        outlook: vec![OutlookRow {
            horizon: 1,
            forecast: Some(3.0),
            variance: None,
        }],
        residuals: vec![0.1, -0.2],
        ..Default::default()
    };
    let mut text = String::new();
    cellio::write_cell("y/ar(1)/expanding", &out, &mut text);
    let manifest = br#"{"data":[{"file":"d.csv","sha256":"ab"}],"experiment":{"file":"e.yaml","name":"e","sha256":"cd"},"grid":{"benchmark":"naive","candidates":["naive"],"cells":[{"id":"y/naive/fixed","status":"ok"}],"horizons":[1],"schemes":["fixed"],"targets":["y"]},"outputs":[{"bytes":1,"file":"scores.csv","sha256":"ef"}],"seed":0,"templates":[],"tool":{"name":"outturn","profile":"release","version":"0.1.0"}}"#.to_vec();
    let shard = br#"{"cells":["y/naive/fixed"],"outputs":[{"file":"cells.txt","sha256":"ab"}],"run":{"experiment_path":"/e.yaml","seconds":0.1,"shard":"1/2","started_unix":1,"threads":2},"shard_of":{"count":2,"data_sha256":"cd","experiment":"e","experiment_sha256":"ef","grid_sha256":"01","shard":1,"tool_version":"0.1.0"}}"#.to_vec();
    (text, manifest, shard)
}

/// Bytes with a few of them replaced, dropped or inserted.
fn disturbed(base: Vec<u8>) -> impl Strategy<Value = Vec<u8>> {
    let len = base.len().max(1);
    prop::collection::vec((0..len, any::<u8>(), 0..3u8), 1..6).prop_map(move |edits| {
        let mut b = base.clone();
        for (at, byte, how) in edits {
            let at = at.min(b.len());
            match how {
                0 if at < b.len() => b[at] = byte,
                1 if at < b.len() => {
                    b.remove(at);
                }
                _ => b.insert(at, byte),
            }
        }
        b
    })
}

proptest! {
    #![proptest_config(config(512))]

    /// What outturn reads back from its own folders — cell rows, results
    /// and shard manifests — gives a value or an error for any bytes, random
    /// or a written file disturbed; never a panic. (Property by construction
    /// of the readers: every read is a checked parse.)
    #[test]
    fn folder_files_read_or_fail_cleanly(bytes in prop::collection::vec(any::<u8>(), 0..300)) {
        let text = String::from_utf8_lossy(&bytes);
        let _ = crate::backtest::cellio::read_cells(&text);
        let mut reader = crate::backtest::cellio::CellReader::new(&bytes[..]);
        while let Ok(Some(_)) = reader.next_cell() {}
        let _ = crate::results::manifest::Digest::from_bytes(&bytes);
        let _ = crate::results::shard::ShardManifest::from_bytes(&bytes);
    }

    #[test]
    fn disturbed_cell_rows_read_or_fail_cleanly(bytes in disturbed(written_files().0.into_bytes())) {
        let text = String::from_utf8_lossy(&bytes);
        if let Ok(cells) = crate::backtest::cellio::read_cells(&text) {
            for (_, out) in cells {
                prop_assert!(out.forecasts.len() <= bytes.len());
            }
        }
    }

    #[test]
    fn disturbed_manifests_read_or_fail_cleanly(
        results in disturbed(written_files().1),
        shard in disturbed(written_files().2),
    ) {
        if let Ok(m) = crate::results::shard::ShardManifest::from_bytes(&shard) {
            // Whatever reads as a shard manifest has a usable shard and count.
            prop_assert!(m.shard_of.shard >= 1 && m.shard_of.shard <= m.shard_of.count);
            prop_assert!(m.shard_of.count <= crate::results::shard::MAX_SHARDS);
        }
        if let Ok(m) = crate::results::manifest::Digest::from_bytes(&results) {
            prop_assert_eq!(m.tool.name, "outturn");
        }
    }
}

/// The progress a run reports adds up (by construction of the counts): one
/// `forecasts_done` per forecast and one `cell_done` per cell, combinations
/// and every thread count included, so the bar ends full.
#[test]
fn progress_counts_every_forecast_and_every_cell() {
    use std::sync::atomic::AtomicUsize;
    #[derive(Default)]
    struct Count {
        cells: AtomicUsize,
        forecasts: AtomicUsize,
        planned: AtomicUsize,
        planned_cells: AtomicUsize,
    }
    impl crate::progress::Progress for Count {
        fn begin(&self, cells: usize, forecasts: usize) {
            self.planned.store(forecasts, Ordering::SeqCst);
            self.planned_cells.store(cells, Ordering::SeqCst);
        }
        fn forecasts_done(&self, n: usize) {
            self.forecasts.fetch_add(n, Ordering::SeqCst);
        }
        fn cell_done(&self) {
            self.cells.fetch_add(1, Ordering::SeqCst);
        }
    }
    let yaml = BASE.replace(
        "    predictor_lags: [1]\n",
        "    predictor_lags: [1]\n  - family: combination\n    members: [\"ar(1)\", \"ar(2)\"]\n",
    );
    for jobs in [1, 2] {
        let dir = scratch("progress");
        std::fs::write(dir.join("exp.yaml"), &yaml).expect("write");
        std::fs::write(dir.join("data.csv"), base_csv()).expect("write");
        let count = Count::default();
        let opts = crate::run::RunOptions {
            out: Some(dir.join("res")),
            jobs: Some(jobs),
            shard: None,
            no_cache: true,
        };
        let summary = crate::run::run(&dir.join("exp.yaml"), &opts, &count).expect("runs");
        assert_eq!(count.planned.load(Ordering::SeqCst), summary.forecasts);
        assert_eq!(count.forecasts.load(Ordering::SeqCst), summary.forecasts);
        assert_eq!(count.planned_cells.load(Ordering::SeqCst), summary.cells);
        assert_eq!(count.cells.load(Ordering::SeqCst), summary.cells);
        let _ = std::fs::remove_dir_all(&dir);
    }
}
