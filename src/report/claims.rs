//! What a test's row lets the report say: the one place that maps test
//! outcomes to the report's sentences and marks. Every sentence about a
//! test names the test, the candidates it compares and the p-value it
//! rests on, and claims significance exactly when that row of tests.csv
//! shows p < [`LEVEL`] with the sign it states. docs/verdict.md has the
//! table (test, null hypothesis, outcome, sentence, mark);
//! `tests/verdict_claims.rs` checks every report it can make against its
//! tests.csv.
//!
//! - Diebold–Mariano (two-sided): H0 equal mean squared error of the
//!   candidate and the benchmark over these forecasts.
//! - Clark–West (one-sided, the benchmark nested in the candidate): H0
//!   equal population MSPE, i.e. the nesting model's extra terms are zero
//!   in population. Rejecting it is not a finding that the candidate
//!   forecast better in this sample; when Diebold–Mariano finds it
//!   significantly worse, the sentence says so.
//! - Snooping (Hansen's 2005 SPA): H0 no candidate of the search has a
//!   lower expected squared error than the benchmark. Rejecting it says
//!   that *some* candidate does; the row names the one with the largest
//!   studentised gain, which drives the result. Only when that is the
//!   leader does the leader get "holds after the search".
//! - Fewer than two forecasts (a single-origin holdout): no test can be
//!   run; "not testable with one origin", and no mark.

use super::format::{p_is, pval, stat};
use super::LEVEL;
use crate::results::tests::Row as TestRow;

/// What one test row says about a candidate against the benchmark.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Outcome {
    /// The test was not asked for (no row).
    Absent,
    /// Fewer than two forecasts: nothing can be tested.
    OneOrigin,
    /// A row without a p-value (no variation in the loss differences).
    NotComputed,
    /// p < LEVEL with a positive statistic: the candidate's loss is lower.
    Better(f64),
    /// p < LEVEL with a negative statistic.
    Worse(f64),
    /// p ≥ LEVEL.
    NotSignificant(f64),
}

impl Outcome {
    /// The outcome of a row over `n` forecasts.
    pub fn of(row: Option<&TestRow>, n: usize) -> Outcome {
        let Some(row) = row else {
            return Outcome::Absent;
        };
        if n < 2 {
            return Outcome::OneOrigin;
        }
        match (row.statistic, row.p_value) {
            (Some(s), Some(p)) if p < LEVEL && s > 0.0 => Outcome::Better(p),
            (Some(s), Some(p)) if p < LEVEL && s < 0.0 => Outcome::Worse(p),
            (_, Some(p)) => Outcome::NotSignificant(p),
            _ => Outcome::NotComputed,
        }
    }

    pub fn is_better(self) -> bool {
        matches!(self, Outcome::Better(_))
    }

    pub fn is_worse(self) -> bool {
        matches!(self, Outcome::Worse(_))
    }

    /// Whether a test was run with a result (significant or not).
    pub fn tested(self) -> bool {
        matches!(
            self,
            Outcome::Better(_) | Outcome::Worse(_) | Outcome::NotSignificant(_)
        )
    }
}

/// The snooping row of a setting, as the verdict reads it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Search {
    /// Not asked for.
    Absent,
    /// Fewer than two forecasts.
    OneOrigin,
    /// No p-value.
    NotComputed,
    /// The consistent p-value is below LEVEL; `by_leader`: the candidate
    /// with the largest studentised gain is the leader.
    Rejects { p: f64, by_leader: bool },
    /// The consistent p-value is at least LEVEL.
    NotRejected(f64),
}

impl Search {
    pub fn of(row: Option<&TestRow>, n: usize, leader: usize) -> Search {
        let Some(row) = row else {
            return Search::Absent;
        };
        if n < 2 {
            return Search::OneOrigin;
        }
        match row.p_value {
            Some(p) if p < LEVEL => Search::Rejects {
                p,
                by_leader: row.candidate == Some(leader),
            },
            Some(p) => Search::NotRejected(p),
            None => Search::NotComputed,
        }
    }
}

/// A setting's status: key, symbol, label (the verdict table's legend).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Status {
    pub key: &'static str,
    pub symbol: &'static str,
    pub label: &'static str,
}

const fn st(key: &'static str, symbol: &'static str, label: &'static str) -> Status {
    Status { key, symbol, label }
}

/// The statuses in the order of the legend.
pub const LEGEND: [Status; 6] = [
    st("holds", "✓✓", "holds after the search (the snooping test rejects, driven by the leader)"),
    st("alone", "✓", "significant alone (Diebold–Mariano, or Clark–West without a significant loss in the sample)"),
    st("ahead", "~", "ahead, not significant"),
    st("unbeaten", "✗", "benchmark unbeaten"),
    st("untested", "·", "ahead, not tested"),
    st("one_origin", "", "not testable with one origin"),
];

/// What the verdict weighs for one scheme × horizon.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Setting {
    /// The benchmark itself ranks first.
    pub leader_is_benchmark: bool,
    /// The leader's RMSE over the benchmark's.
    pub relative: Option<f64>,
    pub dm: Outcome,
    pub cw: Outcome,
    pub search: Search,
    /// Forecasts per candidate in the setting.
    pub n: usize,
}

impl Setting {
    /// Whether a pairwise test finds the leader significantly better: DM,
    /// or CW unless DM finds it significantly worse in the sample.
    pub fn significant_alone(&self) -> bool {
        self.dm.is_better() || (self.cw.is_better() && !self.dm.is_worse())
    }

