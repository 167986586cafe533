//! Real-time data (docs/experiment-file.md#vintages): a data file holding several
//! vintages, each the data as published in one period. The file is split
//! into one ordinary table per vintage (the rows of a vintage in the long
//! layout; the period column, the vintage's own target columns and the
//! other columns in the wide one), each resolved as an ordinary data file,
//! and the vintages laid out in the last vintage's position space: which
//! vintage each origin sees, and which release of each period is its
//! outturn.

use super::super::data::{RawRow, RawTable};
use super::super::decode::Ctx;
use super::super::model::{Layout, Release, TargetData, VintageSpec, Vintages};
use super::super::period::{parse_label, Frequency};
use super::{resolve_data, DataRequest, Resolved};
use crate::error::{Diagnostic, Location};
use std::collections::HashMap;
use std::sync::Arc;

/// One vintage of the file: its label, ordinal and rows as an ordinary table.
struct Vintage {
    label: String,
    ordinal: i64,
    /// A line of the file that holds it (for messages).
    line: usize,
    table: RawTable,
}

fn at(table: &RawTable, line: usize, column: Option<usize>, msg: String) -> Diagnostic {
    Diagnostic::new(
        Some(Location {
            file: table.path.clone(),
            line: Some(line),
            column: column.map(|c| c + 1),
        }),
        msg,
    )
}

/// Resolve a file of vintages: every vintage as an ordinary file, the last
/// one giving each target's positions, with `Vintages` attached.
pub(in crate::spec) fn resolve_vintages(
    ctx: &mut Ctx,
    table: &RawTable,
    req: DataRequest,
    spec: &VintageSpec,
) -> Option<Resolved> {
    let vintages = match spec.layout {
        Layout::VintageColumns => split_wide(ctx, table, &req)?,
        _ => split_long(ctx, table, &req, &spec.column)?,
    };
    let last = vintages.len() - 1;
    let mut resolved: Vec<Resolved> = Vec::with_capacity(vintages.len());
    for (i, v) in vintages.iter().enumerate() {
        no_empty_target(ctx, v, &req)?;
        let one = DataRequest {
            schemes: if i == last { req.schemes } else { &[] },
            horizons: if i == last { req.horizons } else { &[] },
            ..req
        };
        resolved.push(resolve_data(ctx, &v.table, one)?);
    }
    let main = resolved.pop()?;
    let label_style = main.label_style;
    let mut targets = Vec::with_capacity(main.targets.len());
    for (j, mut t) in main.targets.into_iter().enumerate() {
        let data: Vec<TargetData> = resolved
            .iter()
            .map(|r| r.targets[j].clone())
            .chain(std::iter::once(t.clone()))
            .collect();
        let laid = lay_out(ctx, table, &req, spec.actual, &vintages, data)?;
        t.vintages = Some(Arc::new(laid));
        targets.push(t);
    }
    Some(Resolved {
        targets,
        label_style,
    })
}

/// A vintage's label read: its ordinal, or a message.
fn vintage_label(freq: Frequency, label: &str) -> Result<i64, String> {
    parse_label(freq, label)
        .map(|(o, _)| o)
        .map_err(|e| format!("the vintage label {e}; vintages are labelled with periods of the data's frequency ({})", freq.name()))
}

