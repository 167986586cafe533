//! One target in its own position space (SPEC §4): its column parsed and
//! transformed (the last non-empty cell ends it), the predictors laid out
//! on its positions with their ragged edges and future rows, and each
//! scheme's first origin.

use super::super::data::{RawRow, RawTable};
use super::super::decode::Ctx;
use super::super::model::{RawSource, SchemeStart, TargetData, Transform};
use super::super::period::{parse_label, Frequency};
use super::super::yaml::Node;
use super::columns::{
    apply_transform, cell_error, check_scale, parse_column, report_cells, transform_lag,
};
use super::DataRequest;
use std::collections::HashMap;
use std::sync::Arc;

/// The selected rows of the data file and what every target reads of them.
pub(super) struct Selection<'a> {
    pub table: &'a RawTable,
    pub rows: &'a [RawRow],
    pub ordinals: &'a [i64],
    pub time_idx: usize,
    pub freq: Frequency,
    /// Columns whose every selected cell is a number or empty, parsed.
    pub parsed: HashMap<usize, Vec<Option<f64>>>,
    /// The predictors' columns (None: not in the file, reported).
    pub predictor_columns: Vec<Option<usize>>,
    /// Data lines of the selected rows, by row index.
    pub lines: Vec<usize>,
}

impl Selection<'_> {
    /// The first `used` cells of a column: parsed already, or parsed now
    /// with its bad cells reported.
    fn column(
        &self,
        ctx: &mut Ctx,
        col: usize,
        used: usize,
    ) -> Option<(Vec<Option<f64>>, Vec<bool>)> {
        match self.parsed.get(&col) {
            Some(values) => Some((values[..used].to_vec(), vec![false; used])),
            None => parse_column(ctx, self.table, self.rows, col, used),
        }
    }
}

/// Target `name` (its column `col`) resolved, or None (reported). Every
/// target has the same rows, so the same period labels: `shared_labels`
/// holds them once made.
///
/// One function because each step (the column, its transform, the span, the
/// first origins, the predictors) narrows what the next may use, and each
/// reports against the same target.
pub(super) fn resolve_target(
    ctx: &mut Ctx,
    sel: &Selection,
    req: &DataRequest,
    (name, node, col): (&str, &Node, usize),
    shared_labels: &mut Option<Arc<[String]>>,
) -> Option<TargetData> {
    let rows = sel.rows;
    let season = sel.freq.season_length();
    let (raw, last) = target_values(ctx, sel, req, (name, node, col))?;
    // Positions are where every candidate's transformed target exists:
    // the largest lag of the transforms asked for.
    let lag = req
        .other_transforms
        .iter()
        .map(|(t, _)| transform_lag(*t, season))
        .fold(transform_lag(req.transform, season), usize::max);
    let transformed = match apply_transform(req.transform, &raw[..=last], season) {
        Ok(t) => t,
        Err((i, m)) => {
            ctx.diags.push(cell_error(
                sel.table,
                rows[i].line,
                col,
                format!("transform {}: {m}", req.transform.name()),
            ));
            return None;
        }
    };
    if last < lag + 1 {
        ctx.error(
            node,
            format!(
                "target '{name}' has {} value(s){}; a forecast experiment needs many more",
                last + 1 - lag.min(last + 1),
                if lag > 0 {
                    format!(" after the transform {}", req.transform.name())
                } else {
                    String::new()
                }
            ),
        );
        return None;
    }
    if !check_scale(ctx, sel.table, col, &transformed, &sel.lines, req.transform) {
        return None;
    }
    let n = last + 1 - lag;
    let y: Vec<f64> = transformed[lag..=last]
        .iter()
        .map(|v| v.unwrap_or(f64::NAN))
        .collect();
    let alternates = other_series(ctx, sel, req, (col, &raw[..=last]), lag)?;
    if let Some((candidate, seen)) = req.positive_for {
        let y = alternates
            .iter()
            .find(|(t, _)| *t == seen)
            .map_or(&y, |(_, v)| v);
        if let Some(i) = y.iter().position(|&v| v <= 0.0) {
            ctx.diags.push(cell_error(
                sel.table,
                rows[lag + i].line,
                col,
                format!(
                    "{}{} is not above 0, and candidate '{candidate}' has a multiplicative error, which needs every target value above 0; remove the candidate's multiplicative error, or transform or select the data so the series stays positive (see docs/refusals.md)",
                    if seen != super::super::model::Transform::None {
                        format!("after the transform {}, the value ", seen.name())
                    } else {
                        "the value ".to_string()
                    },
                    y[i]
                ),
            ));
            return None;
        }
    }
    let labels = shared_labels
        .get_or_insert_with(|| {
            rows[lag..]
                .iter()
                .map(|r| r.cells[sel.time_idx].to_string())
                .collect()
        })
        .clone();
    let ordinals: Vec<i64> = sel.ordinals[lag..].to_vec();
    let raw_target: Vec<f64> = raw[lag..=last]
        .iter()
        .map(|v| v.unwrap_or(f64::NAN))
        .collect();
    let (predictors, raw_predictors) = predictor_values(ctx, sel, req, name, last, lag)?;
    debug_assert_eq!(labels.len(), rows.len() - lag);
    let first_origins = first_origins(ctx, sel.freq, req, name, n, &ordinals, &labels)?;
    Some(TargetData {
        name: name.to_string(),
        n,
        y,
        labels,
        ordinals,
        predictors,
        first_origins,
        raw: raw_target,
        source: RawSource {
            lag,
            target: raw[..=last].to_vec(),
            predictors: raw_predictors,
        },
        vintages: None,
        in_levels: false,
        alternates,
    })
}

