//! Resolving the data file against the experiment: period labels checked and
//! selected, columns parsed and transformed, every target laid out in its own
//! position space (SPEC §4), and each scheme's first origin found.

use super::data::{parse_number, RawTable};
use super::decode::clip;
use super::decode::Ctx;
use super::model::{Predictor, Scheme, SchemeStart, TargetData, Transform};
use super::period::{parse_label, Frequency, LabelStyle};
use super::yaml::Node;
use crate::error::{nearest, Diagnostic};

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
}

pub struct Resolved {
    pub targets: Vec<TargetData>,
    pub label_style: LabelStyle,
}

fn column_or_error(
    ctx: &mut Ctx,
    table: &RawTable,
    name: &str,
    node: &Node,
    what: &str,
) -> Option<usize> {
    match table.column(name) {
        Some(i) => Some(i),
        None => {
            let headers: Vec<&str> = table.headers.iter().map(String::as_str).collect();
            let hint = match nearest(name, &headers) {
                Some(n) => format!("the closest is '{n}'"),
                None => format!("its columns are: {}", headers.join(", ")),
            };
            ctx.error(
                node,
                format!(
                    "{what} column '{name}' is not in {}; {hint}",
                    table.path.display()
                ),
            );
            None
        }
    }
}

/// At most this many messages about the cells of one column; then one line
/// says how many more there are.
const MAX_CELL_MESSAGES: usize = 5;

fn cell_error(table: &RawTable, line: usize, column: usize, message: String) -> Diagnostic {
    Diagnostic::new(
        table.location(line, Some(column)),
        format!("column '{}': {message}", table.headers[column]),
    )
}

/// Report one message per line in `lines`, at most [`MAX_CELL_MESSAGES`],
/// then one line counting the rest.
fn report_cells(
    ctx: &mut Ctx,
    table: &RawTable,
    column: usize,
    lines: impl Iterator<Item = usize>,
    message: &str,
    rest: &str,
) {
    let lines: Vec<usize> = lines.collect();
    for (k, &line) in lines.iter().enumerate() {
        if k == MAX_CELL_MESSAGES {
            ctx.diags.push(cell_error(
                table,
                line,
                column,
                format!("and {} {rest} from here on", lines.len() - k),
            ));
            break;
        }
        ctx.diags
            .push(cell_error(table, line, column, message.to_string()));
    }
}

/// Parse the numeric cells of `column` in `rows[..used]`: the values, and
/// which cells hold something that is not a usable number (reported, at most
/// [`MAX_CELL_MESSAGES`] of them).
fn parse_column(
    ctx: &mut Ctx,
    table: &RawTable,
    rows: &[super::data::RawRow],
    column: usize,
    used: usize,
) -> Option<(Vec<Option<f64>>, Vec<bool>)> {
    let mut values = Vec::with_capacity(used);
    let mut invalid = Vec::with_capacity(used);
    let mut problems = Vec::new();
    for row in rows.iter().take(used) {
        match parse_number(&row.cells[column]) {
            Ok(v) => {
                values.push(v);
                invalid.push(false);
            }
            Err(m) => {
                problems.push((row.line, m));
                values.push(None);
                invalid.push(true);
            }
        }
    }
    let total = problems.len();
    for (k, (line, m)) in problems.into_iter().enumerate() {
        if k == MAX_CELL_MESSAGES {
            ctx.diags.push(cell_error(
                table,
                line,
                column,
                format!(
                    "and {} more cell(s) that are not numbers from here on",
                    total - k
                ),
            ));
            break;
        }
        ctx.diags.push(cell_error(table, line, column, m));
    }
    Some((values, invalid))
}

/// Parse `columns` of `rows` in one pass along the rows: the values of
/// each column whose every cell is a number or empty.
fn parse_columns(
    rows: &[super::data::RawRow],
    columns: impl Iterator<Item = usize>,
) -> std::collections::HashMap<usize, Vec<Option<f64>>> {
    let mut columns: Vec<usize> = columns.collect();
    columns.sort_unstable();
    columns.dedup();
    let mut values: Vec<Option<Vec<Option<f64>>>> = columns
        .iter()
        .map(|_| Some(Vec::with_capacity(rows.len())))
        .collect();
    for row in rows {
        for (&col, column) in columns.iter().zip(values.iter_mut()) {
            if let Some(v) = column {
                match parse_number(&row.cells[col]) {
                    Ok(x) => v.push(x),
                    Err(_) => *column = None,
                }
            }
        }
    }
    columns
        .into_iter()
        .zip(values)
        .filter_map(|(col, v)| Some((col, v?)))
        .collect()
}