/// The long layout: rows (period, vintage, columns), grouped by vintage in
/// label order, the rows of each in file order.
fn split_long(
    ctx: &mut Ctx,
    table: &RawTable,
    req: &DataRequest,
    column: &str,
) -> Option<Vec<Vintage>> {
    let Some(vcol) = table.column(column) else {
        ctx.diags.push(at(table, table.header_line, None, format!(
            "data.layout vintages reads each row's vintage from column '{column}', which the header does not name; add the column, or name it with data.vintage"
        )));
        return None;
    };
    let time = table.column(req.time.0);
    let mut groups: HashMap<i64, Vec<RawRow>> = HashMap::new();
    let mut labels: HashMap<i64, (String, usize)> = HashMap::new();
    let mut seen: HashMap<(i64, String), usize> = HashMap::new();
    let mut ok = true;
    for row in &table.rows {
        let label = &row.cells[vcol];
        let ordinal = match vintage_label(req.frequency, label) {
            Ok(o) => o,
            Err(m) => {
                ctx.diags.push(at(
                    table,
                    row.line,
                    Some(vcol),
                    format!("column '{column}': {m}"),
                ));
                ok = false;
                continue;
            }
        };
        if let Some(t) = time {
            let period = row.cells[t].to_string();
            let key = (ordinal, period.clone());
            if let Some(first) = seen.insert(key, row.line) {
                ctx.diags.push(at(table, row.line, Some(t), format!(
                    "period '{period}' appears twice in vintage '{label}' (lines {first} and {}); each vintage holds one row per period — remove one of them",
                    row.line
                )));
                ok = false;
                continue;
            }
        }
        labels
            .entry(ordinal)
            .or_insert_with(|| (label.to_string(), row.line));
        groups.entry(ordinal).or_default().push(row.clone());
    }
    if !ok {
        return None;
    }
    let mut ordinals: Vec<i64> = groups.keys().copied().collect();
    ordinals.sort_unstable();
    Some(
        ordinals
            .into_iter()
            .map(|o| {
                let (label, line) = labels.remove(&o).unwrap_or_default();
                Vintage {
                    label,
                    ordinal: o,
                    line,
                    table: RawTable {
                        rows: groups.remove(&o).unwrap_or_default(),
                        ..table.clone_empty()
                    },
                }
            })
            .collect(),
    )
}

/// The wide layout: one row per period, each target's vintages in columns
/// `<target>@<vintage label>`; the other columns (predictors) are the same
/// in every vintage. Each vintage's table names its own columns `<target>`.
fn split_wide(ctx: &mut Ctx, table: &RawTable, req: &DataRequest) -> Option<Vec<Vintage>> {
    let mut per_target: Vec<Vec<(i64, String, usize)>> = Vec::new();
    let mut ok = true;
    for (name, node) in req.targets {
        if let Some(c) = table.column(name) {
            ctx.diags.push(at(table, table.header_line, Some(c), format!(
                "layout vintage_columns: the target's vintages are columns '{name}@<vintage>' (e.g. '{name}@{}'), and a plain column '{name}' would be read as none of them; rename or remove it",
                req.frequency.example()
            )));
            ok = false;
        }
        let prefix = format!("{name}@");
        let mut cols = Vec::new();
        for (c, h) in table.headers.iter().enumerate() {
            let Some(label) = h.strip_prefix(&prefix) else {
                continue;
            };
            match vintage_label(req.frequency, label) {
                Ok(o) => cols.push((o, label.to_string(), c)),
                Err(m) => {
                    ctx.diags.push(at(
                        table,
                        table.header_line,
                        Some(c),
                        format!("column '{h}': {m}"),
                    ));
                    ok = false;
                }
            }
        }
        if cols.is_empty() && ok {
            ctx.error(node, format!(
                "layout vintage_columns: target '{name}' has no vintage columns; name them '{name}@<vintage label>', e.g. '{name}@{}' (see docs/experiment-file.md#vintages)",
                req.frequency.example()
            ));
            ok = false;
        }
        cols.sort_unstable();
        per_target.push(cols);
    }
    if !ok {
        return None;
    }
    let first: Vec<i64> = per_target[0].iter().map(|c| c.0).collect();
    for (cols, (name, node)) in per_target.iter().zip(req.targets).skip(1) {
        if cols.iter().map(|c| c.0).ne(first.iter().copied()) {
            ctx.error(node, format!(
                "layout vintage_columns: target '{name}' has other vintage columns than '{}'; every target needs one column per vintage, the same vintages",
                req.targets[0].0
            ));
            return None;
        }
    }
    let vintages = (0..first.len())
        .map(|i| {
            let mut headers = table.headers.clone();
            for (cols, (name, _)) in per_target.iter().zip(req.targets) {
                headers[cols[i].2] = name.clone();
            }
            Vintage {
                label: per_target[0][i].1.clone(),
                ordinal: first[i],
                line: table.header_line,
                table: RawTable {
                    headers,
                    rows: table.rows.clone(),
                    ..table.clone_empty()
                },
            }
        })
        .collect();
    Some(vintages)
}

