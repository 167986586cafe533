//! outlook.csv: forecasts beyond the data (SPEC §5), one row per target ×
//! candidate × horizon 1..max(horizons), listed or not, made at the last observed period N with every
//! model estimated on all the data (E = N; the last `window` rows when every
//! scheme is rolling), with their intervals.

use super::forecasts::interval_headers;
use super::grid::Lookup;
use super::text::{finish, num, opt, write_row, writer, ReadError, Reader};
use crate::backtest::CellOutput;
use crate::plan::Cell;
use crate::spec::Experiment;

pub const FILE: &str = "outlook.csv";

fn push_intervals(
    rec: &mut Vec<String>,
    exp: &Experiment,
    forecast: Option<f64>,
    variance: Option<f64>,
) {
    for level in &exp.intervals {
        match (forecast, variance) {
            (Some(f), Some(v)) if v >= 0.0 => {
                let (lo, hi) = crate::score::interval(f, v.sqrt(), level.level);
                rec.push(num(lo));
                rec.push(num(hi));
            }
            _ => {
                rec.push(String::new());
                rec.push(String::new());
            }
        }
    }
}

/// The table of `outputs`, the cells' outputs in plan order.
pub fn write(exp: &Experiment, cells: &[Cell], outputs: &[CellOutput]) -> Vec<u8> {
    let mut w = writer();
    let mut header: Vec<String> = [
        "target",
        "candidate",
        "horizon",
        "origin",
        "period",
        "forecast",
    ]
    .map(String::from)
    .to_vec();
    header.extend(interval_headers(exp));
    let _ = w.write_record(&header);
    for (cell, out) in cells.iter().zip(outputs) {
        let target = &exp.targets[cell.target];
        for r in &out.outlook {
            let mut rec = vec![
                target.name.clone(),
                exp.candidates[cell.candidate].id.clone(),
                r.horizon.to_string(),
                target.labels[target.n - 1].clone(),
                exp.period_label(target, target.n + r.horizon),
                opt(r.forecast),
            ];
            push_intervals(&mut rec, exp, r.forecast, r.variance);
            write_row(&mut w, &rec);
        }
    }
    finish(w)
}

/// One outlook forecast as read back.
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    pub target: usize,
    pub candidate: usize,
    pub horizon: usize,
    pub period: String,
    pub forecast: Option<f64>,
    /// (level in percent as the header writes it, lower, upper) per
    /// interval level, in the table's order.
    pub intervals: Vec<(String, Option<f64>, Option<f64>)>,
}

/// Read the table. Interval levels are the `lower_<c>` columns that have an
/// `upper_<c>` beside them.
pub fn read(bytes: &[u8], grid: &Lookup) -> Result<Vec<Row>, ReadError> {
    let mut reader = Reader::new(FILE, bytes)?;
    let [target, candidate, horizon, period, forecast] =
        reader.columns(["target", "candidate", "horizon", "period", "forecast"])?;
    let levels: Vec<(String, usize, usize)> = reader
        .header()
        .iter()
        .enumerate()
        .filter_map(|(i, h)| {
            let level = h.strip_prefix("lower_")?;
            let upper = reader.optional(&format!("upper_{level}"))?;
            Some((level.to_string(), i, upper))
        })
        .collect();
    let mut rows = Vec::new();
    while let Some(row) = reader.next_row()? {
        let mut intervals = Vec::with_capacity(levels.len());
        for (level, lower, upper) in &levels {
            intervals.push((level.clone(), row.number(*lower)?, row.number(*upper)?));
        }
        rows.push(Row {
            target: row.id(target, &grid.targets)?,
            candidate: row.id(candidate, &grid.candidates)?,
            horizon: row.outlook_horizon(horizon, grid.horizons)?,
            period: row.text(period).to_string(),
            forecast: row.number(forecast)?,
            intervals,
        });
    }
    Ok(rows)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::results::grid::Grid;

    #[test]
    fn intervals_pair_their_columns() {
        let g = Grid {
            targets: vec!["y".into()],
            candidates: vec!["naive".into()],
            schemes: vec!["fixed".into()],
            horizons: vec![1, 2],
            benchmark: 0,
        };
        let text =
            "target,candidate,horizon,origin,period,forecast,lower_80,upper_80,lower_95,upper_95\n\
            y,naive,2,2024-12,2025-02,1.5,1,2,,\n";
        let rows = read(text.as_bytes(), &g.lookup()).unwrap();
        assert_eq!(rows[0].horizon, 2);
        assert_eq!(
            rows[0].intervals,
            [
                ("80".to_string(), Some(1.0), Some(2.0)),
                ("95".to_string(), None, None)
            ]
        );
        let cut = &text.as_bytes()[..text.len() - 3];
        let err = read(cut, &g.lookup()).unwrap_err().to_string();
        assert!(
            err.starts_with("outlook.csv, line 2: the row has 8 fields"),
            "{err}"
        );
    }
}
