//! Forecast comparison tests (SPEC §4): pairwise tests of equal accuracy,
//! the model confidence set, the test of superior predictive ability and the
//! rank correlation used to compare rankings.
//!
//! Everything here is a pure function of its arguments: no I/O, no global
//! state, no threads. Bootstrap draws come from one
//! `rand_chacha::ChaCha20Rng::seed_from_u64(seed)` stream consumed serially,
//! so results are identical on every platform, thread count and run.
//!
//! Methods and sources:
//! - autocovariance, Bartlett variance, Diebold–Mariano with the Harvey,
//!   Leybourne & Newbold correction, Clark–West: exactly as fixed in SPEC §4
//!   (Diebold & Mariano 1995; Harvey, Leybourne & Newbold 1997; Clark & West
//!   2007; Newey & West 1987 for the Bartlett weights).
//! - Model confidence set: Hansen, Lunde & Nason (2011), the T_max statistic
//!   with the elimination rule and p-values of the `arch` Python package
//!   (`arch.bootstrap.MCS(method="max")`, version 7.2.0).
//! - Superior predictive ability: Hansen (2005), studentized, with lower,
//!   consistent and upper p-values; the variance estimator and the
//!   re-centring rules are those of `arch.bootstrap.SPA` 7.2.0
//!   (`nested=False`). See [`superior_predictive_ability`] for the one
//!   deliberate difference from arch.
//! - Stationary bootstrap: Politis & Romano (1994), resampling with
//!   geometric block lengths of expected length `b` and wrap-around.
//! - Expected block length: Politis & White (2004) with the correction of
//!   Patton, Politis & White (2009), implemented as in
//!   `arch.bootstrap.optimal_block_length` 7.2.0 (stationary-bootstrap
//!   column), see [`optimal_block_length`].
//! - Spearman rank correlation (Spearman 1904) with average ranks for ties,
//!   as `scipy.stats.spearmanr`.
//!
//! Degenerate inputs (unequal lengths, too few observations, non-finite
//! values, a variance that is not positive) give `None`, which the results
//! tables write as empty cells.

use crate::numerics::acov::{
    autocovariances, bartlett_from, bartlett_variance, centred, lag_product_sum, mean,
    stationary_bootstrap_variance,
};
use crate::numerics::dist::{normal_sf, student_t_two_sided};
use rand_chacha::ChaCha20Rng;
use rand_core::{RngCore, SeedableRng};

/// Statistic and p-value of a pairwise test.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TestResult {
    /// Test statistic; positive favours the candidate.
    pub statistic: f64,
    /// p-value (two-sided for Diebold–Mariano, one-sided for Clark–West).
    pub p_value: f64,
}

/// Result of the model confidence set.
#[derive(Debug, Clone, PartialEq)]
pub struct McsResult {
    /// MCS p-value of each candidate, in the order given.
    pub p_values: Vec<f64>,
    /// Whether each candidate is in the set: `p_value > alpha`.
    pub included: Vec<bool>,
    /// Expected block length of the stationary bootstrap that was used.
    pub block_length: f64,
}

/// Result of the test of superior predictive ability.
#[derive(Debug, Clone, PartialEq)]
pub struct SpaResult {
    /// T^SPA = max(0, max_k √n·d̄_k/ω̂_k), d_k = benchmark loss − model k loss.
    pub statistic: f64,
    /// Consistent p-value (Hansen 2005): the headline number.
    pub p_consistent: f64,
    /// Lower bound p-value (models worse than the benchmark never re-centred).
    pub p_lower: f64,
    /// Upper bound p-value (every model re-centred: White's Reality Check
    /// null, studentized).
    pub p_upper: f64,
    /// Expected block length of the stationary bootstrap that was used.
    pub block_length: f64,
}

// ---------------------------------------------------------------------------
// Small helpers
// ---------------------------------------------------------------------------

fn all_finite(x: &[f64]) -> bool {
    x.iter().all(|v| v.is_finite())
}

/// `x > 0` and finite (false for NaN).
fn positive_finite(x: f64) -> bool {
    x.is_finite() && x > 0.0
}

/// Harvey, Leybourne & Newbold (1997) small-sample factor
/// sqrt((n + 1 − 2h + h(h−1)/n)/n). The radicand equals (n−h)(n−h+1)/n², so
/// it is zero when n = h or n = h − 1; NaN for n = 0.
pub fn hln_factor(n: usize, h: usize) -> f64 {
    let n = n as f64;
    let h = h as f64;
    let r = (n + 1.0 - 2.0 * h + h * (h - 1.0) / n) / n;
    // The exact radicand is never negative for integer n, h; guard rounding.
    if r < 0.0 && r > -1e-12 {
        0.0
    } else {
        r.sqrt()
    }
}

/// Diebold & Mariano (1995) test of equal squared-error accuracy with the
/// Harvey, Leybourne & Newbold (1997) correction, exactly as SPEC §4:
/// d_t = e_versus,t² − e_candidate,t²; variance γ̂_0 + 2 Σ_{k=1}^{h−1} γ̂_k of
/// d, or the Bartlett variance when that is not positive; statistic =
/// d̄ / sqrt(variance/n) · HLN factor; two-sided p-value from Student t with
/// n − 1 degrees of freedom. Positive favours the candidate.
///
/// `None` when the lengths differ, n < 2, h = 0, an input is not finite, or
/// both variances are not positive.
pub fn diebold_mariano(e_candidate: &[f64], e_versus: &[f64], h: usize) -> Option<TestResult> {
    let n = e_candidate.len();
    if n < 2 || e_versus.len() != n || h == 0 || !all_finite(e_candidate) || !all_finite(e_versus) {
        return None;
    }
    let d: Vec<f64> = e_versus
        .iter()
        .zip(e_candidate)
        .map(|(v, c)| v * v - c * c)
        .collect();
    let gamma = autocovariances(&d, h - 1);
    let s: f64 = (1..h).map(|k| gamma[k]).sum();
    let mut var = gamma[0] + 2.0 * s;
    if !positive_finite(var) {
        var = bartlett_from(&gamma, h);
    }
    if !positive_finite(var) {
        return None;
    }
    let statistic = mean(&d) / (var / n as f64).sqrt() * hln_factor(n, h);
    let p_value = student_t_two_sided(statistic.abs(), (n - 1) as f64)?;
    Some(TestResult { statistic, p_value })
}

