//! report: one report-data value built from the result tables, rendered by
//! minijinja templates (layout lives in `templates/`, not in Rust strings)
//! into Markdown and HTML; plus the CSV tables and the manifest.

pub mod manifest;
pub mod tables;

use crate::backtest::CellOutput;
use crate::plan::Cell;
use crate::score::ScoreRow;
use crate::spec::{Experiment, Metric};
use serde_json::{json, Value};

pub const CAUTION: &str = "Backtest accuracy describes how these models would have done on past data. It does not promise the same accuracy in the future: relationships shift, data are revised, and the best model of the past can fail next period. Treat the rankings as evidence, not as a guarantee.";

/// Built-in templates, embedded at compile time from `templates/`.
pub const DEFAULT_TEMPLATES: [(&str, &str); 2] = [
    ("report.md.j2", include_str!("../../templates/report.md.j2")),
    (
        "report.html.j2",
        include_str!("../../templates/report.html.j2"),
    ),
];

/// A number for people: four significant digits, no exponent for ordinary magnitudes.
pub fn show(v: Option<f64>) -> String {
    match v {
        None => "–".into(),
        Some(v) if !v.is_finite() => "–".into(),
        Some(0.0) => "0".into(),
        Some(v) => {
            let a = v.abs();
            if !(1e-4..1e9).contains(&a) {
                format!("{v:.3e}")
            } else {
                let digits = (3 - a.log10().floor() as i32).max(0) as usize;
                format!("{v:.digits$}")
            }
        }
    }
}

fn metric_index(exp: &Experiment, m: Metric) -> Option<usize> {
    exp.metric_columns()
        .iter()
        .position(|c| c.metric == m && c.level.is_none())
}

