//! summary.csv: the summary across targets of a run with two or more
//! targets, one row per scheme × horizon × candidate (the listed horizons,
//! then `all`): targets scored, wins, relative RMSE and MAE (geometric
//! means against the benchmark), mean MASE, mean rank, and the scheme and
//! horizon's Friedman statistic, its p-value, the Nemenyi critical
//! difference at 5 % and the number of targets in those (see
//! `score::summary`).

use super::grid::Lookup;
use super::text::{finish, num, opt, write_row, writer, ReadError, Reader};
use crate::score::summary::SummaryRow;
use crate::spec::Experiment;

pub const FILE: &str = "summary.csv";

const HEADER: [&str; 13] = [
    "scheme",
    "horizon",
    "candidate",
    "targets",
    "wins",
    "relative_rmse",
    "relative_mae",
    "mase",
    "mean_rank",
    "friedman",
    "friedman_p_value",
    "critical_difference",
    "ranked_targets",
];

/// The table of `rows`, in their order.
pub fn write(exp: &Experiment, rows: &[SummaryRow]) -> Vec<u8> {
    let mut w = writer();
    let _ = w.write_record(HEADER);
    for r in rows {
        write_row(
            &mut w,
            [
                exp.schemes[r.scheme].id.clone(),
                r.horizon.map_or_else(|| "all".into(), |h| h.to_string()),
                exp.candidates[r.candidate].id.clone(),
                r.targets.to_string(),
                num(r.wins),
                opt(r.relative_rmse),
                opt(r.relative_mae),
                opt(r.mase),
                opt(r.mean_rank),
                opt(r.friedman),
                opt(r.friedman_p_value),
                opt(r.critical_difference),
                r.blocks.to_string(),
            ],
        );
    }
    finish(w)
}

/// Read the table back.
pub fn read(bytes: &[u8], grid: &Lookup) -> Result<Vec<SummaryRow>, ReadError> {
    let mut reader = Reader::new(FILE, bytes)?;
    let c = reader.columns(HEADER)?;
    let mut rows = Vec::new();
    while let Some(row) = reader.next_row()? {
        let wins = row
            .number(c[4])?
            .ok_or_else(|| row.invalid("wins must be a number"))?;
        rows.push(SummaryRow {
            scheme: row.id(c[0], &grid.schemes)?,
            horizon: match row.text(c[1]) {
                "all" => None,
                _ => Some(row.horizon(c[1], grid.horizons)?),
            },
            candidate: row.id(c[2], &grid.candidates)?,
            targets: row.count(c[3])?,
            wins,
            relative_rmse: row.number(c[5])?,
            relative_mae: row.number(c[6])?,
            mase: row.number(c[7])?,
            mean_rank: row.number(c[8])?,
            friedman: row.number(c[9])?,
            friedman_p_value: row.number(c[10])?,
            critical_difference: row.number(c[11])?,
            blocks: row.count(c[12])?,
        });
    }
    Ok(rows)
}
