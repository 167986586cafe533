//! The ranking tables of one target: per scheme, every candidate's RMSE
//! relative to the benchmark at each horizon (and pooled), in rank order,
//! with the markers of the pairwise tests and the model confidence set;
//! and behind it the full metric table of each horizon.

use super::claims::{self, Outcome};
use super::format::{horizon_text, ratio, show, slug};
use super::view::Index;
use crate::results::scores::Row as ScoreRow;
use serde_json::{json, Value};

/// Ranking rows shown before the rest go behind a disclosure.
const RANKING_ROWS: usize = 40;

/// Markers of one ranking cell (see [`claims::marks`]): ▲/▼
/// Diebold–Mariano significantly better/worse than the benchmark, †
/// Clark–West rejects equal population MSPE, ◆ in the model confidence
/// set; none with one origin.
fn marks(ix: &Index, t: usize, s: usize, h: usize, c: usize, n: usize) -> (String, bool) {
    let bench = ix.f.grid.benchmark;
    let in_set = ix
        .test(t, s, h, "confidence_set", Some(c), None)
        .and_then(|r| r.in_set);
    if c == bench {
        return (String::new(), in_set == Some(true) && n >= 2);
    }
    let dm = Outcome::of(ix.test(t, s, h, "diebold_mariano", Some(c), Some(bench)), n);
    let cw = Outcome::of(ix.test(t, s, h, "clark_west", Some(c), Some(bench)), n);
    claims::marks(dm, cw, in_set, n)
}

/// The rankings of target `t`, one entry per scheme with score rows.
pub fn rankings_for(ix: &Index, t: usize) -> Value {
    let g = &ix.f.grid;
    let mut columns: Vec<Option<usize>> = g.horizons.iter().map(|&h| Some(h)).collect();
    if g.horizons.len() > 1 {
        columns.push(None);
    }
    // Rows follow the rank in the last column.
    let order_by = *columns.last().unwrap_or(&None);
    let show_metric = ix.rank_by != ix.rmse;
    let mut out = Vec::new();
    for (s, scheme) in g.schemes.iter().enumerate() {
        let order = ix.group(t, s, order_by);
        if order.is_empty() {
            continue;
        }
        let rows: Vec<Value> = order
            .iter()
            .map(|r| ranking_row(ix, t, s, &columns, r))
            .collect();
        let (shown, hidden) = rows.split_at(rows.len().min(RANKING_ROWS));
        let counts: Vec<Value> = columns
            .iter()
            .map(|&h| json!(ix.group(t, s, h).first().map(|r| r.n).unwrap_or(0)))
            .collect();
        let bench_values: Vec<String> = columns
            .iter()
            .map(|&h| {
                show(
                    ix.score(t, g.benchmark, s, h, None)
                        .and_then(|r| ix.ranked_value(r)),
                )
            })
            .collect();
        out.push(json!({
            "scheme": scheme,
            "benchmark_values": bench_values,
            "anchor": format!("rank-{}-{}", slug(&g.targets[t]), slug(scheme)),
            "columns": columns.iter().map(|h| horizon_text(*h)).collect::<Vec<_>>(),
            "counts": counts,
            "order_by": horizon_text(order_by),
            "show_metric": show_metric,
            "rows": shown,
            "hidden": hidden,
            "detail": metric_tables(ix, t, s, &columns),
        }));
    }
    json!(out)
}

/// One candidate's row: a cell per column (horizon, then pooled).
fn ranking_row(ix: &Index, t: usize, s: usize, columns: &[Option<usize>], r: &ScoreRow) -> Value {
    let g = &ix.f.grid;
    let c = r.candidate;
    let cells: Vec<Value> = columns
        .iter()
        .map(|&h| {
            let Some(row) = ix.score(t, c, s, h, None) else {
                return json!({"rel": "–", "metric": "–", "marks": "", "best": false, "mcs": false, "rank": ""});
            };
            let (marks, mcs) = h
                .map(|h| marks(ix, t, s, h, c, row.n))
                .unwrap_or_default();
            let rel = ix.relative(row);
            json!({
                "rel": ratio(rel),
                "gain": rel.is_some_and(|r| r < 1.0),
                "metric": show(ix.ranked_value(row)),
                "marks": marks,
                "mcs": mcs,
                "best": row.rank == 1,
                "rank": row.rank,
            })
        })
        .collect();
    json!({
        "rank": r.rank,
        "candidate": g.candidates[c],
        "is_benchmark": c == g.benchmark,
        "parameters": r.parameters,
        "cells": cells,
    })
}

/// Every metric of every candidate, one table per column.
fn metric_tables(ix: &Index, t: usize, s: usize, columns: &[Option<usize>]) -> Vec<Value> {
    let g = &ix.f.grid;
    columns
        .iter()
        .map(|&h| {
            let group = ix.group(t, s, h);
            json!({
                "horizon": horizon_text(h),
                "n": group.first().map(|r| r.n).unwrap_or(0),
                "rows": group.iter().map(|r| json!({
                    "rank": r.rank,
                    "candidate": g.candidates[r.candidate],
                    "is_benchmark": r.candidate == g.benchmark,
                    "n": r.n,
                    "metrics": r.metrics.iter().map(|v| show(*v)).collect::<Vec<_>>(),
                    "relative": ratio(ix.relative(r)),
                    "is_rmse": show(r.is_rmse),
                    "gap": show(r.gap),
                })).collect::<Vec<_>>(),
            })
        })
        .collect()
}
