//! The significance tests of one target, per scheme × horizon: each
//! candidate's Diebold–Mariano and Clark–West test against the benchmark,
//! its model confidence set p-value and membership, its fluctuation test;
//! the snooping test of the whole grid; and a summary in sentences.

use super::calibration::calibration_panel;
use super::claims::{self, Outcome, Search};
use super::format::{pval, stat};
use super::view::Index;
use crate::results::scores::Row as ScoreRow;
use crate::results::tests::Row as TestRow;
use serde_json::{json, Value};

/// The test panels of target `t`, one per scheme × horizon with test rows;
/// the first panel carries the PIT histograms when `charts` is set.
pub fn tests_for(ix: &Index, t: usize, charts: bool) -> Value {
    let g = &ix.f.grid;
    let mut out = Vec::new();
    for s in 0..g.schemes.len() {
        for &h in &g.horizons {
            let here = ix.tests_of(t, s, h);
            if !here.is_empty() {
                let mut p = panel(ix, t, s, h, &here);
                let group = ix.group(t, s, Some(h));
                let draw = charts && out.is_empty();
                p["calibration"] = calibration_panel(ix, (t, s, h), &here, &group, draw);
                p["matrix"] = dm_matrix(ix, (t, s, h), &here, &group);
                out.push(p);
            }
        }
    }
    json!(out)
}

/// Candidates shown in the pairwise matrix: the first by rank.
const MATRIX_CANDIDATES: usize = 12;

/// The Diebold–Mariano matrix of `diebold_mariano: pairs` (null without
/// pair rows): the first candidates by rank in rows and columns, each cell
/// the row candidate against the column one (a stored row read with its
/// sign turned when the pair is stored the other way round), shaded by
/// the p-value and the side it favours.
fn dm_matrix(
    ix: &Index,
    key: (usize, usize, usize),
    here: &[&TestRow],
    group: &[&ScoreRow],
) -> Value {
    let (t, s, h) = key;
    let bench = ix.f.grid.benchmark;
    let pairs = here
        .iter()
        .any(|r| r.test == "diebold_mariano" && r.versus != Some(bench));
    if !pairs {
        return Value::Null;
    }
    let shown: Vec<usize> = group
        .iter()
        .map(|r| r.candidate)
        .take(MATRIX_CANDIDATES)
        .collect();
    let cell = |a: usize, b: usize| -> Value {
        if a == b {
            return json!({"text": "", "class": "self"});
        }
        let (row, sign) = match ix.test(t, s, h, "diebold_mariano", Some(a), Some(b)) {
            Some(r) => (Some(r), 1.0),
            None => (ix.test(t, s, h, "diebold_mariano", Some(b), Some(a)), -1.0),
        };
        let statistic = row.and_then(|r| r.statistic).map(|v| sign * v);
        let p = row.and_then(|r| r.p_value);
        let side = match statistic {
            Some(v) if v > 0.0 => "better",
            _ => "worse",
        };
        let class = match p {
            Some(p) if p < 0.01 => format!("{side}-1"),
            Some(p) if p < 0.05 => format!("{side}-5"),
            Some(p) if p < 0.10 => format!("{side}-10"),
            _ => String::new(),
        };
        json!({"text": stat(statistic), "p": pval(p), "class": class})
    };
    let rows: Vec<Value> = shown
        .iter()
        .map(|&a| {
            json!({
                "candidate": ix.f.grid.candidates[a],
                "cells": shown.iter().map(|&b| cell(a, b)).collect::<Vec<_>>(),
            })
        })
        .collect();
    json!({
        "columns": shown.iter().map(|&c| ix.f.grid.candidates[c].clone()).collect::<Vec<_>>(),
        "rows": rows,
        "omitted": group.len().saturating_sub(MATRIX_CANDIDATES),
    })
}

