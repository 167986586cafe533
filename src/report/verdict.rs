//! The verdict of one target: for each scheme × horizon the candidate that
//! ranks first, its ranked metric and RMSE against the benchmark's, and
//! what the tests say (alone, and after the search over the grid), in a
//! status, a symbol and sentences that each name the test and p-value they
//! rest on ([`super::claims`]); then a headline over all the settings.

use super::claims::{self, Outcome, Search, Setting};
use super::format::{better_way, metric_words, ratio, show};
use super::view::Index;
use crate::results::scores::Row as ScoreRow;
use serde_json::{json, Value};
use std::collections::BTreeMap;

/// The verdict of target `t`: `headline`, `horizons`, `schemes[].cells[]`,
/// `rows` (the cells in order) and `sentences`.
pub fn verdict_for(ix: &Index, t: usize) -> Value {
    let g = &ix.f.grid;
    let mut rows = Vec::new();
    let mut sentences = Vec::new();
    let mut tally = Tally::default();
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
            let (setting, cell) = setting(ix, t, s, h, &group);
            tally.add(&setting);
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
        "headline": headline(ix, t, &tally, leaders),
        "horizons": g.horizons,
        "schemes": schemes,
        "rows": rows,
        "sentences": sentences,
    })
}

/// How many settings of a target fall in each reading.
#[derive(Default)]
struct Tally {
    statuses: BTreeMap<&'static str, usize>,
    /// The leader is significantly better by a pairwise test.
    alone: usize,
    /// The snooping test rejects (whoever drives it).
    search_rejects: usize,
    total: usize,
}

impl Tally {
    fn add(&mut self, s: &Setting) {
        let status = s.status();
        *self.statuses.entry(status.key).or_default() += 1;
        self.total += 1;
        let beaten = status.key != "unbeaten";
        if beaten && s.n >= 2 && s.significant_alone() {
            self.alone += 1;
        }
        if matches!(s.search, Search::Rejects { .. }) {
            self.search_rejects += 1;
        }
    }

    fn count(&self, key: &str) -> usize {
        self.statuses.get(key).copied().unwrap_or(0)
    }
}

/// One scheme × horizon whose rows by rank are `group`: what the verdict
/// weighs there and its cell of the verdict table.
fn setting(ix: &Index, t: usize, s: usize, h: usize, group: &[&ScoreRow]) -> (Setting, Value) {
    let g = &ix.f.grid;
    let bench = g.benchmark;
    let best = group[0];
    let b = best.candidate;
    let n = best.n;
    let rel = ix.relative(best);
    let dm_row = ix.test(t, s, h, "diebold_mariano", Some(b), Some(bench));
    let cw_row = ix.test(t, s, h, "clark_west", Some(b), Some(bench));
    let snoop = ix
        .tests_of(t, s, h)
        .into_iter()
        .find(|r| r.test == "snooping");
    let setting = Setting {
        leader_is_benchmark: b == bench,
        relative: rel,
        dm: Outcome::of(dm_row, n),
        cw: Outcome::of(cw_row, n),
        search: Search::of(snoop, n, b),
        n,
    };
    let status = setting.status();
    let bench_n = group
        .iter()
        .find(|r| r.candidate == bench)
        .map_or(n, |r| r.n);
    let others = group
        .iter()
        .filter(|r| r.candidate != bench && r.n == bench_n)
        .count();
    let mut readings = vec![leader_sentence(ix, best, group)];
    if b != bench {
        if n < 2 && (dm_row.is_some() || cw_row.is_some() || snoop.is_some()) {
            readings.push("Not testable with one origin: Diebold–Mariano, Clark–West and the snooping test need at least two forecasts per candidate.".to_string());
        } else {
            let (id, bench_id) = (&g.candidates[b], &g.candidates[bench]);
            readings.extend(claims::diebold_mariano(setting.dm, id, bench_id));
            readings.extend(claims::clark_west(setting.cw, setting.dm, id, bench_id));
        }
    }
    if let Some(sn) = snoop.filter(|_| n >= 2) {
        let leader = (b != bench).then_some(b);
        readings.push(claims::snooping(
            sn,
            setting.search,
            &g.candidates,
            &g.candidates[bench],
            leader,
            others,
        ));
    }
    let tested = n >= 2;
    let p = |r: Option<&crate::results::tests::Row>| {
        if tested {
            super::format::pval(r.and_then(|r| r.p_value))
        } else {
            "–".into()
        }
    };
    let cell = json!({
        "scheme": g.schemes[s],
        "horizon": h,
        "best": g.candidates[b],
        "best_is_benchmark": b == bench,
        "relative": ratio(rel),
        "change": rel.map(|r| format!("{:+.1}%", (r - 1.0) * 100.0).replace('-', "−")).unwrap_or_else(|| "–".into()),
        "status": status.key,
        "symbol": status.symbol,
        "label": status.label,
        "dm_p": p(dm_row),
        "cw_p": p(cw_row),
        "snooping_p": p(snoop),
        "snooping_driver": snoop.filter(|_| tested).and_then(|r| r.candidate).map(|c| g.candidates[c].clone()),
        "readings": readings,
        "sentence": readings.join(" "),
    });
    (setting, cell)
}

