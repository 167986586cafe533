//! stability.csv: accuracy over time, one row per target × candidate ×
//! scheme × horizon × window end: the RMSE over a moving window of
//! forecasts and the Giacomini-Rossi fluctuation statistic against the
//! benchmark at that point. Written row by row into one buffer (it is the
//! second-largest table).

use super::forecasts::Key;
use super::grid::Lookup;
use super::text::{push_field, push_num, push_usize, ReadError, Reader};
use crate::spec::Experiment;
use std::collections::HashMap;
use std::io::Read;

pub const FILE: &str = "stability.csv";

/// The columns, in order.
pub const COLUMNS: [&str; 7] = [
    "target",
    "candidate",
    "scheme",
    "horizon",
    "period",
    "rolling_rmse",
    "fluctuation",
];

/// The table of `rows`, in their order.
pub fn write(exp: &Experiment, rows: &[crate::score::stability::StabilityRow]) -> Vec<u8> {
    let mut out = Vec::with_capacity(64 + rows.len() * 64);
    out.extend_from_slice(COLUMNS.join(",").as_bytes());
    out.push(b'\n');
    for r in rows {
        let target = &exp.targets[r.target];
        push_field(&mut out, &target.name);
        out.push(b',');
        push_field(&mut out, &exp.candidates[r.candidate].id);
        out.push(b',');
        push_field(&mut out, &exp.schemes[r.scheme].id);
        out.push(b',');
        push_usize(&mut out, r.horizon);
        out.push(b',');
        push_field(&mut out, &target.labels[r.position - 1]);
        out.push(b',');
        push_num(&mut out, r.rolling_rmse);
        out.push(b',');
        if let Some(f) = r.fluctuation {
            push_num(&mut out, f);
        }
        out.push(b'\n');
    }
    out
}

/// One window end as read back.
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    pub period: String,
    pub rolling_rmse: Option<f64>,
    pub fluctuation: Option<f64>,
}

/// The rows of each target × candidate × scheme × horizon, in table order.
pub type Stability = HashMap<Key, Vec<Row>>;

/// Read the table, keeping the rows of the targets `keep` accepts.
pub fn read(
    source: impl Read,
    grid: &Lookup,
    keep: &dyn Fn(usize) -> bool,
) -> Result<Stability, ReadError> {
    let mut reader = Reader::new(FILE, source)?;
    let [target, candidate, scheme, horizon, period, rolling_rmse, fluctuation] =
        reader.columns(COLUMNS)?;
    let mut out = Stability::new();
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
            period: row.text(period).to_string(),
            rolling_rmse: row.number(rolling_rmse)?,
            fluctuation: row.number(fluctuation)?,
        });
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::results::grid::Grid;

    #[test]
    fn rows_read_back_and_edits_are_errors() {
        let g = Grid {
            targets: vec!["y".into()],
            candidates: vec!["naive".into()],
            schemes: vec!["fixed".into()],
            horizons: vec![1],
            benchmark: 0,
        };
        let header = COLUMNS.join(",");
        let text = format!("{header}\ny,naive,fixed,1,2020,0.5,\n");
        let rows = read(text.as_bytes(), &g.lookup(), &|_| true).unwrap();
        assert_eq!(
            rows[&(0, 0, 0, 1)],
            [Row {
                period: "2020".into(),
                rolling_rmse: Some(0.5),
                fluctuation: None
            }]
        );
        let edited = format!("{header}\ny,naive,fixed,1,2020,0.5,NaN\n");
        let err = read(edited.as_bytes(), &g.lookup(), &|_| true)
            .unwrap_err()
            .to_string();
        assert_eq!(
            err,
            "stability.csv, line 2: fluctuation is 'NaN', not a number"
        );
    }
}
