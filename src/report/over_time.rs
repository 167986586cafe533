//! Over time: per scheme × horizon, the leaders' and the benchmark's
//! forecasts against the outturns, the cumulative squared-error gain over
//! the benchmark, rolling RMSE and the fluctuation path (stability.csv),
//! and the scores by sub-period. A single-origin holdout gets one panel:
//! the forecast path across the horizons.

use super::chart_value;
use super::charts::{
    self, Chart, LegendItem, LegendKey, Line, Look, Rule, XAxis, BENCHMARK, FAINT, LEADERS, OUTTURN,
};
use super::format::{ratio, show, units};
use super::view::Index;
use crate::results::forecasts::Row as ForecastRow;
use crate::results::series::Series;
use serde_json::{json, Value};
use std::collections::HashMap;

mod holdout;
use holdout::holdout_panel;

/// The over-time panels of target `t`.
pub fn over_time_for(ix: &Index, t: usize, series: Option<&Series>, charts: bool) -> Value {
    let f = ix.f;
    let g = &f.grid;
    let bench = g.benchmark;
    let transform = series
        .map(|s| s.transform.clone())
        .unwrap_or_else(|| f.settings.transform.clone());
    let unit = match f.settings.original_units {
        true => g.targets[t].clone(),
        false => units(&g.targets[t], &transform),
    };
    let mut out = Vec::new();
    for s in 0..g.schemes.len() {
        // A single-origin holdout has one forecast per horizon: one path
        // across the horizons says more than a chart per horizon.
        let per_horizon = g
            .horizons
            .iter()
            .filter_map(|&h| f.rows.forecasts.get(&(t, bench, s, h)).map(Vec::len))
            .max()
            .unwrap_or(0);
        if per_horizon > 0 && per_horizon < 3 {
            out.push(holdout_panel(ix, t, s, &unit, charts));
            continue;
        }
        for &h in &g.horizons {
            let Some(bench_rows) = f.rows.forecasts.get(&(t, bench, s, h)) else {
                continue;
            };
            let mut setting = Setting::new(ix, t, s, h, bench_rows);
            setting.periods = series.map(|s| s.periods.as_slice());
            out.push(panel(setting, &unit, charts));
        }
    }
    json!(out)
}

/// One scheme × horizon of a target, as its charts share it.
struct Setting<'a> {
    ix: &'a Index<'a>,
    t: usize,
    s: usize,
    h: usize,
    id: String,
    bench_rows: &'a [ForecastRow],
    /// The benchmark's target periods: the x axis.
    labels: Vec<String>,
    pos: HashMap<String, usize>,
    leaders: Vec<usize>,
    /// The leaders in rank order and the benchmark, with their looks.
    shown: Vec<(usize, Look)>,
    /// Draw a marker every so many periods.
    every: usize,
    /// The target's periods in order (series.csv), to place the declared
    /// sub-period spans among the forecasts' target periods.
    periods: Option<&'a [String]>,
}

impl<'a> Setting<'a> {
    fn new(
        ix: &'a Index<'a>,
        t: usize,
        s: usize,
        h: usize,
        bench_rows: &'a [ForecastRow],
    ) -> Setting<'a> {
        let leaders = ix.leaders(t, s, Some(h), 3);
        let labels: Vec<String> = bench_rows.iter().map(|r| r.period.clone()).collect();
        let pos = labels
            .iter()
            .enumerate()
            .map(|(i, l)| (l.clone(), i))
            .collect();
        let shown = leaders
            .iter()
            .enumerate()
            .map(|(i, &c)| (c, LEADERS[i]))
            .chain(std::iter::once((ix.f.grid.benchmark, BENCHMARK)))
            .collect();
        Setting {
            ix,
            t,
            s,
            h,
            id: format!("t{t}-s{s}-h{h}"),
            bench_rows,
            every: (labels.len() / 12).max(1),
            labels,
            pos,
            leaders,
            shown,
            periods: None,
        }
    }

    fn candidate(&self, c: usize) -> &'a str {
        &self.ix.f.grid.candidates[c]
    }

    /// A candidate's name in a legend: the benchmark says so.
    fn legend_name(&self, c: usize) -> String {
        if c == self.ix.f.grid.benchmark {
            format!("{} (benchmark)", self.candidate(c))
        } else {
            self.candidate(c).to_string()
        }
    }

    fn forecasts(&self, c: usize) -> Option<&'a Vec<ForecastRow>> {
        self.ix.f.rows.forecasts.get(&(self.t, c, self.s, self.h))
    }

    fn chart(&self, name: &str, title: String) -> Chart {
        Chart::new(
            &format!("{}-{name}", self.id),
            &title,
            XAxis::Periods(self.labels.clone()),
        )
    }
}

