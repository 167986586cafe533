//! The summary across targets (runs with two or more targets): per scheme,
//! the candidates over every target at the pooled horizon (summary.csv has
//! each horizon too), in order of mean rank, with Friedman's test and the
//! Nemenyi critical difference in words, and a chart of the mean ranks
//! with bars half the critical difference long each side, so that two
//! candidates whose bars do not overlap differ at 5 %.

use super::charts::{self, Chart, Dot, Whisker, XAxis};
use super::format::{horizon_text, p_is, ratio, stat};
use super::view::Index;
use crate::score::summary::SummaryRow;
use serde_json::{json, Value};

/// The section's value: null without summary rows.
pub fn summary_for(ix: &Index, draw: bool) -> Value {
    let f = ix.f;
    let g = &f.grid;
    if f.rows.summary.is_empty() {
        return Value::Null;
    }
    // The pooled horizon, or the only one.
    let pooled = |r: &&SummaryRow| r.horizon.is_none();
    let schemes: Vec<Value> = (0..g.schemes.len())
        .filter_map(|s| {
            let mut rows: Vec<&SummaryRow> = f
                .rows
                .summary
                .iter()
                .filter(|r| r.scheme == s)
                .filter(pooled)
                .collect();
            let first = *rows.first()?;
            rows.sort_by(|a, b| {
                a.mean_rank
                    .unwrap_or(f64::INFINITY)
                    .total_cmp(&b.mean_rank.unwrap_or(f64::INFINITY))
                    .then(a.candidate.cmp(&b.candidate))
            });
            let chart =
                (draw && first.critical_difference.is_some()).then(|| rank_chart(ix, s, &rows));
            Some(json!({
                "scheme": g.schemes[s],
                "horizon": match first.horizon {
                    None => "all horizons pooled".to_string(),
                    h => horizon_text(h),
                },
                "test": test_words(first, g.candidates.len()),
                "rows": rows.iter().map(|r| json!({
                    "candidate": g.candidates[r.candidate],
                    "is_benchmark": r.candidate == g.benchmark,
                    "targets": r.targets,
                    "wins": wins_text(r.wins),
                    "relative_rmse": ratio(r.relative_rmse),
                    "relative_mae": ratio(r.relative_mae),
                    "mase": ratio(r.mase),
                    "mean_rank": stat(r.mean_rank),
                })).collect::<Vec<_>>(),
                "chart": chart,
            }))
        })
        .collect();
    json!({"targets": g.targets.len(), "schemes": schemes})
}

/// A count of wins: whole, or with two decimals where ties shared one.
fn wins_text(w: f64) -> String {
    if w.fract() == 0.0 {
        format!("{w}")
    } else {
        format!("{w:.2}")
    }
}

/// Friedman's test and the critical difference in a sentence, for `k`
/// candidates.
fn test_words(r: &SummaryRow, k: usize) -> String {
    match (r.friedman, r.critical_difference) {
        (Some(chi2), Some(cd)) => format!(
            "Friedman's test of equal mean ranks over the {} targets where every candidate has a score: χ² = {} with {} degrees of freedom, {}. Mean ranks more than {} apart differ at 5 % (Nemenyi's critical difference).",
            r.blocks,
            stat(Some(chi2)),
            k - 1,
            p_is(r.friedman_p_value),
            stat(Some(cd)),
        ),
        _ => "Too few targets have a score for every candidate to test the mean ranks.".into(),
    }
}

/// Mean ranks (1 is best) as dots with bars ± half the critical difference.
fn rank_chart(ix: &Index, s: usize, rows: &[&SummaryRow]) -> Value {
    let g = &ix.f.grid;
    let labels: Vec<String> = rows
        .iter()
        .map(|r| g.candidates[r.candidate].clone())
        .collect();
    let mut ch = Chart::new(
        &format!("summary-ranks-{s}"),
        &format!("Mean ranks across targets, {} scheme", g.schemes[s]),
        XAxis::Periods(labels),
    );
    ch.y_title = "mean rank (1 is best)".into();
    ch.plot_height = 180.0;
    let half = rows[0].critical_difference.unwrap_or(0.0) / 2.0;
    let mut table = Vec::new();
    for (i, r) in rows.iter().enumerate() {
        let Some(m) = r.mean_rank else { continue };
        let look = if r.candidate == g.benchmark {
            charts::BENCHMARK
        } else {
            charts::group_look(0)
        };
        ch.whiskers.push(Whisker {
            x: i as f64,
            lo: m - half,
            hi: m + half,
            colour: look.colour,
            width: 2.0,
        });
        ch.dots.push(Dot {
            x: i as f64,
            y: m,
            look,
            hollow: r.candidate == g.benchmark,
            label: None,
            tip: format!("{}: mean rank {}", g.candidates[r.candidate], stat(Some(m))),
        });
        table.push(vec![
            g.candidates[r.candidate].clone(),
            stat(Some(m)),
            stat(Some(m - half)),
            stat(Some(m + half)),
        ]);
    }
    super::chart_value(
        charts::svg(&ch),
        format!(
            "Mean rank of each candidate over the targets ({} scheme, all horizons pooled), with a bar of half the critical difference ({}) each side: candidates whose bars do not overlap differ at 5 % (Nemenyi).",
            g.schemes[s],
            stat(rows[0].critical_difference)
        ),
        ["candidate", "mean rank", "bar from", "bar to"].map(String::from).to_vec(),
        table,
    )
}