/// Clark & West (2007) test for nested models, as SPEC §4 (the caller
/// ensures `versus` is nested in the candidate):
/// f_t = e_versus,t² − (e_candidate,t² − (ŷ_versus,t − ŷ_candidate,t)²);
/// statistic = f̄ / sqrt(Bartlett variance of f with h−1 lags / n);
/// p-value 1 − Φ(statistic). Positive favours the candidate.
///
/// `None` when the lengths differ, n < 2, h = 0, an input is not finite, or
/// the variance is not positive.
pub fn clark_west(
    e_candidate: &[f64],
    e_versus: &[f64],
    f_candidate: &[f64],
    f_versus: &[f64],
    h: usize,
) -> Option<TestResult> {
    let n = e_candidate.len();
    if n < 2
        || h == 0
        || e_versus.len() != n
        || f_candidate.len() != n
        || f_versus.len() != n
        || !all_finite(e_candidate)
        || !all_finite(e_versus)
        || !all_finite(f_candidate)
        || !all_finite(f_versus)
    {
        return None;
    }
    let f: Vec<f64> = (0..n)
        .map(|t| {
            let adj = f_versus[t] - f_candidate[t];
            e_versus[t] * e_versus[t] - (e_candidate[t] * e_candidate[t] - adj * adj)
        })
        .collect();
    let var = bartlett_variance(&f, h);
    if !positive_finite(var) {
        return None;
    }
    let statistic = mean(&f) / (var / n as f64).sqrt();
    let p_value = normal_sf(statistic)?;
    Some(TestResult { statistic, p_value })
}

/// Average ranks (1-based), ties sharing the mean of their positions.
fn average_ranks(x: &[f64]) -> Vec<f64> {
    let n = x.len();
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by(|&a, &b| x[a].total_cmp(&x[b]));
    let mut ranks = vec![0.0; n];
    let mut i = 0;
    while i < n {
        let mut j = i;
        while j + 1 < n && x[order[j + 1]] == x[order[i]] {
            j += 1;
        }
        // positions i..=j (0-based) share rank mean(i+1..=j+1)
        let r = (i + j) as f64 / 2.0 + 1.0;
        for &o in &order[i..=j] {
            ranks[o] = r;
        }
        i = j + 1;
    }
    ranks
}

/// Spearman (1904) rank correlation: the Pearson correlation of the average
/// ranks (ties get the mean of the ranks they span), as
/// `scipy.stats.spearmanr`.
///
/// `None` when the lengths differ, n < 2, a value is not finite, or either
/// series is constant.
pub fn spearman(a: &[f64], b: &[f64]) -> Option<f64> {
    let n = a.len();
    if n < 2 || b.len() != n || !all_finite(a) || !all_finite(b) {
        return None;
    }
    let ra = average_ranks(a);
    let rb = average_ranks(b);
    let ma = mean(&ra);
    let mb = mean(&rb);
    let (mut sab, mut saa, mut sbb) = (0.0, 0.0, 0.0);
    for (x, y) in ra.iter().zip(&rb) {
        sab += (x - ma) * (y - mb);
        saa += (x - ma) * (x - ma);
        sbb += (y - mb) * (y - mb);
    }
    if !positive_finite(saa) || !positive_finite(sbb) {
        return None;
    }
    Some((sab / (saa * sbb).sqrt()).clamp(-1.0, 1.0))
}

// ---------------------------------------------------------------------------
// Block length and the stationary bootstrap
// ---------------------------------------------------------------------------

/// Expected block length for the stationary bootstrap by Politis & White
/// (2004) with the correction of Patton, Politis & White (2009), following
/// `arch.bootstrap.optimal_block_length` 7.2.0 step for step (column
/// `stationary`):
///
/// - k_n = max(5, ⌊log10 n⌋), m_max = ⌈√n⌉ + k_n, band c = 2·sqrt(log10(n)/n);
/// - m̂ = the first lag m such that the k_n absolute autocorrelations at lags
///   m..m+k_n−1 are all below c (autocorrelation at lag i as arch computes it:
///   |Σ ε_t ε_{t−i}| / sqrt(Σ_{t>i} ε_t² · Σ_{t<n−i−1} ε_t²));
///   M = min(2·max(m̂, 1), m_max), or m_max when no such lag exists;
/// - flat-top weights λ(s) = 1 for s ≤ ½, 2(1 − s) otherwise;
///   Ĝ = Σ_{k=1}^{M} 2λ(k/M)·k·γ̂_k, σ̂² = γ̂_0 + Σ_{k=1}^{M} 2λ(k/M)·γ̂_k;
/// - b = (2Ĝ² / (2σ̂⁴))^{1/3} · n^{1/3}, capped at ⌈min(3√n, n/3)⌉.
///
/// Returns NaN for n < 2 or when σ̂² = 0 with Ĝ = 0 (a constant series).
pub fn optimal_block_length(x: &[f64]) -> f64 {
    let n = x.len();
    if n < 2 || !all_finite(x) {
        return f64::NAN;
    }
    let nf = n as f64;
    let eps = centred(x);
    let b_max = (3.0 * nf.sqrt()).min(nf / 3.0).ceil();
    let kn = 5usize.max(nf.log10() as usize);
    let m_max = nf.sqrt().ceil() as usize + kn;
    let cv = 2.0 * (nf.log10() / nf).sqrt();
    let mut acv = vec![0.0; m_max + 1];
    let mut abs_acorr = vec![0.0; m_max + 1];
    let mut opt_m: Option<usize> = None;
    let sumsq = |s: &[f64]| s.iter().map(|v| v * v).sum::<f64>();
    for i in 0..=m_max {
        let v1 = if i + 1 < n { sumsq(&eps[i + 1..]) } else { 0.0 };
        let v2 = if i + 1 < n {
            sumsq(&eps[..n - i - 1])
        } else {
            0.0
        };
        let cross = lag_product_sum(&eps, i);
        acv[i] = cross / nf;
        // NaN or ∞ when a sum is zero: such a lag never counts as inside the band.
        abs_acorr[i] = cross.abs() / (v1 * v2).sqrt();
        if i >= kn && opt_m.is_none() && abs_acorr[i - kn..i].iter().all(|&a| a < cv) {
            opt_m = Some(i - kn);
        }
    }
    let m = match opt_m {
        Some(o) => 2 * o.max(1),
        None => m_max,
    }
    .min(m_max);
    let mut g = 0.0;
    let mut lr_acv = acv[0];
    for (k, &a) in acv.iter().enumerate().take(m + 1).skip(1) {
        let s = k as f64 / m as f64;
        let lam = if s <= 0.5 { 1.0 } else { 2.0 * (1.0 - s) };
        g += 2.0 * lam * k as f64 * a;
        lr_acv += 2.0 * lam * a;
    }
    let d_sb = 2.0 * lr_acv * lr_acv;
    let b_sb = ((2.0 * g * g) / d_sb).powf(1.0 / 3.0) * nf.powf(1.0 / 3.0);
    if b_sb.is_nan() {
        f64::NAN
    } else {
        b_sb.min(b_max)
    }
}

