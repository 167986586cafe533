//! `outturn draft DATA.csv`: look at a CSV — which column holds periods, at
//! what frequency and in which label style, which columns are numeric, which
//! end early (a ragged edge) — and print a commented starter experiment that
//! `outturn check` accepts when saved in the current folder.

use crate::error::{Error, Location, Result};
use crate::spec::data::{parse_number, read_table, RawTable};
use crate::spec::period::{parse_label, Frequency};
use std::path::Path;

/// Where a column's labels of one frequency break their regular step: the
/// frequency and the indices of the two rows around the first break.
fn first_break(labels: &[&str]) -> Option<(Frequency, usize, usize)> {
    for f in [
        Frequency::Quarterly,
        Frequency::Monthly,
        Frequency::Daily,
        Frequency::Annual,
    ] {
        let ords: Option<Vec<i64>> = labels
            .iter()
            .map(|l| parse_label(f, l).ok().map(|(o, _)| o))
            .collect();
        let Some(ords) = ords.filter(|o| o.len() > 2) else {
            continue;
        };
        let step = if f == Frequency::Daily && ords[1] - ords[0] == 7 {
            7
        } else {
            1
        };
        if let Some(i) = (1..ords.len()).find(|&i| ords[i] - ords[i - 1] != step) {
            let f = if f == Frequency::Daily && step == 7 {
                Frequency::Weekly
            } else {
                f
            };
            return Some((f, i - 1, i));
        }
    }
    None
}

fn detect_frequency(labels: &[&str]) -> Option<Frequency> {
    let candidates = [
        Frequency::Quarterly,
        Frequency::Monthly,
        Frequency::Daily,
        Frequency::Weekly,
        Frequency::Annual,
        Frequency::Index,
    ];
    for f in candidates {
        let ords: Option<Vec<i64>> = labels
            .iter()
            .map(|l| parse_label(f, l).ok().map(|(o, _)| o))
            .collect();
        let Some(ords) = ords else { continue };
        if ords.len() < 2 {
            continue;
        }
        let step = ords[1] - ords[0];
        if !ords.windows(2).all(|w| w[1] - w[0] == step) {
            continue;
        }
        match f {
            Frequency::Daily if step == 7 => return Some(Frequency::Weekly),
            Frequency::Daily | Frequency::Quarterly | Frequency::Monthly if step == 1 => {
                return Some(f)
            }
            Frequency::Weekly if step == 7 => return Some(f),
            Frequency::Annual if step == 1 && ords.iter().all(|y| (1000..3000).contains(y)) => {
                return Some(f)
            }
            Frequency::Index if step == 1 => return Some(f),
            _ => {}
        }
    }
    None
}

/// A numeric column and where it ends.
struct Col {
    name: String,
    last: usize,
    complete_to_last: bool,
}

/// The time column: the first whose labels fit a calendar frequency, else
/// the first of whole numbers counting up (index). A column of calendar
/// labels with a break (a missing, repeated or misplaced period) comes
/// before an index column: it is reported as `Err` (column, frequency, the
/// two rows around the break).
/// A column's frequency and the two rows around the first break of its labels.
type Break = (usize, Frequency, usize, usize);

fn time_column(table: &RawTable) -> std::result::Result<Option<(usize, Frequency)>, Break> {
    let mut index = None;
    let mut broken = None;
    for (i, _) in table.headers.iter().enumerate() {
        let labels: Vec<&str> = table.rows.iter().map(|r| &r.cells[i]).collect();
        if labels.iter().any(|l| l.is_empty()) {
            continue;
        }
        match detect_frequency(&labels) {
            Some(Frequency::Index) => {
                index.get_or_insert((i, Frequency::Index));
            }
            Some(f) => return Ok(Some((i, f))),
            None => {
                if let Some((f, a, b)) = first_break(&labels) {
                    broken.get_or_insert((i, f, a, b));
                }
            }
        }
    }
    match broken {
        Some(b) => Err(b),
        None => Ok(index),
    }
}

/// Every column but the time column whose cells are all numbers or empty.
fn numeric_columns(table: &RawTable, time_idx: usize) -> Vec<Col> {
    let mut cols = Vec::new();
    for (i, name) in table.headers.iter().enumerate() {
        if i == time_idx {
            continue;
        }
        let parsed: Option<Vec<Option<f64>>> = table
            .rows
            .iter()
            .map(|r| parse_number(&r.cells[i]).ok())
            .collect();
        let Some(values) = parsed else { continue };
        let Some(last) = values.iter().rposition(Option::is_some) else {
            continue;
        };
        let first = values.iter().position(Option::is_some).unwrap_or(0);
        cols.push(Col {
            name: name.clone(),
            last,
            complete_to_last: first == 0 && values[..=last].iter().all(Option::is_some),
        });
    }
    cols
}

/// An experiment name from the data file's name (a-z, 0-9 and '-').
fn experiment_name(path: &Path) -> String {
    let stem = path
        .file_stem()
        .map(|s| s.to_string_lossy().to_lowercase())
        .unwrap_or_else(|| "experiment".into());
    let name: String = stem
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() {
                c.to_ascii_lowercase()
            } else {
                '-'
            }
        })
        .collect();
    if name.is_empty() {
        "experiment".into()
    } else {
        name
    }
}

