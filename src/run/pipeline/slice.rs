//! One target's slice of every table: its cells combined, scored, tested
//! and formatted, and the rows its part of the report reads, parsed from
//! that slice exactly as `outturn render` parses a whole folder.

use super::TABLES;
use crate::backtest::{self, CellOutput};
use crate::plan;
use crate::report;
use crate::results::manifest;
use crate::results::{
    self, diagnostics, forecasts, outlook, parameters, scores, series, stability,
};
use crate::results::{Rows, Tables};
use crate::score;
use crate::spec::Experiment;

/// One target's slice of every table.
pub(super) struct Slice {
    pub tables: [Vec<u8>; 9],
    /// The rows the report reads of this target, parsed from its slice of
    /// the tables exactly as `outturn render` parses a whole folder, and the
    /// target's part of the report built from them.
    pub report_rows: std::result::Result<(Rows, report::TargetPart), String>,
    pub cells: Vec<manifest::CellFacts>,
    pub failed: usize,
    /// The look-ahead audit of this target's cells, when asked for.
    pub audit: Option<crate::run::audit::AuditOutcome>,
    /// Its place in the report's choice of detailed targets.
    pub key: std::result::Result<report::Key, String>,
    /// What the summary across targets takes of this target's scores.
    pub summary: Vec<score::summary::Entry>,
}

pub(super) fn header(bytes: &[u8]) -> &[u8] {
    match bytes.iter().position(|b| *b == b'\n') {
        Some(i) => &bytes[..=i],
        None => bytes,
    }
}

/// Score, test and format one target. `outputs` are its cells in plan order
/// (candidates × schemes), combinations not yet formed.
///
/// Its length is the list of a target's tables, made in a fixed order from
/// the same scored rows (each table's own code lives in `results/`).
pub(super) fn slice(
    progress: &dyn crate::progress::Progress,
    exp: &Experiment,
    parts: &report::PartContext,
    t: usize,
    mut outputs: Vec<CellOutput>,
) -> Slice {
    let sub = exp.for_target(t);
    let cells = plan::cells(&sub);
    backtest::combine(&sub, &cells, &mut outputs, progress);
    let audit = exp.audit.map(|k| {
        crate::run::audit::audit_outputs(&crate::models::Families, &sub, &cells, &outputs, k)
    });
    let errors = score::cell_errors(&sub, &cells, &outputs);
    let Formatted {
        forecasts_bytes,
        stability_bytes,
        fluctuation,
        scores_bytes,
        mut tests,
        leaders,
        summary,
        diagnostics_bytes,
        series,
        outlook_bytes,
    } = formatted(&sub, t, &cells, &outputs, &errors);
    tests.extend(fluctuation);
    tests.sort_by_key(|r| (r.target, r.scheme, r.horizon));
    let cells_facts = cells
        .iter()
        .zip(&outputs)
        .map(|(c, o)| manifest::CellFacts {
            id: c.id.clone(),
            failure: o.failure.clone(),
            fallbacks: o.fallbacks,
            left_out: o
                .left_out
                .iter()
                .map(|l| manifest::LeftOutRecord {
                    regressor: l.regressor.clone(),
                    estimations: l.estimations,
                    first: exp.period_label(&exp.targets[t], l.first_end),
                    last: exp.period_label(&exp.targets[t], l.last_end),
                })
                .collect(),
            seconds: o.seconds,
            cached: o.cached,
        })
        .collect();
    let tables = [
        forecasts_bytes,
        scores_bytes,
        results::tests::write(&sub, &tests),
        stability_bytes,
        diagnostics_bytes,
        series,
        if t == 0 {
            exp.source_text.clone().into_bytes()
        } else {
            Vec::new()
        },
        outlook_bytes,
        parameters::write(&sub, &cells, &outputs),
    ];
    // How the report may still show this target (the final choice is
    // made in target order as the slices are appended): the rows it reads
    // are kept for what it may show.
    let key = parts.key(t, &tables[1]);
    let draw = exp.formats.contains(&crate::spec::ReportFormat::Html);
    let shown = match &key {
        Ok(k) => parts.admits(k),
        Err(_) => report::Shown::default(),
    };
    let charted = draw && shown.charts;
    let keep_forecasts = if charted {
        tables[0].clone()
    } else if shown.detail {
        // Beyond the charted targets the report reads the benchmark's
        // forecasts (spans and counts) and where every other series begins.
        forecasts::write(&sub, &cells, &report_firsts(exp, &cells, &outputs))
    } else {
        // Beyond the detailed targets the report shows only the verdict.
        header(&tables[0]).to_vec()
    };
    let keep_stability = if charted {
        tables[3].clone()
    } else {
        Vec::new()
    };
    let keep_series = if shown.detail {
        tables[5].clone()
    } else {
        header(&tables[5]).to_vec()
    };
    // The report shows the parameters of the leaders only: every
    // estimation where it charts them, else the last of each horizon.
    let report_parameters = if shown.detail {
        let kept: Vec<CellOutput> = cells
            .iter()
            .zip(&outputs)
            .map(|(c, o)| match leaders.contains(&c.candidate) {
                true => CellOutput {
                    parameters: if charted {
                        o.parameters.clone()
                    } else {
                        last_estimations(&o.parameters)
                    },
                    failure: o.failure.clone(),
                    ..Default::default()
                },
                false => CellOutput::default(),
            })
            .collect();
        parameters::write(&sub, &cells, &kept)
    } else {
        header(&tables[8]).to_vec()
    };
    // The report reads every small table whole; of the large ones only the
    // rows it draws (none of stability.csv beyond the charted targets: that
    // table is left out).
    let report_tables: Tables = TABLES
        .iter()
        .zip(&tables)
        .map(|(&name, table)| {
            let keep: &[u8] = match name {
                "forecasts.csv" => &keep_forecasts,
                "stability.csv" => &keep_stability,
                "series.csv" => &keep_series,
                "parameters.csv" => &report_parameters,
                _ => table,
            };
            (name, keep)
        })
        .filter(|(_, keep)| !keep.is_empty())
        .collect();
    let report_rows = Rows::read(&report_tables, parts.grid())
        .map_err(|e| e.to_string())
        .and_then(|rows| parts.part(t, rows, draw, shown))
        .map(|(part, rows)| (rows, part));
    Slice {
        tables,
        report_rows,
        cells: cells_facts,
        failed: outputs.iter().filter(|o| o.failure.is_some()).count(),
        audit,
        key,
        summary,
    }
}

