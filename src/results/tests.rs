//! tests.csv: one row per test result (SPEC §5), plus `in_set` (model
//! confidence set membership), `critical_value` (the fluctuation test's
//! 5 % value; that test has no p-value) and `p_lower`, `p_upper` (the
//! snooping test's lower and upper p-values of Hansen 2005; its `p_value`
//! is the consistent one). Rank-correlation rows name no candidate; the
//! snooping row names the candidate that attains its statistic (the
//! largest studentised gain over the benchmark), not the leader.

use super::grid::Lookup;
use super::text::{finish, opt, write_row, writer, ReadError, Reader};
use crate::spec::Experiment;

pub const FILE: &str = "tests.csv";

/// The columns, in order.
pub const COLUMNS: [&str; 12] = [
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
    "p_lower",
    "p_upper",
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
                opt(r.p_lower),
                opt(r.p_upper),
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
    /// The snooping test's lower and upper p-values.
    pub p_lower: Option<f64>,
    pub p_upper: Option<f64>,
}

/// Read the table. `in_set`, `critical_value`, `p_lower` and `p_upper`
/// may be absent (folders written before they existed).
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
    let (p_lower, p_upper) = (reader.optional("p_lower"), reader.optional("p_upper"));
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
            p_lower: p_lower.map_or(Ok(None), |c| row.number(c))?,
            p_upper: p_upper.map_or(Ok(None), |c| row.number(c))?,
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
            "{header}\ny,fixed,1,diebold_mariano,ar(1),naive,2.5,0.01,,,,\ny,fixed,1,rank_correlation,,,0.5,,,,,\ny,fixed,1,confidence_set,ar(1),,,0.4,true,,,\ny,fixed,1,snooping,ar(1),naive,1.5,0.04,,,0.03,0.06\n"
        );
        let rows = read(text.as_bytes(), &g.lookup()).unwrap();
        assert_eq!(rows.len(), 4);
        assert_eq!((rows[3].p_lower, rows[3].p_upper), (Some(0.03), Some(0.06)));
        assert_eq!((rows[0].candidate, rows[0].versus), (Some(1), Some(0)));
        assert_eq!(rows[0].p_value, Some(0.01));
        assert_eq!((rows[1].candidate, rows[1].statistic), (None, Some(0.5)));
        assert_eq!(rows[2].in_set, Some(true));
        let edited = format!("{header}\ny,fixed,1,confidence_set,ar(1),,,0.4,yes,,,\n");
        let err = read(edited.as_bytes(), &g.lookup())
            .unwrap_err()
            .to_string();
        assert_eq!(
            err,
            "tests.csv, line 2: in_set is 'yes', not true, false or empty"
        );
    }
}
