//! Does the fit carry over? Per scheme × horizon: in-sample against
//! out-of-sample RMSE (a scatter with the 45° line), error against the
//! number of parameters, the gap table, the candidates that fit well but
//! forecast badly, and the rank correlation of the two errors.

use super::chart_value;
use super::charts::{self, Chart, Dot, LegendItem, LegendKey, Line, Look, XAxis, LEADERS};
use super::format::{family_of, show, stat};
use super::view::Index;
use crate::results::scores::Row as ScoreRow;
use serde_json::{json, Value};
use std::collections::BTreeMap;

/// The panels of target `t`, one per scheme × horizon with score rows.
pub fn overfitting_for(ix: &Index, t: usize, charts: bool) -> Value {
    let g = &ix.f.grid;
    // Families in candidate order, for consistent colours across panels.
    let mut families: Vec<&str> = Vec::new();
    for c in &g.candidates {
        let fam = family_of(c);
        if !families.contains(&fam) {
            families.push(fam);
        }
    }
    let mut panels = Vec::new();
    for s in 0..g.schemes.len() {
        for &h in &g.horizons {
            if let Some(panel) = panel(ix, t, s, h, charts, &families) {
                panels.push(panel);
            }
        }
    }
    json!(panels)
}

/// A candidate's rank (from 1) in a list ordered by an error.
fn rank_among(list: &[&ScoreRow], c: usize) -> Option<usize> {
    list.iter().position(|r| r.candidate == c).map(|p| p + 1)
}

/// Candidates ordered by an error (missing last), ties by candidate.
fn sorted_by_error<'a>(
    rows: &[&'a ScoreRow],
    error: impl Fn(&ScoreRow) -> Option<f64>,
) -> Vec<&'a ScoreRow> {
    let mut list = rows.to_vec();
    list.sort_by(|a, b| {
        error(a)
            .unwrap_or(f64::INFINITY)
            .total_cmp(&error(b).unwrap_or(f64::INFINITY))
            .then(a.candidate.cmp(&b.candidate))
    });
    list
}

/// The candidates of the `k` largest gaps among the flagged ones
/// (rank in sample, candidate, gap), ties by candidate.
fn largest_gaps(flagged: &[(usize, usize, Option<f64>)], k: usize) -> Vec<usize> {
    let mut by_gap: Vec<&(usize, usize, Option<f64>)> = flagged.iter().collect();
    by_gap.sort_by(|a, b| {
        b.2.unwrap_or(0.0)
            .total_cmp(&a.2.unwrap_or(0.0))
            .then(a.1.cmp(&b.1))
    });
    by_gap.iter().take(k).map(|f| f.1).collect()
}

/// A gap-table row for a candidate whose in-sample error is one-step only
/// (no gap: it would compare one-step with h-step errors).
fn one_step_row(ix: &Index, r: &ScoreRow) -> Value {
    json!({
        "candidate": ix.f.grid.candidates[r.candidate],
        "parameters": r.parameters,
        "is_rmse": format!("{} (one-step)", show(r.is_rmse)),
        "oos_rmse": show(ix.rmse_of(r)),
        "gap": "–",
        "is_r2": show(r.is_r2),
        "rank_in": null,
        "rank_out": null,
        "flag": false,
    })
}

