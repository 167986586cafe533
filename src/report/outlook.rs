//! The outlook of one target: the forecasts beyond the data of the three
//! leaders of the setting the verdict leads with (its first row: the first
//! scheme at the shortest horizon) and of the benchmark, with their
//! intervals; charted after the recent history as each candidate's path
//! over every horizon 1..max with its intervals as a fan (outlook.csv holds
//! every horizon, so the path has no gaps; a horizon an edited folder left
//! out lifts the pen rather than being bridged).

use super::chart_value;
use super::charts::{self, Band, Chart, Line, Span, XAxis, BENCHMARK, LEADERS, OUTTURN};
use super::format::{horizon_text, interval_text, show, units};
use super::view::Index;
use crate::results::outlook::Row as OutlookRow;
use crate::results::series::Series;
use serde_json::{json, Value};

/// Observed periods drawn before the outlook: three times the furthest
/// horizon, at least this many ...
const MIN_HISTORY: usize = 12;
/// ... and at most this many.
const MAX_HISTORY: usize = 120;
/// The outlook chart gives every period up to the last horizon a slot on
/// its axis; beyond this horizon (which only an edited folder reaches) it
/// is not drawn.
const MAX_CHARTED_HORIZON: usize = 100_000;

/// The outlook of target `t` (null when outlook.csv has none).
pub fn outlook_for(ix: &Index, t: usize, series: Option<&Series>, charts: bool) -> Value {
    let f = ix.f;
    let g = &f.grid;
    let bench = g.benchmark;
    let rows: Vec<&OutlookRow> = f.rows.outlook.iter().filter(|r| r.target == t).collect();
    if rows.is_empty() {
        return json!(null);
    }
    // The verdict's first row: the first scheme at the shortest horizon.
    let first_h = g.horizons.first().copied();
    let mut leaders = ix.leaders(t, 0, first_h, 3);
    leaders.push(bench);
    let ranked_by = format!(
        "{} scheme at horizon {} (the verdict's first row)",
        g.schemes.first().cloned().unwrap_or_default(),
        horizon_text(first_h)
    );
    let mut table = Vec::new();
    for &c in &leaders {
        for r in rows.iter().filter(|r| r.candidate == c) {
            table.push(json!({
                "candidate": g.candidates[c],
                "is_benchmark": c == bench,
                "horizon": r.horizon,
                "period": r.period,
                "forecast": show(r.forecast),
                "intervals": r.intervals.iter().map(|(l, lo, hi)| json!({"level": l, "lower": show(*lo), "upper": show(*hi), "text": interval_text(*lo, *hi)})).collect::<Vec<_>>(),
            }));
        }
    }
    let levels: Vec<String> = rows
        .first()
        .map(|r| r.intervals.iter().map(|i| i.0.clone()).collect())
        .unwrap_or_default();
    let origin_note = series
        .and_then(|s| s.periods.last().cloned())
        .unwrap_or_default();
    let max_h = rows.iter().map(|r| r.horizon).max().unwrap_or(1);
    let drawn = charts && max_h <= MAX_CHARTED_HORIZON;
    let chart = series.filter(|_| drawn).map(|s| {
        let outlook = Outlook {
            t,
            rows: &rows,
            leaders: &leaders,
            levels: &levels,
            max_h,
        };
        outlook_chart(ix, &outlook, s, &table, &origin_note)
    });
    json!({
        "origin": origin_note,
        "ranked_by": ranked_by,
        "levels": levels,
        "rows": table,
        "chart": chart,
    })
}

/// What the outlook chart draws.
struct Outlook<'a> {
    t: usize,
    rows: &'a [&'a OutlookRow],
    /// The candidates drawn: the leaders, then the benchmark.
    leaders: &'a [usize],
    /// Interval levels in percent, narrowest first.
    levels: &'a [String],
    /// The furthest horizon.
    max_h: usize,
}

