//! The fitted models of one target: for the leader of each scheme at each
//! listed horizon (the whole sample's first candidate that is not the
//! benchmark, as the verdict names it), the parameters of its final
//! backtest estimation with their standard errors; and, where the scheme
//! estimated more than once (expanding and rolling schemes), a chart of
//! each coefficient across the estimations with a band of ±2 standard
//! errors. Every estimation of every candidate is in parameters.csv.

use super::chart_value;
use super::charts::{self, Chart, Line, Look, Rule, XAxis, LEADERS};
use super::format::{horizon_text, show};
use super::view::Index;
use crate::results::parameters::Row;
use serde_json::{json, Value};

/// Coefficients charted per leader; the others are in the table and the file.
const MAX_CHARTED: usize = 6;

/// Names that are not coefficients: the variance, the fit rows and the
/// smoothing's initial states.
fn charted(name: &str) -> bool {
    !matches!(
        name,
        "sigma2" | "loglik" | "aic" | "aicc" | "bic" | "level_0" | "slope_0"
    ) && !name.starts_with("season_0_")
}

/// Which coefficients are charted first: the predictors' and regressors'
/// (the question a reviewer asks first) and the smoothing weights, then
/// the series' own lags and the deterministic terms.
fn chart_order(name: &str) -> usize {
    let own = ["ar", "ma", "sar", "sma"].iter().any(|p| {
        name.strip_prefix(p)
            .is_some_and(|rest| !rest.is_empty() && rest.bytes().all(|b| b.is_ascii_digit()))
    });
    usize::from(own || matches!(name, "constant" | "trend" | "drift"))
}

/// Which estimation a row belongs to: its end, or under vintages (where
/// several estimations share an end) the vintage it was made on.
fn estimation(r: &Row) -> &str {
    r.vintage.as_deref().unwrap_or(&r.origin)
}

/// What tells one estimation from the next in the charts: the end it
/// reaches, or the vintage.
fn estimations_are(x: &Fitted) -> &'static str {
    match x.rows.first().is_some_and(|r| r.vintage.is_some()) {
        true => "vintage",
        false => "estimation ending",
    }
}

/// One leader's estimations at one horizon (None: its estimate serves all).
struct Fitted<'a> {
    scheme: usize,
    candidate: usize,
    horizon: Option<usize>,
    /// The listed horizons this candidate leads at.
    leads_at: Vec<usize>,
    rows: Vec<&'a Row>,
}

/// The leaders' estimations of target `t`, in scheme then horizon order.
fn fitted<'a>(ix: &Index<'a>, t: usize) -> Vec<Fitted<'a>> {
    let f = ix.f;
    let g = &f.grid;
    let mut out: Vec<Fitted> = Vec::new();
    for s in 0..g.schemes.len() {
        for &h in &g.horizons {
            let Some(&c) = ix.leaders(t, s, Some(h), 1).first() else {
                continue;
            };
            let rows: Vec<&Row> = f
                .rows
                .parameters
                .iter()
                .filter(|r| r.target == t && r.candidate == c && r.scheme == s)
                .collect();
            // A direct model's regression of this horizon, or the estimate of all.
            let key = if rows.iter().any(|r| r.horizon == Some(h)) {
                Some(h)
            } else {
                None
            };
            let rows: Vec<&Row> = rows.into_iter().filter(|r| r.horizon == key).collect();
            if rows.is_empty() {
                continue;
            }
            match out
                .iter_mut()
                .find(|x| x.scheme == s && x.candidate == c && x.horizon == key)
            {
                Some(x) => x.leads_at.push(h),
                None => out.push(Fitted {
                    scheme: s,
                    candidate: c,
                    horizon: key,
                    leads_at: vec![h],
                    rows,
                }),
            }
        }
    }
    out
}

