//! parameters.csv (SPEC §7.4): one row per parameter per estimation of the
//! backtest — a fixed scheme estimates once per cell, an expanding or
//! rolling one at every refit. `origin` is the label of the estimation's
//! end E; `horizon` is empty where the estimate serves every horizon.
//! Within a cell the rows come horizon by horizon (the horizon-free ones
//! first), each estimation in time order, each parameter in the model's
//! order. Written row by row into one buffer (it is as long as forecasts.csv
//! or longer).
//!
//! Under a vintage layout every origin estimates on its own vintage, so
//! several estimations share an end E: each is listed, in origin order,
//! and a last column `vintage` names the vintage it was made on (an
//! estimate used again on an unchanged sample is listed again with the
//! vintage that used it). Without vintages the column is not written.

use super::grid::Lookup;
use super::text::{push_field, push_num, push_usize, ReadError, Reader};
use crate::backtest::CellOutput;
use crate::plan::Cell;
use crate::spec::Experiment;
use std::io::Read;

pub const FILE: &str = "parameters.csv";

/// The columns, in order.
pub const COLUMNS: [&str; 8] = [
    "target",
    "candidate",
    "scheme",
    "horizon",
    "origin",
    "parameter",
    "estimate",
    "std_error",
];

/// The last column under a vintage layout: the vintage an estimation was
/// made on.
pub const VINTAGE_COLUMN: &str = "vintage";

/// The table of `outputs`, the cells' outputs in plan order; a failed
/// cell's estimations are not written (it has no forecasts either).
pub fn write(exp: &Experiment, cells: &[Cell], outputs: &[CellOutput]) -> Vec<u8> {
    let rows: usize = outputs
        .iter()
        .flat_map(|o| &o.parameters)
        .map(|e| e.parameters.len())
        .sum();
    let mut out = Vec::with_capacity(64 + rows * 72);
    out.extend_from_slice(COLUMNS.join(",").as_bytes());
    let vintages = exp.vintages.is_some();
    if vintages {
        out.push(b',');
        out.extend_from_slice(VINTAGE_COLUMN.as_bytes());
    }
    out.push(b'\n');
    let mut lead = Vec::new();
    for (cell, o) in cells.iter().zip(outputs) {
        if o.failure.is_some() || o.parameters.is_empty() {
            continue;
        }
        let target = &exp.targets[cell.target];
        lead.clear();
        push_field(&mut lead, &target.name);
        lead.push(b',');
        push_field(&mut lead, &exp.candidates[cell.candidate].id);
        lead.push(b',');
        push_field(&mut lead, &exp.schemes[cell.scheme].id);
        lead.push(b',');
        let mut horizons: Vec<Option<usize>> = o
            .parameters
            .iter()
            .flat_map(|e| e.parameters.iter().map(|p| p.horizon))
            .collect();
        horizons.sort_unstable();
        horizons.dedup();
        for h in horizons {
            for e in &o.parameters {
                let origin = &target.labels[e.end - 1];
                for p in e.parameters.iter().filter(|p| p.horizon == h) {
                    out.extend_from_slice(&lead);
                    if let Some(h) = h {
                        push_usize(&mut out, h);
                    }
                    out.push(b',');
                    push_field(&mut out, origin);
                    out.push(b',');
                    push_field(&mut out, &p.name);
                    out.push(b',');
                    push_num(&mut out, p.estimate);
                    out.push(b',');
                    if let Some(se) = p.std_error {
                        push_num(&mut out, se);
                    }
                    if vintages {
                        out.push(b',');
                        let label = target.vintages.as_ref().zip(e.vintage);
                        if let Some(label) = label.and_then(|(v, i)| v.labels.get(i)) {
                            push_field(&mut out, label);
                        }
                    }
                    out.push(b'\n');
                }
            }
        }
    }
    out
}

/// One parameter of one estimation as read back.
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    pub target: usize,
    pub candidate: usize,
    pub scheme: usize,
    /// None: the estimate serves every horizon.
    pub horizon: Option<usize>,
    /// The label of the estimation's end.
    pub origin: String,
    pub parameter: String,
    pub estimate: Option<f64>,
    pub std_error: Option<f64>,
    /// The vintage the estimation was made on (a vintage layout only).
    pub vintage: Option<String>,
}

