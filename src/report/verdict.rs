//! The verdict of one target: for each scheme × horizon the candidate that
//! ranks first, its RMSE against the benchmark's, and how the tests read
//! the gain (alone, and after the search over the grid), in a status, a
//! symbol and a sentence; then a headline over all the settings.

use super::format::{p_is, pval, ratio};
use super::view::Index;
use super::LEVEL;
use crate::results::scores::Row as ScoreRow;
use crate::results::tests::Row as TestRow;
use serde_json::{json, Value};
use std::collections::BTreeMap;

/// Status of one scheme × horizon: (key, symbol, label).
pub fn status(
    best_is_bench: bool,
    relative: Option<f64>,
    significant: bool,
    tested: bool,
    snooping: Option<Option<f64>>,
) -> (&'static str, &'static str, &'static str) {
    let survives = matches!(snooping, Some(Some(p)) if p < LEVEL);
    if best_is_bench || relative.is_some_and(|r| r >= 1.0) {
        ("unbeaten", "✗", "benchmark unbeaten")
    } else if survives {
        ("holds", "✓✓", "holds after the search")
    } else if significant && snooping.is_some() {
        ("alone", "✓", "significant alone, not after the search")
    } else if significant {
        ("alone", "✓", "significant (search not tested)")
    } else if tested || snooping.is_some() {
        ("ahead", "~", "ahead, not significant")
    } else {
        ("untested", "·", "ahead, not tested")
    }
}

/// The verdict of target `t`: `headline`, `horizons`, `schemes[].cells[]`,
/// `rows` (the cells in order) and `sentences`.
pub fn verdict_for(ix: &Index, t: usize) -> Value {
    let g = &ix.f.grid;
    let mut rows = Vec::new();
    let mut sentences = Vec::new();
    let mut counts: BTreeMap<&str, usize> = BTreeMap::new();
    // (candidate, settings it comes first in), in order of first appearance.
    let mut leaders: Vec<(usize, usize)> = Vec::new();
    let mut schemes = Vec::new();
    for (s, scheme) in g.schemes.iter().enumerate() {
        let mut cells = Vec::new();
        for &h in &g.horizons {
            let group = ix.group(t, s, Some(h));
            let Some(best) = group.first() else {
                cells.push(json!(null));
                continue;
            };
            let (key, cell) = setting(ix, t, s, h, best);
            *counts.entry(key).or_default() += 1;
            match leaders.iter_mut().find(|(c, _)| *c == best.candidate) {
                Some((_, n)) => *n += 1,
                None => leaders.push((best.candidate, 1)),
            }
            sentences.push(json!({"scheme": scheme, "horizon": h, "text": cell["sentence"]}));
            rows.push(cell.clone());
            cells.push(cell);
        }
        schemes.push(json!({"scheme": scheme, "cells": cells}));
    }
    json!({
        "headline": headline(ix, t, &counts, leaders),
        "horizons": g.horizons,
        "schemes": schemes,
        "rows": rows,
        "sentences": sentences,
    })
}

/// One scheme × horizon whose first-ranked row is `best`: its status key
/// and its cell of the verdict table.
fn setting(ix: &Index, t: usize, s: usize, h: usize, best: &ScoreRow) -> (&'static str, Value) {
    let g = &ix.f.grid;
    let bench = g.benchmark;
    let b = best.candidate;
    let rel = ix.relative(best);
    let dm = ix.test(t, s, h, "diebold_mariano", Some(b), Some(bench));
    let cw = ix.test(t, s, h, "clark_west", Some(b), Some(bench));
    let snoop = ix
        .tests_of(t, s, h)
        .into_iter()
        .find(|r| r.test == "snooping");
    let significant = ix.significant_better(dm) || ix.significant_better(cw);
    let (key, symbol, label) = status(
        b == bench,
        rel,
        significant,
        dm.is_some() || cw.is_some(),
        snoop.map(|r| r.p_value),
    );
    let cell = json!({
        "scheme": g.schemes[s],
        "horizon": h,
        "best": g.candidates[b],
        "best_is_benchmark": b == bench,
        "relative": ratio(rel),
        "change": rel.map(|r| format!("{:+.1}%", (r - 1.0) * 100.0).replace('-', "−")).unwrap_or_else(|| "–".into()),
        "status": key,
        "symbol": symbol,
        "label": label,
        "dm_p": pval(dm.and_then(|r| r.p_value)),
        "cw_p": pval(cw.and_then(|r| r.p_value)),
        "snooping_p": pval(snoop.and_then(|r| r.p_value)),
        "sentence": sentence(ix, b, rel, [dm, cw], snoop),
    });
    (key, cell)
}