/// The fitted-models section of target `t` (an empty list without
/// parameters.csv rows).
pub fn parameters_for(ix: &Index, t: usize, charts: bool) -> Value {
    let g = &ix.f.grid;
    let list: Vec<Value> = fitted(ix, t)
        .iter()
        .enumerate()
        .map(|(i, x)| {
            // The rows of one horizon come in time order, so each
            // estimation's rows are consecutive.
            let mut origins: Vec<&str> = Vec::new();
            for r in &x.rows {
                if origins.last() != Some(&estimation(r)) {
                    origins.push(estimation(r));
                }
            }
            let last = origins.last().copied().unwrap_or("");
            let last_rows: Vec<&&Row> = x.rows.iter().filter(|r| estimation(r) == last).collect();
            // Under vintages: the end of the last estimation and its vintage.
            let data_up_to = match last_rows.first() {
                Some(r) if r.vintage.is_some() => format!("{}, as vintage {last} publishes them", r.origin),
                _ => last.to_string(),
            };
            let table: Vec<Value> = last_rows
                .into_iter()
                .map(|r| {
                    json!({
                        "parameter": r.parameter,
                        "estimate": show(r.estimate),
                        "std_error": show(r.std_error),
                    })
                })
                .collect();
            let drawn = if charts && origins.len() >= 2 {
                coefficient_charts(ix, t, i, x, &origins)
            } else {
                Vec::new()
            };
            json!({
                "scheme": g.schemes[x.scheme],
                "candidate": g.candidates[x.candidate],
                "leads_at": x.leads_at.iter().map(|h| horizon_text(Some(*h))).collect::<Vec<_>>().join(", "),
                "regression": x.horizon.map(|h| format!("its horizon-{h} regression")),
                "origin": data_up_to,
                "rows": table,
                "charts": drawn,
            })
        })
        .collect();
    json!(list)
}

/// Each coefficient of a leader across its estimations, with ±2 s.e.
///
/// One function because the estimate line, both bands, the zero line and
/// the number table share one pass over the estimations.
fn coefficient_charts(ix: &Index, t: usize, i: usize, x: &Fitted, origins: &[&str]) -> Vec<Value> {
    let g = &ix.f.grid;
    let mut names: Vec<&str> = Vec::new();
    for r in &x.rows {
        if charted(&r.parameter) && !names.contains(&r.parameter.as_str()) {
            names.push(&r.parameter);
        }
    }
    names.sort_by_key(|n| chart_order(n));
    let look = LEADERS[0];
    let band = Look {
        dash: "3 3",
        width: 1.0,
        marker: charts::Marker::None,
        ..look
    };
    names
        .iter()
        .take(MAX_CHARTED)
        .enumerate()
        .map(|(j, name)| {
            let index: std::collections::HashMap<&str, usize> =
                origins.iter().enumerate().map(|(i, o)| (*o, i)).collect();
            let at = |r: &&Row| index.get(estimation(r)).copied();
            let mine: Vec<&&Row> = x.rows.iter().filter(|r| r.parameter == *name).collect();
            let point = |f: &dyn Fn(&Row) -> Option<f64>| -> Vec<(f64, f64)> {
                mine.iter()
                    .filter_map(|r| Some((at(r)? as f64, f(r).unwrap_or(f64::NAN))))
                    .collect()
            };
            let plus = |k: f64| move |r: &Row| Some(r.estimate? + k * r.std_error?);
            let mut ch = Chart::new(
                &format!("t{t}-par{i}-{j}"),
                &format!(
                    "{} of {} under the {} scheme across its estimations",
                    name, g.candidates[x.candidate], g.schemes[x.scheme]
                ),
                XAxis::Periods(origins.iter().map(|o| o.to_string()).collect()),
            );
            ch.x_title = estimations_are(x).into();
            ch.y_title = name.to_string();
            ch.plot_height = 150.0;
            ch.rules.push(Rule {
                y: 0.0,
                label: "0".into(),
                dash: "2 3",
            });
            ch.lines.push(Line {
                name: "estimate".into(),
                look: Look {
                    marker: charts::Marker::None,
                    ..look
                },
                points: point(&|r| r.estimate),
                legend: true,
                marker_every: 0,
            });
            for (k, legend) in [(2.0, true), (-2.0, false)] {
                ch.lines.push(Line {
                    name: "± 2 standard errors".into(),
                    look: band,
                    points: point(&plus(k)),
                    legend,
                    marker_every: 0,
                });
            }
            let rows = mine
                .iter()
                .map(|r| vec![estimation(r).to_string(), show(r.estimate), show(r.std_error)])
                .collect();
            let each = match estimations_are(x) {
                "vintage" => "vintages",
                _ => "estimation ends",
            };
            chart_value(
                charts::svg(&ch),
                format!(
                    "{name} of {} estimated at each of {} {each}, with a band of two standard errors either side; where the band holds zero the coefficient is not distinguishable from zero at about 5 %.",
                    g.candidates[x.candidate],
                    origins.len()
                ),
                vec![estimations_are(x).into(), "estimate".into(), "standard error".into()],
                rows,
            )
        })
        .collect()
}
