//! forecasts.csv: every backtest forecast (SPEC §5), one row per target ×
//! candidate × scheme × horizon × origin, with the outturn, the error, the
//! in-sample MSE, the quantiles (interval bounds among them) and, when a candidate selects its order,
//! the order chosen. The largest table by far: rows are written straight
//! into one buffer, numbers without allocation.

use super::grid::Lookup;
use super::text::{push_field, push_num, push_usize, ReadError, Reader};
use crate::backtest::CellOutput;
use crate::plan::Cell;
use crate::spec::{Experiment, IntervalsFrom};
use std::collections::HashMap;
use std::io::Read;

pub const FILE: &str = "forecasts.csv";

/// The leading columns (SPEC §5), which the report reads; `is_mse`, the
/// quantile columns and `order` follow.
pub const COLUMNS: [&str; 9] = [
    "target",
    "candidate",
    "scheme",
    "horizon",
    "origin",
    "period",
    "forecast",
    "actual",
    "error",
];

/// The last columns under a vintage layout (docs/results-folder.md): the
/// vintage the forecast was made on, and the vintage whose value is the
/// outturn scored (empty when the file holds no such release yet).
pub const VINTAGE_COLUMNS: [&str; 2] = ["vintage", "actual_release"];

/// The quantile columns `q<100τ>`, ascending (SPEC §7.6): both bounds of
/// every interval level and every `scoring.quantiles` entry.
pub(super) fn quantile_headers(exp: &Experiment) -> Vec<String> {
    exp.quantile_columns().into_iter().map(|q| q.name).collect()
}

/// Each quantile column's standard-normal multiplier, in column order.
pub(super) fn quantile_multipliers(exp: &Experiment) -> Vec<f64> {
    exp.quantile_columns()
        .iter()
        .map(crate::score::quantile_multiplier)
        .collect()
}

/// Under past_errors: the forecast plus each past-error quantile, or
/// `columns` empty cells.
fn push_offsets(out: &mut Vec<u8>, forecast: f64, offsets: Option<&[f64]>, columns: usize) {
    for j in 0..columns {
        out.push(b',');
        if let Some(o) = offsets {
            push_num(out, forecast + o[j]);
        }
    }
}

/// The table of `outputs`, the cells' outputs in plan order.
pub fn write(exp: &Experiment, cells: &[Cell], outputs: &[CellOutput]) -> Vec<u8> {
    let mut header: Vec<String> = COLUMNS
        .iter()
        .chain(&["is_mse"])
        .map(|c| c.to_string())
        .collect();
    header.extend(quantile_headers(exp));
    let with_order = exp.candidates.iter().any(|c| c.family.selects());
    if with_order {
        header.push("order".into());
    }
    let vintages = exp.vintages.is_some();
    if vintages {
        header.extend(VINTAGE_COLUMNS.iter().map(|c| c.to_string()));
    }
    let rows: usize = outputs.iter().map(|o| o.forecasts.len()).sum();
    let zs = quantile_multipliers(exp);
    let mut out = Vec::with_capacity(64 + rows * (96 + 20 * zs.len()));
    for (i, h) in header.iter().enumerate() {
        if i > 0 {
            out.push(b',');
        }
        push_field(&mut out, h);
    }
    out.push(b'\n');
    let past = exp.intervals_from == IntervalsFrom::PastErrors;
    for (cell, o) in cells.iter().zip(outputs) {
        let target = &exp.targets[cell.target];
        let offsets = match past {
            true => crate::score::past_errors::for_forecasts(exp, target, o),
            false => Vec::new(),
        };
        let shape = crate::score::Shape::of(exp, cell.candidate);
        // The row's fixed part: target, candidate, scheme.
        let mut lead = Vec::new();
        push_field(&mut lead, &target.name);
        lead.push(b',');
        push_field(&mut lead, &exp.candidates[cell.candidate].id);
        lead.push(b',');
        push_field(&mut lead, &exp.schemes[cell.scheme].id);
        lead.push(b',');
        for (k, r) in o.forecasts.iter().enumerate() {
            let pos = r.origin + r.horizon;
            let actual = target.actual(pos);
            out.extend_from_slice(&lead);
            push_usize(&mut out, r.horizon);
            out.push(b',');
            push_field(&mut out, &target.labels[r.origin - 1]);
            out.push(b',');
            push_field(&mut out, &target.labels[pos - 1]);
            out.push(b',');
            push_num(&mut out, r.forecast);
            out.push(b',');
            push_num(&mut out, actual);
            out.push(b',');
            push_num(&mut out, actual - r.forecast);
            out.push(b',');
            if let Some(m) = r.is_mse {
                push_num(&mut out, m);
            }
            if past {
                push_offsets(&mut out, r.forecast, offsets[k].as_deref(), zs.len());
            } else {
                let sd = r.variance.filter(|v| *v >= 0.0).map(f64::sqrt);
                for &z in &zs {
                    out.push(b',');
                    if let Some(sd) = sd {
                        push_num(&mut out, shape.quantile(r.forecast, sd, z));
                    }
                }
            }
            if with_order {
                out.push(b',');
                if let Some(order) = r.order {
                    push_field(&mut out, &order.to_string());
                }
            }
            if let (true, Some(v)) = (vintages, &target.vintages) {
                out.push(b',');
                if let Some(i) = v.at_origin[r.origin - 1] {
                    push_field(&mut out, &v.labels[i]);
                }
                out.push(b',');
                if let Some(i) = v.actual_release[pos - 1] {
                    push_field(&mut out, &v.labels[i]);
                }
            }
            out.push(b'\n');
        }
    }
    out
}

