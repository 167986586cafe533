//! tests.csv: one row per test result (SPEC §5), plus `in_set` (model
//! confidence set membership) and `critical_value` (the fluctuation test's
//! 5 % value; that test has no p-value). Rank-correlation rows name no
//! candidate; the snooping row names the best of the grid.

use super::grid::Lookup;
use super::text::{finish, opt, write_row, writer, ReadError, Reader};
use crate::spec::Experiment;

pub const FILE: &str = "tests.csv";

/// The columns, in order.
pub const COLUMNS: [&str; 10] = [
    "target",
    "scheme",
    "horizon",
    "test",
    "candidate",
    "versus",
    "statistic",
    "p_value",
    "in_set",
    "critical_value",
];

/// The table of `rows`, in their order.
pub fn write(exp: &Experiment, rows: &[crate::score::comparison::TestRow]) -> Vec<u8> {
    let mut w = writer();
    let _ = w.write_record(COLUMNS);
    let id = |c: Option<usize>| c.map(|c| exp.candidates[c].id.clone()).unwrap_or_default();
    for r in rows {
        write_row(
            &mut w,
            [
                exp.targets[r.target].name.clone(),
                exp.schemes[r.scheme].id.clone(),
                r.horizon.to_string(),
                r.test.to_string(),
                id(r.candidate),
                id(r.versus),
                opt(r.statistic),
                opt(r.p_value),
                r.in_set.map(|b| b.to_string()).unwrap_or_default(),
                opt(r.critical_value),
            ],
        );
    }
    finish(w)
}

/// One test result as read back.
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    pub target: usize,
    pub scheme: usize,
    pub horizon: usize,
    pub test: String,
    pub candidate: Option<usize>,
    pub versus: Option<usize>,
    pub statistic: Option<f64>,
    pub p_value: Option<f64>,
    pub in_set: Option<bool>,
    pub critical_value: Option<f64>,
}

/// Read the table. `in_set` and `critical_value` may be absent.
pub fn read(bytes: &[u8], grid: &Lookup) -> Result<Vec<Row>, ReadError> {
    let mut reader = Reader::new(FILE, bytes)?;
    let [target, scheme, horizon, test, candidate, versus, statistic, p_value] =
        reader.columns([
            "target",
            "scheme",
            "horizon",
            "test",
            "candidate",
            "versus",
            "statistic",
            "p_value",
        ])?;
    let (in_set, critical_value) = (reader.optional("in_set"), reader.optional("critical_value"));
    let mut rows = Vec::new();
    while let Some(row) = reader.next_row()? {
        rows.push(Row {
            target: row.id(target, &grid.targets)?,
            scheme: row.id(scheme, &grid.schemes)?,
            horizon: row.horizon(horizon, grid.horizons)?,
            test: row.text(test).to_string(),
            candidate: row.optional_id(candidate, &grid.candidates)?,
            versus: row.optional_id(versus, &grid.candidates)?,
            statistic: row.number(statistic)?,
            p_value: row.number(p_value)?,
            in_set: match in_set.map(|c| row.text(c)) {
                Some("true") => Some(true),
                Some("false") => Some(false),
                None | Some("") => None,
                Some(other) => {
                    return Err(
                        row.invalid(format!("in_set is '{other}', not true, false or empty"))
                    )
                }
            },
            critical_value: critical_value.map_or(Ok(None), |c| row.number(c))?,
        });
    }
    Ok(rows)
}

#[cfg(test)]
mod unit {
    use super::*;
    use crate::results::grid::Grid;

    #[test]
    fn rows_read_back_and_edits_are_errors() {
        let g = Grid {
            targets: vec!["y".into()],
            candidates: vec!["naive".into(), "ar(1)".into()],
            schemes: vec!["fixed".into()],
            horizons: vec![1],
            benchmark: 0,
        };
        let header = COLUMNS.join(",");
        let text = format!(
            "{header}\ny,fixed,1,diebold_mariano,ar(1),naive,2.5,0.01,,\ny,fixed,1,rank_correlation,,,0.5,,,\ny,fixed,1,confidence_set,ar(1),,,0.4,true,\n"
        );
        let rows = read(text.as_bytes(), &g.lookup()).unwrap();
        assert_eq!(rows.len(), 3);
        assert_eq!((rows[0].candidate, rows[0].versus), (Some(1), Some(0)));
        assert_eq!(rows[0].p_value, Some(0.01));
        assert_eq!((rows[1].candidate, rows[1].statistic), (None, Some(0.5)));
        assert_eq!(rows[2].in_set, Some(true));
        let edited = format!("{header}\ny,fixed,1,confidence_set,ar(1),,,0.4,yes,\n");
        let err = read(edited.as_bytes(), &g.lookup())
            .unwrap_err()
            .to_string();
        assert_eq!(
            err,
            "tests.csv, line 2: in_set is 'yes', not true, false or empty"
        );
    }
}
