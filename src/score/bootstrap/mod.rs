//! The stationary bootstrap (Politis & Romano 1994) and the tests built on
//! it: its expected block length (Politis & White 2004, with the correction
//! of Patton, Politis & White 2009, as `arch.bootstrap.optimal_block_length`
//! 7.2.0), the model confidence set ([`mcs`]) and the test of superior
//! predictive ability ([`spa`]).
//!
//! Pure functions of their arguments: bootstrap draws come from one
//! `rand_chacha::ChaCha20Rng::seed_from_u64(seed)` stream consumed serially,
//! so results are identical on every platform, thread count and run.

mod mcs;
mod spa;
#[cfg(test)]
mod tests;

pub(crate) use mcs::model_confidence_set;
pub(crate) use spa::superior_predictive_ability;

use super::all_finite;
use crate::numerics::acov::{centred, lag_product_sum};
use rand_chacha::ChaCha20Rng;
use rand_core::{RngCore, SeedableRng};

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
pub(crate) fn optimal_block_length(x: &[f64]) -> f64 {
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
pub(super) fn mean_block_length(series: &[Vec<f64>], n: usize) -> f64 {
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
pub(super) fn stationary_indices(rng: &mut ChaCha20Rng, p: f64, out: &mut [usize]) {
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
pub(super) fn resample_means(cols: &[Vec<f64>], idx: &[usize]) -> Vec<f64> {
    let n = idx.len() as f64;
    cols.iter()
        .map(|c| idx.iter().map(|&t| c[t]).sum::<f64>() / n)
        .collect()
}

/// `resamples` rows of resampled column means from the seeded stream.
pub(super) fn bootstrap_means(
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
pub(super) fn valid_columns(cols: &[Vec<f64>], n: usize, min_n: usize) -> bool {
    n >= min_n && cols.iter().all(|c| c.len() == n && all_finite(c))
}
