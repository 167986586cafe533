//! Which targets the report shows in detail and which it charts. With at
//! most `report.targets` targets (default 50) every target gets its
//! detailed sections; with more, the `report.targets` targets with the
//! largest gain over the benchmark do. Of those, the [`CHART_TARGETS`] with
//! the largest gain are charted (all of them when there are that few).
//!
//! The gain of a target is 1 − (the lowest RMSE of a candidate other than
//! the benchmark) / (the benchmark's RMSE), over the whole evaluation
//! sample at the pooled horizon (the only one when one is listed), averaged
//! over the schemes where it is defined; a target without one comes after
//! every target with one, and ties go to the earlier target.
//!
//! A run decides as targets finish, in target order, with a [`Chooser`]:
//! once it holds its quota, a target enters only by beating the worst held,
//! so the bar only rises. A worker that asks [`Chooser::admits`] before the
//! targets ahead of its own are in sees a lower bar than the final one, so
//! it prepares every target that could still be chosen.

use super::CHART_TARGETS;
use crate::results::scores::Row as ScoreRow;
use crate::results::Grid;
use std::collections::BTreeSet;

/// A target's place in the order of choice: lower is chosen first.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Key {
    /// −gain, or +∞ without one.
    loss: f64,
    pub target: usize,
}

impl Eq for Key {}

impl PartialOrd for Key {
    fn partial_cmp(&self, other: &Self) -> Option<std::cmp::Ordering> {
        Some(self.cmp(other))
    }
}

impl Ord for Key {
    fn cmp(&self, other: &Self) -> std::cmp::Ordering {
        self.loss
            .total_cmp(&other.loss)
            .then(self.target.cmp(&other.target))
    }
}

/// The key of target `t` from its score rows (rows of other targets are
/// ignored).
pub fn key(grid: &Grid, metric_names: &[String], scores: &[ScoreRow], t: usize) -> Key {
    let rmse = metric_names.iter().position(|m| m == "rmse");
    let pooled = |r: &&ScoreRow| {
        r.target == t && r.period_set.is_none() && (r.horizon.is_none() || grid.horizons.len() == 1)
    };
    let mut gains = Vec::new();
    for s in 0..grid.schemes.len() {
        let value = |c: usize| {
            scores
                .iter()
                .filter(pooled)
                .find(|r| r.scheme == s && r.candidate == c)
                .and_then(|r| rmse.and_then(|i| r.metrics[i]))
        };
        let best = (0..grid.candidates.len())
            .filter(|&c| c != grid.benchmark)
            .filter_map(value)
            .fold(f64::INFINITY, f64::min);
        match value(grid.benchmark) {
            Some(b) if b > 0.0 && best.is_finite() => gains.push(1.0 - best / b),
            _ => {}
        }
    }
    let loss = match gains.len() {
        0 => f64::INFINITY,
        n => -(gains.iter().sum::<f64>() / n as f64),
    };
    Key { loss, target: t }
}

/// Whether a target is shown in detail, and whether it is charted.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Shown {
    pub detail: bool,
    pub charts: bool,
}

/// The targets chosen so far (see the module docs).
#[derive(Debug, Clone)]
pub struct Chooser {
    quota: usize,
    detail: BTreeSet<Key>,
    charts: BTreeSet<Key>,
}

/// What [`Chooser::admit`] changed.
#[derive(Debug, Default, PartialEq, Eq)]
pub struct Admitted {
    pub shown: Shown,
    /// A target that lost its detail to this one.
    pub dropped: Option<usize>,
    /// A target that lost its charts (it keeps its detail).
    pub uncharted: Option<usize>,
}

impl Chooser {
    /// `quota`: report.targets.
    pub fn new(quota: usize) -> Chooser {
        Chooser {
            quota,
            detail: BTreeSet::new(),
            charts: BTreeSet::new(),
        }
    }

    fn would(set: &BTreeSet<Key>, cap: usize, key: &Key) -> bool {
        set.len() < cap || set.last().is_some_and(|worst| key < worst)
    }

    /// Whether `key` would be shown if admitted now.
    pub fn admits(&self, key: &Key) -> Shown {
        let detail = Chooser::would(&self.detail, self.quota, key);
        Shown {
            detail,
            charts: detail && Chooser::would(&self.charts, CHART_TARGETS.min(self.quota), key),
        }
    }