/// One scheme and horizon's panel: the gap table, the flags, the rank
/// correlation and (with charts) the scatter and complexity charts.
fn panel(
    ix: &Index,
    t: usize,
    s: usize,
    h: usize,
    charts: bool,
    families: &[&str],
) -> Option<Value> {
    let g = &ix.f.grid;
    let group = ix.group(t, s, Some(h));
    if group.is_empty() {
        return None;
    }
    let leaders = ix.leaders(t, s, Some(h), 3);
    // Candidates with both errors of this horizon (a gap: like with like;
    // one-step in-sample errors are not compared with h-step forecasts),
    // ordered by each.
    let both: Vec<&ScoreRow> = group
        .iter()
        .copied()
        .filter(|r| r.is_rmse.is_some() && r.gap.is_some() && ix.rmse_of(r).is_some())
        .collect();
    // In-sample errors of another horizon (one-step) than the forecasts'.
    let one_step: Vec<&ScoreRow> = group
        .iter()
        .copied()
        .filter(|r| r.is_rmse.is_some() && r.gap.is_none() && ix.rmse_of(r).is_some())
        .collect();
    let by_in = sorted_by_error(&both, |r| r.is_rmse);
    let by_out = sorted_by_error(&both, |r| ix.rmse_of(r));
    let flagged = carried_over_badly(&both, &by_in, &by_out);
    let (flags, flags_intro) = flag_texts(ix, &flagged, &by_out, both.len());
    // Label the leaders and the three flagged candidates with the largest gaps.
    let labelled = largest_gaps(&flagged, 3);
    let flagged: Vec<usize> = flagged.iter().map(|f| f.1).collect();
    let rho = ix
        .test(t, s, h, "rank_correlation", None, None)
        .and_then(|r| r.statistic);
    let no_in_sample: Vec<String> = group
        .iter()
        .filter(|r| r.is_rmse.is_none())
        .map(|r| g.candidates[r.candidate].clone())
        .collect();
    let mut table = gap_table(ix, &by_in, &by_out, &flagged);
    table.extend(one_step.iter().map(|r| one_step_row(ix, r)));
    let id = format!("t{t}-s{s}-h{h}");
    let (scatter, complexity) = if charts && !both.is_empty() {
        (
            Some(scatter_chart(ix, &id, &both, &leaders, &labelled, families)),
            Some(complexity_chart(ix, &id, &both)),
        )
    } else {
        (None, None)
    };
    Some(json!({
        "scheme": g.schemes[s],
        "horizon": h,
        "scatter": scatter,
        "complexity": complexity,
        "rows": table,
        "flags": flags,
        "flags_intro": flags_intro,
        "rank_correlation": rho.map(rank_correlation_text),
        "without_in_sample": no_in_sample,
        "one_step_only": one_step.iter().map(|r| g.candidates[r.candidate].clone()).collect::<Vec<_>>(),
    }))
}

/// The gap table, by out-of-sample RMSE.
fn gap_table(
    ix: &Index,
    by_in: &[&ScoreRow],
    by_out: &[&ScoreRow],
    flagged: &[usize],
) -> Vec<Value> {
    let g = &ix.f.grid;
    by_out
        .iter()
        .map(|r| {
            json!({
                "candidate": g.candidates[r.candidate],
                "parameters": r.parameters,
                "is_rmse": show(r.is_rmse),
                "oos_rmse": show(ix.rmse_of(r)),
                "gap": show(r.gap),
                "is_r2": show(r.is_r2),
                "rank_in": rank_among(by_in, r.candidate),
                "rank_out": rank_among(by_out, r.candidate),
                "flag": flagged.contains(&r.candidate),
            })
        })
        .collect()
}

/// Candidates in the top third in sample and the bottom half out of
/// sample (with at least four to compare): (in-sample rank, candidate,
/// gap), by in-sample rank.
fn carried_over_badly(
    both: &[&ScoreRow],
    by_in: &[&ScoreRow],
    by_out: &[&ScoreRow],
) -> Vec<(usize, usize, Option<f64>)> {
    let n_both = both.len();
    let mut flagged = Vec::new();
    for r in both {
        let (Some(ri), Some(ro)) = (
            rank_among(by_in, r.candidate),
            rank_among(by_out, r.candidate),
        ) else {
            continue;
        };
        if n_both >= 4 && 3 * ri <= n_both.div_ceil(3) * 3 && 2 * ro > n_both {
            flagged.push((ri, r.candidate, r.gap));
        }
    }
    flagged.sort_by_key(|f| f.0);
    flagged
}

/// The flags' sentences and their introduction.
fn flag_texts(
    ix: &Index,
    flagged: &[(usize, usize, Option<f64>)],
    by_out: &[&ScoreRow],
    n_both: usize,
) -> (Vec<Value>, Option<String>) {
    let g = &ix.f.grid;
    let flags = flagged
        .iter()
        .map(|(ri, c, gap)| {
            json!({
                "candidate": g.candidates[*c],
                "text": format!(
                    "in-sample rank {ri}, out-of-sample rank {} of {n_both}; forecast error {} times its in-sample error",
                    rank_among(by_out, *c).unwrap_or(0),
                    gap.map(|v| format!("{v:.2}")).unwrap_or_else(|| "–".into())
                ),
            })
        })
        .collect();
    let intro = match flagged.len() {
        0 => None,
        1 => Some("One candidate fits better than most in sample (top third) but forecasts worse than most (bottom half): its in-sample gain did not carry over.".to_string()),
        k => Some(format!("{k} candidates fit better than most in sample (top third) but forecast worse than most (bottom half): their in-sample gain did not carry over.")),
    };
    (flags, intro)
}

