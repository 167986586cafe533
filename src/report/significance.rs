//! The significance tests of one target, per scheme × horizon: each
//! candidate's Diebold–Mariano and Clark–West test against the benchmark,
//! its model confidence set p-value and membership, its fluctuation test;
//! the snooping test of the whole grid; and a summary in sentences.

use super::format::{p_is, pval, stat};
use super::view::Index;
use super::LEVEL;
use crate::results::scores::Row as ScoreRow;
use crate::results::tests::Row as TestRow;
use serde_json::{json, Value};

/// The test panels of target `t`, one per scheme × horizon with test rows.
pub fn tests_for(ix: &Index, t: usize) -> Value {
    let g = &ix.f.grid;
    let mut out = Vec::new();
    for s in 0..g.schemes.len() {
        for &h in &g.horizons {
            let here = ix.tests_of(t, s, h);
            if !here.is_empty() {
                out.push(panel(ix, t, s, h, &here));
            }
        }
    }
    json!(out)
}

/// How many candidates each test singles out.
#[derive(Default)]
struct Tally {
    better: usize,
    worse: usize,
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
    let snooping = here
        .iter()
        .find(|r| r.test == "snooping")
        .map(|r| snooping_text(ix, r));
    json!({
        "scheme": ix.f.grid.schemes[s],
        "horizon": h,
        "summary": summary(ix, t, s, h, here, &group, &tally),
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
    if ix.significant_better(dm) {
        tally.better += 1;
    }
    if ix.significant_worse(dm) {
        tally.worse += 1;
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
        "dm_mark": if ix.significant_better(dm) { "▲" } else if ix.significant_worse(dm) { "▼" } else { "" },
        "cw_stat": stat(cw.and_then(|r| r.statistic)),
        "cw_p": pval(cw.and_then(|r| r.p_value)),
        "cw_mark": if ix.significant_better(cw) { "†" } else { "" },
        "mcs_p": pval(mcs.and_then(|r| r.p_value)),
        "in_set": mcs.and_then(|r| r.in_set),
        "fl_stat": stat(fl.and_then(|r| r.statistic)),
        "fl_cv": stat(fl.and_then(|r| r.critical_value)),
        "fl_crosses": fl_crosses,
    })
}

/// The snooping test's reading.
fn snooping_text(ix: &Index, r: &TestRow) -> String {
    let g = &ix.f.grid;
    let bench_id = &g.candidates[g.benchmark];
    let best = r
        .candidate
        .map(|c| g.candidates[c].clone())
        .unwrap_or_else(|| "–".into());
    match r.p_value {
        Some(p) if p < LEVEL => format!(
            "Snooping test (best of the grid: {best}): statistic {}, {} — some candidate beats {bench_id} even after the search.",
            stat(r.statistic), p_is(Some(p))
        ),
        Some(p) => format!(
            "Snooping test (best of the grid: {best}): statistic {}, {} — after the search, no candidate is shown to beat {bench_id}.",
            stat(r.statistic), p_is(Some(p))
        ),
        None => format!("Snooping test (best of the grid: {best}): not computable."),
    }
}

/// One sentence per test that was run.
fn summary(
    ix: &Index,
    t: usize,
    s: usize,
    h: usize,
    here: &[&TestRow],
    group: &[&ScoreRow],
    tally: &Tally,
) -> Vec<String> {
    let g = &ix.f.grid;
    let bench = g.benchmark;
    let bench_id = &g.candidates[bench];
    let has = |name: &str| here.iter().any(|r| r.test == name);
    let mut summary = Vec::new();
    if has("diebold_mariano") {
        let others = group.iter().filter(|r| r.candidate != bench).count();
        summary.push(format!(
            "Diebold–Mariano at 5%: {} of {others} candidates significantly better than {bench_id}, {} significantly worse.",
            tally.better, tally.worse
        ));
    }
    if has("clark_west") {
        let cw_better = group
            .iter()
            .filter(|r| {
                ix.significant_better(ix.test(
                    t,
                    s,
                    h,
                    "clark_west",
                    Some(r.candidate),
                    Some(bench),
                ))
            })
            .count();
        let cw_n = here
            .iter()
            .filter(|r| r.test == "clark_west" && r.versus == Some(bench))
            .count();
        summary.push(format!(
            "Clark–West at 5%: {cw_better} of the {cw_n} candidates that nest {bench_id} improve on it."
        ));
    }
    if has("confidence_set") {
        summary.push(format!(
            "Model confidence set{}: {} of {} candidates cannot be told apart from the best.",
            ix.f.settings
                .alpha
                .map(|a| format!(" at {}%", a * 100.0))
                .unwrap_or_default(),
            tally.in_set,
            group.len()
        ));
    }
    if has("fluctuation") {
        summary.push(format!(
            "Fluctuation test at 5%: the local accuracy difference against {bench_id} leaves its band for {} candidates.",
            tally.unstable
        ));
    }
    summary
}
