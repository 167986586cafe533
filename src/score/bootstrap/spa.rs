//! The test of superior predictive ability of Hansen (2005), studentized,
//! with lower, consistent and upper p-values; the variance estimator and
//! the re-centring rules are those of `arch.bootstrap.SPA` 7.2.0
//! (`nested=False`), see [`superior_predictive_ability`] for the one
//! deliberate difference from arch.

use super::{bootstrap_means, mean_block_length, valid_columns};
use crate::numerics::acov::{mean, stationary_bootstrap_variance};
use crate::score::{all_finite, positive_finite};

/// Result of the test of superior predictive ability.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct SpaResult {
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
    /// The model (index into the `model_losses` given) with the largest
    /// studentised mean gain √n·d̄_k/ω̂_k: the one that attains the
    /// statistic when it is positive. Ties go to the first.
    pub driver: usize,
}

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
/// That variant, `superior_predictive_ability_unstudentized`, is compiled
/// for the tests, which compare it with arch's own p-values; this
/// function follows the paper.
///
/// Block length: `block_length`, else the mean of the Politis & White
/// stationary block lengths ([`optimal_block_length`]) of the d_k series
/// (constant ones skipped), clamped to [1, n]. arch defaults to ⌊√n⌋.
///
/// The model that attains the maximum is [`SpaResult::driver`]: the test
/// says that *some* model beats the benchmark; this is the one whose
/// studentised gain the statistic is.
///
/// Models whose losses equal the benchmark's at every origin carry no
/// information and are left out (they never drive the statistic); `None` when no model is left, n < 3,
/// lengths differ, a loss is not finite, `resamples` is 0, the block length
/// given is not ≥ 1, or some other ω̂_k² is not positive.
pub(crate) fn superior_predictive_ability(
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
/// For the tests only: arch's numbers check the shared machinery.
#[cfg(test)]
pub(crate) fn superior_predictive_ability_unstudentized(
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
#[cfg(test)]
pub(super) fn spa_differentials(
    benchmark_losses: &[f64],
    model_losses: &[Vec<f64>],
) -> Option<Vec<Vec<f64>>> {
    spa_kept_differentials(benchmark_losses, model_losses).map(|(d, _)| d)
}

/// Loss differentials d_k with all-zero columns removed, and the index in
/// `model_losses` of each column kept.
fn spa_kept_differentials(
    benchmark_losses: &[f64],
    model_losses: &[Vec<f64>],
) -> Option<(Vec<Vec<f64>>, Vec<usize>)> {
    let n = benchmark_losses.len();
    if n < 3 || !all_finite(benchmark_losses) || !valid_columns(model_losses, n, 3) {
        return None;
    }
    let (d, kept): (Vec<Vec<f64>>, Vec<usize>) = model_losses
        .iter()
        .enumerate()
        .map(|(k, m)| {
            let d: Vec<f64> = benchmark_losses.iter().zip(m).map(|(b, l)| b - l).collect();
            (d, k)
        })
        .filter(|(c, _)| c.iter().any(|v| *v != 0.0))
        .unzip();
    if d.is_empty() {
        None
    } else {
        Some((d, kept))
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
    let (d, kept) = spa_kept_differentials(benchmark_losses, model_losses)?;
    let n = benchmark_losses.len();
    let block_length = match block_length {
        Some(b) if b.is_finite() && b >= 1.0 => b,
        Some(_) => return None,
        None => mean_block_length(&d, n),
    };
    let boot = bootstrap_means(&d, block_length, resamples, seed);
    spa_from_bootstrap(&d, block_length, &boot, studentize).map(|r| SpaResult {
        driver: kept[r.driver],
        ..r
    })
}

/// ω̂_k² of each column with the stationary-bootstrap kernel, q = 1/b.
pub(super) fn spa_variances(d: &[Vec<f64>], block_length: f64) -> Vec<f64> {
    d.iter()
        .map(|c| stationary_bootstrap_variance(c, block_length))
        .collect()
}

/// SPA statistic and p-values given the resampled means of d (one row per
/// resample, one column per model); `driver` indexes the columns of `d`.
pub(super) fn spa_from_bootstrap(
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
    let mut driver = 0;
    let mut top = f64::NEG_INFINITY;
    for (k, (m, s)) in dbar.iter().zip(&scale).enumerate() {
        if m * s > top {
            top = m * s;
            driver = k;
        }
    }
    let statistic = top.max(floor);
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
        driver,
    })
}