/// The verdict sentence of a setting whose first candidate is `b`, with
/// its relative RMSE and its Diebold–Mariano, Clark–West and snooping rows.
fn sentence(
    ix: &Index,
    b: usize,
    rel: Option<f64>,
    [dm, cw]: [Option<&TestRow>; 2],
    snoop: Option<&TestRow>,
) -> String {
    let f = ix.f;
    let g = &f.grid;
    let bench_id = &g.candidates[g.benchmark];
    let id = &g.candidates[b];
    let n_cand = g.candidates.len();
    let metric = |fallback: &'static str| {
        f.rows
            .metric_names
            .get(ix.rank_by.unwrap_or(0))
            .map(String::as_str)
            .unwrap_or(fallback)
            .to_string()
    };
    if b == g.benchmark {
        return format!(
            "The benchmark {bench_id} itself comes first: none of the other {} candidates has a lower {}.",
            n_cand.saturating_sub(1),
            metric("error")
        );
    }
    let mut text = match rel {
        Some(r) if r < 1.0 => format!(
            "{id} comes first, with an RMSE {:.1}% below {bench_id}'s (relative RMSE {r:.3}).",
            (1.0 - r) * 100.0
        ),
        Some(r) => format!(
            "{id} comes first by {}, but its RMSE is {:.1}% above {bench_id}'s (relative RMSE {r:.3}).",
            metric("the ranking metric"),
            (r - 1.0) * 100.0
        ),
        None => format!("{id} comes first."),
    };
    let parts: Vec<String> = [
        reading("Diebold–Mariano", dm, bench_id),
        reading("Clark–West (which allows for the nesting)", cw, bench_id),
    ]
    .into_iter()
    .flatten()
    .collect();
    if !parts.is_empty() {
        text.push(' ');
        text.push_str(&parts.join("; "));
        text.push('.');
    }
    if let Some(sn) = snoop {
        match sn.p_value {
            Some(p) if p < LEVEL => text.push_str(&format!(
                " The edge holds after the search over {n_cand} candidates: the snooping test rejects that none beats {bench_id} ({}).",
                p_is(Some(p))
            )),
            Some(p) => text.push_str(&format!(
                " Once the search over {n_cand} candidates is allowed for, the snooping test cannot rule out luck ({}).",
                p_is(Some(p))
            )),
            None => text.push_str(" The snooping test could not be computed."),
        }
    }
    text
}

/// How a pairwise test reads the first candidate against the benchmark.
fn reading(name: &str, r: Option<&TestRow>, bench_id: &str) -> Option<String> {
    let r = r?;
    Some(match (r.statistic, r.p_value) {
        (Some(st), Some(p)) if st > 0.0 && p < LEVEL => {
            format!("{name} finds the gain significant ({})", p_is(Some(p)))
        }
        (Some(st), Some(p)) if st < 0.0 && p < LEVEL => {
            format!("{name} finds it significantly worse ({})", p_is(Some(p)))
        }
        (Some(_), Some(p)) => format!(
            "{name} cannot tell it apart from {bench_id} ({})",
            p_is(Some(p))
        ),
        _ => format!("{name} could not be computed (no variation in the loss differences)"),
    })
}