fn panel(setting: Setting, unit: &str, charts: bool) -> Value {
    let g = &setting.ix.f.grid;
    let mut panel = json!({
        "scheme": g.schemes[setting.s],
        "horizon": setting.h,
        "leaders": setting.leaders.iter().map(|&c| g.candidates[c].clone()).collect::<Vec<_>>(),
        "first": setting.labels.first(),
        "last": setting.labels.last(),
        "n": setting.labels.len(),
    });
    if charts {
        panel["forecasts"] = forecasts_chart(&setting, unit);
        panel["cumulative"] = cumulative_chart(&setting);
        let (rolling, fluctuation) = stability_charts(&setting);
        if let Some(rolling) = rolling {
            panel["rolling"] = rolling;
        }
        if let Some(fluctuation) = fluctuation {
            panel["fluctuation"] = fluctuation;
        }
    }
    if let Some(periods) = sub_periods(&setting) {
        panel["periods"] = periods;
    }
    panel
}

/// The outturns of a chart's rows as a line, with the start of the chart's
/// number table (period and outturn columns).
fn outturn_line<'a>(
    rows: impl IntoIterator<Item = &'a ForecastRow> + Clone,
    look: Look,
    marker_every: usize,
) -> (Line, Vec<String>, Vec<Vec<String>>) {
    let line = Line {
        name: "outturn".into(),
        look,
        points: rows
            .clone()
            .into_iter()
            .enumerate()
            .map(|(i, r)| (i as f64, r.actual.unwrap_or(f64::NAN)))
            .collect(),
        legend: true,
        marker_every,
    };
    let columns = vec!["period".to_string(), "outturn".to_string()];
    let table = rows
        .into_iter()
        .map(|r| vec![r.period.clone(), show(r.actual)])
        .collect();
    (line, columns, table)
}

/// Forecasts against outturns: the leaders and the benchmark.
fn forecasts_chart(st: &Setting, unit: &str) -> Value {
    let (scheme, h) = (&st.ix.f.grid.schemes[st.s], st.h);
    let mut ch = st.chart(
        "forecasts",
        format!("Forecasts against outturns, {scheme}, horizon {h}"),
    );
    ch.x_title = "target period (the period forecast)".into();
    ch.y_title = unit.to_string();
    let (line, mut columns, mut table) = outturn_line(st.bench_rows, OUTTURN, 0);
    ch.lines.push(line);
    for &(c, look) in &st.shown {
        let mut pts = vec![(0.0, f64::NAN); st.labels.len()];
        let mut col = vec!["–".to_string(); st.labels.len()];
        for r in st.forecasts(c).into_iter().flatten() {
            if let Some(&i) = st.pos.get(r.period.as_str()) {
                pts[i] = (i as f64, r.forecast.unwrap_or(f64::NAN));
                col[i] = show(r.forecast);
            }
        }
        for (i, p) in pts.iter_mut().enumerate() {
            p.0 = i as f64;
        }
        let name = st.legend_name(c);
        ch.lines.push(Line {
            name: name.clone(),
            look,
            points: pts,
            legend: true,
            marker_every: st.every,
        });
        columns.push(name);
        for (row, v) in table.iter_mut().zip(col) {
            row.push(v);
        }
    }
    chart_value(
        charts::svg(&ch),
        format!(
            "Each forecast is drawn at the period it forecasts, made {h} period(s) earlier. The leaders by {} at this horizon and the benchmark; every forecast is in forecasts.csv.",
            st.ix.ranked_words()
        ),
        columns,
        table,
    )
}

