//! Resolving the data file against the experiment: period labels checked and
//! selected (`periods`), columns parsed and transformed (`columns`), every
//! target laid out in its own position space (SPEC §4) with its predictors
//! and each scheme's first origin (`target`).

mod columns;
mod periods;
mod target;
mod vintages;
pub(in crate::spec) use vintages::resolve_vintages;

use super::data::RawTable;
use super::decode::Ctx;
use super::model::{Predictor, Scheme, TargetData, Transform};
use super::period::{Frequency, LabelStyle};
use super::yaml::Node;
use columns::{column_or_error, parse_columns};

#[derive(Clone, Copy)]
pub struct DataRequest<'a> {
    pub time: (&'a str, &'a Node),
    pub frequency: Frequency,
    pub start: Option<(&'a str, &'a Node)>,
    pub end: Option<(&'a str, &'a Node)>,
    pub targets: &'a [(String, Node)],
    pub transform: Transform,
    pub predictors: &'a [Predictor],
    pub predictor_nodes: &'a [Node],
    pub schemes: &'a [(&'a Scheme, &'a Node)],
    pub horizons: &'a [usize],
    /// The first candidate whose model needs every target value above 0
    /// (a multiplicative error), if any, and the transform its model sees.
    pub positive_for: Option<(&'a str, Transform)>,
    /// The other transforms candidates ask for (`transform:` on a
    /// candidate, with `scoring.units: original`), each once, with the
    /// first candidate that asks for it.
    pub other_transforms: &'a [(Transform, String)],
}

pub struct Resolved {
    pub targets: Vec<TargetData>,
    pub label_style: LabelStyle,
}

pub fn resolve_data(ctx: &mut Ctx, table: &RawTable, req: DataRequest) -> Option<Resolved> {
    let freq = req.frequency;
    if periods::headerless(ctx, table, req.time.0, freq) {
        return None;
    }
    let time_idx = column_or_error(ctx, table, req.time.0, req.time.1, "the time")?;
    let (ordinals, label_style) = periods::ordinals(ctx, table, time_idx, freq)?;
    if !periods::in_order(ctx, table, time_idx, &ordinals, freq.step()) {
        return None;
    }
    // start / end select rows first.
    let range = periods::selected_rows(ctx, &ordinals, freq, req.start, req.end, req.time.1)?;
    let rows = &table.rows[range.clone()];
    let predictor_columns: Vec<Option<usize>> = req
        .predictors
        .iter()
        .zip(req.predictor_nodes)
        .map(|(p, node)| column_or_error(ctx, table, &p.column, node, "the predictor"))
        .collect();
    // The target and predictor columns, parsed in one pass along the rows
    // (a wide panel read column by column jumps between rows for every
    // cell). A column with a cell that is not a number is left out here and
    // goes through `parse_column`, which reports the cell, in its turn.
    let parsed = parse_columns(
        rows,
        req.targets
            .iter()
            .filter_map(|(name, _)| table.column(name))
            .chain(predictor_columns.iter().flatten().copied()),
    );
    let selection = target::Selection {
        table,
        rows,
        ordinals: &ordinals[range],
        time_idx,
        freq,
        parsed,
        predictor_columns,
        lines: rows.iter().map(|r| r.line).collect(),
    };
    let mut shared_labels = None;
    let mut targets = Vec::new();
    for (name, node) in req.targets {
        let Some(col) = column_or_error(ctx, table, name, node, "the target") else {
            continue;
        };
        if let Some(t) =
            target::resolve_target(ctx, &selection, &req, (name, node, col), &mut shared_labels)
        {
            targets.push(t);
        }
    }
    (targets.len() == req.targets.len()).then_some(Resolved {
        targets,
        label_style,
    })
}

/// A column of the data file that a target is made from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RawColumn {
    Target,
    /// Declared predictor `i`.
    Predictor(usize),
}

/// What is visible of each column at some origin: the latest usable
/// position (SPEC §4) of the target and of each declared predictor; a
/// position below 1 hides the whole column.
pub struct Visible {
    pub target: i64,
    pub predictors: Vec<i64>,
}

/// The target made again from its raw values (the data file's, before any
/// transform) with every raw row after the last one visible replaced by
/// `replace(column, row, value)`, and transformed as the run transforms it.
/// A transformed value at position p reads raw rows up to `lag + p - 1`
/// only (a difference reads that row and the one a lag or a season
/// before), so the rows after `lag + u - 1`, u the latest usable position,
/// are exactly the ones no visible value depends on. The target's future
/// rows stay empty (they would move N). Err when a replaced value cannot
/// be transformed.
pub fn remade(
    target: &TargetData,
    transform: Transform,
    predictors: &[Predictor],
    season: Option<usize>,
    visible: &Visible,
    replace: &mut dyn FnMut(RawColumn, usize, Option<f64>) -> f64,
) -> Result<TargetData, String> {
    let src = &target.source;
    let first_hidden = |u: i64| (src.lag as i64).saturating_add(u).max(0) as usize;
    let mut hide = |column: RawColumn, values: &[Option<f64>], from: usize| {
        let mut out = values.to_vec();
        for (row, v) in out.iter_mut().enumerate().skip(from) {
            *v = Some(replace(column, row, *v));
        }
        out
    };
    let raw_target = hide(RawColumn::Target, &src.target, first_hidden(visible.target));
    let why = |column: &str, (row, m): (usize, String)| {
        format!("{column}, row {} of the selected rows: {m}", row + 1)
    };
    let y = columns::apply_transform(transform, &raw_target, season)
        .map_err(|e| why("the target", e))?;
    let mut out = target.clone();
    let n = target.n;
    for (t, series) in &mut out.alternates {
        let z =
            columns::apply_transform(*t, &raw_target, season).map_err(|e| why("the target", e))?;
        *series = z[src.lag..src.lag + n]
            .iter()
            .map(|v| v.unwrap_or(f64::NAN))
            .collect();
    }
    out.y = y[src.lag..src.lag + n]
        .iter()
        .map(|v| v.unwrap_or(f64::NAN))
        .collect();
    out.raw = raw_target[src.lag..src.lag + n]
        .iter()
        .map(|v| v.unwrap_or(f64::NAN))
        .collect();
    for (i, p) in predictors.iter().enumerate() {
        let raw = hide(
            RawColumn::Predictor(i),
            &src.predictors[i],
            first_hidden(visible.predictors[i]),
        );
        let values =
            columns::apply_transform(p.transform, &raw, season).map_err(|e| why(&p.column, e))?;
        out.predictors[i] = values[src.lag..].to_vec();
        out.source.predictors[i] = raw;
    }
    out.source.target = raw_target;
    Ok(out)
}