/// How many candidates each test singles out.
#[derive(Default)]
struct Tally {
    better: usize,
    worse: usize,
    /// Clark–West rejects equal population MSPE against the benchmark,
    /// and of those, Diebold–Mariano finds significantly worse.
    cw_reject: usize,
    cw_reject_worse: usize,
    in_set: usize,
    unstable: usize,
}

fn panel(ix: &Index, t: usize, s: usize, h: usize, here: &[&TestRow]) -> Value {
    let has = |name: &str| here.iter().any(|r| r.test == name);
    let group = ix.group(t, s, Some(h));
    let mut tally = Tally::default();
    let rows: Vec<Value> = group
        .iter()
        .map(|r| candidate_row(ix, t, s, h, r, &mut tally))
        .collect();
    let n = group.first().map_or(0, |r| r.n);
    let snooping = here
        .iter()
        .find(|r| r.test == "snooping")
        .map(|r| snooping_text(ix, r, &group, n));
    json!({
        "scheme": ix.f.grid.schemes[s],
        "horizon": h,
        "summary": summary(ix, here, &group, &tally),
        "snooping": snooping,
        "has_dm": has("diebold_mariano"),
        "has_cw": has("clark_west"),
        "has_mcs": has("confidence_set"),
        "has_fluctuation": has("fluctuation"),
        "rows": rows,
    })
}

/// One candidate's tests against the benchmark, counted into `tally`.
fn candidate_row(
    ix: &Index,
    t: usize,
    s: usize,
    h: usize,
    r: &ScoreRow,
    tally: &mut Tally,
) -> Value {
    let g = &ix.f.grid;
    let bench = g.benchmark;
    let c = r.candidate;
    let dm = ix.test(t, s, h, "diebold_mariano", Some(c), Some(bench));
    let cw = ix.test(t, s, h, "clark_west", Some(c), Some(bench));
    let mcs = ix.test(t, s, h, "confidence_set", Some(c), None);
    let fl = ix.test(t, s, h, "fluctuation", Some(c), Some(bench));
    let dm_o = Outcome::of(dm, r.n);
    let cw_o = Outcome::of(cw, r.n);
    if dm_o.is_better() {
        tally.better += 1;
    }
    if dm_o.is_worse() {
        tally.worse += 1;
    }
    if cw_o.is_better() {
        tally.cw_reject += 1;
        if dm_o.is_worse() {
            tally.cw_reject_worse += 1;
        }
    }
    if mcs.and_then(|m| m.in_set) == Some(true) {
        tally.in_set += 1;
    }
    // The fluctuation statistic leaves its 5% band.
    let fl_crosses =
        matches!(fl, Some(TestRow { statistic: Some(v), critical_value: Some(cv), .. }) if v > cv);
    if fl_crosses {
        tally.unstable += 1;
    }
    json!({
        "rank": r.rank,
        "candidate": g.candidates[c],
        "is_benchmark": c == bench,
        "dm_stat": stat(dm.and_then(|r| r.statistic)),
        "dm_p": pval(dm.and_then(|r| r.p_value)),
        "dm_mark": if dm_o.is_better() { "▲" } else if dm_o.is_worse() { "▼" } else { "" },
        "cw_stat": stat(cw.and_then(|r| r.statistic)),
        "cw_p": pval(cw.and_then(|r| r.p_value)),
        "cw_mark": if cw_o.is_better() { "†" } else { "" },
        "mcs_p": pval(mcs.and_then(|r| r.p_value)),
        "in_set": mcs.and_then(|r| r.in_set),
        "fl_stat": stat(fl.and_then(|r| r.statistic)),
        "fl_cv": stat(fl.and_then(|r| r.critical_value)),
        "fl_crosses": fl_crosses,
    })
}

