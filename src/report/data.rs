//! The data of one target: its periods, each scheme's first estimation and
//! evaluation spans, the series as forecast (and as published when it is
//! transformed), the unit-root tests of the target and the predictors, and
//! the Ljung–Box tests of every cell's residuals.

use super::chart_value;
use super::charts::{self, Chart, LegendItem, LegendKey, Line, Look, Span, XAxis, OUTTURN};
use super::format::{pval, show, stat, transform_words, units};
use super::view::Index;
use super::LEVEL;
use crate::results::series::Series;
use serde_json::{json, Value};
use std::collections::{BTreeMap, HashMap};

/// A scheme's spans as positions on the target's periods.
struct SchemeSpan {
    scheme: String,
    /// Where the first estimation starts.
    estimation_from: usize,
    /// The first origin (the last period of the first estimation).
    first_origin: usize,
    how: &'static str,
}

/// The data section of target `t`.
pub fn data_for(ix: &Index, t: usize, series: Option<&Series>, charts: bool) -> Value {
    let labels: Vec<String> = series.map(|s| s.periods.clone()).unwrap_or_default();
    let spans = scheme_spans(ix, t, &labels);
    let span_rows: Vec<Value> = spans
        .iter()
        .map(|sp| {
            json!({
                "scheme": sp.scheme,
                "estimation_from": labels.get(sp.estimation_from),
                "first_origin": labels.get(sp.first_origin),
                "evaluation_from": labels.get(sp.first_origin + 1),
                "evaluation_to": labels.last(),
                "how": sp.how,
            })
        })
        .collect();
    let drawn = series.filter(|_| charts);
    json!({
        "periods": labels.len(),
        "first": labels.first(),
        "last": labels.last(),
        "transform": series.map(|s| s.transform.clone()),
        "transform_words": series.map(|s| transform_words(&s.transform)),
        "spans": span_rows,
        "chart": drawn.map(|s| series_chart(t, s, &labels, &spans)),
        "raw_chart": drawn
            .filter(|s| s.transform != "none" && s.raw.iter().any(Option::is_some))
            .map(|s| raw_chart(t, s, &labels)),
        "adf": adf_rows(ix, t),
        "ljung_box": ljung_box(ix, t),
    })
}

/// Each scheme's first origin (the earliest origin in forecasts.csv, from
/// the first candidate that has one) and the estimation span before it.
fn scheme_spans(ix: &Index, t: usize, labels: &[String]) -> Vec<SchemeSpan> {
    let f = ix.f;
    let g = &f.grid;
    let pos: HashMap<&str, usize> = labels
        .iter()
        .enumerate()
        .map(|(i, l)| (l.as_str(), i))
        .collect();
    let mut spans = Vec::new();
    for (s, scheme) in g.schemes.iter().enumerate() {
        let mut first: Option<usize> = None;
        for c in 0..g.candidates.len() {
            for &h in &g.horizons {
                let origin = f.rows.forecasts.get(&(t, c, s, h)).and_then(|r| r.first());
                if let Some(&i) = origin.and_then(|r| pos.get(r.origin.as_str())) {
                    first = Some(first.map_or(i, |x: usize| x.min(i)));
                }
            }
            if first.is_some() {
                break;
            }
        }
        let Some(origin) = first else { continue };
        let window: Option<usize> = scheme
            .strip_prefix("rolling(")
            .and_then(|x| x.strip_suffix(')'))
            .and_then(|x| x.parse().ok());
        let how = if scheme.starts_with("fixed") {
            "estimated once on the first span"
        } else if window.is_some() {
            "re-estimated at each origin on the latest window"
        } else {
            "re-estimated at each origin on all data so far"
        };
        spans.push(SchemeSpan {
            scheme: scheme.clone(),
            estimation_from: window.map_or(0, |w| (origin + 1).saturating_sub(w)),
            first_origin: origin,
            how,
        });
    }
    spans
}