/// The rank correlation of in-sample and out-of-sample RMSE, read.
fn rank_correlation_text(r: f64) -> String {
    let reading = if r >= 0.7 {
        "the in-sample order largely carries over"
    } else if r >= 0.3 {
        "the in-sample order carries over only in part"
    } else if r > -0.3 {
        "in-sample fit says little about out-of-sample accuracy here"
    } else {
        "the closer the in-sample fit, the worse the forecasts"
    };
    format!(
        "Rank correlation of in-sample and out-of-sample RMSE: {}; {reading}.",
        stat(Some(r))
    )
}

fn scatter_chart(
    ix: &Index,
    id: &str,
    both: &[&ScoreRow],
    leaders: &[usize],
    flagged: &[usize],
    families: &[&str],
) -> Value {
    let g = &ix.f.grid;
    let mut ch = Chart::new(
        &format!("{id}-scatter"),
        "In-sample against out-of-sample RMSE per candidate",
        XAxis::Numeric { integer: false },
    );
    ch.diagonal = true;
    ch.width = 430.0;
    ch.plot_height = 250.0;
    ch.x_title = "in-sample RMSE".into();
    ch.y_title = "out-of-sample RMSE".into();
    let mut used: Vec<usize> = Vec::new();
    let mut rows = Vec::new();
    for r in both {
        let id = &g.candidates[r.candidate];
        let fam = families
            .iter()
            .position(|f| *f == family_of(id))
            .unwrap_or(0);
        if !used.contains(&fam) {
            used.push(fam);
        }
        let (x, y) = (r.is_rmse.unwrap_or(0.0), ix.rmse_of(r).unwrap_or(0.0));
        let label =
            (leaders.contains(&r.candidate) || flagged.contains(&r.candidate)).then(|| id.clone());
        ch.dots.push(Dot {
            x,
            y,
            look: charts::group_look(fam),
            hollow: !leaders.contains(&r.candidate),
            label,
            tip: format!(
                "{id}: in-sample {}, out-of-sample {}",
                show(Some(x)),
                show(Some(y))
            ),
        });
        rows.push(vec![id.clone(), show(Some(x)), show(Some(y)), show(r.gap)]);
    }
    used.sort_unstable();
    for fam in used {
        ch.legend.push(LegendItem {
            name: families[fam].to_string(),
            key: LegendKey::Dot(charts::group_look(fam), true),
        });
    }
    chart_value(
        charts::svg(&ch),
        "Each mark is a candidate; filled marks are the three leaders. Above the dashed 45° line a candidate forecasts worse than it fits; the further above, the less its fit carried over.".into(),
        vec!["candidate".into(), "in-sample RMSE".into(), "out-of-sample RMSE".into(), "gap".into()],
        rows,
    )
}

/// Every candidate's out-of-sample RMSE by its parameter count, a faint
/// mark each.
const EACH_CANDIDATE: Look = Look {
    colour: "#9aa3ae",
    dash: "",
    width: 1.0,
    marker: charts::Marker::Circle,
};

/// At each parameter count: (lowest out-of-sample RMSE, lowest in-sample
/// RMSE, the candidates that have them, how many candidates have that count).
type BySize = BTreeMap<usize, (Option<f64>, Option<f64>, String, String, usize)>;