/// One forecast as the report reads it.
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    pub origin: String,
    pub period: String,
    pub forecast: Option<f64>,
    pub actual: Option<f64>,
    pub error: Option<f64>,
    /// The quantile columns' values, in the order of [`quantile_probs`].
    pub quantiles: Vec<Option<f64>>,
}

/// (target, candidate, scheme, horizon), as positions in the grid.
pub type Key = (usize, usize, usize, usize);

/// The forecasts of each target × candidate × scheme × horizon, in the
/// table's (origin) order.
pub type Forecasts = HashMap<Key, Vec<Row>>;

/// The quantile columns `q<p>` of a header: (probability p/100, column),
/// in the header's (ascending) order.
fn quantile_columns(header: &[String]) -> Vec<(f64, usize)> {
    header
        .iter()
        .enumerate()
        .filter_map(|(i, h)| {
            let p = h.strip_prefix('q')?.parse::<f64>().ok()?;
            (p > 0.0 && p < 100.0).then_some((p / 100.0, i))
        })
        .collect()
}

/// Read the table, keeping the rows of the targets `keep` accepts; with
/// the probabilities of its quantile columns.
pub fn read(
    source: impl Read,
    grid: &Lookup,
    keep: &dyn Fn(usize) -> bool,
) -> Result<(Forecasts, Vec<f64>), ReadError> {
    let mut reader = Reader::new(FILE, source)?;
    let [target, candidate, scheme, horizon, origin, period, forecast, actual, error] =
        reader.columns(COLUMNS)?;
    let quantiles = quantile_columns(reader.header());
    let mut out = Forecasts::new();
    while let Some(row) = reader.next_row()? {
        let t = row.id(target, &grid.targets)?;
        if !keep(t) {
            continue;
        }
        let key = (
            t,
            row.id(candidate, &grid.candidates)?,
            row.id(scheme, &grid.schemes)?,
            row.horizon(horizon, grid.horizons)?,
        );
        out.entry(key).or_default().push(Row {
            origin: row.text(origin).to_string(),
            period: row.text(period).to_string(),
            forecast: row.number(forecast)?,
            actual: row.number(actual)?,
            error: row.number(error)?,
            quantiles: quantiles
                .iter()
                .map(|(_, col)| row.number(*col))
                .collect::<Result<_, _>>()?,
        });
    }
    Ok((out, quantiles.iter().map(|q| q.0).collect()))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::results::grid::Grid;

    fn grid() -> Grid {
        Grid {
            targets: vec!["y".into(), "z".into()],
            candidates: vec!["naive".into(), "ar(1)".into()],
            schemes: vec!["fixed".into()],
            horizons: vec![1],
            benchmark: 0,
        }
    }

    const HEADER: &str =
        "target,candidate,scheme,horizon,origin,period,forecast,actual,error,is_mse,q10,q90\n";

    #[test]
    fn rows_are_grouped_by_cell_and_horizon_in_table_order() {
        let text = format!(
            "{HEADER}y,ar(1),fixed,1,2001,2002,1.5,2,0.5,,,\ny,ar(1),fixed,1,2002,2003,,3,,,,\nz,naive,fixed,1,2001,2002,1,1,0,,,\n"
        );
        let g = grid();
        let (all, probs) = read(text.as_bytes(), &g.lookup(), &|_| true).unwrap();
        assert_eq!(probs, [0.1, 0.9]);
        let rows = &all[&(0, 1, 0, 1)];
        assert_eq!(rows.len(), 2);
        assert_eq!(rows[0].period, "2002");
        assert_eq!(rows[0].error, Some(0.5));
        assert_eq!(rows[1].forecast, None);
        // Rows of targets not kept are left out (their ids are still checked).
        let (first, _) = read(text.as_bytes(), &g.lookup(), &|t| t == 0).unwrap();
        assert!(!first.contains_key(&(1, 0, 0, 1)));
    }

    #[test]
    fn an_edited_row_is_an_error_naming_its_line() {
        let g = grid();
        for (row, message) in [
            ("x,naive,fixed,1,a,b,1,1,0,,,", "target 'x' is not a target"),
            ("y,naive,fixed,2,a,b,1,1,0,,,", "horizon 2 is not a horizon"),
            (
                "y,naive,fixed,1,a,b,one,1,0,,,",
                "forecast is 'one', not a number",
            ),
            (
                "y,naive,fixed,1,a,b,1,1",
                "the row has 8 fields where the header has 12",
            ),
        ] {
            let text = format!("{HEADER}y,naive,fixed,1,a,b,1,1,0,,,\n{row}\n");
            let err = read(text.as_bytes(), &g.lookup(), &|_| true)
                .unwrap_err()
                .to_string();
            assert!(err.starts_with("forecasts.csv, line 3: "), "{err}");
            assert!(err.contains(message), "{err}");
        }
        let err = read(&b"target,candidate\n"[..], &g.lookup(), &|_| true).unwrap_err();
        assert_eq!(
            err.to_string(),
            "forecasts.csv, line 1: there is no column 'scheme'"
        );
    }
}