/// The target under each other transform candidates ask for, at the
/// positions 1..N that start `lag` rows in; None when the data cannot take
/// one (reported at the cell, naming the candidate).
fn other_series(
    ctx: &mut Ctx,
    sel: &Selection,
    req: &DataRequest,
    (col, raw): (usize, &[Option<f64>]),
    lag: usize,
) -> Option<Vec<(Transform, Vec<f64>)>> {
    let season = sel.freq.season_length();
    let mut out = Vec::new();
    for (t, candidate) in req.other_transforms {
        match apply_transform(*t, raw, season) {
            Ok(z) => out.push((*t, z[lag..].iter().map(|v| v.unwrap_or(f64::NAN)).collect())),
            Err((i, m)) => {
                ctx.diags.push(cell_error(
                    sel.table,
                    sel.rows[i].line,
                    col,
                    format!("candidate '{candidate}' asks for transform {}: {m}; give it another transform or select rows the transform can take (see docs/experiment-file.md#units)", t.name()),
                ));
                return None;
            }
        }
    }
    Some(out)
}

/// The target column's values and the index of its last value; None when a
/// cell is not a number, the column is empty, or a cell before its last
/// value is empty (each reported; bad predictor cells are reported too, in
/// the same pass).
fn target_values(
    ctx: &mut Ctx,
    sel: &Selection,
    req: &DataRequest,
    (name, node, col): (&str, &Node, usize),
) -> Option<(Vec<Option<f64>>, usize)> {
    let rows = sel.rows;
    let (raw, invalid) = sel.column(ctx, col, rows.len())?;
    if invalid.iter().any(|&b| b) {
        let last = (0..rows.len())
            .rev()
            .find(|&i| raw[i].is_some() || invalid[i])
            .unwrap_or(0);
        for (p, pcol) in req.predictors.iter().zip(&sel.predictor_columns) {
            if let Some(pcol) = *pcol {
                let used = if p.known_ahead { rows.len() } else { last + 1 };
                let _ = parse_column(ctx, sel.table, rows, pcol, used);
            }
        }
        return None;
    }
    let Some(last) = raw.iter().rposition(Option::is_some) else {
        ctx.error(
            node,
            format!("target column '{name}' has no values in the selected rows"),
        );
        return None;
    };
    let empty: Vec<usize> = (0..=last).filter(|&i| raw[i].is_none()).collect();
    report_cells(
        ctx,
        sel.table,
        col,
        empty.iter().map(|&i| rows[i].line),
        "the cell is empty; a target may only be empty in the future rows after its last value — fill it in, or end the data (data.end) before it",
        "more empty cells",
    );
    empty.is_empty().then_some((raw, last))
}

/// A column's values before and after its transform.
type RawAndTransformed = (Vec<Option<f64>>, Vec<Option<f64>>);

/// Every declared predictor, transformed, at the target's positions (the
/// target's last value is row `last`, its transform's lag `lag`), and its
/// raw values over the selected rows; None when any of them has a problem
/// (all are checked and reported).
fn predictor_values(
    ctx: &mut Ctx,
    sel: &Selection,
    req: &DataRequest,
    name: &str,
    last: usize,
    lag: usize,
) -> Option<PredictorColumns> {
    let mut values = Vec::new();
    let mut raws = Vec::new();
    let mut all_ok = true;
    for (i, pnode) in req.predictor_nodes.iter().enumerate() {
        match predictor(ctx, sel, req, i, pnode, name, last) {
            Some((raw, v)) => {
                values.push(v[lag..].to_vec());
                raws.push(raw);
            }
            None => all_ok = false,
        }
    }
    all_ok.then_some((values, raws))
}

/// The predictors' transformed values at the target's positions, then their raw values.
type PredictorColumns = (Vec<Vec<Option<f64>>>, Vec<Vec<Option<f64>>>);