/// Values beyond these sizes cannot go through least squares: their squares
/// overflow (or all underflow to zero) in 64-bit floating point.
const LARGEST_VALUE: f64 = 1e100;
const SMALLEST_SCALE: f64 = 1e-100;

/// Refuse a transformed column whose values are too large, or all too small,
/// for the arithmetic; `rows` maps value indices to data rows.
fn check_scale(
    ctx: &mut Ctx,
    table: &RawTable,
    column: usize,
    values: &[Option<f64>],
    lines: &[usize],
    transform: Transform,
) -> bool {
    let what = if transform == Transform::None {
        String::new()
    } else {
        format!(" after the transform {}", transform.name())
    };
    if let Some((i, v)) = values
        .iter()
        .enumerate()
        .find_map(|(i, v)| v.filter(|x| x.abs() > LARGEST_VALUE).map(|x| (i, x)))
    {
        ctx.diags.push(cell_error(
            table,
            lines[i],
            column,
            format!("the value{what} is {v:e}, too large for least squares (sizes above {LARGEST_VALUE:e} overflow when squared); rescale the column, e.g. divide it by a power of ten or use transform: log"),
        ));
        return false;
    }
    let largest = values.iter().flatten().fold(0.0f64, |m, x| m.max(x.abs()));
    if largest > 0.0 && largest < SMALLEST_SCALE {
        let i = values.iter().position(Option::is_some).unwrap_or(0);
        ctx.diags.push(cell_error(
            table,
            lines[i],
            column,
            format!("every value{what} is smaller than {SMALLEST_SCALE:e} in size (the largest is {largest:e}); their squares underflow to zero — rescale the column, e.g. multiply it by a power of ten"),
        ));
        return false;
    }
    true
}

/// Lag of a transform in periods: how many leading values it cannot produce.
pub fn transform_lag(t: Transform, season: Option<usize>) -> usize {
    match t {
        Transform::None | Transform::Log => 0,
        Transform::Diff | Transform::LogDiff | Transform::PctChange => 1,
        Transform::SeasonalDiff => season.unwrap_or(1),
    }
}

/// Apply a transform to a column of optional values (SPEC §2). A value that
/// cannot be produced is None; a value that cannot be transformed (log of a
/// non-positive number, division by zero) is reported with its row index.
pub fn apply_transform(
    t: Transform,
    raw: &[Option<f64>],
    season: Option<usize>,
) -> Result<Vec<Option<f64>>, (usize, String)> {
    let lag = transform_lag(t, season);
    let mut out = vec![None; raw.len()];
    for i in 0..raw.len() {
        let Some(x) = raw[i] else { continue };
        let needs_log = matches!(t, Transform::Log | Transform::LogDiff);
        if needs_log && x <= 0.0 {
            return Err((i, format!("log needs positive values, found {x}")));
        }
        if lag > 0 && i < lag {
            continue;
        }
        let prev = if lag > 0 { raw[i - lag] } else { None };
        out[i] = match t {
            Transform::None => Some(x),
            Transform::Log => Some(x.ln()),
            Transform::Diff | Transform::SeasonalDiff => prev.map(|p| x - p),
            Transform::LogDiff => prev.map(|p| x.ln() - p.ln()),
            Transform::PctChange => match prev {
                Some(0.0) => {
                    return Err((
                        i,
                        "pct_change divides by the previous value, which is 0".to_string(),
                    ))
                }
                Some(p) => Some(x / p - 1.0),
                None => None,
            },
        };
    }
    Ok(out)
}