/// The sentence over all of a target's settings, from the count of each
/// status and how often each candidate comes first.
fn headline(
    ix: &Index,
    t: usize,
    counts: &BTreeMap<&str, usize>,
    mut leaders: Vec<(usize, usize)>,
) -> String {
    let g = &ix.f.grid;
    let bench_id = &g.candidates[g.benchmark];
    let count = |key: &str| counts.get(key).copied().unwrap_or(0);
    let total: usize = counts.values().sum();
    let sig = count("holds") + count("alone");
    let holds = count("holds");
    let unbeaten = count("unbeaten");
    let tested = ix.target_has(t, &["diebold_mariano", "clark_west"]);
    let snooped = ix.target_has(t, &["snooping"]);
    let settings = if total == 1 {
        "the one scheme × horizon setting".to_string()
    } else {
        format!("{total} scheme × horizon settings")
    };
    let mut headline = if unbeaten == total {
        format!("{bench_id} is not beaten in any of the {settings}.")
    } else if tested {
        format!(
            "Across the {settings}, a candidate beats {bench_id} significantly in {sig}{}; {bench_id} is unbeaten in {unbeaten}.",
            if snooped {
                format!(", and the edge holds after allowing for the search in {holds}")
            } else {
                String::new()
            }
        )
    } else {
        format!(
            "Across the {settings}, a candidate has a lower error than {bench_id} in {}; no pairwise tests were run.",
            total - unbeaten
        )
    };
    leaders.sort_by_key(|(c, n)| (std::cmp::Reverse(*n), *c));
    if let Some((c, n)) = leaders.first() {
        if total > 1 {
            headline.push_str(&format!(
                " Most often first: {} ({n} of {total}).",
                g.candidates[*c]
            ));
        }
    }
    headline
}

#[cfg(test)]
mod tests {
    use super::status;

    #[test]
    fn statuses_follow_their_definitions() {
        // The reading of a setting, by the definitions in the report's key:
        // unbeaten when the benchmark ranks first or the leader's relative
        // RMSE is at least 1; "holds" when the snooping test rejects at 5%;
        // "alone" when a pairwise test does but the search is not (or
        // cannot be) allowed for; "ahead" when tested and not significant.
        assert_eq!(status(true, Some(0.5), true, true, None).0, "unbeaten");
        assert_eq!(status(false, Some(1.0), true, true, None).0, "unbeaten");
        assert_eq!(
            status(false, Some(0.9), true, true, Some(Some(0.01))).0,
            "holds"
        );
        assert_eq!(status(false, Some(0.9), true, true, Some(Some(0.2))).1, "✓");
        assert_eq!(
            status(false, Some(0.9), true, true, None).2,
            "significant (search not tested)"
        );
        assert_eq!(status(false, Some(0.9), false, true, None).0, "ahead");
        assert_eq!(
            status(false, Some(0.9), false, false, Some(None)).0,
            "ahead"
        );
        assert_eq!(status(false, None, false, false, None).0, "untested");
    }
}

#[cfg(test)]
mod sentences {
    use super::verdict_for;
    use crate::report::view::{tests::folder, Index};

    #[test]
    fn the_verdict_states_the_gain_and_the_tests() {
        // Horizon 1: ar(1) ranks first with relative RMSE 1.5 / 2 = 0.75,
        // 25.0% below naive; Diebold–Mariano p = 0.01 < 5% with a positive
        // statistic, Clark–West p = 0.2. Horizon 3: naive ranks first.
        let f = folder("rmse");
        let v = verdict_for(&Index::new(&f), 0);
        let cells = v["rows"].as_array().unwrap();
        assert_eq!(
            cells[0]["sentence"],
            "ar(1) comes first, with an RMSE 25.0% below naive's (relative RMSE 0.750). \
             Diebold–Mariano finds the gain significant (p = 0.010); Clark–West (which allows \
             for the nesting) cannot tell it apart from naive (p = 0.200)."
        );
        assert_eq!(cells[0]["change"], "−25.0%");
        assert_eq!(cells[0]["status"], "alone");
        assert_eq!(
            cells[1]["sentence"],
            "The benchmark naive itself comes first: none of the other 2 candidates has a lower rmse."
        );
        assert_eq!(
            v["headline"],
            "Across the 2 scheme × horizon settings, a candidate beats naive significantly in 1; \
             naive is unbeaten in 1. Most often first: naive (1 of 2)."
        );
    }
}