    pub fn status(&self) -> Status {
        let by = |key: &str| {
            LEGEND
                .iter()
                .find(|s| s.key == key)
                .copied()
                .unwrap_or(LEGEND[2])
        };
        if self.leader_is_benchmark || self.relative.is_some_and(|r| r >= 1.0) {
            by("unbeaten")
        } else if self.n < 2 {
            by("one_origin")
        } else if matches!(
            self.search,
            Search::Rejects {
                by_leader: true,
                ..
            }
        ) {
            by("holds")
        } else if self.significant_alone() {
            by("alone")
        } else if self.dm.tested()
            || self.cw.tested()
            || !matches!(self.search, Search::Absent)
            || matches!(self.dm, Outcome::NotComputed)
            || matches!(self.cw, Outcome::NotComputed)
        {
            by("ahead")
        } else {
            by("untested")
        }
    }
}

/// Diebold–Mariano's sentence for `cand` against `bench`.
pub fn diebold_mariano(o: Outcome, cand: &str, bench: &str) -> Option<String> {
    let head = format!("Diebold–Mariano, {cand} against {bench}:");
    Some(match o {
        Outcome::Absent => return None,
        Outcome::OneOrigin => format!("{head} not testable with one origin."),
        Outcome::NotComputed => {
            format!("{head} not computable (the loss differences do not vary).")
        }
        Outcome::Better(p) => format!(
            "{head} rejects equal mean squared error, in {cand}'s favour ({}).",
            p_is(Some(p))
        ),
        Outcome::Worse(p) => format!(
            "{head} rejects equal mean squared error: {cand} is significantly worse ({}).",
            p_is(Some(p))
        ),
        Outcome::NotSignificant(p) => format!(
            "{head} cannot reject equal mean squared error ({}).",
            p_is(Some(p))
        ),
    })
}

/// Clark–West's sentence for `cand`, which nests `bench`; `dm` is the
/// pair's Diebold–Mariano outcome, so that a rejection is never read as
/// an improvement when the sample says the opposite.
pub fn clark_west(o: Outcome, dm: Outcome, cand: &str, bench: &str) -> Option<String> {
    let head = format!("Clark–West, {cand} against {bench} (nested in it):");
    Some(match o {
        Outcome::Absent => return None,
        Outcome::OneOrigin => format!("{head} not testable with one origin."),
        Outcome::NotComputed => {
            format!("{head} not computable (the adjusted loss differences do not vary).")
        }
        Outcome::Better(p) if dm.is_worse() => format!(
            "{head} rejects equal population MSPE ({}), yet {cand} forecast significantly worse in this sample (Diebold–Mariano): its extra terms are not zero in population, but estimating them cost more than they gave here.",
            p_is(Some(p))
        ),
        Outcome::Better(p) => format!(
            "{head} rejects equal population MSPE, in {cand}'s favour ({}).",
            p_is(Some(p))
        ),
        // A one-sided test: only large positive statistics reject.
        Outcome::Worse(p) | Outcome::NotSignificant(p) => format!(
            "{head} cannot reject equal population MSPE ({}).",
            p_is(Some(p))
        ),
    })
}

/// The snooping test's sentence: `others` candidates searched, `leader`
/// the first-ranked candidate (None when the benchmark ranks first).
pub fn snooping(
    row: &TestRow,
    search: Search,
    ids: &[String],
    bench: &str,
    leader: Option<usize>,
    others: usize,
) -> String {
    let head = format!("Snooping test (Hansen's SPA) over the {others} other candidates:");
    let driver = row.candidate.map(|c| ids[c].as_str());
    let ps = |p: f64| {
        format!(
            "consistent {}; lower {}, upper {}",
            p_is(Some(p)),
            pval(row.p_lower),
            pval(row.p_upper)
        )
    };
    let t = stat(row.statistic);
    match (search, driver) {
        (Search::Absent, _) => String::new(),
        (Search::OneOrigin, _) => format!("{head} not testable with one origin."),
        (Search::NotComputed, _) | (_, None) => format!("{head} not computable."),
        (Search::Rejects { p, .. }, Some(d)) => {
            let whose = match leader {
                Some(l) if row.candidate == Some(l) => "the leader itself".to_string(),
                Some(l) => format!("not the leader {}: the test says nothing about {} on its own", ids[l], ids[l]),
                None => "while the benchmark ranks first".to_string(),
            };
            format!(
                "{head} rejects that none beats {bench} ({}); {d} drives it (studentised gain {t}), {whose}.",
                ps(p)
            )
        }
        (Search::NotRejected(p), Some(d)) => format!(
            "{head} cannot reject that none beats {bench} ({}); the largest studentised gain is {d}'s ({t}).",
            ps(p)
        ),
    }
}

/// The marks of a ranking cell: ▲/▼ Diebold–Mariano significantly
/// better/worse, † Clark–West rejects equal population MSPE (whatever the
/// sample says), ◆ inside the model confidence set. None with one origin.
pub fn marks(dm: Outcome, cw: Outcome, in_set: Option<bool>, n: usize) -> (String, bool) {
    if n < 2 {
        return (String::new(), false);
    }
    let mut m = String::new();
    if dm.is_better() {
        m.push('▲');
    } else if dm.is_worse() {
        m.push('▼');
    }
    if cw.is_better() {
        m.push('†');
    }
    (m, in_set == Some(true))
}

/// "1 candidate", "3 candidates".
pub fn candidates(n: usize) -> String {
    if n == 1 {
        "1 candidate".into()
    } else {
        format!("{n} candidates")
    }
}

#[cfg(test)]
mod tests;