/// Cumulative squared-error difference against the benchmark: the leaders
/// in colour, every other candidate in grey beneath.
fn cumulative_chart(st: &Setting) -> Value {
    let g = &st.ix.f.grid;
    let bench = g.benchmark;
    let (scheme, h) = (&g.schemes[st.s], st.h);
    let mut ch = st.chart(
        "cumulative",
        format!("Cumulative squared-error gain over the benchmark, {scheme}, horizon {h}"),
    );
    ch.x_title = "target period".into();
    ch.y_title = format!("Σ (e²{} − e²candidate)", g.candidates[bench]);
    ch.include_zero = true;
    ch.fit_to_legend = true;
    ch.plot_height = 200.0;
    let mut columns = vec!["period".to_string()];
    let mut table: Vec<Vec<String>> = st.labels.iter().map(|l| vec![l.clone()]).collect();
    let mut leader_lines = Vec::new();
    for c in (0..g.candidates.len()).filter(|&c| c != bench) {
        let Some(rows) = st.forecasts(c) else {
            continue;
        };
        let path = cumulative_gain(st, rows);
        match st.leaders.iter().position(|&l| l == c) {
            Some(k) => {
                columns.push(g.candidates[c].clone());
                for (row, p) in table.iter_mut().zip(&path) {
                    row.push(show(p.1.is_finite().then_some(p.1)));
                }
                let line = Line {
                    name: g.candidates[c].clone(),
                    look: LEADERS[k],
                    points: path,
                    legend: true,
                    marker_every: st.every,
                };
                leader_lines.push((k, line));
            }
            None => ch.lines.push(Line {
                name: g.candidates[c].clone(),
                look: FAINT,
                points: path,
                legend: false,
                marker_every: 0,
            }),
        }
    }
    leader_lines.sort_by_key(|(k, _)| *k);
    ch.lines.extend(leader_lines.into_iter().map(|(_, l)| l));
    ch.legend.push(LegendItem {
        name: "every other candidate".into(),
        key: LegendKey::Line(FAINT),
    });
    ch.rules.push(Rule {
        y: 0.0,
        label: format!("level with {}", g.candidates[bench]),
        dash: "",
    });
    chart_value(
        charts::svg(&ch),
        format!("A rising line means the candidate is gaining on {} in those periods, a falling one that it is losing ground; the end point is the total difference in squared errors. Grey lines are the other candidates, cut off where they leave the leaders' range.", g.candidates[bench]),
        columns,
        table,
    )
}

/// Σ (e²benchmark − e²candidate) up to each period of the axis; undefined
/// (NaN) where either error is.
fn cumulative_gain(st: &Setting, rows: &[ForecastRow]) -> Vec<(f64, f64)> {
    let n = st.labels.len();
    let mut by_pos = vec![None; n];
    for r in rows {
        if let Some(&i) = st.pos.get(r.period.as_str()) {
            by_pos[i] = r.error;
        }
    }
    let mut sum = 0.0;
    (0..n)
        .map(|i| match (st.bench_rows[i].error, by_pos[i]) {
            (Some(eb), Some(ec)) => {
                sum += eb * eb - ec * ec;
                (i as f64, sum)
            }
            _ => (i as f64, f64::NAN),
        })
        .collect()
}

/// A chart's number table without the periods where every column is empty.
fn defined_rows(rows: Vec<Vec<String>>) -> Vec<Vec<String>> {
    rows.into_iter()
        .filter(|r| r.iter().skip(1).any(|v| v != "–"))
        .collect()
}

/// A chart's lines and number table under construction.
struct Drawing {
    chart: Chart,
    columns: Vec<String>,
    rows: Vec<Vec<String>>,
}

impl Drawing {
    fn new(st: &Setting, chart: Chart) -> Drawing {
        Drawing {
            chart,
            columns: vec!["period".to_string()],
            rows: st.labels.iter().map(|l| vec![l.clone()]).collect(),
        }
    }

