//! The outlook of one target: the forecasts beyond the data of the three
//! leaders of the setting the verdict leads with (its first row: the first
//! scheme at the shortest horizon) and of the benchmark, with their
//! intervals; charted after the last observed periods, one mark per listed
//! horizon (a line joins consecutive horizons only: no path is drawn
//! between horizons that were not forecast).

use super::chart_value;
use super::charts::{self, Chart, Line, Span, Whisker, XAxis, BENCHMARK, LEADERS, OUTTURN};
use super::format::{horizon_text, interval_text, show, units};
use super::view::Index;
use crate::results::outlook::Row as OutlookRow;
use crate::results::series::Series;
use serde_json::{json, Value};

/// Observed periods drawn before the outlook.
const OUTLOOK_HISTORY: usize = 36;
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
    let start = n.saturating_sub(max_h.saturating_mul(4).clamp(12, OUTLOOK_HISTORY));
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
    ch.y_title = units(&s.name, &s.transform);
    ch.spans.push(Span {
        x0: last_x + 0.5,
        x1: last_x + max_h as f64 + 0.5,
        fill: charts::FILL_FUTURE,
        label: "beyond the data".into(),
    });
    ch.lines.push(Line {
        name: "observed".into(),
        look: OUTTURN,
        points: s.values[start..]
            .iter()
            .enumerate()
            .map(|(i, v)| (i as f64, v.unwrap_or(f64::NAN)))
            .collect(),
        legend: true,
        marker_every: 0,
    });
    let last_y = s.values.last().copied().flatten();
    paths(ix, &mut ch, o, (last_x, last_y.unwrap_or(f64::NAN)));
    let (columns, table_rows) = number_table(table, o.levels);
    let mut listed: Vec<usize> = o.rows.iter().map(|r| r.horizon).collect();
    listed.sort_unstable();
    listed.dedup();
    let gapped = listed.first() != Some(&1) || listed.windows(2).any(|w| w[1] != w[0] + 1);
    let widest = o.levels.len().saturating_sub(1);
    let interval_words = match o.levels.len() {
        0 => String::new(),
        1 => format!(" Bars show the {}% interval.", o.levels[0]),
        _ => format!(
            " Thick bars show the {}% interval, thin bars the {}% interval.",
            o.levels[0], o.levels[widest]
        ),
    };
    chart_value(
        charts::svg(&ch),
        format!("The last {} observed periods and the forecasts made at {origin_note}, estimated on all the data.{interval_words} Marks at the same horizon are set slightly apart so the bars do not overlap.{}", n - start, if gapped { " Only the listed horizons were forecast: a line joins consecutive horizons, never two further apart." } else { "" }),
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

/// Each drawn candidate's path from the last observation `(x, y)` with
/// its interval bars (thin: the widest level; thick: the narrowest), set
/// slightly apart at each horizon.
fn paths(ix: &Index, ch: &mut Chart, o: &Outlook, (last_x, last_y): (f64, f64)) {
    let g = &ix.f.grid;
    let bench = g.benchmark;
    let k = o.leaders.len() as f64;
    let widest = o.levels.len().saturating_sub(1);
    for (j, &c) in o.leaders.iter().enumerate() {
        let look = if c == bench {
            BENCHMARK
        } else {
            LEADERS[j.min(2)]
        };
        let dodge = (j as f64 - (k - 1.0) / 2.0) * 0.16;
        // From the last observation (horizon 0) the line joins consecutive
        // horizons only; a gap in the horizons lifts the pen.
        let mut pts = vec![(last_x, last_y)];
        let mut previous = 0;
        for r in o.rows.iter().filter(|r| r.candidate == c) {
            let x = last_x + r.horizon as f64 + dodge;
            if r.horizon != previous + 1 {
                pts.push((x, f64::NAN));
            }
            previous = r.horizon;
            pts.push((x, r.forecast.unwrap_or(f64::NAN)));
            let narrowest = if widest > 0 {
                r.intervals.first()
            } else {
                None
            };
            for (interval, width) in [(r.intervals.get(widest), 1.2), (narrowest, 3.2)] {
                if let Some((_, Some(lo), Some(hi))) = interval {
                    ch.whiskers.push(Whisker {
                        x,
                        lo: *lo,
                        hi: *hi,
                        colour: look.colour,
                        width,
                    });
                }
            }
        }
        ch.lines.push(Line {
            name: if c == bench {
                format!("{} (benchmark)", g.candidates[c])
            } else {
                g.candidates[c].clone()
            },
            look,
            points: pts,
            legend: true,
            marker_every: 1,
        });
    }
}