    /// Admit the next target (in target order).
    pub fn admit(&mut self, key: Key) -> Admitted {
        let shown = self.admits(&key);
        let mut out = Admitted {
            shown,
            ..Admitted::default()
        };
        if shown.detail {
            self.detail.insert(key);
            if self.detail.len() > self.quota {
                out.dropped = self.detail.pop_last().map(|k| k.target);
            }
        }
        if shown.charts {
            self.charts.insert(key);
            if self.charts.len() > CHART_TARGETS.min(self.quota) {
                out.uncharted = self.charts.pop_last().map(|k| k.target);
            }
        }
        // A target that lost its detail cannot keep its charts.
        if let Some(d) = out.dropped {
            self.charts.retain(|k| k.target != d);
        }
        out
    }

    /// The final choice for target `t`.
    pub fn shown(&self, t: usize) -> Shown {
        Shown {
            detail: self.detail.iter().any(|k| k.target == t),
            charts: self.charts.iter().any(|k| k.target == t),
        }
    }

    /// The choice over every target, from their keys in target order.
    pub fn of(quota: usize, keys: impl Iterator<Item = Key>) -> Chooser {
        let mut c = Chooser::new(quota);
        for k in keys {
            c.admit(k);
        }
        c
    }
}

/// The (target, candidate) pairs whose parameters the report shows: in
/// each target, scheme and listed horizon the candidate ranked first other
/// than the benchmark (the first on ties), over the whole sample: the rule
/// a run applies to each target's slice, so that `render` reads no
/// parameters beyond them.
pub fn parameter_leaders(
    grid: &Grid,
    scores: &[ScoreRow],
) -> std::collections::HashSet<(usize, usize)> {
    let mut best: std::collections::HashMap<(usize, usize, usize), (usize, usize)> =
        Default::default();
    for r in scores {
        let (None, Some(h)) = (&r.period_set, r.horizon) else {
            continue;
        };
        if r.candidate == grid.benchmark {
            continue;
        }
        let value = (r.rank, r.candidate);
        best.entry((r.target, r.scheme, h))
            .and_modify(|b| *b = (*b).min(value))
            .or_insert(value);
    }
    best.iter().map(|(&(t, _, _), &(_, c))| (t, c)).collect()
}

/// The choice over every target from the whole scores.csv (in target
/// order).
pub fn choose(grid: &Grid, metric_names: &[String], scores: &[ScoreRow], quota: usize) -> Chooser {
    let mut start = 0;
    let keys = (0..grid.targets.len()).map(|t| {
        let end = start + scores[start..].iter().take_while(|r| r.target == t).count();
        let key = key(grid, metric_names, &scores[start..end], t);
        start = end;
        key
    });
    Chooser::of(quota, keys)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn k(gain: f64, target: usize) -> Key {
        Key {
            loss: -gain,
            target,
        }
    }

    /// Admitting in order keeps exactly the quota with the largest gains
    /// (ties to the earlier target), whatever the order of the gains.
    #[test]
    fn the_largest_gains_are_kept_and_the_bar_only_rises() {
        let gains = [0.1, 0.5, -0.2, 0.5, 0.3, 0.0, 0.9, 0.3, 0.05, 0.7, 0.2, 0.6];
        let mut c = Chooser::new(4);
        let mut bars = Vec::new();
        for (t, g) in gains.iter().enumerate() {
            let before = c.admits(&k(*g, t));
            let a = c.admit(k(*g, t));
            assert_eq!(a.shown, before);
            bars.push(c.detail.last().copied());
        }
        let kept: Vec<usize> = (0..gains.len()).filter(|&t| c.shown(t).detail).collect();
        // 0.9 (6), 0.7 (9), 0.6 (11), 0.5 (1; 3 ties later).
        assert_eq!(kept, [1, 6, 9, 11]);
        // With a quota of 4 every target is charted that is shown.
        assert!(kept.iter().all(|&t| c.shown(t).charts));
        for w in bars.windows(2).skip(3) {
            assert!(w[1] <= w[0], "the worst kept only improves");
        }
        // A target without a gain comes after all others.
        let none = Key {
            loss: f64::INFINITY,
            target: 0,
        };
        assert!(none > k(-5.0, 9));
    }

    #[test]
    fn charts_go_to_the_best_of_the_detailed() {
        let c = Chooser::of(20, (0..30).map(|t| k(t as f64, t)));
        let charted: Vec<usize> = (0..30).filter(|&t| c.shown(t).charts).collect();
        assert_eq!(charted, (22..30).collect::<Vec<_>>());
        let detailed = (0..30).filter(|&t| c.shown(t).detail).count();
        assert_eq!(detailed, 20);
    }
}