    fn add(&mut self, name: String, look: Look, points: Vec<(f64, f64)>, every: usize) {
        self.columns.push(name.clone());
        for (row, p) in self.rows.iter_mut().zip(&points) {
            row.push(show(p.1.is_finite().then_some(p.1)));
        }
        self.chart.lines.push(Line {
            name,
            look,
            points,
            legend: true,
            marker_every: every,
        });
    }
}

/// Rolling RMSE and the fluctuation path from stability.csv, each when
/// some line has a value.
fn stability_charts(st: &Setting) -> (Option<Value>, Option<Value>) {
    let g = &st.ix.f.grid;
    let bench = g.benchmark;
    let (scheme, h) = (&g.schemes[st.s], st.h);
    let mut roll = st.chart("rolling", format!("Rolling RMSE, {scheme}, horizon {h}"));
    roll.x_title = "end of the rolling window (target period)".into();
    roll.y_title = "rolling RMSE".into();
    roll.include_zero = true;
    roll.width = 430.0;
    roll.plot_height = 190.0;
    let mut fl = st.chart(
        "fluctuation",
        format!("Fluctuation statistic against the benchmark, {scheme}, horizon {h}"),
    );
    fl.x_title = "end of the rolling window (target period)".into();
    fl.y_title = format!("local gain over {}", g.candidates[bench]);
    fl.width = 430.0;
    fl.plot_height = 190.0;
    let (mut roll, mut fl) = (Drawing::new(st, roll), Drawing::new(st, fl));
    for &(c, look) in &st.shown {
        let Some(rows) = st.ix.f.rows.stability.get(&(st.t, c, st.s, h)) else {
            continue;
        };
        let mut rp: Vec<(f64, f64)> = (0..st.labels.len()).map(|i| (i as f64, f64::NAN)).collect();
        let mut fp = rp.clone();
        for r in rows {
            if let Some(&i) = st.pos.get(r.period.as_str()) {
                rp[i].1 = r.rolling_rmse.unwrap_or(f64::NAN);
                fp[i].1 = r.fluctuation.unwrap_or(f64::NAN);
            }
        }
        if rp.iter().any(|p| p.1.is_finite()) {
            roll.add(st.legend_name(c), look, rp, st.every);
        }
        if c != bench && fp.iter().any(|p| p.1.is_finite()) {
            fl.add(st.legend_name(c), look, fp, st.every);
        }
    }
    let rolling = (!roll.chart.lines.is_empty()).then(|| {
        chart_value(
            charts::svg(&roll.chart),
            "RMSE over a moving window of forecasts, drawn at the window's last period: where each model was accurate and where it struggled.".into(),
            roll.columns,
            defined_rows(roll.rows),
        )
    });
    let fluctuation = (!fl.chart.lines.is_empty()).then(|| fluctuation_chart(st, fl));
    (rolling, fluctuation)
}

/// The fluctuation chart with the 5% band of the test's critical value.
fn fluctuation_chart(st: &Setting, mut fl: Drawing) -> Value {
    let bench = st.ix.f.grid.benchmark;
    let cv = st.leaders.iter().find_map(|&c| {
        st.ix
            .test(st.t, st.s, st.h, "fluctuation", Some(c), Some(bench))
            .and_then(|r| r.critical_value)
    });
    if let Some(cv) = cv {
        for y in [cv, -cv] {
            fl.chart.rules.push(Rule {
                y,
                label: "5% band".into(),
                dash: "5 4",
            });
        }
    }
    fl.chart.include_zero = true;
    chart_value(
        charts::svg(&fl.chart),
        format!("The standardised local difference in squared errors (positive: the candidate is ahead of {}). Crossing a dashed band means the relative accuracy is not stable over time at 5%.", st.candidate(bench)),
        fl.columns,
        defined_rows(fl.rows),
    )
}