fn outlook_chart(ix: &Index, o: &Outlook, s: &Series, table: &[Value], origin_note: &str) -> Value {
    let g = &ix.f.grid;
    let n = s.periods.len();
    let max_h = o.max_h;
    let start = n.saturating_sub(max_h.saturating_mul(3).clamp(MIN_HISTORY, MAX_HISTORY));
    let mut labels: Vec<String> = s.periods[start..].to_vec();
    labels.extend(std::iter::repeat_n(String::new(), max_h));
    for r in o.rows {
        let i = n - start - 1 + r.horizon;
        if i < labels.len() {
            labels[i] = r.period.clone();
        }
    }
    let last_x = (n - start - 1) as f64;
    let mut ch = Chart::new(
        &format!("t{}-outlook", o.t),
        &format!("Outlook for {} beyond the data", g.targets[o.t]),
        XAxis::Periods(labels),
    );
    ch.x_title = "period".into();
    let original = ix.f.settings.original_units;
    ch.y_title = units(&s.name, if original { "none" } else { &s.transform });
    // Under units: original the paths are levels: so is the history.
    let history = if original { &s.raw } else { &s.values };
    ch.spans.push(Span {
        x0: last_x + 0.5,
        x1: last_x + max_h as f64 + 0.5,
        fill: charts::FILL_FUTURE,
        label: "beyond the data".into(),
    });
    ch.lines.push(Line {
        name: "observed".into(),
        look: OUTTURN,
        points: history[start..]
            .iter()
            .enumerate()
            .map(|(i, v)| (i as f64, v.unwrap_or(f64::NAN)))
            .collect(),
        legend: true,
        marker_every: 0,
    });
    let last_y = history.last().copied().flatten();
    paths(ix, &mut ch, o, (last_x, last_y.unwrap_or(f64::NAN)));
    let (columns, table_rows) = number_table(table, o.levels);
    let mut listed: Vec<usize> = o.rows.iter().map(|r| r.horizon).collect();
    listed.sort_unstable();
    listed.dedup();
    let gapped = listed.first() != Some(&1) || listed.windows(2).any(|w| w[1] != w[0] + 1);
    let widest = o.levels.len().saturating_sub(1);
    let interval_words = match o.levels.len() {
        0 => String::new(),
        1 => format!(" The shaded fan around each path is its {}% interval.", o.levels[0]),
        _ => format!(
            " The darker fan around each path is its {}% interval, the lighter one its {}% interval.",
            o.levels[0], o.levels[widest]
        ),
    };
    chart_value(
        charts::svg(&ch),
        format!("The last {} observed periods and the forecasts made at {origin_note} for every horizon up to {max_h}, estimated on all the data.{interval_words}{}", n - start, if gapped { " Some horizons have no row in outlook.csv: the path is broken there, not bridged." } else { "" }),
        columns,
        table_rows,
    )
}

/// The numbers behind the chart: the outlook table's rows as text.
fn number_table(table: &[Value], levels: &[String]) -> (Vec<String>, Vec<Vec<String>>) {
    let mut columns = vec![
        "candidate".to_string(),
        "horizon".into(),
        "period".into(),
        "forecast".into(),
    ];
    for l in levels {
        columns.push(format!("{l}% interval"));
    }
    let rows = table
        .iter()
        .map(|r| {
            let mut v = vec![
                r["candidate"].as_str().unwrap_or("").to_string(),
                r["horizon"].to_string(),
                r["period"].as_str().unwrap_or("").to_string(),
                r["forecast"].as_str().unwrap_or("").to_string(),
            ];
            for i in r["intervals"].as_array().into_iter().flatten() {
                v.push(i["text"].as_str().unwrap_or("").to_string());
            }
            v
        })
        .collect();
    (columns, rows)
}

/// Each drawn candidate's path from the last observation `(x, y)`, and its
/// intervals as a fan from that observation (zero width there): the
/// narrowest level darker, the widest lighter, both under the paths. A
/// horizon without a row lifts the pen and breaks the fan.
fn paths(ix: &Index, ch: &mut Chart, o: &Outlook, (last_x, last_y): (f64, f64)) {
    let g = &ix.f.grid;
    let bench = g.benchmark;
    let widest = o.levels.len().saturating_sub(1);
    for (j, &c) in o.leaders.iter().enumerate() {
        let look = if c == bench {
            BENCHMARK
        } else {
            LEADERS[j.min(2)]
        };
        let mut by_h: Vec<Option<&OutlookRow>> = vec![None; o.max_h + 1];
        for r in o.rows.iter().filter(|r| r.candidate == c) {
            by_h[r.horizon] = Some(r);
        }
        let mut pts = vec![(last_x, last_y)];
        pts.extend((1..=o.max_h).map(|h| {
            let y = by_h[h].and_then(|r| r.forecast);
            (last_x + h as f64, y.unwrap_or(f64::NAN))
        }));
        let name = if c == bench {
            format!("{} (benchmark)", g.candidates[c])
        } else {
            g.candidates[c].clone()
        };
        let mut fans: Vec<(usize, f64)> = vec![(widest, 0.12)];
        if widest > 0 {
            fans.push((0, 0.22));
        }
        for (level, opacity) in fans {
            let Some(label) = o.levels.get(level) else {
                continue;
            };
            let mut points = vec![(last_x, last_y, last_y)];
            points.extend((1..=o.max_h).map(|h| {
                let band = by_h[h].and_then(|r| r.intervals.get(level));
                let (lo, hi) = match band {
                    Some((_, Some(lo), Some(hi))) => (*lo, *hi),
                    _ => (f64::NAN, f64::NAN),
                };
                (last_x + h as f64, lo, hi)
            }));
            ch.bands.push(Band {
                points,
                colour: look.colour,
                opacity,
                label: format!("{name}: {label}% interval"),
            });
        }
        ch.lines.push(Line {
            name,
            look,
            points: pts,
            legend: true,
            // A mark per horizon, or about a dozen along a long path.
            marker_every: o.max_h.div_ceil(12),
        });
    }
}
