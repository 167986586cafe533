//! The model confidence set of Hansen, Lunde & Nason (2011), T_max
//! statistic, as `arch.bootstrap.MCS(method="max")` 7.2.0.

use super::{bootstrap_means, mean_block_length, valid_columns};
use crate::numerics::acov::{centred, mean};
use crate::score::positive_finite;

/// Result of the model confidence set.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct McsResult {
    /// MCS p-value of each candidate, in the order given.
    pub p_values: Vec<f64>,
    /// Whether each candidate is in the set: `p_value > alpha`.
    pub included: Vec<bool>,
    /// Expected block length of the stationary bootstrap that was used.
    pub block_length: f64,
}

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
pub(crate) fn model_confidence_set(
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
pub(super) fn mcs_from_bootstrap(
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
