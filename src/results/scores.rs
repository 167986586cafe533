//! scores.csv: one row per target × candidate × scheme × horizon × period
//! set (SPEC §5): the number of forecasts, one column per metric (per
//! interval level for coverage and interval score), the in-sample RMSE, the
//! gap, the rank, and (beyond SPEC) the parameter count and in-sample R².
//! Horizon `all` pools every forecast of the scheme; period set `all` is
//! the whole evaluation sample.

use super::grid::Lookup;
use super::text::{finish, opt, write_row, writer, ReadError, Reader};
use crate::score::ScoreRow;
use crate::spec::Experiment;

pub const FILE: &str = "scores.csv";

/// The table of `rows`, in their order.
pub fn write(exp: &Experiment, rows: &[ScoreRow]) -> Vec<u8> {
    let mut w = writer();
    let mut header: Vec<&str> = vec![
        "target",
        "candidate",
        "scheme",
        "horizon",
        "period_set",
        "n",
    ];
    let names: Vec<String> = exp
        .metric_columns()
        .iter()
        .map(|c| exp.metric_column_name(c))
        .collect();
    header.extend(names.iter().map(String::as_str));
    header.extend(["is_rmse", "gap", "rank", "parameters", "is_r2"]);
    let _ = w.write_record(&header);
    for r in rows {
        let mut rec: Vec<String> = vec![
            exp.targets[r.target].name.clone(),
            exp.candidates[r.candidate].id.clone(),
            exp.schemes[r.scheme].id.clone(),
            r.horizon
                .map(|h| h.to_string())
                .unwrap_or_else(|| "all".into()),
            r.period_set
                .map(|p| exp.periods[p].name.clone())
                .unwrap_or_else(|| "all".into()),
            r.n.to_string(),
        ];
        rec.extend(r.metrics.iter().map(|v| opt(*v)));
        rec.extend([
            opt(r.is_rmse),
            opt(r.gap),
            r.rank.to_string(),
            exp.candidates[r.candidate].family.parameters().to_string(),
            opt(r.is_r2),
        ]);
        write_row(&mut w, &rec);
    }
    finish(w)
}

/// One row of scores.csv as read back.
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    pub target: usize,
    pub candidate: usize,
    pub scheme: usize,
    /// None: the pooled `all` horizon.
    pub horizon: Option<usize>,
    /// None: the whole evaluation sample.
    pub period_set: Option<String>,
    pub n: usize,
    /// In the order of [`Scores::metric_names`].
    pub metrics: Vec<Option<f64>>,
    pub is_rmse: Option<f64>,
    pub gap: Option<f64>,
    /// `usize::MAX` when the table has no rank column.
    pub rank: usize,
    pub parameters: Option<usize>,
    pub is_r2: Option<f64>,
}

/// The table as read back: the metric columns' names and the rows in order.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Scores {
    pub metric_names: Vec<String>,
    pub rows: Vec<Row>,
}

/// Read the table.
pub fn read(bytes: &[u8], grid: &Lookup) -> Result<Scores, ReadError> {
    let mut reader = Reader::new(FILE, bytes)?;
    let [target, candidate, scheme, horizon, period_set, n, is_rmse] = reader.columns([
        "target",
        "candidate",
        "scheme",
        "horizon",
        "period_set",
        "n",
        "is_rmse",
    ])?;
    if is_rmse <= n {
        return Err(ReadError::invalid(
            FILE,
            Some(1),
            "the metric columns must stand between n and is_rmse",
        ));
    }
    let metric_names = reader.header()[n + 1..is_rmse].to_vec();
    let (gap, rank, parameters, is_r2) = (
        reader.optional("gap"),
        reader.optional("rank"),
        reader.optional("parameters"),
        reader.optional("is_r2"),
    );
    let mut rows = Vec::new();
    while let Some(row) = reader.next_row()? {
        let optional_number = |col: Option<usize>| col.map_or(Ok(None), |c| row.number(c));
        rows.push(Row {
            target: row.id(target, &grid.targets)?,
            candidate: row.id(candidate, &grid.candidates)?,
            scheme: row.id(scheme, &grid.schemes)?,
            horizon: match row.text(horizon) {
                "all" => None,
                _ => Some(row.horizon(horizon, grid.horizons)?),
            },
            period_set: match row.text(period_set) {
                "all" | "" => None,
                p => Some(p.to_string()),
            },
            n: row.count(n)?,
            metrics: (n + 1..is_rmse)
                .map(|c| row.number(c))
                .collect::<Result<_, _>>()?,
            is_rmse: row.number(is_rmse)?,
            gap: optional_number(gap)?,
            rank: match rank {
                Some(c) => row.count(c)?,
                None => usize::MAX,
            },
            parameters: match parameters {
                Some(c) => row.optional_count(c)?,
                None => None,
            },
            is_r2: optional_number(is_r2)?,
        });
    }
    Ok(Scores { metric_names, rows })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::results::grid::Grid;

    fn grid() -> Grid {
        Grid {
            targets: vec!["y".into()],
            candidates: vec!["naive".into(), "ar(1)".into()],
            schemes: vec!["fixed".into()],
            horizons: vec![1, 3],
            benchmark: 0,
        }
    }

    const HEADER: &str =
        "target,candidate,scheme,horizon,period_set,n,rmse,mae,is_rmse,gap,rank,parameters,is_r2\n";

    #[test]
    fn rows_read_back_as_written() {
        let text = format!(
            "{HEADER}y,ar(1),fixed,3,all,12,0.5,0.25,0.4,1.25,1,2,0.3\ny,naive,fixed,all,early,24,,1,,,2,0,\n"
        );
        let s = read(text.as_bytes(), &grid().lookup()).unwrap();
        assert_eq!(s.metric_names, ["rmse", "mae"]);
        assert_eq!(
            s.rows[0],
            Row {
                target: 0,
                candidate: 1,
                scheme: 0,
                horizon: Some(3),
                period_set: None,
                n: 12,
                metrics: vec![Some(0.5), Some(0.25)],
                is_rmse: Some(0.4),
                gap: Some(1.25),
                rank: 1,
                parameters: Some(2),
                is_r2: Some(0.3),
            }
        );
        assert_eq!(s.rows[1].horizon, None);
        assert_eq!(s.rows[1].period_set.as_deref(), Some("early"));
        assert_eq!(s.rows[1].metrics, [None, Some(1.0)]);
    }

    #[test]
    fn edited_rows_and_headers_are_errors() {
        let g = grid();
        for (row, message) in [
            ("y,ar(1),fixed,3,all,twelve,1,1,,,1,2,", "n is 'twelve'"),
            ("y,ar(1),fixed,3,all,12,1,1,,,first,2,", "rank is 'first'"),
            (
                "y,ar(1),rolling,3,all,12,1,1,,,1,2,",
                "scheme 'rolling' is not a scheme",
            ),
            (
                "y,ar(1),fixed,3,all,12,1,x1,,,1,2,",
                "mae is 'x1', not a number",
            ),
        ] {
            let text = format!("{HEADER}{row}\n");
            let err = read(text.as_bytes(), &g.lookup()).unwrap_err().to_string();
            assert!(err.starts_with("scores.csv, line 2: "), "{err}");
            assert!(err.contains(message), "{err}");
        }
        let swapped = "target,candidate,scheme,horizon,period_set,is_rmse,rmse,n\n";
        assert!(read(swapped.as_bytes(), &g.lookup()).is_err());
    }
}