/// A target's tables formatted.
struct Formatted {
    forecasts_bytes: Vec<u8>,
    stability_bytes: Vec<u8>,
    fluctuation: Vec<score::comparison::TestRow>,
    scores_bytes: Vec<u8>,
    tests: Vec<score::comparison::TestRow>,
    /// The candidates that lead some scheme at some horizon.
    leaders: Vec<usize>,
    summary: Vec<score::summary::Entry>,
    diagnostics_bytes: Vec<u8>,
    series: Vec<u8>,
    outlook_bytes: Vec<u8>,
}

/// Score, test and format target `t` (its experiment `sub`, its cells
/// combined): the four independent parts side by side.
fn formatted(
    sub: &Experiment,
    t: usize,
    cells: &[plan::Cell],
    outputs: &[CellOutput],
    errors: &[Vec<score::Errors>],
) -> Formatted {
    // The parts below are independent: a worker that has run out of targets
    // takes some of them over (rayon runs a join in place when none is idle).
    let forecasts_part = || forecasts::write(sub, cells, outputs);
    let stability_part = || {
        let (stability, fluctuation) = score::stability::rolling(sub, errors);
        (stability::write(sub, &stability), fluctuation)
    };
    let scores_part = || {
        let scores = score::scores(sub, errors);
        let tests = score::comparison::run(sub, errors);
        let mut summary = score::summary::entries(sub, &scores);
        summary.iter_mut().for_each(|e| e.target = t);
        (
            scores::write(sub, &scores),
            tests,
            leaders(sub, &scores),
            summary,
        )
    };
    let rest_part = || {
        let diagnostics = score::stability::diagnostics(sub, cells, outputs, t == 0);
        (
            diagnostics::write(&diagnostics),
            series::write(sub, t == 0),
            outlook::write(sub, cells, outputs),
        )
    };
    let (
        (forecasts_bytes, (stability_bytes, fluctuation)),
        ((scores_bytes, tests, leaders, summary), (diagnostics_bytes, series, outlook_bytes)),
    ) = rayon::join(
        || rayon::join(forecasts_part, stability_part),
        || rayon::join(scores_part, rest_part),
    );
    Formatted {
        forecasts_bytes,
        stability_bytes,
        fluctuation,
        scores_bytes,
        tests,
        leaders,
        summary,
        diagnostics_bytes,
        series,
        outlook_bytes,
    }
}

/// The candidate the report names as the leader of each scheme at each
/// listed horizon (the whole sample's rank 1 that is not the benchmark,
/// the first candidate on ties: `report::Index::leaders`), once each.
fn leaders(exp: &Experiment, scores: &[score::ScoreRow]) -> Vec<usize> {
    let mut best: std::collections::BTreeMap<(usize, usize), (usize, usize)> = Default::default();
    for r in scores {
        let (None, Some(h)) = (r.period_set, r.horizon) else {
            continue;
        };
        if r.candidate == exp.benchmark {
            continue;
        }
        let key = (r.scheme, h);
        let value = (r.rank, r.candidate);
        best.entry(key)
            .and_modify(|b| *b = (*b).min(value))
            .or_insert(value);
    }
    let mut out: Vec<usize> = best.values().map(|&(_, c)| c).collect();
    out.sort_unstable();
    out.dedup();
    out
}

/// The last estimation that holds each horizon (or the horizon-free
/// parameters), in time order.
fn last_estimations(all: &[backtest::Estimation]) -> Vec<backtest::Estimation> {
    let mut seen: Vec<Option<usize>> = Vec::new();
    let mut kept: Vec<backtest::Estimation> = Vec::new();
    for e in all.iter().rev() {
        let fresh: Vec<Option<usize>> = e
            .parameters
            .iter()
            .map(|p| p.horizon)
            .filter(|h| !seen.contains(h))
            .collect();
        if fresh.is_empty() {
            continue;
        }
        kept.push(backtest::Estimation {
            end: e.end,
            vintage: e.vintage,
            parameters: e
                .parameters
                .iter()
                .filter(|p| fresh.contains(&p.horizon))
                .cloned()
                .collect(),
        });
        seen.extend(fresh);
    }
    kept.reverse();
    kept
}

/// Of each cell, the first forecast per horizon; of the benchmark, all.
fn report_firsts(
    exp: &Experiment,
    cells: &[plan::Cell],
    outputs: &[CellOutput],
) -> Vec<CellOutput> {
    outputs
        .iter()
        .zip(cells)
        .map(|(o, cell)| {
            if cell.candidate == exp.benchmark {
                return CellOutput {
                    forecasts: o.forecasts.clone(),
                    ..Default::default()
                };
            }
            let mut seen = Vec::new();
            let forecasts = o
                .forecasts
                .iter()
                .filter(|r| {
                    let new = !seen.contains(&r.horizon);
                    seen.push(r.horizon);
                    new
                })
                .copied()
                .collect();
            CellOutput {
                forecasts,
                ..Default::default()
            }
        })
        .collect()
}