/// The report-data value both templates render.
pub fn report_data(
    exp: &Experiment,
    cells: &[Cell],
    outputs: &[CellOutput],
    scores: &[ScoreRow],
) -> Value {
    let rmse_i = metric_index(exp, Metric::Rmse);
    let rank_i = metric_index(exp, exp.rank_by);
    let bench = exp.benchmark;
    let mut sections = Vec::new();
    let mut verdicts = Vec::new();
    for (t, target) in exp.targets.iter().enumerate() {
        for (s, scheme) in exp.schemes.iter().enumerate() {
            let mut hs: Vec<Option<usize>> = exp.horizons.iter().map(|&h| Some(h)).collect();
            if exp.horizons.len() > 1 {
                hs.push(None);
            }
            for h in hs {
                let mut group: Vec<&ScoreRow> = scores
                    .iter()
                    .filter(|r| {
                        r.target == t && r.scheme == s && r.horizon == h && r.period_set.is_none()
                    })
                    .collect();
                group.sort_by_key(|r| r.rank);
                let bench_row = group.iter().find(|r| r.candidate == bench);
                let bench_rmse = bench_row.and_then(|r| rmse_i.and_then(|i| r.metrics[i]));
                let rel = |r: &ScoreRow| match (rmse_i.and_then(|i| r.metrics[i]), bench_rmse) {
                    (Some(a), Some(b)) if b > 0.0 => Some(a / b),
                    _ => None,
                };
                let rows: Vec<Value> = group
                    .iter()
                    .map(|r| {
                        let cand = &exp.candidates[r.candidate];
                        json!({
                            "rank": r.rank,
                            "best": r.rank == 1,
                            "candidate": cand.id,
                            "is_benchmark": r.candidate == bench,
                            "conditional": exp.is_conditional(cand),
                            "n": r.n,
                            "metrics": r.metrics.iter().map(|v| show(*v)).collect::<Vec<_>>(),
                            "relative_rmse": show(rel(r)),
                            "is_rmse": show(r.is_rmse),
                            "gap": show(r.gap),
                            "parameters": cand.family.parameters(),
                        })
                    })
                    .collect();
                let horizon = h.map(|h| h.to_string()).unwrap_or_else(|| "all".into());
                if let Some(best) = group.first() {
                    let relv = rel(best);
                    let sentence = if best.candidate == bench {
                        format!(
                            "the benchmark {} itself ranks first by {}",
                            exp.candidates[bench].id,
                            exp.rank_by.name()
                        )
                    } else {
                        match relv {
                            Some(r) if r < 1.0 => format!(
                                "{} ranks first by {}; its RMSE is {:.1}% below the benchmark {}",
                                exp.candidates[best.candidate].id,
                                exp.rank_by.name(),
                                (1.0 - r) * 100.0,
                                exp.candidates[bench].id
                            ),
                            Some(r) => format!(
                                "{} ranks first by {}; its RMSE is {:.1}% above the benchmark {}",
                                exp.candidates[best.candidate].id,
                                exp.rank_by.name(),
                                (r - 1.0) * 100.0,
                                exp.candidates[bench].id
                            ),
                            None => format!(
                                "{} ranks first by {}",
                                exp.candidates[best.candidate].id,
                                exp.rank_by.name()
                            ),
                        }
                    };
                    verdicts.push(json!({
                        "target": target.name, "scheme": scheme.id, "horizon": horizon,
                        "best": exp.candidates[best.candidate].id, "relative_rmse": show(relv), "sentence": sentence,
                    }));
                }
                let overfit: Vec<Value> = group
                    .iter()
                    .filter(|r| r.gap.is_some())
                    .map(|r| {
                        json!({"candidate": exp.candidates[r.candidate].id, "is_rmse": show(r.is_rmse),
                               "oos_rmse": show(rmse_i.and_then(|i| r.metrics[i])), "gap": show(r.gap),
                               "parameters": exp.candidates[r.candidate].family.parameters()})
                    })
                    .collect();
                sections.push(json!({
                    "target": target.name,
                    "scheme": scheme.id,
                    "horizon": horizon,
                    "origins": group.first().map(|r| r.n).unwrap_or(0),
                    "rows": rows,
                    "overfit": overfit,
                }));
            }
        }
    }
    let _ = rank_i;
    // Outlook: the leading candidates of the pooled ranking of the first scheme.
    let mut outlook = Vec::new();
    for (t, target) in exp.targets.iter().enumerate() {
        let pooled_h = if exp.horizons.len() > 1 {
            None
        } else {
            Some(exp.horizons[0])
        };
        let mut lead: Vec<&ScoreRow> = scores
            .iter()
            .filter(|r| {
                r.target == t && r.scheme == 0 && r.horizon == pooled_h && r.period_set.is_none()
            })
            .collect();
        lead.sort_by_key(|r| r.rank);
        let mut chosen: Vec<usize> = lead.iter().take(3).map(|r| r.candidate).collect();
        if !chosen.contains(&bench) {
            chosen.push(bench);
        }
        for c in chosen {
            let Some((_, out)) = cells
                .iter()
                .zip(outputs)
                .find(|(cell, _)| cell.target == t && cell.candidate == c && cell.scheme == 0)
            else {
                continue;
            };
            let rows: Vec<Value> = out
                .outlook
                .iter()
                .map(|r| json!({"horizon": r.horizon, "period": exp.period_label(target, target.n + r.horizon), "forecast": show(r.forecast)}))
                .collect();
            outlook.push(json!({"target": target.name, "candidate": exp.candidates[c].id, "is_benchmark": c == bench, "rows": rows}));
        }
    }
    let conditional: Vec<String> = exp
        .candidates
        .iter()
        .filter(|c| exp.is_conditional(c))
        .map(|c| c.id.clone())
        .collect();
    json!({
        "title": exp.title,
        "experiment": exp.name,
        "notes": exp.notes,
        "caution": CAUTION,
        "benchmark": exp.candidates[bench].id,
        "rank_by": exp.rank_by.name(),
        "metrics": exp.metric_columns().iter().map(|c| exp.metric_column_name(c)).collect::<Vec<_>>(),
        "multi_step": match exp.multi_step { crate::spec::MultiStep::Direct => "direct", crate::spec::MultiStep::Iterated => "iterated" },
        "data": {
            "file": exp.data_path.file_name().map(|f| f.to_string_lossy().to_string()).unwrap_or_default(),
            "frequency": exp.frequency.name(),
            "transform": exp.transform.name(),
            "targets": exp.targets.iter().map(|t| json!({
                "name": t.name, "n": t.n, "first": t.labels[0], "last": t.labels[t.n - 1],
                "future_rows": t.labels.len() - t.n,
                "first_origins": exp.schemes.iter().zip(&t.first_origins).map(|(s, &o)| json!({"scheme": s.id, "origin": t.labels[o - 1]})).collect::<Vec<_>>(),
            })).collect::<Vec<_>>(),
            "predictors": exp.predictors.iter().map(|p| json!({
                "column": p.column, "transform": p.transform.name(), "release_lag": p.release_lag, "known_ahead": p.known_ahead,
            })).collect::<Vec<_>>(),
        },
        "candidates": exp.candidates.iter().map(|c| c.id.clone()).collect::<Vec<_>>(),
        "schemes": exp.schemes.iter().map(|s| s.id.clone()).collect::<Vec<_>>(),
        "horizons": exp.horizons,
        "conditional": conditional,
        "verdicts": verdicts,
        "sections": sections,
        "outlook": outlook,
        "experiment_text": exp.source_text,
        "seed": exp.seed,
        "version": env!("CARGO_PKG_VERSION"),
    })
}

/// Render one template with the report data.
pub fn render(name: &str, source: &str, data: &Value) -> Result<String, String> {
    let mut env = minijinja::Environment::new();
    env.set_auto_escape_callback(|name| {
        if name.ends_with(".html.j2") {
            minijinja::AutoEscape::Html
        } else {
            minijinja::AutoEscape::None
        }
    });
    env.add_template(name, source)
        .map_err(|e| format!("template {name}: {e}"))?;
    let tmpl = env
        .get_template(name)
        .map_err(|e| format!("template {name}: {e}"))?;
    tmpl.render(data)
        .map_err(|e| format!("template {name}: {e}"))
}