/// The target as forecast, with the first scheme's evaluation span shaded
/// and a lane per scheme under the plot.
fn series_chart(t: usize, s: &Series, labels: &[String], spans: &[SchemeSpan]) -> Value {
    let end = labels.len() as f64 - 0.5;
    let mut ch = Chart::new(
        &format!("t{t}-series"),
        &format!(
            "{} as forecast, with estimation and evaluation spans",
            s.name
        ),
        XAxis::Periods(labels.to_vec()),
    );
    ch.x_title = "period".into();
    ch.y_title = units(&s.name, &s.transform);
    ch.plot_height = 200.0;
    ch.lines.push(Line {
        name: units(&s.name, &s.transform),
        look: OUTTURN,
        points: points(&s.values),
        legend: false,
        marker_every: 0,
    });
    if let Some(first) = spans.first() {
        ch.spans.push(Span {
            x0: first.first_origin as f64 + 0.5,
            x1: end,
            fill: charts::FILL_EVALUATION_LIGHT,
            label: format!("evaluation ({})", first.scheme),
        });
    }
    let label = |i: usize| labels.get(i).cloned().unwrap_or_default();
    for sp in spans {
        let (a, o, scheme) = (sp.estimation_from, sp.first_origin, &sp.scheme);
        ch.lanes.push(charts::Lane {
            label: scheme.clone(),
            segments: vec![
                (
                    a as f64 - 0.5,
                    o as f64 + 0.5,
                    charts::FILL_ESTIMATION,
                    format!("{scheme}: first estimation {} to {}", label(a), label(o)),
                ),
                (
                    o as f64 + 0.5,
                    end,
                    charts::FILL_EVALUATION,
                    format!("{scheme}: forecasts evaluated from {}", label(o + 1)),
                ),
            ],
        });
    }
    ch.legend.push(LegendItem {
        name: "first estimation span".into(),
        key: LegendKey::Swatch(charts::FILL_ESTIMATION),
    });
    ch.legend.push(LegendItem {
        name: "evaluation span".into(),
        key: LegendKey::Swatch(charts::FILL_EVALUATION),
    });
    let rows = s
        .periods
        .iter()
        .zip(s.raw.iter().zip(&s.values))
        .map(|(p, (r, v))| vec![p.clone(), show(*r), show(*v)])
        .collect();
    chart_value(
        charts::svg(&ch),
        format!(
            "The target after its transform ({}), which is what every model forecasts. The lanes below show, per scheme, the first estimation span and the evaluation span.",
            transform_words(&s.transform)
        ),
        vec!["period".into(), "as published".into(), "as forecast".into()],
        rows,
    )
}

/// A series' values as chart points; undefined values break the line.
fn points(values: &[Option<f64>]) -> Vec<(f64, f64)> {
    values
        .iter()
        .enumerate()
        .map(|(i, v)| (i as f64, v.unwrap_or(f64::NAN)))
        .collect()
}

/// The target as published, before its transform.
fn raw_chart(t: usize, s: &Series, labels: &[String]) -> Value {
    let mut ch = Chart::new(
        &format!("t{t}-raw"),
        &format!("{} as published", s.name),
        XAxis::Periods(labels.to_vec()),
    );
    ch.x_title = "period".into();
    ch.y_title = format!("{} (as published)", s.name);
    ch.plot_height = 160.0;
    ch.lines.push(Line {
        name: s.name.clone(),
        look: Look {
            colour: "#5b6575",
            ..OUTTURN
        },
        points: points(&s.raw),
        legend: false,
        marker_every: 0,
    });
    chart_value(
        charts::svg(&ch),
        "The same series before its transform.".into(),
        Vec::new(),
        Vec::new(),
    )
}

/// How many distinct values a series takes, up to 3.
fn few_values(values: &[Option<f64>]) -> usize {
    let mut seen: Vec<f64> = Vec::new();
    for v in values.iter().flatten().filter(|v| v.is_finite()) {
        if !seen.contains(v) {
            seen.push(*v);
            if seen.len() > 2 {
                break;
            }
        }
    }
    seen.len()
}