/// A vintage without a single value of a target is refused by name.
fn no_empty_target(ctx: &mut Ctx, v: &Vintage, req: &DataRequest) -> Option<()> {
    for (name, _) in req.targets {
        let Some(c) = v.table.column(name) else {
            continue;
        };
        if v.table.rows.iter().all(|r| r.cells[c].is_empty()) {
            ctx.diags.push(at(&v.table, v.line, Some(c), format!(
                "vintage '{}' holds no value of target '{name}'; every vintage needs the target as published then — fill it in, or remove the vintage",
                v.label
            )));
            return None;
        }
    }
    Some(())
}

/// One target's vintages laid out on the last vintage's positions: the
/// vintage each origin sees (every origin of every scheme needs one), and
/// each position's outturn as `actual` chooses it.
fn lay_out(
    ctx: &mut Ctx,
    table: &RawTable,
    req: &DataRequest,
    actual: Release,
    vintages: &[Vintage],
    data: Vec<TargetData>,
) -> Option<Vintages> {
    let main = &data[data.len() - 1];
    let step = req.frequency.step();
    let start = main.ordinals[0];
    for (v, d) in vintages.iter().zip(&data) {
        if d.ordinals[0] != start {
            ctx.diags.push(at(table, v.line, None, format!(
                "vintage '{}' of target '{}' starts at {}, the last vintage at {}; every vintage must start at the same period — select a common start with data.start",
                v.label, main.name, d.labels[0], main.labels[0]
            )));
            return None;
        }
        if (v.ordinal - start).rem_euclid(step) != 0 {
            ctx.diags.push(at(table, v.line, None, format!(
                "vintage '{}' is not one of the data's {} periods (they fall on the same weekday as {}); label each vintage with a period of the data",
                v.label, req.frequency.name(), main.labels[0]
            )));
            return None;
        }
        if d.ordinals[d.n - 1] > v.ordinal {
            ctx.diags.push(at(table, v.line, None, format!(
                "vintage '{}' holds a value of target '{}' for {}, a period after the vintage's own; a vintage holds what was published by its period",
                v.label, main.name, d.labels[d.n - 1]
            )));
            return None;
        }
    }
    let at_origin: Vec<Option<usize>> = main
        .ordinals
        .iter()
        .map(|o| vintages.iter().position(|v| v.ordinal == *o))
        .collect();
    origins_have_vintages(ctx, req, main, vintages, &at_origin)?;
    let mut out = Vintages {
        labels: vintages.iter().map(|v| v.label.clone()).collect(),
        ordinals: vintages.iter().map(|v| v.ordinal).collect(),
        at_origin,
        actual: Vec::with_capacity(main.n),
        actual_release: Vec::with_capacity(main.n),
        data: Vec::new(),
    };
    for p in 1..=main.n {
        let release = match actual {
            Release::Latest => Some(data.len() - 1),
            Release::Nth(k) => (0..data.len()).filter(|&i| data[i].n >= p).nth(k - 1),
        };
        out.actual
            .push(release.map_or(f64::NAN, |i| data[i].y[p - 1]));
        out.actual_release.push(release);
    }
    out.data = data;
    Some(out)
}

/// Every origin of every scheme (T0 to N − 1 at the shortest horizon)
/// needs the vintage labelled with its period.
fn origins_have_vintages(
    ctx: &mut Ctx,
    req: &DataRequest,
    main: &TargetData,
    vintages: &[Vintage],
    at_origin: &[Option<usize>],
) -> Option<()> {
    let h = req.horizons.first().copied().unwrap_or(1);
    for ((scheme, node), &t0) in req.schemes.iter().zip(&main.first_origins) {
        let Some(missing) = (t0..=main.n.saturating_sub(h)).find(|&p| at_origin[p - 1].is_none())
        else {
            continue;
        };
        let label = &main.labels[missing - 1];
        if main.ordinals[missing - 1] < vintages[0].ordinal {
            ctx.error(node, format!(
                "scheme {}: the origin {label} comes before the first vintage '{}' of the data file; no data had been published at that origin — start the scheme at '{}' or later",
                scheme.id, vintages[0].label, vintages[0].label
            ));
        } else {
            ctx.error(node, format!(
                "scheme {}: the data file has no vintage '{label}', which the origin {label} sees; add that vintage's rows, or start the scheme after it",
                scheme.id
            ));
        }
        return None;
    }
    Some(())
}
