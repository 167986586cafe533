//! The data file's cells: columns found by name, numbers parsed (and bad
//! cells reported, a few per column), transforms applied (SPEC §2) and
//! values checked for sizes the arithmetic can take.

use super::super::data::{parse_number, RawRow, RawTable};
use super::super::decode::Ctx;
use super::super::model::Transform;
use super::super::yaml::Node;
use crate::error::{nearest, Diagnostic};

pub(super) fn column_or_error(
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
pub(super) const MAX_CELL_MESSAGES: usize = 5;

pub(super) fn cell_error(
    table: &RawTable,
    line: usize,
    column: usize,
    message: String,
) -> Diagnostic {
    Diagnostic::new(
        table.location(line, Some(column)),
        format!("column '{}': {message}", table.headers[column]),
    )
}

/// Report one message per line in `lines`, at most [`MAX_CELL_MESSAGES`],
/// then one line counting the rest.
pub(super) fn report_cells(
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
pub(super) fn parse_column(
    ctx: &mut Ctx,
    table: &RawTable,
    rows: &[RawRow],
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
pub(super) fn parse_columns(
    rows: &[RawRow],
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
pub(super) fn check_scale(
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
