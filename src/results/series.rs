//! series.csv: the series as used, so reports can be re-rendered from the
//! folder: each target by period, as published (`raw`) and after its
//! transform (`value`), then each predictor after its transform (in the
//! first target's slice, on that target's periods).

use super::grid::Lookup;
use super::text::{finish, num, write_row, writer, ReadError, Reader};
use crate::spec::Experiment;
use std::io::Read;

pub const FILE: &str = "series.csv";

/// The columns, in order.
pub const COLUMNS: [&str; 6] = ["series", "role", "transform", "period", "raw", "value"];

/// The table of the experiment's targets, and of its predictors when
/// `with_predictors`.
pub fn write(exp: &Experiment, with_predictors: bool) -> Vec<u8> {
    let mut w = writer();
    let _ = w.write_record(COLUMNS);
    for target in &exp.targets {
        for pos in 1..=target.n {
            write_row(
                &mut w,
                [
                    target.name.clone(),
                    "target".into(),
                    exp.transform.name().into(),
                    target.labels[pos - 1].clone(),
                    num(target.raw[pos - 1]),
                    num(target.y[pos - 1]),
                ],
            );
        }
    }
    if let Some(first) = exp.targets.first().filter(|_| with_predictors) {
        for (i, p) in exp.predictors.iter().enumerate() {
            for (pos, v) in first.predictors[i].iter().enumerate() {
                if let Some(v) = v {
                    write_row(
                        &mut w,
                        [
                            p.column.clone(),
                            "predictor".into(),
                            p.transform.name().into(),
                            first.labels[pos].clone(),
                            String::new(),
                            num(*v),
                        ],
                    );
                }
            }
        }
    }
    finish(w)
}

/// One series as read back, its periods in table order.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    pub name: String,
    /// `target` or `predictor`.
    pub role: String,
    pub transform: String,
    pub periods: Vec<String>,
    pub raw: Vec<Option<f64>>,
    pub values: Vec<Option<f64>>,
}

impl Series {
    /// Add the periods of a later part of the same series.
    pub fn extend(&mut self, more: Series) {
        self.periods.extend(more.periods);
        self.raw.extend(more.raw);
        self.values.extend(more.values);
    }
}

/// Read the table, keeping the target series of the targets `keep` accepts
/// and every predictor; series in order of first appearance.
pub fn read(
    source: impl Read,
    grid: &Lookup,
    keep: &dyn Fn(usize) -> bool,
) -> Result<Vec<Series>, ReadError> {
    let mut reader = Reader::new(FILE, source)?;
    let [series, role, transform, period, raw, value] = reader.columns(COLUMNS)?;
    let mut out: Vec<Series> = Vec::new();
    while let Some(row) = reader.next_row()? {
        let (name, role) = (row.text(series), row.text(role));
        match role {
            "target" => {
                if !keep(row.id(series, &grid.targets)?) {
                    continue;
                }
            }
            "predictor" => {}
            other => return Err(row.invalid(format!("role is '{other}', not target or predictor"))),
        }
        let at = match out.iter().position(|x| x.name == name && x.role == role) {
            Some(at) => at,
            None => {
                out.push(Series {
                    name: name.to_string(),
                    role: role.to_string(),
                    transform: row.text(transform).to_string(),
                    periods: Vec::new(),
                    raw: Vec::new(),
                    values: Vec::new(),
                });
                out.len() - 1
            }
        };
        let (raw, value) = (row.number(raw)?, row.number(value)?);
        let x = &mut out[at];
        x.periods.push(row.text(period).to_string());
        x.raw.push(raw);
        x.values.push(value);
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::results::grid::Grid;

    #[test]
    fn series_gather_their_periods_in_order() {
        let g = Grid {
            targets: vec!["y".into(), "z".into()],
            candidates: vec!["naive".into()],
            schemes: vec!["fixed".into()],
            horizons: vec![1],
            benchmark: 0,
        };
        let text = "series,role,transform,period,raw,value\n\
            y,target,log,2001,1,0\ny,target,log,2002,2,0.5\nz,target,log,2001,3,1\nx,predictor,none,2001,,4\n";
        let all = read(text.as_bytes(), &g.lookup(), &|_| true).unwrap();
        assert_eq!(all.len(), 3);
        assert_eq!(all[0].periods, ["2001", "2002"]);
        assert_eq!(all[0].values, [Some(0.0), Some(0.5)]);
        assert_eq!(all[2].raw, [None]);
        let first = read(text.as_bytes(), &g.lookup(), &|t| t == 0).unwrap();
        let names: Vec<&str> = first.iter().map(|s| s.name.as_str()).collect();
        assert_eq!(names, ["y", "x"]);
        let edited = text.replace("z,target", "z,goal");
        let err = read(edited.as_bytes(), &g.lookup(), &|_| true)
            .unwrap_err()
            .to_string();
        assert_eq!(
            err,
            "series.csv, line 4: role is 'goal', not target or predictor"
        );
    }
}
