//! Calibration of one target × scheme × horizon, when `calibration` ran:
//! per candidate (rank order) and interval level, the observed coverage
//! (when scores.csv has `coverage`) beside the nominal one with the
//! p-values of the unconditional, independence and conditional coverage
//! tests, and the p-value of the PIT test; and, for the first setting of a
//! target, a PIT histogram of each leader drawn from forecasts.csv's
//! quantile columns: the share of outturns between consecutive quantiles,
//! divided by the width of that probability bin, so a calibrated forecast
//! stands at 1 in every bin.

use super::chart_value;
use super::charts::{self, Chart, Line, Rule, XAxis, LEADERS};
use super::format::{pval, show};
use super::view::Index;
use crate::results::scores::Row as ScoreRow;
use crate::results::tests::Row as TestRow;
use serde_json::{json, Value};

/// The interval levels (in percent, as the test names carry them) of the
/// calibration rows, in table order.
fn levels(here: &[&TestRow]) -> Vec<String> {
    let mut out: Vec<String> = Vec::new();
    for r in here {
        if let Some(l) = r.test.strip_prefix("calibration_uc_") {
            if !out.iter().any(|x| x == l) {
                out.push(l.to_string());
            }
        }
    }
    out
}

/// The calibration panel (null when no calibration rows are here).
pub fn calibration_panel(
    ix: &Index,
    key: (usize, usize, usize),
    here: &[&TestRow],
    group: &[&ScoreRow],
    charts: bool,
) -> Value {
    let (t, s, h) = key;
    if !here.iter().any(|r| r.test.starts_with("calibration_")) {
        return Value::Null;
    }
    let levels = levels(here);
    let metric = |name: &str| ix.f.rows.metric_names.iter().position(|m| m == name);
    let mut rows = Vec::new();
    for r in group {
        let c = r.candidate;
        let test = |name: &str| ix.test(t, s, h, name, Some(c), None);
        let pit = test("calibration_pit");
        let cells: Vec<Value> = levels
            .iter()
            .filter_map(|l| {
                let uc = test(&format!("calibration_uc_{l}"))?;
                let p =
                    |name: &str| test(&format!("calibration_{name}_{l}")).and_then(|r| r.p_value);
                let coverage = metric(&format!("coverage_{l}")).and_then(|i| r.metrics[i]);
                let flagged = [uc.p_value, p("ind"), p("cc")]
                    .iter()
                    .any(|p| p.is_some_and(|p| p < 0.05));
                Some(json!({
                    "level": l,
                    "coverage": coverage.map(|v| show(Some(v))).unwrap_or_default(),
                    "p_uc": pval(uc.p_value),
                    "p_ind": pval(p("ind")),
                    "p_cc": pval(p("cc")),
                    "flagged": flagged,
                }))
            })
            .collect();
        if cells.is_empty() && pit.is_none() {
            continue;
        }
        rows.push(json!({
            "candidate": ix.f.grid.candidates[c],
            "is_benchmark": c == ix.f.grid.benchmark,
            "cells": cells,
            "p_pit": pval(pit.and_then(|r| r.p_value)),
            "pit_flagged": pit.and_then(|r| r.p_value).is_some_and(|p| p < 0.05),
        }));
    }
    let histograms: Vec<Value> = if charts {
        ix.leaders(t, s, Some(h), 3)
            .into_iter()
            .enumerate()
            .filter_map(|(k, c)| pit_histogram(ix, (t, c, s, h), k))
            .collect()
    } else {
        Vec::new()
    };
    json!({"levels": levels, "rows": rows, "histograms": histograms})
}

/// Bin counts of the outturns between consecutive quantile columns of
/// one candidate's forecasts; None without quantile columns or forecasts
/// that have them all.
fn pit_counts(ix: &Index, key: (usize, usize, usize, usize)) -> Option<(Vec<f64>, Vec<usize>)> {
    let probs = &ix.f.rows.forecast_quantiles;
    let rows = ix.f.rows.forecasts.get(&key)?;
    if probs.is_empty() {
        return None;
    }
    let mut counts = vec![0usize; probs.len() + 1];
    for r in rows {
        let (Some(y), Some(q)) = (
            r.actual,
            r.quantiles.iter().copied().collect::<Option<Vec<f64>>>(),
        ) else {
            continue;
        };
        counts[q.iter().filter(|q| **q <= y).count()] += 1;
    }
    let mut edges = vec![0.0];
    edges.extend(probs);
    edges.push(1.0);
    (counts.iter().sum::<usize>() > 0).then_some((edges, counts))
}

/// A leader's PIT histogram as a step outline over [0, 1], with the
/// uniform density 1 as a reference line.
fn pit_histogram(ix: &Index, key: (usize, usize, usize, usize), k: usize) -> Option<Value> {
    let (t, c, _, h) = key;
    let (edges, counts) = pit_counts(ix, key)?;
    let n: usize = counts.iter().sum();
    let id = &ix.f.grid.candidates[c];
    let mut points = Vec::new();
    let mut table = Vec::new();
    for (j, &count) in counts.iter().enumerate() {
        let (lo, hi) = (edges[j], edges[j + 1]);
        let height = count as f64 / n as f64 / (hi - lo);
        points.push((lo, height));
        points.push((hi, height));
        table.push(vec![
            format!("{} to {}", show(Some(lo)), show(Some(hi))),
            count.to_string(),
            show(Some(height)),
        ]);
    }
    let mut ch = Chart::new(
        &format!("t{t}-c{c}-h{h}-pit"),
        &format!("PIT histogram of {id}"),
        XAxis::Numeric { integer: false },
    );
    ch.x_title = "probability level of the outturn in the forecast distribution".into();
    ch.y_title = "density (1 = calibrated)".into();
    ch.include_zero = true;
    ch.plot_height = 160.0;
    ch.width = 430.0;
    ch.lines.push(Line {
        name: id.clone(),
        look: LEADERS[k % LEADERS.len()],
        points,
        legend: true,
        marker_every: 0,
    });
    ch.rules.push(Rule {
        y: 1.0,
        label: "uniform".into(),
        dash: "4 3",
    });
    Some(chart_value(
        charts::svg(&ch),
        format!("{id}: where the {n} outturns fell in its forecast distributions, in the bins between its quantile columns; bars above 1 are bins hit more often than their probability, so tall outer bins mean intervals that are too narrow, a tall middle bin intervals that are too wide."),
        vec!["bin".into(), "outturns".into(), "density".into()],
        table,
    ))
}