/// The reading of an ADF p-value. A series of two values (a 0/1
/// indicator, a dummy) is bounded and cannot have a unit root, whatever
/// the test says on a short or persistent sample: differencing is not
/// suggested for it (common practice).
fn adf_reading(p: Option<f64>, values: Option<&[Option<f64>]>) -> &'static str {
    let indicator = values.is_some_and(|v| few_values(v) <= 2);
    match p {
        Some(p) if p < LEVEL => "a unit root is rejected at 5%: looks stationary",
        Some(_) if indicator => "a unit root cannot be rejected at 5%, but the series takes only two values (an indicator): it is bounded, and differencing is not the remedy",
        Some(_) => "a unit root cannot be rejected at 5%: consider differencing",
        None => "not computable",
    }
}

/// Unit-root tests of this target and of the predictors.
fn adf_rows(ix: &Index, t: usize) -> Vec<Value> {
    let target = &ix.f.grid.targets[t];
    ix.f.rows
        .diagnostics
        .iter()
        .filter(|d| d.test == "adf" && (d.subject == *target || d.kind == "predictor"))
        .map(|d| {
            let values =
                ix.f.rows
                    .series
                    .iter()
                    .find(|s| s.name == d.subject && s.role == d.kind)
                    .map(|s| s.values.as_slice());
            let reading = adf_reading(d.p_value, values);
            json!({
                "series": d.subject,
                "role": d.kind,
                "lags": d.lags,
                "statistic": stat(d.statistic),
                "critical_5": stat(d.critical_5),
                "p": pval(d.p_value),
                "reading": reading,
            })
        })
        .collect()
}

/// Ljung–Box p-values per cell: candidates × schemes, and how many are
/// below the level.
fn ljung_box(ix: &Index, t: usize) -> Value {
    let f = ix.f;
    let g = &f.grid;
    // (candidate, scheme) → (p-value, lags)
    let mut lb: BTreeMap<(usize, usize), (Option<f64>, String)> = BTreeMap::new();
    for c in 0..g.candidates.len() {
        for sc in 0..g.schemes.len() {
            if let Some(&i) = ix.ljung_box.get(&(t, c, sc)) {
                let d = &f.rows.diagnostics[i];
                lb.insert((c, sc), (d.p_value, d.lags.clone()));
            }
        }
    }
    let flagged = lb
        .values()
        .filter(|(p, _)| p.is_some_and(|p| p < LEVEL))
        .count();
    let rows: Vec<Value> = (0..g.candidates.len())
        .filter(|c| (0..g.schemes.len()).any(|s| lb.contains_key(&(*c, s))))
        .map(|c| {
            json!({
                "candidate": g.candidates[c],
                "cells": (0..g.schemes.len()).map(|s| {
                    let e = lb.get(&(c, s));
                    json!({
                        "p": pval(e.and_then(|x| x.0)),
                        "lags": e.map(|x| x.1.clone()),
                        "flag": e.and_then(|x| x.0).is_some_and(|p| p < LEVEL),
                    })
                }).collect::<Vec<_>>(),
            })
        })
        .collect();
    json!({
        "total": lb.len(),
        "flagged": flagged,
        "schemes": g.schemes,
        "rows": rows,
    })
}

#[cfg(test)]
mod tests {
    use super::adf_reading;

    #[test]
    fn an_indicator_is_not_told_to_difference() {
        // By definition of the readings: a two-valued series is bounded.
        let dummy: Vec<Option<f64>> = [0.0, 0.0, 1.0, 1.0, 0.0].map(Some).to_vec();
        let level: Vec<Option<f64>> = vec![Some(0.0), Some(0.5), Some(1.0), Some(1.5), None];
        assert!(!adf_reading(Some(0.4), Some(&dummy)).contains("consider differencing"));
        assert!(adf_reading(Some(0.4), Some(&level)).contains("consider differencing"));
        assert!(adf_reading(Some(0.4), None).contains("consider differencing"));
        assert!(adf_reading(Some(0.01), Some(&dummy)).contains("rejected at 5%: looks"));
    }
}
