//! A single-origin holdout's panel: the forecast path across the horizons
//! from the first origin, against the outturns.

use super::outturn_line;
use crate::report::chart_value;
use crate::report::charts::{self, Chart, Line, Look, XAxis, BENCHMARK, LEADERS, OUTTURN};
use crate::report::format::show;
use crate::report::view::Index;
use crate::results::forecasts::Row as ForecastRow;
use serde_json::{json, Value};

/// The forecast path of a holdout (few origins): every horizon's forecast
/// from the first origin, against the outturns, for the leaders of the
/// pooled ranking and the benchmark.
pub(super) fn holdout_panel(ix: &Index, t: usize, s: usize, unit: &str, charts: bool) -> Value {
    let g = &ix.f.grid;
    let bench = g.benchmark;
    let pooled = if g.horizons.len() > 1 {
        None
    } else {
        g.horizons.first().copied()
    };
    let leaders = ix.leaders(t, s, pooled, 3);
    let bench_rows = first_origin(ix, t, s, bench);
    let labels: Vec<String> = bench_rows.iter().map(|r| r.period.clone()).collect();
    let origin = bench_rows.first().map(|r| r.origin.clone());
    let mut panel = json!({
        "scheme": g.schemes[s],
        "horizon": "all",
        "holdout": true,
        "leaders": leaders.iter().map(|&c| g.candidates[c].clone()).collect::<Vec<_>>(),
        "first": labels.first(),
        "last": labels.last(),
        "n": labels.len(),
        "origin": origin,
    });
    if charts && !labels.is_empty() {
        let shown: Vec<(usize, Look)> = leaders
            .iter()
            .enumerate()
            .map(|(i, &c)| (c, LEADERS[i]))
            .chain(std::iter::once((bench, BENCHMARK)))
            .collect();
        let origin = panel["origin"].as_str().unwrap_or("the first origin");
        panel["forecasts"] = holdout_chart(ix, t, s, unit, &shown, &bench_rows, origin);
    }
    panel
}

/// The first origin's forecast of each horizon of one candidate.
fn first_origin<'a>(ix: &Index<'a>, t: usize, s: usize, c: usize) -> Vec<&'a ForecastRow> {
    ix.f.grid
        .horizons
        .iter()
        .filter_map(|&h| {
            ix.f.rows
                .forecasts
                .get(&(t, c, s, h))
                .and_then(|r| r.first())
        })
        .collect()
}

fn holdout_chart(
    ix: &Index,
    t: usize,
    s: usize,
    unit: &str,
    shown: &[(usize, Look)],
    bench_rows: &[&ForecastRow],
    origin: &str,
) -> Value {
    let g = &ix.f.grid;
    let labels: Vec<String> = bench_rows.iter().map(|r| r.period.clone()).collect();
    let mut ch = Chart::new(
        &format!("t{t}-s{s}-holdout"),
        &format!("Holdout forecasts against outturns, {}", g.schemes[s]),
        XAxis::Periods(labels.clone()),
    );
    ch.x_title = "target period".into();
    ch.y_title = unit.to_string();
    let look = Look {
        marker: charts::Marker::Diamond,
        ..OUTTURN
    };
    let (line, mut columns, mut table) = outturn_line(bench_rows.iter().copied(), look, 1);
    ch.lines.push(line);
    for &(c, look) in shown {
        let mut pts: Vec<(f64, f64)> = (0..labels.len()).map(|i| (i as f64, f64::NAN)).collect();
        let mut col = vec!["–".to_string(); labels.len()];
        for r in first_origin(ix, t, s, c) {
            if let Some(i) = labels.iter().position(|l| *l == r.period) {
                pts[i].1 = r.forecast.unwrap_or(f64::NAN);
                col[i] = show(r.forecast);
            }
        }
        let name = if c == g.benchmark {
            format!("{} (benchmark)", g.candidates[c])
        } else {
            g.candidates[c].clone()
        };
        ch.lines.push(Line {
            name: name.clone(),
            look,
            points: pts,
            legend: true,
            marker_every: 1,
        });
        columns.push(name);
        for (row, v) in table.iter_mut().zip(col) {
            row.push(v);
        }
    }
    let horizons: Vec<String> = g.horizons.iter().map(|h| h.to_string()).collect();
    chart_value(
        charts::svg(&ch),
        format!(
            "Forecasts for horizons {} made at {origin}, against what happened: the leaders of the pooled ranking and the benchmark.",
            horizons.join(", "),
        ),
        columns,
        table,
    )
}