/// The snooping test's reading (see [`claims::snooping`]).
fn snooping_text(ix: &Index, r: &TestRow, group: &[&ScoreRow], n: usize) -> String {
    let g = &ix.f.grid;
    let bench = g.benchmark;
    let leader = group.first().map(|r| r.candidate).filter(|&c| c != bench);
    let bench_n = group
        .iter()
        .find(|r| r.candidate == bench)
        .map_or(n, |r| r.n);
    let others = group
        .iter()
        .filter(|r| r.candidate != bench && r.n == bench_n)
        .count();
    let search = Search::of(Some(r), n, leader.unwrap_or(usize::MAX));
    claims::snooping(
        r,
        search,
        &g.candidates,
        &g.candidates[bench],
        leader,
        others,
    )
}

/// The Clark–West sentence: how many of the candidates that nest the
/// benchmark reject equal population MSPE.
fn clark_west_sentence(here: &[&TestRow], bench: usize, bench_id: &str, tally: &Tally) -> String {
    let cw_n = here
        .iter()
        .filter(|r| r.test == "clark_west" && r.versus == Some(bench))
        .count();
    if cw_n == 0 {
        return format!(
            "Clark–West: no candidate nests {bench_id}; the nested pairs tested are in tests.csv."
        );
    }
    let worse = match tally.cw_reject_worse {
            0 => String::new(),
            k => format!(
                " ({k} of them forecast significantly worse than {bench_id} in this sample by Diebold–Mariano: extra terms that are not zero in population, yet cost more to estimate than they gave here)"
            ),
        };
    format!(
            "Clark–West at 5% (H0: equal population MSPE, {bench_id} nested): rejected for {} of the {} that nest {bench_id}{worse}.",
            tally.cw_reject,
            claims::candidates(cw_n)
        )
}

/// The model confidence set's sentence.
fn confidence_set_sentence(
    ix: &Index,
    here: &[&TestRow],
    candidates: usize,
    tally: &Tally,
) -> String {
    let computed = here
        .iter()
        .any(|r| r.test == "confidence_set" && r.p_value.is_some());
    let level =
        ix.f.settings
            .alpha
            .map(|a| format!(" at {}%", a * 100.0))
            .unwrap_or_default();
    if computed {
        format!(
            "Model confidence set{level}: {} of {} cannot be told apart from the best (MCS p-value above the level).",
            tally.in_set,
            claims::candidates(candidates)
        )
    } else {
        format!("Model confidence set{level}: not computable (the losses do not vary enough).")
    }
}

/// One sentence per test that was run.
fn summary(ix: &Index, here: &[&TestRow], group: &[&ScoreRow], tally: &Tally) -> Vec<String> {
    let g = &ix.f.grid;
    let bench = g.benchmark;
    let bench_id = &g.candidates[bench];
    let has = |name: &str| here.iter().any(|r| r.test == name);
    let n = group.first().map_or(0, |r| r.n);
    let mut summary = Vec::new();
    if n < 2 {
        if [
            "diebold_mariano",
            "clark_west",
            "confidence_set",
            "snooping",
            "fluctuation",
        ]
        .iter()
        .any(|name| has(name))
        {
            summary.push(
                "Not testable with one origin: every test needs at least two forecasts per candidate."
                    .to_string(),
            );
        }
        return summary;
    }
    if has("diebold_mariano") {
        let others = group.iter().filter(|r| r.candidate != bench).count();
        summary.push(format!(
            "Diebold–Mariano at 5% (H0: equal mean squared error): {} of {others} candidates significantly better than {bench_id}, {} significantly worse.",
            tally.better, tally.worse
        ));
    }
    if has("clark_west") {
        summary.push(clark_west_sentence(here, bench, bench_id, tally));
    }
    if has("confidence_set") {
        summary.push(confidence_set_sentence(ix, here, group.len(), tally));
    }
    if has("fluctuation") {
        summary.push(format!(
            "Fluctuation test at 5%: the local accuracy difference against {bench_id} leaves its band for {}.",
            claims::candidates(tally.unstable)
        ));
    }
    summary
}