/// Predictor `i`'s raw and transformed values over every selected row, or None (reported).
fn predictor(
    ctx: &mut Ctx,
    sel: &Selection,
    req: &DataRequest,
    i: usize,
    pnode: &Node,
    name: &str,
    last: usize,
) -> Option<RawAndTransformed> {
    let p = &req.predictors[i];
    let pcol = sel.predictor_columns[i]?;
    let rows = sel.rows;
    let season = sel.freq.season_length();
    let used_rows = if p.known_ahead { rows.len() } else { last + 1 };
    let (mut praw, invalid) = sel.column(ctx, pcol, used_rows)?;
    praw.resize(rows.len(), None);
    let mut ok = !invalid.iter().any(|&b| b);
    // A cell with a bad value is reported as such, not also as empty.
    let present = |i: usize| praw[i].is_some() || invalid.get(i).copied().unwrap_or(false);
    // Ragged edge: trailing cells up to `release_lag` may be empty.
    let last_present = (0..=last).rev().find(|&i| present(i));
    let allowed_tail = p.release_lag;
    match last_present {
        None => {
            ctx.error(
                pnode,
                format!(
                    "predictor '{}' has no values in the rows of target '{name}'",
                    p.column
                ),
            );
            return None;
        }
        Some(lp) if last - lp > allowed_tail => {
            let row = &rows[lp + 1];
            ctx.diags.push(cell_error(
                sel.table,
                row.line,
                pcol,
                format!(
                    "the cell is empty; the predictor may only be empty in its last {} row(s) before the target ends (release_lag {}){}",
                    allowed_tail,
                    p.release_lag,
                    if p.release_lag == 0 { "; set release_lag if it is published late" } else { "" }
                ),
            ));
            ok = false;
        }
        Some(lp) => {
            let empty: Vec<usize> = (0..=lp).filter(|&i| !present(i)).collect();
            report_cells(
                ctx,
                sel.table,
                pcol,
                empty.iter().map(|&i| rows[i].line),
                "the cell is empty; only a predictor's trailing cells (its ragged edge) may be empty — fill it in",
                "more empty cells",
            );
            ok &= empty.is_empty();
        }
    }
    if !ok {
        return None;
    }
    let transformed = match apply_transform(p.transform, &praw, season) {
        Ok(t) => t,
        Err((i, m)) => {
            ctx.diags.push(cell_error(
                sel.table,
                rows[i].line,
                pcol,
                format!("transform {}: {m}", p.transform.name()),
            ));
            return None;
        }
    };
    check_scale(ctx, sel.table, pcol, &transformed, &sel.lines, p.transform)
        .then_some((praw, transformed))
}

/// The first origin T0 of each scheme on this target (SPEC §4); None when
/// one falls outside the data or leaves no outturn to score (reported).
fn first_origins(
    ctx: &mut Ctx,
    freq: Frequency,
    req: &DataRequest,
    name: &str,
    n: usize,
    ordinals: &[i64],
    labels: &[String],
) -> Option<Vec<usize>> {
    let mut first_origins = Vec::new();
    for (scheme, snode) in req.schemes {
        let pos_of = |ctx: &mut Ctx, label: &str| -> Option<usize> {
            let o = match parse_label(freq, label) {
                Ok((o, _)) => o,
                Err(e) => {
                    ctx.error(snode, format!("scheme {}: {e}", scheme.id));
                    return None;
                }
            };
            match ordinals[..n].iter().position(|&x| x == o) {
                Some(i) => Some(i + 1),
                None => {
                    ctx.error(
                        snode,
                        format!(
                            "scheme {}: period '{label}' is not among target '{name}''s periods {} to {}",
                            scheme.id, labels[0], labels[n - 1]
                        ),
                    );
                    None
                }
            }
        };
        let t0 = match &scheme.start {
            SchemeStart::Half => Some(n / 2),
            SchemeStart::TestStart { label, .. } => pos_of(ctx, label).map(|p| p - 1),
            SchemeStart::FirstOrigin { label, .. } => pos_of(ctx, label),
            SchemeStart::TrainShare {
                numerator,
                denominator,
                ..
            } => Some(((*numerator * n as u128) / *denominator) as usize),
        };
        let Some(t0) = t0 else { continue };
        if t0 < 1 {
            ctx.error(snode, format!("scheme {}: the first origin falls before the first period of target '{name}'; move it later", scheme.id));
            continue;
        }
        if let Some(&h) = req.horizons.iter().rev().find(|&&h| t0 + h > n) {
            ctx.error(
                snode,
                format!(
                    "scheme {}: the first origin {} of target '{name}' leaves no outturn to score at horizon {h} (the data end at {}); move the origin earlier or drop the horizon",
                    scheme.id, labels[t0 - 1], labels[n - 1]
                ),
            );
            continue;
        }
        first_origins.push(t0);
    }
    (first_origins.len() == req.schemes.len()).then_some(first_origins)
}
