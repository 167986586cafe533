//! The period labels of the data file: a header row, labels of the declared
//! frequency, strictly increasing without gaps (SPEC §2), and the rows that
//! `data.start` and `data.end` select.

use super::super::data::RawTable;
use super::super::decode::{clip, Ctx};
use super::super::period::{parse_label, Frequency, LabelStyle};
use super::super::yaml::Node;
use super::columns::{cell_error, MAX_CELL_MESSAGES};
use crate::error::Diagnostic;

/// A file without a header row: its first line holds a period label or
/// numbers. Reported (true) when the time column is missing and the first
/// line looks like data.
pub(super) fn headerless(ctx: &mut Ctx, table: &RawTable, time: &str, freq: Frequency) -> bool {
    if table.column(time).is_some() {
        return false;
    }
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
                time
            ),
        ));
    }
    looks_like_data
}

/// Every row's period as an ordinal, and the label style of the first;
/// None when a label does not parse (reported, a few rows at most).
pub(super) fn ordinals(
    ctx: &mut Ctx,
    table: &RawTable,
    time_idx: usize,
    freq: Frequency,
) -> Option<(Vec<i64>, LabelStyle)> {
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
    if bad_rows.is_empty() {
        return Some((ordinals, style.unwrap_or(LabelStyle::Plain)));
    }
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
    None
}

/// Periods strictly increasing and without gaps; false when not (reported).
/// Rows out of order make gaps of their own; the disorder alone is reported then.
pub(super) fn in_order(
    ctx: &mut Ctx,
    table: &RawTable,
    time_idx: usize,
    ordinals: &[i64],
    step: i64,
) -> bool {
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
                "gap: {missing} period(s) missing between '{prev_label}' (line {}) and '{label}'; periods must follow each other without gaps — add the missing rows (cells may be empty only at a predictor's ragged edge and in future rows)",
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
    order_problems == 0
}

/// The rows `data.start` and `data.end` select, as a range of row indices;
/// None when a bound is not a label or nothing is selected (reported).
pub(super) fn selected_rows(
    ctx: &mut Ctx,
    ordinals: &[i64],
    freq: Frequency,
    start: Option<(&str, &Node)>,
    end: Option<(&str, &Node)>,
    time_node: &Node,
) -> Option<std::ops::Range<usize>> {
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
    let lo = bound(ctx, start, "start")?;
    let hi = bound(ctx, end, "end")?;
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
        let node = start.or(end).map(|(_, n)| n).unwrap_or(time_node);
        ctx.error(
            node,
            "data.start and data.end select no rows of the data file",
        );
        return None;
    }
    Some(first_row..end_row)
}