/// Expected block length used when none is given: the mean of
/// [`optimal_block_length`] over the given series, skipping constant series
/// and non-finite results, clamped to [1, n]; 1 when nothing is left.
fn mean_block_length(series: &[Vec<f64>], n: usize) -> f64 {
    let mut total = 0.0;
    let mut count = 0usize;
    for s in series {
        if s.is_empty() || s.iter().all(|v| *v == s[0]) {
            continue;
        }
        let b = optimal_block_length(s);
        if b.is_finite() {
            total += b;
            count += 1;
        }
    }
    let b = if count > 0 { total / count as f64 } else { 1.0 };
    b.clamp(1.0, (n as f64).max(1.0))
}

/// Uniform draw in [0, 1) with 53 random bits.
fn uniform01(rng: &mut ChaCha20Rng) -> f64 {
    (rng.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
}

/// Uniform integer in [0, n), n ≥ 1, without modulo bias (Lemire 2019).
fn below(rng: &mut ChaCha20Rng, n: usize) -> usize {
    let n = n as u64;
    let threshold = n.wrapping_neg() % n;
    loop {
        let m = (rng.next_u64() as u128) * (n as u128);
        if (m as u64) >= threshold {
            return (m >> 64) as usize;
        }
    }
}

/// One stationary-bootstrap (Politis & Romano 1994) index vector of length
/// `out.len()`: the first index uniform; then with probability `p` = 1/b a
/// new uniform start, else the next index with wrap-around.
fn stationary_indices(rng: &mut ChaCha20Rng, p: f64, out: &mut [usize]) {
    let n = out.len();
    if n == 0 {
        return;
    }
    out[0] = below(rng, n);
    for t in 1..n {
        out[t] = if uniform01(rng) < p {
            below(rng, n)
        } else {
            let next = out[t - 1] + 1;
            if next == n {
                0
            } else {
                next
            }
        };
    }
}

/// Means of each column over one resample: `cols[k][idx[t]]` averaged over t.
fn resample_means(cols: &[Vec<f64>], idx: &[usize]) -> Vec<f64> {
    let n = idx.len() as f64;
    cols.iter()
        .map(|c| idx.iter().map(|&t| c[t]).sum::<f64>() / n)
        .collect()
}

/// `resamples` rows of resampled column means from the seeded stream.
fn bootstrap_means(
    cols: &[Vec<f64>],
    block_length: f64,
    resamples: usize,
    seed: u64,
) -> Vec<Vec<f64>> {
    let n = cols.first().map_or(0, Vec::len);
    let mut rng = ChaCha20Rng::seed_from_u64(seed);
    let p = 1.0 / block_length;
    let mut idx = vec![0usize; n];
    (0..resamples)
        .map(|_| {
            stationary_indices(&mut rng, p, &mut idx);
            resample_means(cols, &idx)
        })
        .collect()
}

/// Checks a set of equal-length, finite columns with n ≥ `min_n` rows.
fn valid_columns(cols: &[Vec<f64>], n: usize, min_n: usize) -> bool {
    n >= min_n && cols.iter().all(|c| c.len() == n && all_finite(c))
}

// ---------------------------------------------------------------------------
// Model confidence set
// ---------------------------------------------------------------------------

/// Model confidence set of Hansen, Lunde & Nason (2011) with the T_max
/// statistic, matching `arch.bootstrap.MCS(losses, size=alpha,
/// method="max", bootstrap="stationary", block_size=b)` of arch 7.2.0:
///
/// 1. Loss "errors" L_{i,t} − L̄_i are resampled with one stationary
///    bootstrap (Politis & Romano 1994) shared by all steps; each resample's
///    column means, minus their cross-model mean, are stored.
/// 2. While more than one model remains: the t-statistics
///    t_i = (L̄_i − mean_{j∈M} L̄_j)/σ̂_i, σ̂_i² being the mean over resamples of
///    the squared resampled deviation re-centred on the surviving set;
///    T_max = max_i t_i; p-value = share of resamples with max_i t*_i > T_max;
///    every model with t_i = T_max is eliminated with that p-value.
/// 3. The last model gets p-value 1; p-values are made non-decreasing along
///    the elimination order (the MCS p-value is the running maximum).
///    A model is in the set when its p-value exceeds `alpha`.
///
/// Block length: the expected block length is the mean of the Politis &
/// White (2004; Patton, Politis & White 2009) stationary block lengths
/// ([`optimal_block_length`]) of the series L_{i,t} − mean_j L_{j,t}, one per
/// model (the deviations from the cross-model mean loss, whose resampled
/// means T_max uses); constant series are skipped; clamped to [1, n]. arch
/// itself defaults to ⌊√n⌋ and takes no data-driven length; the reference
/// tests pass this same length to arch.
///
/// Draws: `ChaCha20Rng::seed_from_u64(seed)`, consumed serially.
///
/// `None` when there are fewer than two candidates, n < 2, lengths differ, a
/// loss is not finite, `resamples` is 0, `alpha` is not in (0, 1), or a
/// bootstrap standard deviation is not positive at some step (identical or
/// constant-difference losses: arch warns that the MCS is invalid then).
pub fn model_confidence_set(
    losses: &[Vec<f64>],
    alpha: f64,
    resamples: usize,
    seed: u64,
) -> Option<McsResult> {
    let n = losses.first().map_or(0, Vec::len);
    if losses.len() < 2 || resamples == 0 || !(alpha > 0.0 && alpha < 1.0) {
        return None;
    }
    if !valid_columns(losses, n, 2) {
        return None;
    }
    let k = losses.len();
    let cross: Vec<f64> = (0..n)
        .map(|t| losses.iter().map(|c| c[t]).sum::<f64>() / k as f64)
        .collect();
    let deviations: Vec<Vec<f64>> = losses
        .iter()
        .map(|c| c.iter().zip(&cross).map(|(l, m)| l - m).collect())
        .collect();
    let block_length = mean_block_length(&deviations, n);
    let errors: Vec<Vec<f64>> = losses.iter().map(|c| centred(c)).collect();
    let boot = bootstrap_means(&errors, block_length, resamples, seed);
    let (p_values, included) = mcs_from_bootstrap(losses, alpha, boot)?;
    Some(McsResult {
        p_values,
        included,
        block_length,
    })
}

/// MCS steps 1 (second half) to 3 given the resampled means of the loss
/// errors (one row per resample, one column per model).
fn mcs_from_bootstrap(
    losses: &[Vec<f64>],
    alpha: f64,
    mut boot: Vec<Vec<f64>>,
) -> Option<(Vec<f64>, Vec<bool>)> {
    let k = losses.len();
    let reps = boot.len();
    if reps == 0 {
        return None;
    }
    for row in boot.iter_mut() {
        let m = mean(row);
        row.iter_mut().for_each(|v| *v -= m);
    }
    let means: Vec<f64> = losses.iter().map(|c| mean(c)).collect();
    let mut included = vec![true; k];
    let mut eliminated: Vec<(usize, f64)> = Vec::with_capacity(k);
    let mut z = vec![0.0; k];
    while included.iter().filter(|&&b| b).count() > 1 {
        let idx: Vec<usize> = (0..k).filter(|&i| included[i]).collect();
        let m = idx.len();
        // σ̂_i over the surviving set
        let mut var = vec![0.0; m];
        for row in &boot {
            let g = idx.iter().map(|&i| row[i]).sum::<f64>() / m as f64;
            for (v, &i) in var.iter_mut().zip(&idx) {
                let e = row[i] - g;
                *v += e * e;
            }
        }
        let sd: Vec<f64> = var.iter().map(|v| (v / reps as f64).sqrt()).collect();
        if sd.iter().any(|s| !positive_finite(*s)) {
            return None;
        }
        let g = idx.iter().map(|&i| means[i]).sum::<f64>() / m as f64;
        let t: Vec<f64> = idx
            .iter()
            .zip(&sd)
            .map(|(&i, s)| (means[i] - g) / s)
            .collect();
        let t_max = t.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let mut exceed = 0usize;
        for row in &boot {
            let gb = idx.iter().map(|&i| row[i]).sum::<f64>() / m as f64;
            for (zj, (&i, s)) in z.iter_mut().zip(idx.iter().zip(&sd)) {
                *zj = (row[i] - gb) / s;
            }
            let sim = z[..m].iter().copied().fold(f64::NEG_INFINITY, f64::max);
            if t_max < sim {
                exceed += 1;
            }
        }
        let p = exceed as f64 / reps as f64;
        for (j, &i) in idx.iter().enumerate() {
            if t[j] == t_max {
                eliminated.push((i, p));
                included[i] = false;
            }
        }
    }
    for (i, inc) in included.iter().enumerate() {
        if *inc {
            eliminated.push((i, 1.0));
        }
    }
    let mut p_values = vec![1.0; k];
    let mut running = f64::NEG_INFINITY;
    for (i, p) in eliminated {
        running = running.max(p);
        p_values[i] = running;
    }
    let inc = p_values.iter().map(|p| *p > alpha).collect();
    Some((p_values, inc))
}

// ---------------------------------------------------------------------------
// Superior predictive ability
// ---------------------------------------------------------------------------

/// Test of superior predictive ability of Hansen (2005): H0 is that no
/// model has a lower expected loss than the benchmark. d_{k,t} = benchmark
/// loss − model k loss (positive favours the model);
///
/// - ω̂_k² = γ̂_0 + 2 Σ_{i=1}^{n−1} κ(n, i) γ̂_i with the stationary-bootstrap
///   kernel κ(n, i) = (1 − i/n)(1 − q)^i + (i/n)(1 − q)^{n−i}, q = 1/b
///   (Politis & Romano 1994; Hansen 2005; as `arch.bootstrap.SPA`, nested=False);
/// - T^SPA = max(0, max_k √n·d̄_k/ω̂_k);
/// - each resample gives T* = max(0, max_k √n·(d̄*_k − μ̂_k)/ω̂_k) with μ̂_k =
///   d̄_k (upper), max(d̄_k, 0) (lower), or d̄_k when d̄_k ≥
///   −sqrt(ω̂_k²/n · 2 ln ln n) and 0 otherwise (consistent);
/// - p-value = share of resamples with T* > T^SPA.
///
/// Difference from arch 7.2.0: arch's `SPA(studentize=True)` computes ω̂_k
/// but does not divide by it (nor clamp at 0): its statistic is max_k d̄_k.
/// That variant is [`superior_predictive_ability_unstudentized`]; this
/// function follows the paper.
///
/// Block length: `block_length`, else the mean of the Politis & White
/// stationary block lengths ([`optimal_block_length`]) of the d_k series
/// (constant ones skipped), clamped to [1, n]. arch defaults to ⌊√n⌋.
///
/// Models whose losses equal the benchmark's at every origin carry no
/// information and are left out; `None` when no model is left, n < 3,
/// lengths differ, a loss is not finite, `resamples` is 0, the block length
/// given is not ≥ 1, or some other ω̂_k² is not positive.
pub fn superior_predictive_ability(
    benchmark_losses: &[f64],
    model_losses: &[Vec<f64>],
    resamples: usize,
    seed: u64,
    block_length: Option<f64>,
) -> Option<SpaResult> {
    spa(
        benchmark_losses,
        model_losses,
        resamples,
        seed,
        block_length,
        true,
    )
}

/// The variant computed by `arch.bootstrap.SPA` 7.2.0 (whose `studentize`
/// flag does not change the statistic): T = max_k d̄_k, T* = max_k (d̄*_k −
/// μ̂_k), same re-centring rules, variances, block length and draws as
/// [`superior_predictive_ability`]. `statistic` is max_k d̄_k in loss units.
pub fn superior_predictive_ability_unstudentized(
    benchmark_losses: &[f64],
    model_losses: &[Vec<f64>],
    resamples: usize,
    seed: u64,
    block_length: Option<f64>,
) -> Option<SpaResult> {
    spa(
        benchmark_losses,
        model_losses,
        resamples,
        seed,
        block_length,
        false,
    )
}

/// Loss differentials d_k (benchmark − model) with all-zero columns removed.
fn spa_differentials(benchmark_losses: &[f64], model_losses: &[Vec<f64>]) -> Option<Vec<Vec<f64>>> {
    let n = benchmark_losses.len();
    if n < 3 || !all_finite(benchmark_losses) || !valid_columns(model_losses, n, 3) {
        return None;
    }
    let d: Vec<Vec<f64>> = model_losses
        .iter()
        .map(|m| {
            benchmark_losses
                .iter()
                .zip(m)
                .map(|(b, l)| b - l)
                .collect::<Vec<f64>>()
        })
        .filter(|c: &Vec<f64>| c.iter().any(|v| *v != 0.0))
        .collect();
    if d.is_empty() {
        None
    } else {
        Some(d)
    }
}

fn spa(
    benchmark_losses: &[f64],
    model_losses: &[Vec<f64>],
    resamples: usize,
    seed: u64,
    block_length: Option<f64>,
    studentize: bool,
) -> Option<SpaResult> {
    if resamples == 0 {
        return None;
    }
    let d = spa_differentials(benchmark_losses, model_losses)?;
    let n = benchmark_losses.len();
    let block_length = match block_length {
        Some(b) if b.is_finite() && b >= 1.0 => b,
        Some(_) => return None,
        None => mean_block_length(&d, n),
    };
    let boot = bootstrap_means(&d, block_length, resamples, seed);
    spa_from_bootstrap(&d, block_length, &boot, studentize)
}

/// ω̂_k² of each column with the stationary-bootstrap kernel, q = 1/b.
fn spa_variances(d: &[Vec<f64>], block_length: f64) -> Vec<f64> {
    d.iter()
        .map(|c| stationary_bootstrap_variance(c, block_length))
        .collect()
}

/// SPA statistic and p-values given the resampled means of d (one row per
/// resample, one column per model).
fn spa_from_bootstrap(
    d: &[Vec<f64>],
    block_length: f64,
    boot: &[Vec<f64>],
    studentize: bool,
) -> Option<SpaResult> {
    let k = d.len();
    let n = d.first().map_or(0, Vec::len);
    if k == 0 || n < 3 || boot.is_empty() {
        return None;
    }
    let nf = n as f64;
    let omega2 = spa_variances(d, block_length);
    if omega2.iter().any(|w| !positive_finite(*w)) {
        return None;
    }
    let dbar: Vec<f64> = d.iter().map(|c| mean(c)).collect();
    let loglog = nf.ln().ln();
    // scale_k turns a mean difference into the statistic's units.
    let scale: Vec<f64> = omega2
        .iter()
        .map(|w| {
            if studentize {
                nf.sqrt() / w.sqrt()
            } else {
                1.0
            }
        })
        .collect();
    let floor = if studentize { 0.0 } else { f64::NEG_INFINITY };
    let statistic = dbar
        .iter()
        .zip(&scale)
        .map(|(m, s)| m * s)
        .fold(floor, f64::max);
    let mu_lower: Vec<f64> = dbar.iter().map(|m| m.max(0.0)).collect();
    let mu_consistent: Vec<f64> = dbar
        .iter()
        .zip(&omega2)
        .map(|(m, w)| {
            let threshold = -(w / nf * 2.0 * loglog).sqrt();
            if *m >= threshold {
                *m
            } else {
                0.0
            }
        })
        .collect();
    let centres = [&mu_lower, &mu_consistent, &dbar];
    let mut exceed = [0usize; 3];
    for row in boot {
        for (c, mu) in centres.iter().enumerate() {
            let t = row
                .iter()
                .zip(mu.iter())
                .zip(&scale)
                .map(|((x, m), s)| (x - m) * s)
                .fold(floor, f64::max);
            if t > statistic {
                exceed[c] += 1;
            }
        }
    }
    let r = boot.len() as f64;
    Some(SpaResult {
        statistic,
        p_lower: exceed[0] as f64 / r,
        p_consistent: exceed[1] as f64 / r,
        p_upper: exceed[2] as f64 / r,
        block_length,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::Value;

    fn load(name: &str) -> Value {
        let path = format!(
            "{}/tests/reference/compare/{}",
            env!("CARGO_MANIFEST_DIR"),
            name
        );
        let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"));
        serde_json::from_str(&text).expect("reference JSON parses")
    }

    fn vec_f64(v: &Value) -> Vec<f64> {
        v.as_array()
            .expect("array")
            .iter()
            .map(|x| x.as_f64().expect("number"))
            .collect()
    }

    fn vecs_f64(v: &Value) -> Vec<Vec<f64>> {
        v.as_array().expect("array").iter().map(vec_f64).collect()
    }

    fn f(v: &Value) -> f64 {
        v.as_f64().expect("number")
    }

    fn assert_rel(got: f64, want: f64, tol: f64, what: &str) {
        let scale = want.abs().max(1e-300);
        let ok = got == want || ((got - want).abs() / scale) <= tol || (got - want).abs() <= 1e-300;
        assert!(ok, "{what}: got {got:e}, want {want:e} (rel tol {tol:e})");
    }

    /// Reference: pairwise.json, written by generate_compare.py from a
    /// from-formula numpy implementation of SPEC §4 (numpy 2.1.3) with
    /// p-values from scipy 1.14.1 `scipy.stats.t.sf` and `scipy.stats.norm.sf`;
    /// inputs are forecast errors of naive, mean, drift and direct AR(p)
    /// models on statsmodels 0.14.4's `macrodata` (infl, realgdp, tbilrate)
    /// and `nile` data sets. Deterministic: 1e-10 relative.
    #[test]
    fn pairwise_against_reference() {
        let r = load("pairwise.json");
        let cases = r["cases"].as_array().expect("cases");
        let mut fallback = 0;
        for c in cases {
            let name = c["name"].as_str().expect("name");
            let h = c["h"].as_u64().expect("h") as usize;
            let ec = vec_f64(&c["e_candidate"]);
            let ev = vec_f64(&c["e_versus"]);
            let fc = vec_f64(&c["f_candidate"]);
            let fv = vec_f64(&c["f_versus"]);
            let d: Vec<f64> = ev.iter().zip(&ec).map(|(v, c)| v * v - c * c).collect();
            let want_gamma = vec_f64(&c["loss_diff_autocov"]);
            let gamma = autocovariances(&d, want_gamma.len().saturating_sub(1));
            for (k, want) in want_gamma.iter().enumerate() {
                assert_rel(gamma[k], *want, 1e-10, &format!("{name} autocov {k}"));
            }
            assert_rel(
                bartlett_variance(&d, h),
                f(&c["loss_diff_bartlett"]),
                1e-10,
                &format!("{name} bartlett"),
            );
            assert_rel(
                hln_factor(d.len(), h),
                f(&c["hln_factor"]),
                1e-10,
                &format!("{name} hln"),
            );
            let dm = diebold_mariano(&ec, &ev, h);
            match (&c["diebold_mariano"], dm) {
                (Value::Null, None) => {}
                (want, Some(got)) if !want.is_null() => {
                    if want["bartlett"].as_bool() == Some(true) {
                        fallback += 1;
                    }
                    assert_rel(
                        got.statistic,
                        f(&want["statistic"]),
                        1e-10,
                        &format!("{name} DM stat"),
                    );
                    assert_rel(
                        got.p_value,
                        f(&want["p_value"]),
                        1e-10,
                        &format!("{name} DM p"),
                    );
                }
                (want, got) => panic!("{name} DM: want {want}, got {got:?}"),
            }
            if !c["clark_west"].is_null() {
                let got = clark_west(&ec, &ev, &fc, &fv, h).expect("CW defined");
                assert_rel(
                    got.statistic,
                    f(&c["clark_west"]["statistic"]),
                    1e-10,
                    &format!("{name} CW stat"),
                );
                assert_rel(
                    got.p_value,
                    f(&c["clark_west"]["p_value"]),
                    1e-10,
                    &format!("{name} CW p"),
                );
            }
        }
        // The reference includes real-data cases that take the Bartlett fallback.
        assert!(fallback >= 1);
    }

    /// SPEC §4: a test with n < 2 or a non-positive variance is empty.
    #[test]
    fn degenerate_pairwise_inputs_are_empty() {
        let e = [1.0, -2.0, 0.5, 3.0];
        assert!(diebold_mariano(&e, &e, 1).is_none()); // d ≡ 0
        assert!(diebold_mariano(&e[..1], &e[..1], 1).is_none());
        assert!(diebold_mariano(&e, &e[..3], 1).is_none());
        assert!(diebold_mariano(&e, &e, 0).is_none());
        assert!(diebold_mariano(&[f64::NAN, 1.0], &[1.0, 2.0], 1).is_none());
        assert!(clark_west(&e, &e, &e, &e, 1).is_none()); // f ≡ 0
        assert!(clark_west(&e[..1], &e[..1], &e[..1], &e[..1], 1).is_none());
        assert!(autocovariances(&[], 0)[0].is_nan());
        assert_eq!(autocovariances(&e, 4)[4], 0.0);
        assert_eq!(hln_factor(4, 4), 0.0);
        assert_eq!(hln_factor(3, 4), 0.0);
    }

    /// Reference: spearman.json, scipy 1.14.1 `scipy.stats.spearmanr`
    /// (average ranks for ties) on statsmodels `macrodata` / `nile` columns,
    /// several with heavy ties. Deterministic: 1e-10 relative.
    #[test]
    fn spearman_against_scipy() {
        let r = load("spearman.json");
        for c in r["cases"].as_array().expect("cases") {
            let name = c["name"].as_str().expect("name");
            let got = spearman(&vec_f64(&c["a"]), &vec_f64(&c["b"]));
            match (&c["rho"], got) {
                (Value::Null, None) => {}
                (want, Some(g)) if !want.is_null() => assert_rel(g, f(want), 1e-10, name),
                (want, g) => panic!("{name}: want {want}, got {g:?}"),
            }
        }
        assert!(spearman(&[1.0, 1.0, 1.0], &[1.0, 2.0, 3.0]).is_none());
        assert!(spearman(&[1.0], &[1.0]).is_none());
        assert_eq!(
            spearman(&[1.0, 2.0, 2.0, 3.0], &[1.0, 2.0, 2.0, 3.0]),
            Some(1.0)
        );
    }

    /// Reference: block_length.json, arch 7.2.0
    /// `arch.bootstrap.optimal_block_length(x)["stationary"]` (Politis &
    /// White 2004; Patton, Politis & White 2009) on statsmodels `macrodata`
    /// and `nile` series and loss differentials. Deterministic: 1e-10 relative.
    #[test]
    fn block_length_against_arch() {
        let r = load("block_length.json");
        for c in r["cases"].as_array().expect("cases") {
            let name = c["name"].as_str().expect("name");
            assert_rel(
                optimal_block_length(&vec_f64(&c["x"])),
                f(&c["stationary"]),
                1e-10,
                name,
            );
        }
    }

    fn mcs_cols(c: &Value) -> Vec<Vec<f64>> {
        vecs_f64(&c["losses"])
    }

    fn indices(v: &Value) -> Vec<Vec<usize>> {
        v.as_array()
            .expect("indices")
            .iter()
            .map(|r| {
                r.as_array()
                    .expect("row")
                    .iter()
                    .map(|i| i.as_u64().expect("index") as usize)
                    .collect()
            })
            .collect()
    }

    /// Exact replay: arch 7.2.0 `MCS(method="max", bootstrap="stationary")`
    /// run with 200 resamples; its own bootstrap index vectors
    /// (`_bootstrap_indices`) are shipped and fed to our elimination code,
    /// which must give the same p-values (multiples of 1/200: 1e-12 absolute)
    /// and membership. Also checks our block-length rule against arch's
    /// `optimal_block_length` on the same series (1e-10 relative).
    #[test]
    fn mcs_replays_arch_indices_exactly() {
        let r = load("mcs.json");
        for c in r["cases"].as_array().expect("cases") {
            let name = c["name"].as_str().expect("name");
            let losses = mcs_cols(c);
            let alpha = f(&c["alpha"]);
            let errors: Vec<Vec<f64>> = losses
                .iter()
                .map(|l| {
                    let m = mean(l);
                    l.iter().map(|v| v - m).collect()
                })
                .collect();
            let boot: Vec<Vec<f64>> = indices(&c["replay"]["indices"])
                .iter()
                .map(|idx| resample_means(&errors, idx))
                .collect();
            let (p, inc) = mcs_from_bootstrap(&losses, alpha, boot).expect("mcs");
            let want = vec_f64(&c["replay"]["p_values"]);
            for (g, w) in p.iter().zip(&want) {
                assert!(
                    (g - w).abs() <= 1e-12,
                    "{name}: replay p {p:?} vs arch {want:?}"
                );
            }
            let want_inc: Vec<bool> = c["replay"]["included"]
                .as_array()
                .expect("included")
                .iter()
                .map(|b| b.as_bool().expect("bool"))
                .collect();
            assert_eq!(inc, want_inc, "{name}");
            // block length: our rule, computed with arch's optimal_block_length
            let full = model_confidence_set(&losses, alpha, 1, 0).expect("mcs");
            assert_rel(full.block_length, f(&c["block_length"]), 1e-10, name);
        }
    }

    /// Monte-Carlo comparison with arch 7.2.0 `MCS(method="max",
    /// bootstrap="stationary")` at 100,000 resamples (numpy PCG64 draws)
    /// against ours at 20,000 (ChaCha20 draws), same block length. The
    /// standard error of the difference of two bootstrap proportions is at
    /// most sqrt(0.25/20000 + 0.25/100000) ≈ 0.0039, so 0.02 absolute is
    /// more than 5 standard errors (a false failure has probability < 1e-6
    /// per p-value). Membership must agree wherever arch's
    /// p-value is more than 0.02 from alpha.
    #[test]
    fn mcs_matches_arch_within_monte_carlo_error() {
        let r = load("mcs.json");
        for c in r["cases"].as_array().expect("cases") {
            let name = c["name"].as_str().expect("name");
            let alpha = f(&c["alpha"]);
            let got = model_confidence_set(&mcs_cols(c), alpha, 20_000, 20261201).expect("mcs");
            let want = vec_f64(&c["p_values"]);
            for (i, (g, w)) in got.p_values.iter().zip(&want).enumerate() {
                assert!((g - w).abs() <= 0.02, "{name} model {i}: {g} vs arch {w}");
                if (w - alpha).abs() > 0.02 {
                    assert_eq!(got.included[i], *w > alpha, "{name} model {i}");
                }
            }
        }
    }

    #[test]
    fn mcs_is_deterministic_and_rejects_degenerate_input() {
        let r = load("mcs.json");
        let c = &r["cases"][0];
        let a = model_confidence_set(&mcs_cols(c), 0.1, 500, 7);
        let b = model_confidence_set(&mcs_cols(c), 0.1, 500, 7);
        assert_eq!(a, b);
        let l = mcs_cols(c);
        assert!(model_confidence_set(&l[..1], 0.1, 100, 1).is_none());
        assert!(model_confidence_set(&l, 0.1, 0, 1).is_none());
        assert!(model_confidence_set(&l, 1.5, 100, 1).is_none());
        assert!(model_confidence_set(&[l[0].clone(), l[0].clone()], 0.1, 100, 1).is_none());
        assert!(model_confidence_set(&[l[0].clone(), l[1][..5].to_vec()], 0.1, 100, 1).is_none());
    }

    fn spa_inputs(c: &Value) -> (Vec<f64>, Vec<Vec<f64>>, f64) {
        (
            vec_f64(&c["benchmark_losses"]),
            vecs_f64(&c["model_losses"]),
            f(&c["block_length"]),
        )
    }

    /// Deterministic parts of the SPA against spa.json: ω̂_k² and the
    /// studentized T^SPA from a from-formula numpy implementation of Hansen
    /// (2005) (its ω̂_k² equal arch 7.2.0's `SPA._loss_diff_var`, asserted in
    /// the generator); arch's statistic max_k d̄_k; and our default block
    /// length rule (Politis & White via arch's `optimal_block_length`).
    /// 1e-10 relative.
    #[test]
    fn spa_statistics_against_reference() {
        let r = load("spa.json");
        for c in r["cases"].as_array().expect("cases") {
            let name = c["name"].as_str().expect("name");
            let (bench, models, block) = spa_inputs(c);
            let d = spa_differentials(&bench, &models).expect("d");
            assert_eq!(d.len(), models.len());
            for (g, w) in spa_variances(&d, block).iter().zip(vec_f64(&c["omega2"])) {
                assert_rel(*g, w, 1e-10, &format!("{name} omega2"));
            }
            let s = superior_predictive_ability(&bench, &models, 1, 0, None).expect("spa");
            assert_rel(s.block_length, block, 1e-10, &format!("{name} block"));
            assert_rel(
                s.statistic,
                f(&c["studentized"]["statistic"]),
                1e-10,
                &format!("{name} T"),
            );
            let u = superior_predictive_ability_unstudentized(&bench, &models, 1, 0, Some(block))
                .expect("spa");
            assert_rel(
                u.statistic,
                f(&c["arch"]["statistic"]),
                1e-10,
                &format!("{name} arch T"),
            );
        }
    }

    /// Exact replay with the stationary-bootstrap index vectors that arch
    /// 7.2.0's `StationaryBootstrap(block, ..., seed)` draws (200 resamples):
    /// the unstudentized variant must equal `arch.bootstrap.SPA(...).pvalues`
    /// and the studentized one the from-formula Hansen (2005) numpy code,
    /// exactly (1e-12 absolute on multiples of 1/200).
    #[test]
    fn spa_replays_arch_indices_exactly() {
        let r = load("spa.json");
        for c in r["cases"].as_array().expect("cases") {
            let name = c["name"].as_str().expect("name");
            let (bench, models, block) = spa_inputs(c);
            let d = spa_differentials(&bench, &models).expect("d");
            let boot: Vec<Vec<f64>> = indices(&c["replay"]["indices"])
                .iter()
                .map(|idx| resample_means(&d, idx))
                .collect();
            for (studentize, key) in [(true, "studentized"), (false, "arch")] {
                let got = spa_from_bootstrap(&d, block, &boot, studentize).expect("spa");
                let want = &c["replay"][key];
                for (g, w) in [
                    (got.p_lower, &want["lower"]),
                    (got.p_consistent, &want["consistent"]),
                    (got.p_upper, &want["upper"]),
                ] {
                    assert!((g - f(w)).abs() <= 1e-12, "{name} {key}: {got:?} vs {want}");
                }
            }
        }
    }

    /// Monte-Carlo comparison at 20,000 of our resamples against 100,000 of
    /// the reference (arch 7.2.0 `SPA` for the unstudentized variant; the
    /// from-formula Hansen (2005) code on arch's `StationaryBootstrap` draws
    /// for the studentized one), same block length: 0.02 absolute (> 5
    /// standard errors of the difference, see the MCS test).
    #[test]
    fn spa_matches_reference_within_monte_carlo_error() {
        let r = load("spa.json");
        for c in r["cases"].as_array().expect("cases") {
            let name = c["name"].as_str().expect("name");
            let (bench, models, block) = spa_inputs(c);
            let s = superior_predictive_ability(&bench, &models, 20_000, 20261201, Some(block))
                .expect("spa");
            let u = superior_predictive_ability_unstudentized(
                &bench,
                &models,
                20_000,
                20261201,
                Some(block),
            )
            .expect("spa");
            for (got, key) in [(s, "studentized"), (u, "arch")] {
                let want = &c[key];
                for (g, w) in [
                    (got.p_lower, &want["lower"]),
                    (got.p_consistent, &want["consistent"]),
                    (got.p_upper, &want["upper"]),
                ] {
                    assert!((g - f(w)).abs() <= 0.02, "{name} {key}: {got:?} vs {want}");
                }
            }
        }
    }

    #[test]
    fn spa_degenerate_inputs() {
        let b = [1.0, 2.0, 3.0, 4.0];
        assert!(superior_predictive_ability(&b, &[b.to_vec()], 10, 1, None).is_none());
        assert!(superior_predictive_ability(&b[..2], &[vec![0.0, 1.0]], 10, 1, None).is_none());
        assert!(superior_predictive_ability(&b, &[vec![0.0; 3]], 10, 1, None).is_none());
        assert!(superior_predictive_ability(&b, &[vec![0.0, 1.0, 0.5, 2.0]], 0, 1, None).is_none());
        assert!(
            superior_predictive_ability(&b, &[vec![0.0, 1.0, 0.5, 2.0]], 10, 1, Some(0.5))
                .is_none()
        );
    }

    /// Short samples must not panic (the SPEC lets n be as small as 2).
    #[test]
    fn short_samples_do_not_panic() {
        let r = load("block_length.json");
        let x = vec_f64(&r["cases"][3]["x"]); // nile volume
        for n in 0..40 {
            let b = optimal_block_length(&x[..n]);
            assert!(b.is_nan() || b > 0.0, "n = {n}: {b}");
            let cols = vec![x[..n].to_vec(), x[1..=n].to_vec(), x[2..n + 2].to_vec()];
            let _ = model_confidence_set(&cols, 0.1, 50, 3);
            let _ = superior_predictive_ability(&cols[0], &cols[1..], 50, 3, None);
            let _ = superior_predictive_ability(&cols[0], &cols[1..], 50, 3, Some(1e9));
            let _ = diebold_mariano(&cols[0], &cols[1], 5);
            let _ = clark_west(&cols[0], &cols[1], &cols[2], &cols[1], 5);
            let _ = spearman(&cols[0], &cols[1]);
        }
    }

    #[test]
    fn stationary_indices_are_in_range_and_reproducible() {
        let mut a = ChaCha20Rng::seed_from_u64(42);
        let mut b = ChaCha20Rng::seed_from_u64(42);
        let mut x = vec![0usize; 37];
        let mut y = vec![0usize; 37];
        for _ in 0..100 {
            stationary_indices(&mut a, 0.2, &mut x);
            stationary_indices(&mut b, 0.2, &mut y);
            assert_eq!(x, y);
            assert!(x.iter().all(|&i| i < 37));
        }
        // p = 1/b with b = 1: every index a fresh draw; huge b: one block.
        let mut rng = ChaCha20Rng::seed_from_u64(1);
        stationary_indices(&mut rng, 1e-300, &mut x);
        assert!(x.windows(2).all(|w| w[1] == (w[0] + 1) % 37));
    }
}
