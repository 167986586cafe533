//! outlook.csv: forecasts beyond the data (SPEC §5), one row per target ×
//! candidate × horizon 1..max(horizons), listed or not, made at the last observed period N with every
//! model estimated on all the data (E = N; the last `window` rows when every
//! scheme is rolling), with their intervals.

use super::forecasts::{quantile_headers, quantile_multipliers};
use super::grid::Lookup;
use super::text::{finish, num, opt, write_row, writer, ReadError, Reader};
use crate::backtest::CellOutput;
use crate::plan::Cell;
use crate::spec::percent_text;
use crate::spec::{Experiment, IntervalsFrom};

pub const FILE: &str = "outlook.csv";

/// The quantile columns of one forecast (empty without a variance).
fn push_quantiles(
    rec: &mut Vec<String>,
    (zs, shape): (&[f64], crate::score::Shape),
    forecast: Option<f64>,
    variance: Option<f64>,
) {
    let sd = variance.filter(|v| *v >= 0.0).map(f64::sqrt);
    for &z in zs {
        rec.push(match (forecast, sd) {
            (Some(f), Some(sd)) => num(shape.quantile(f, sd, z)),
            _ => String::new(),
        });
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
    header.extend(quantile_headers(exp));
    let _ = w.write_record(&header);
    let zs = quantile_multipliers(exp);
    let past = exp.intervals_from == IntervalsFrom::PastErrors;
    for (cell, out) in cells.iter().zip(outputs) {
        let target = &exp.targets[cell.target];
        let offsets = match past {
            true => crate::score::past_errors::for_outlook(exp, target, out),
            false => Vec::new(),
        };
        for (k, r) in out.outlook.iter().enumerate() {
            let mut rec = vec![
                target.name.clone(),
                exp.candidates[cell.candidate].id.clone(),
                r.horizon.to_string(),
                target.labels[target.n - 1].clone(),
                exp.period_label(target, target.n + r.horizon),
                opt(r.forecast),
            ];
            if past {
                let o = offsets[k].as_deref();
                for j in 0..zs.len() {
                    rec.push(match (r.forecast, o) {
                        (Some(f), Some(o)) => num(f + o[j]),
                        _ => String::new(),
                    });
                }
            } else {
                let shape = crate::score::Shape::of(exp, cell.candidate);
                push_quantiles(&mut rec, (&zs, shape), r.forecast, r.variance);
            }
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

/// The central intervals a header holds, ascending by level: each quantile
/// column `q<p>` below 50 with its mirror `q<100 − p>` is the level
/// 100 − 2p (`q10` and `q90`: 80); the `lower_<c>`, `upper_<c>` pairs of
/// folders written before quantile columns are read too.
fn interval_columns(reader: &Reader<&[u8]>) -> Vec<(String, usize, usize)> {
    let mut levels: Vec<(f64, String, usize, usize)> = Vec::new();
    for (i, h) in reader.header().iter().enumerate() {
        if let Some(p) = h.strip_prefix('q').and_then(|p| p.parse::<f64>().ok()) {
            if p > 0.0 && p < 50.0 {
                let mirror = format!("q{}", percent_text((100.0 - p) / 100.0));
                if let Some(upper) = reader.optional(&mirror) {
                    let level = 100.0 - 2.0 * p;
                    levels.push((level, percent_text(level / 100.0), i, upper));
                }
            }
        } else if let Some(level) = h.strip_prefix("lower_") {
            if let Some(upper) = reader.optional(&format!("upper_{level}")) {
                let value = level.parse::<f64>().unwrap_or(f64::INFINITY);
                levels.push((value, level.to_string(), i, upper));
            }
        }
    }
    levels.sort_by(|a, b| a.0.total_cmp(&b.0));
    levels
        .into_iter()
        .map(|(_, l, lo, hi)| (l, lo, hi))
        .collect()
}

/// Read the table; its intervals as [`interval_columns`] finds them.
pub fn read(bytes: &[u8], grid: &Lookup) -> Result<Vec<Row>, ReadError> {
    let mut reader = Reader::new(FILE, bytes)?;
    let [target, candidate, horizon, period, forecast] =
        reader.columns(["target", "candidate", "horizon", "period", "forecast"])?;
    let levels = interval_columns(&reader);
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
        let text = "target,candidate,horizon,origin,period,forecast,q2.5,q10,q50,q90,q97.5\n\
            y,naive,2,2024-12,2025-02,1.5,,1,1.5,2,\n";
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
            err.starts_with("outlook.csv, line 2: the row has 10 fields"),
            "{err}"
        );
        // A folder written before quantile columns: lower_<c>, upper_<c>.
        let old =
            "target,candidate,horizon,origin,period,forecast,lower_80,upper_80,lower_95,upper_95\n\
            y,naive,2,2024-12,2025-02,1.5,1,2,,\n";
        let rows_old = read(old.as_bytes(), &g.lookup()).unwrap();
        assert_eq!(rows_old[0].intervals, rows[0].intervals);
    }
}