/// Read the table, keeping the rows that `keep(target, candidate)` accepts.
pub fn read(
    source: impl Read,
    grid: &Lookup,
    keep: &dyn Fn(usize, usize) -> bool,
) -> Result<Vec<Row>, ReadError> {
    let mut reader = Reader::new(FILE, source)?;
    let [target, candidate, scheme, horizon, origin, parameter, estimate, std_error] =
        reader.columns(COLUMNS)?;
    let vintage = reader.optional(VINTAGE_COLUMN);
    let mut rows = Vec::new();
    while let Some(row) = reader.next_row()? {
        let t = row.id(target, &grid.targets)?;
        let c = row.id(candidate, &grid.candidates)?;
        if !keep(t, c) {
            continue;
        }
        let h = match row.text(horizon) {
            "" => None,
            _ => Some(row.horizon(horizon, grid.horizons)?),
        };
        let name = row.text(parameter);
        if name.is_empty() {
            return Err(row.invalid("a parameter without a name"));
        }
        rows.push(Row {
            target: t,
            candidate: c,
            scheme: row.id(scheme, &grid.schemes)?,
            horizon: h,
            origin: row.text(origin).to_string(),
            parameter: name.to_string(),
            estimate: row.number(estimate)?,
            std_error: row.number(std_error)?,
            vintage: match vintage.map(|v| row.text(v)) {
                None => None,
                Some("") => return Err(row.invalid("an estimation without its vintage")),
                Some(v) => Some(v.to_string()),
            },
        });
    }
    Ok(rows)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::results::grid::Grid;

    fn grid() -> Grid {
        Grid {
            targets: vec!["y".into()],
            candidates: vec!["naive".into(), "ar(2)".into()],
            schemes: vec!["expanding".into()],
            horizons: vec![1, 4],
            benchmark: 0,
        }
    }

    #[test]
    fn rows_read_back_and_damage_names_the_line() {
        let g = grid();
        let text = "target,candidate,scheme,horizon,origin,parameter,estimate,std_error\n\
            y,ar(2),expanding,4,2020-03,ar1,0.5,0.1\n\
            y,naive,expanding,,2020-03,sigma2,2.25,\n";
        let rows = read(text.as_bytes(), &g.lookup(), &|_, _| true).unwrap();
        assert_eq!(rows.len(), 2);
        assert_eq!(
            (
                rows[0].horizon,
                rows[0].parameter.as_str(),
                rows[0].std_error
            ),
            (Some(4), "ar1", Some(0.1))
        );
        assert_eq!((rows[1].horizon, rows[1].std_error), (None, None));
        let kept = read(text.as_bytes(), &g.lookup(), &|_, c| c == 0).unwrap();
        assert_eq!(kept.len(), 1);
        let bad = text.replace(",4,2020", ",3,2020");
        let err = read(bad.as_bytes(), &g.lookup(), &|_, _| true)
            .unwrap_err()
            .to_string();
        assert!(err.starts_with("parameters.csv, line 2"), "{err}");
        assert_eq!(rows[0].vintage, None);
        let with = text
            .replace("std_error\n", "std_error,vintage\n")
            .replace("0.1\n", "0.1,2020Q2\n")
            .replace("2.25,\n", "2.25,,2020Q3\n");
        let rows = read(with.as_bytes(), &g.lookup(), &|_, _| true).unwrap();
        assert_eq!(rows[0].vintage.as_deref(), Some("2020Q2"));
        assert_eq!(rows[1].vintage.as_deref(), Some("2020Q3"));
        let without = with.replace(",2020Q3", ",");
        let err = read(without.as_bytes(), &g.lookup(), &|_, _| true)
            .unwrap_err()
            .to_string();
        assert!(err.starts_with("parameters.csv, line 3"), "{err}");
        let cut = &text.as_bytes()[..text.len() - 4];
        let err = read(cut, &g.lookup(), &|_, _| true)
            .unwrap_err()
            .to_string();
        assert!(err.starts_with("parameters.csv, line 3"), "{err}");
    }
}