pub fn draft(path: &Path) -> Result<String> {
    let loc = || {
        Some(Location {
            file: path.to_path_buf(),
            line: None,
            column: None,
        })
    };
    let bytes = std::fs::read(path)
        .map_err(|e| Error::invalid(loc(), format!("cannot read the data file: {e}")))?;
    let table = read_table(path, &bytes).map_err(|d| Error::Invalid(vec![d]))?;
    let (time_idx, freq) = match time_column(&table) {
        Ok(Some(found)) => found,
        Ok(None) => return Err(Error::invalid(loc(), "no column holds period labels of one frequency without gaps (e.g. 2004Q1, 2004-01, 2004-01-05, 2004 or 1, 2, 3 …)")),
        Err((i, f, a, b)) => {
            let (ra, rb) = (&table.rows[a], &table.rows[b]);
            return Err(Error::invalid(
                Some(Location {
                    file: path.to_path_buf(),
                    line: Some(rb.line),
                    column: Some(i + 1),
                }),
                format!(
                    "column '{}' holds {} labels but they do not follow each other: '{}' (line {}) comes after '{}' (line {}) — a period is missing, repeated or out of order there; periods must run without gaps",
                    table.headers[i],
                    f.name(),
                    &rb.cells[i],
                    rb.line,
                    &ra.cells[i],
                    ra.line
                ),
            ));
        }
    };
    let cols = numeric_columns(&table, time_idx);
    let usable: Vec<&Col> = cols.iter().filter(|c| c.complete_to_last).collect();
    let Some(target) = usable.first() else {
        return Err(Error::invalid(
            loc(),
            "no numeric column without gaps to forecast",
        ));
    };
    // Columns ending up to three periods early become predictors with a
    // release lag; columns running past the target are known ahead.
    let predictors: Vec<(&Col, usize, bool)> = usable[1..]
        .iter()
        .filter(|c| c.last + 3 >= target.last)
        .map(|c| (*c, target.last.saturating_sub(c.last), c.last > target.last))
        .collect();
    Ok(starter(path, &table, time_idx, freq, target, &predictors))
}

/// The commented starter experiment.
fn starter(
    path: &Path,
    table: &RawTable,
    time_idx: usize,
    freq: Frequency,
    target: &Col,
    predictors: &[(&Col, usize, bool)],
) -> String {
    let n_rows = table.rows.len();
    let n = target.last + 1;
    let first_label = &table.rows[0].cells[time_idx];
    let origin_row = (n * 6 / 10).max(1) - 1;
    let origin = &table.rows[origin_row].cells[time_idx];
    let mut y = String::new();
    y.push_str(&format!(
        "# Starter experiment drafted from {} ({} rows; periods {} to {}).\n",
        path.display(),
        n_rows,
        first_label,
        &table.rows[n_rows - 1].cells[time_idx]
    ));
    y.push_str(
        "# Save it in the current folder (the data path below is relative to it), edit, then:\n",
    );
    y.push_str("#   outturn check FILE && outturn run FILE\n");
    y.push_str("version: 1\n");
    y.push_str(&format!("experiment: {}\n", experiment_name(path)));
    y.push_str("notes: Drafted by outturn draft; say what question this experiment answers.\n\n");
    y.push_str("data:\n");
    y.push_str(&format!(
        "  file: {}                # relative to this experiment file\n",
        path.display()
    ));
    y.push_str(&format!("  time: {}\n", table.headers[time_idx]));
    y.push_str(&format!(
        "  frequency: {}            # detected from labels like {}\n",
        freq.name(),
        first_label
    ));
    y.push('\n');
    y.push_str(&format!("target: {}\n", target.name));
    y.push_str("transform: none                   # none | log | diff | log_diff | pct_change | seasonal_diff\n");
    if !predictors.is_empty() {
        y.push_str("\npredictors:\n");
        for (c, lag, ahead) in predictors {
            y.push_str(&format!("  - column: {}\n", c.name));
            if *ahead {
                y.push_str(
                    "    known_ahead: true             # it has values after the target ends\n",
                );
            }
            if *lag > 0 {
                y.push_str(&format!("    release_lag: {lag}            # its last {lag} cell(s) are empty: published late\n"));
            }
        }
    }
    y.push_str("\ncandidates:\n  - family: naive\n  - family: mean\n  - family: drift\n");
    if freq.season_length().is_some() {
        y.push_str("  - family: seasonal_naive\n");
    }
    y.push_str("  - family: ar\n    lags: {from: 1, to: 4}\n");
    if let Some((p, _, _)) = predictors.first() {
        y.push_str(&format!(
            "  - family: ardl\n    lags: [1]\n    predictors: [{}]\n    predictor_lags: [1, 2]\n",
            p.name
        ));
    }
    y.push_str("\nbacktest:\n  schemes:\n");
    y.push_str(&format!(
        "    - expanding: {{first_origin: {origin}}}   # about 60% into the data\n"
    ));
    y.push_str("  horizons: [1, 2]\n");
    y.push_str("\nscoring:\n  metrics: [rmse, mae, mase]\n  benchmark: naive\n");
    y.push_str("\nreport:\n  formats: [html, markdown]\n");
    y.push_str("\nseed: 1\n");
    y
}