/// Error against the number of parameters, over the candidates `both`
/// (those with an in-sample fit of this horizon, the same set as the
/// scatter and the gap table): a faint mark per candidate and the lowest
/// out-of-sample and in-sample RMSE at each size.
fn complexity_chart(ix: &Index, id: &str, both: &[&ScoreRow]) -> Value {
    let g = &ix.f.grid;
    let mut by_params = BySize::new();
    let mut ch = Chart::new(
        &format!("{id}-complexity"),
        "Error against number of parameters",
        XAxis::Numeric { integer: true },
    );
    ch.width = 430.0;
    ch.plot_height = 250.0;
    ch.x_title = "parameters estimated".into();
    ch.y_title = "RMSE".into();
    let mut drawn = 0;
    for r in both {
        let (Some(p), Some(o), Some(i)) = (r.parameters, ix.rmse_of(r), r.is_rmse) else {
            continue;
        };
        drawn += 1;
        let entry = by_params
            .entry(p)
            .or_insert((None, None, String::new(), String::new(), 0));
        entry.4 += 1;
        ch.dots.push(Dot {
            x: p as f64,
            y: o,
            look: EACH_CANDIDATE,
            hollow: true,
            label: None,
            tip: format!(
                "{}: {} parameters, out-of-sample RMSE {}, in-sample RMSE {}",
                g.candidates[r.candidate],
                p,
                show(Some(o)),
                show(Some(i))
            ),
        });
        if entry.0.is_none_or(|b| o < b) {
            entry.0 = Some(o);
            entry.2 = g.candidates[r.candidate].clone();
        }
        if entry.1.is_none_or(|b| i < b) {
            entry.1 = Some(i);
            entry.3 = g.candidates[r.candidate].clone();
        }
    }
    complexity_lines(&mut ch, &by_params);
    let rows = by_params
        .iter()
        .map(|(p, e)| {
            vec![
                p.to_string(),
                e.4.to_string(),
                show(e.0),
                e.2.clone(),
                show(e.1),
                e.3.clone(),
            ]
        })
        .collect();
    chart_value(
        charts::svg(&ch),
        format!(
            "Each faint mark is one of the {} with an in-sample fit at this horizon, at the number of parameters it estimates (its out-of-sample RMSE); the lines join the lowest out-of-sample and the lowest in-sample RMSE at each size, which may belong to different candidates. Within one family of nested models in-sample error cannot rise as the model grows; across families it can. Where the out-of-sample line turns up while the in-sample one falls, extra parameters fit noise.",
            super::claims::candidates(drawn)
        ),
        vec![
            "parameters".into(),
            "candidates".into(),
            "lowest out-of-sample RMSE".into(),
            "candidate".into(),
            "lowest in-sample RMSE".into(),
            "candidate".into(),
        ],
        rows,
    )
}

/// The two curves of lowest errors by size, and the legend of the marks.
fn complexity_lines(ch: &mut Chart, by_params: &BySize) {
    let out_pts: Vec<(f64, f64)> = by_params
        .iter()
        .filter_map(|(p, e)| e.0.map(|v| (*p as f64, v)))
        .collect();
    let in_pts: Vec<(f64, f64)> = by_params
        .iter()
        .filter_map(|(p, e)| e.1.map(|v| (*p as f64, v)))
        .collect();
    ch.lines.push(Line {
        name: "out of sample (lowest at each size)".into(),
        look: LEADERS[0],
        points: out_pts,
        legend: true,
        marker_every: 1,
    });
    ch.lines.push(Line {
        name: "in sample (lowest at each size)".into(),
        look: LEADERS[1],
        points: in_pts,
        legend: true,
        marker_every: 1,
    });
    ch.legend.push(LegendItem {
        name: "each candidate, out of sample".into(),
        key: LegendKey::Dot(EACH_CANDIDATE, true),
    });
}

#[cfg(test)]
mod tests {
    use super::overfitting_for;
    use crate::report::view::tests::folder;
    use crate::report::view::Index;

    #[test]
    fn the_parameter_chart_counts_what_it_draws() {
        // By construction of the fixture: at horizon 1 two candidates have
        // an in-sample fit (ar(1) with 2 parameters, ar(2) with 3); the
        // caption, the marks and the table's counts all say two.
        let f = folder("rmse");
        let ix = Index::new(&f);
        let panels = overfitting_for(&ix, 0, true);
        let p = &panels.as_array().expect("panels")[0];
        let chart = &p["complexity"];
        let caption = chart["caption"].as_str().expect("caption");
        assert!(caption.contains("one of the 2 candidates"), "{caption}");
        let rows = chart["rows"].as_array().expect("rows");
        let counts: usize = rows
            .iter()
            .map(|r| r[1].as_str().expect("count").parse::<usize>().expect("n"))
            .sum();
        assert_eq!(counts, 2);
        assert_eq!(rows[0][0], "2");
        assert_eq!(rows[1][0], "3");
        let svg = chart["svg"].as_str().expect("svg");
        assert_eq!(
            svg.matches("out-of-sample RMSE 1.500, in-sample RMSE")
                .count(),
            2,
            "{svg}"
        );
    }
}