pub fn resolve_data(ctx: &mut Ctx, table: &RawTable, req: DataRequest) -> Option<Resolved> {
    let freq = req.frequency;
    let season = freq.season_length();
    if table.column(req.time.0).is_none() {
        // A file without a header row: its first line holds a period label or numbers.
        let looks_like_data = table
            .headers
            .iter()
            .any(|h| parse_label(freq, h).is_ok() || Frequency::guess(&[h]).is_some());
        if looks_like_data {
            ctx.diags.push(Diagnostic::new(
                table.location(table.header_line, None),
                format!(
                    "the first line holds data ('{}'), not a header row; add a header row naming the columns, with '{}' for the period labels",
                    clip(&table.headers.join(",")),
                    req.time.0
                ),
            ));
            return None;
        }
    }
    let time_idx = column_or_error(ctx, table, req.time.0, req.time.1, "the time")?;

    // Period labels: parsed, strictly increasing, without gaps.
    let mut ordinals = Vec::with_capacity(table.rows.len());
    let mut style = None;
    let mut bad_rows = Vec::new();
    for (r, row) in table.rows.iter().enumerate() {
        let label = &row.cells[time_idx];
        match parse_label(freq, label) {
            Ok((o, s)) => {
                style.get_or_insert(s);
                ordinals.push(o);
            }
            Err(e) => {
                let msg = if label.is_empty() {
                    "the period label is empty".to_string()
                } else {
                    e.0
                };
                bad_rows.push((r, msg));
                ordinals.push(i64::MIN);
            }
        }
    }
    if !bad_rows.is_empty() {
        let labels: Vec<&str> = table.rows.iter().map(|r| &r.cells[time_idx]).collect();
        let hint = match Frequency::guess(&labels) {
            Some(g) if g != freq => format!(
                "; the labels look {}: set data.frequency: {}",
                g.name(),
                g.name()
            ),
            _ => String::new(),
        };
        let total = bad_rows.len();
        for (k, (r, msg)) in bad_rows.into_iter().enumerate() {
            let line = table.rows[r].line;
            if k == MAX_CELL_MESSAGES {
                ctx.diags.push(cell_error(
                    table,
                    line,
                    time_idx,
                    format!(
                        "and {} more row(s) from here on whose period label is not {} {} label{hint}",
                        total - k,
                        freq.article(),
                        freq.name()
                    ),
                ));
                break;
            }
            let hint = if k == 0 { hint.as_str() } else { "" };
            ctx.diags
                .push(cell_error(table, line, time_idx, format!("{msg}{hint}")));
        }
        return None;
    }
    let step = freq.step();
    // Rows out of order make gaps of their own; report the disorder alone then.
    let unsorted = ordinals.windows(2).any(|w| w[1] < w[0]);
    let mut order_problems = 0;
    for i in 1..ordinals.len() {
        let (prev, cur) = (ordinals[i - 1], ordinals[i]);
        let row = &table.rows[i];
        let (label, prev_label) = (
            clip(&row.cells[time_idx]),
            clip(&table.rows[i - 1].cells[time_idx]),
        );
        let msg = if cur == prev {
            format!(
                "period '{label}' repeats the previous row's period (line {}); remove the duplicate row",
                table.rows[i - 1].line
            )
        } else if cur < prev {
            format!(
                "period '{label}' comes before the previous row's '{prev_label}' (line {}); sort the rows in time order",
                table.rows[i - 1].line
            )
        } else if unsorted {
            continue;
        } else if (cur - prev) % step != 0 {
            format!(
                "period '{label}' is {} days after '{prev_label}'; weekly periods must be 7 days apart, on the same weekday",
                cur - prev
            )
        } else if cur - prev != step {
            let missing = (cur - prev) / step - 1;
            format!(
                "gap: {missing} period(s) missing between '{prev_label}' (line {}) and '{label}'; periods must follow each other without gaps — add the missing rows (cells may be empty only where SPEC allows)",
                table.rows[i - 1].line
            )
        } else {
            continue;
        };
        order_problems += 1;
        if order_problems > MAX_CELL_MESSAGES {
            ctx.diags.push(cell_error(
                table,
                row.line,
                time_idx,
                "and more rows out of order or with gaps from here on".to_string(),
            ));
            break;
        }
        ctx.diags.push(cell_error(table, row.line, time_idx, msg));
    }
    if order_problems > 0 {
        return None;
    }
    let label_style = style.unwrap_or(LabelStyle::Plain);

    // start / end select rows first.
    let bound = |ctx: &mut Ctx, b: Option<(&str, &Node)>, what: &str| -> Option<Option<i64>> {
        match b {
            None => Some(None),
            Some((text, node)) => match parse_label(freq, text) {
                Ok((o, _)) => Some(Some(o)),
                Err(e) => {
                    ctx.error(node, format!("data.{what}: {e}"));
                    None
                }
            },
        }
    };
    let lo = bound(ctx, req.start, "start")?;
    let hi = bound(ctx, req.end, "end")?;
    let first_row = lo
        .map(|l| {
            ordinals
                .iter()
                .position(|&o| o >= l)
                .unwrap_or(ordinals.len())
        })
        .unwrap_or(0);
    let end_row = hi
        .map(|h| {
            ordinals
                .iter()
                .rposition(|&o| o <= h)
                .map(|i| i + 1)
                .unwrap_or(0)
        })
        .unwrap_or(ordinals.len());
    if first_row >= end_row {
        let node = req.start.or(req.end).map(|(_, n)| n).unwrap_or(req.time.1);
        ctx.error(
            node,
            "data.start and data.end select no rows of the data file",
        );
        return None;
    }
    let rows = &table.rows[first_row..end_row];
    let ords = &ordinals[first_row..end_row];

    let pred_cols: Vec<Option<usize>> = req
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
            .chain(pred_cols.iter().flatten().copied()),
    );
    let parsed_or_report = |ctx: &mut Ctx, col: usize, used: usize| match parsed.get(&col) {
        Some(values) => Some((values[..used].to_vec(), vec![false; used])),
        None => parse_column(ctx, table, rows, col, used),
    };
    // Every target has the same rows, so the same period labels (the
    // transform's lag is the experiment's): built once.
    let mut shared_labels: Option<std::sync::Arc<[String]>> = None;
    let mut targets = Vec::new();
    for (name, node) in req.targets {
        let Some(col) = column_or_error(ctx, table, name, node, "the target") else {
            continue;
        };
        // Parse the target column; the last non-empty cell ends it.
        let Some((raw, invalid)) = parsed_or_report(ctx, col, rows.len()) else {
            continue;
        };
        if invalid.iter().any(|&b| b) {
            // Still report the predictors' bad cells in the same pass.
            let last = (0..rows.len())
                .rev()
                .find(|&i| raw[i].is_some() || invalid[i])
                .unwrap_or(0);
            for (p, pcol) in req.predictors.iter().zip(&pred_cols) {
                if let Some(pcol) = *pcol {
                    let used = if p.known_ahead { rows.len() } else { last + 1 };
                    let _ = parse_column(ctx, table, rows, pcol, used);
                }
            }
            continue;
        }
        let Some(last) = raw.iter().rposition(Option::is_some) else {
            ctx.error(
                node,
                format!("target column '{name}' has no values in the selected rows"),
            );
            continue;
        };
        let empty: Vec<usize> = (0..=last).filter(|&i| raw[i].is_none()).collect();
        report_cells(
            ctx,
            table,
            col,
            empty.iter().map(|&i| rows[i].line),
            "the cell is empty; a target may only be empty in the future rows after its last value — fill it in, or end the data (data.end) before it",
            "more empty cells",
        );
        if !empty.is_empty() {
            continue;
        }
        let lag = transform_lag(req.transform, season);
        let transformed = match apply_transform(req.transform, &raw[..=last], season) {
            Ok(t) => t,
            Err((i, m)) => {
                ctx.diags.push(cell_error(
                    table,
                    rows[i].line,
                    col,
                    format!("transform {}: {m}", req.transform.name()),
                ));
                continue;
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
            continue;
        }
        let lines: Vec<usize> = rows.iter().map(|r| r.line).collect();
        if !check_scale(ctx, table, col, &transformed, &lines, req.transform) {
            continue;
        }
        let n = last + 1 - lag;
        let y: Vec<f64> = transformed[lag..=last]
            .iter()
            .map(|v| v.unwrap_or(f64::NAN))
            .collect();
        let total = rows.len() - lag;
        let labels = shared_labels
            .get_or_insert_with(|| {
                rows[lag..]
                    .iter()
                    .map(|r| r.cells[time_idx].to_string())
                    .collect()
            })
            .clone();
        let pos_ordinals: Vec<i64> = ords[lag..].to_vec();
        let raw_target: Vec<f64> = raw[lag..=last]
            .iter()
            .map(|v| v.unwrap_or(f64::NAN))
            .collect();

        // Predictors in this target's position space.
        let mut pred_values = Vec::new();
        let mut pred_ok = true;
        for ((p, pcol), pnode) in req
            .predictors
            .iter()
            .zip(&pred_cols)
            .zip(req.predictor_nodes)
        {
            let Some(pcol) = *pcol else {
                pred_ok = false;
                continue;
            };
            let used_rows = if p.known_ahead { rows.len() } else { last + 1 };
            let Some((mut praw, invalid)) = parsed_or_report(ctx, pcol, used_rows) else {
                pred_ok = false;
                continue;
            };
            praw.resize(rows.len(), None);
            let mut this_ok = !invalid.iter().any(|&b| b);
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
                    pred_ok = false;
                    continue;
                }
                Some(lp) if last - lp > allowed_tail => {
                    let row = &rows[lp + 1];
                    ctx.diags.push(cell_error(
                        table,
                        row.line,
                        pcol,
                        format!(
                            "the cell is empty; the predictor may only be empty in its last {} row(s) before the target ends (release_lag {}){}",
                            allowed_tail,
                            p.release_lag,
                            if p.release_lag == 0 { "; set release_lag if it is published late" } else { "" }
                        ),
                    ));
                    this_ok = false;
                }
                Some(lp) => {
                    let empty: Vec<usize> = (0..=lp).filter(|&i| !present(i)).collect();
                    report_cells(
                        ctx,
                        table,
                        pcol,
                        empty.iter().map(|&i| rows[i].line),
                        "the cell is empty; only a predictor's trailing cells (its ragged edge) may be empty — fill it in",
                        "more empty cells",
                    );
                    this_ok &= empty.is_empty();
                }
            }
            if !this_ok {
                pred_ok = false;
                continue;
            }
            let transformed = match apply_transform(p.transform, &praw, season) {
                Ok(t) => t,
                Err((i, m)) => {
                    ctx.diags.push(cell_error(
                        table,
                        rows[i].line,
                        pcol,
                        format!("transform {}: {m}", p.transform.name()),
                    ));
                    pred_ok = false;
                    continue;
                }
            };
            if !check_scale(ctx, table, pcol, &transformed, &lines, p.transform) {
                pred_ok = false;
                continue;
            }
            pred_values.push(transformed[lag..].to_vec());
        }
        if !pred_ok {
            continue;
        }
        debug_assert_eq!(labels.len(), total);

        // First origin per scheme.
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
                match pos_ordinals[..n].iter().position(|&x| x == o) {
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
        if first_origins.len() != req.schemes.len() {
            continue;
        }
        targets.push(TargetData {
            name: name.clone(),
            n,
            y,
            labels,
            ordinals: pos_ordinals,
            predictors: pred_values,
            first_origins,
            raw: raw_target,
        });
    }
    if targets.len() != req.targets.len() {
        return None;
    }
    Some(Resolved {
        targets,
        label_style,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn transforms_follow_the_spec_definitions() {
        // Definitions of SPEC §2 worked by hand on 1, 2, 4, 8.
        let raw = [Some(1.0), Some(2.0), Some(4.0), Some(8.0)];
        assert_eq!(
            apply_transform(Transform::Diff, &raw, None).unwrap(),
            vec![None, Some(1.0), Some(2.0), Some(4.0)]
        );
        assert_eq!(
            apply_transform(Transform::PctChange, &raw, None).unwrap(),
            vec![None, Some(1.0), Some(1.0), Some(1.0)]
        );
        let ld = apply_transform(Transform::LogDiff, &raw, None).unwrap();
        assert!((ld[3].unwrap() - 2f64.ln()).abs() < 1e-15);
        assert_eq!(
            apply_transform(Transform::SeasonalDiff, &raw, Some(2)).unwrap(),
            vec![None, None, Some(3.0), Some(6.0)]
        );
        assert!(apply_transform(Transform::Log, &[Some(0.0)], None).is_err());
        assert!(apply_transform(Transform::PctChange, &[Some(0.0), Some(1.0)], None).is_err());
    }
}