/// The sentence on who comes first: the ranked metric's value against the
/// benchmark's, and the RMSE the tests compare.
fn leader_sentence(ix: &Index, best: &ScoreRow, group: &[&ScoreRow]) -> String {
    let g = &ix.f.grid;
    let bench = g.benchmark;
    let bench_id = &g.candidates[bench];
    let metric = ix.ranked_name();
    let words = metric_words(metric);
    if best.candidate == bench {
        return format!(
            "The benchmark {bench_id} itself comes first: none of the other {} has {} {words} ({bench_id}: {}).",
            claims::candidates(g.candidates.len().saturating_sub(1)),
            match better_way(metric) {
                "higher" => "a higher",
                "smaller" => "a smaller",
                _ => "a lower",
            },
            show(ix.ranked_value(best))
        );
    }
    let id = &g.candidates[best.candidate];
    let bench_row = group.iter().find(|r| r.candidate == bench);
    let values = format!(
        "{} against {bench_id}'s {}",
        show(ix.ranked_value(best)),
        show(bench_row.and_then(|r| ix.ranked_value(r)))
    );
    let rel = ix.relative(best);
    let rmse_words = |r: f64| {
        if r < 1.0 {
            format!("{:.1}% below", (1.0 - r) * 100.0)
        } else {
            format!("{:.1}% above", (r - 1.0) * 100.0)
        }
    };
    match (metric, rel) {
        ("rmse", Some(r)) => format!(
            "{id} comes first: RMSE {values}, {} (relative RMSE {r:.3}).",
            rmse_words(r)
        ),
        (_, Some(r)) => format!(
            "{id} comes first by {words} ({values}); its RMSE is {} {bench_id}'s (relative RMSE {r:.3}).",
            rmse_words(r)
        ),
        (_, None) => format!("{id} comes first by {words} ({values})."),
    }
}

/// The sentence over all of a target's settings, from the tally of the
/// readings and how often each candidate comes first.
fn headline(ix: &Index, t: usize, tally: &Tally, mut leaders: Vec<(usize, usize)>) -> String {
    let g = &ix.f.grid;
    let bench_id = &g.candidates[g.benchmark];
    let total = tally.total;
    let unbeaten = tally.count("unbeaten");
    let one_origin = tally.count("one_origin");
    let tested = ix.target_has(t, &["diebold_mariano", "clark_west"]);
    let snooped = ix.target_has(t, &["snooping"]);
    let settings = if total == 1 {
        "the one scheme × horizon setting".to_string()
    } else {
        format!("{total} scheme × horizon settings")
    };
    let mut headline = if unbeaten == total {
        format!("{bench_id} is not beaten in any of the {settings}.")
    } else if one_origin + unbeaten == total && (tested || snooped) {
        format!(
            "Across the {settings}, a candidate has a lower error than {bench_id} in {one_origin}; with one origin none of it is testable."
        )
    } else if tested || snooped {
        let mut parts = Vec::new();
        if tested {
            parts.push(format!(
                "a pairwise test rejects in the leader's favour on its own (Diebold–Mariano: equal mean squared error; Clark–West: equal population MSPE) in {}",
                tally.alone
            ));
        }
        if snooped {
            parts.push(format!(
                "the snooping test rejects that no candidate beats {bench_id} after the search in {}, driven by the leader in {}",
                tally.search_rejects,
                tally.count("holds")
            ));
        }
        parts.push(format!("{bench_id} is unbeaten in {unbeaten}"));
        if one_origin > 0 {
            parts.push(format!("{one_origin} are not testable with one origin"));
        }
        format!("Across the {settings}, at 5%: {}.", parts.join("; "))
    } else {
        format!(
            "Across the {settings}, a candidate has a lower error than {bench_id} in {}; no tests were run.",
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
            "ar(1) comes first: RMSE 1.500 against naive's 2.000, 25.0% below (relative RMSE 0.750). \
             Diebold–Mariano, ar(1) against naive: rejects equal mean squared error, in ar(1)'s favour (p = 0.010). \
             Clark–West, ar(1) against naive (nested in it): cannot reject equal population MSPE (p = 0.200)."
        );
        assert_eq!(cells[0]["change"], "−25.0%");
        assert_eq!(cells[0]["status"], "alone");
        assert_eq!(
            cells[1]["sentence"],
            "The benchmark naive itself comes first: none of the other 2 candidates has a lower RMSE (naive: 0)."
        );
        assert_eq!(
            v["headline"],
            "Across the 2 scheme × horizon settings, at 5%: a pairwise test rejects in the leader's favour on its own \
             (Diebold–Mariano: equal mean squared error; Clark–West: equal population MSPE) in 1; naive is unbeaten in 1. \
             Most often first: naive (1 of 2)."
        );
    }
}