/// RMSE relative to the benchmark within each period set, with the ranks.
fn sub_periods(st: &Setting) -> Option<Value> {
    let ix = st.ix;
    let g = &ix.f.grid;
    let (t, s, h) = (st.t, st.s, st.h);
    let sets: &Vec<String> = ix.sets.get(&(t, s, h)).filter(|sets| !sets.is_empty())?;
    let rows: Vec<Value> = ix
        .group(t, s, Some(h))
        .iter()
        .map(|r| {
            let c = r.candidate;
            json!({
                "candidate": g.candidates[c],
                "is_benchmark": c == g.benchmark,
                "leader": st.leaders.contains(&c),
                "cells": sets.iter().map(|p| {
                    let row = ix.score(t, c, s, Some(h), Some(p));
                    json!({
                        "rel": ratio(row.and_then(|r| ix.relative(r))),
                        "rank": row.map(|r| r.rank),
                        "n": row.map(|r| r.n),
                        "best": row.is_some_and(|r| r.rank == 1),
                    })
                }).collect::<Vec<_>>(),
            })
        })
        .collect();
    let spans: Vec<Value> = sets
        .iter()
        .map(|p| {
            let range = ix.f.settings.periods.iter().find(|x| x.0 == *p);
            let declared = range.map(|r| (r.1.clone(), r.2.clone()));
            let scored = declared
                .as_ref()
                .and_then(|(a, b)| scored_span(st.bench_rows, st.periods?, a, b));
            let (from, to) = match (&scored, &declared) {
                (Some((a, b)), _) | (None, Some((a, b))) => (Some(a.clone()), Some(b.clone())),
                _ => (None, None),
            };
            json!({
                "name": p,
                "from": from,
                "to": to,
                // The declared span, when the forecasts scored cover less.
                "declared": match (&scored, &declared) {
                    (Some(s), Some(d)) if s != d => Some(format!("{} to {}", d.0, d.1)),
                    _ => None,
                },
            })
        })
        .collect();
    Some(json!({"sets": spans, "rows": rows}))
}

/// The first and last target period of `rows` that lie in the declared
/// span `from`..=`to`, placed by their order in `periods` (the series'
/// periods): the span actually scored. None when a label is not found or
/// no forecast falls inside.
fn scored_span(
    rows: &[ForecastRow],
    periods: &[String],
    from: &str,
    to: &str,
) -> Option<(String, String)> {
    let at: HashMap<&str, usize> = periods
        .iter()
        .enumerate()
        .map(|(i, p)| (p.as_str(), i))
        .collect();
    let (a, b) = (*at.get(from)?, *at.get(to)?);
    let inside: Vec<&ForecastRow> = rows
        .iter()
        .filter(|r| at.get(r.period.as_str()).is_some_and(|&i| a <= i && i <= b))
        .collect();
    Some((
        inside.first()?.period.clone(),
        inside.last()?.period.clone(),
    ))
}

#[cfg(test)]
mod span_tests {
    use super::{scored_span, ForecastRow};

    #[test]
    fn the_scored_span_is_the_forecasts_inside_the_declared_one() {
        // By construction: periods 2019Q1..2021Q4, forecasts for 2020Q3 on;
        // a declared 2020Q1..2020Q4 is scored from 2020Q3 to 2020Q4.
        let periods: Vec<String> = (2019..=2021)
            .flat_map(|y| (1..=4).map(move |q| format!("{y}Q{q}")))
            .collect();
        let rows: Vec<ForecastRow> = periods[6..]
            .iter()
            .map(|p| ForecastRow {
                origin: String::new(),
                period: p.clone(),
                forecast: None,
                actual: None,
                error: None,
                quantiles: Vec::new(),
            })
            .collect();
        let span = |a: &str, b: &str| scored_span(&rows, &periods, a, b);
        assert_eq!(
            span("2020Q1", "2020Q4"),
            Some(("2020Q3".into(), "2020Q4".into()))
        );
        assert_eq!(
            span("2021Q2", "2021Q2"),
            Some(("2021Q2".into(), "2021Q2".into()))
        );
        assert_eq!(span("2019Q1", "2019Q4"), None, "no forecast inside");
        assert_eq!(span("1999Q1", "2020Q4"), None, "a label not in the data");
    }
}
