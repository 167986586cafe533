//! Calibration of interval and density forecasts (`scoring.tests.calibration`):
//! Christoffersen's (1998) likelihood-ratio tests of an interval's misses,
//! and Berkowitz's (2001) likelihood-ratio test of the probability integral
//! transforms of a Gaussian predictive distribution. Degenerate inputs give
//! `None`, written as empty cells.

use super::pairwise::TestResult;
use super::positive_finite;
use crate::numerics::dist::chi2_sf;

/// n·ln p, with 0·ln 0 = 0 (a count of zero contributes nothing).
fn count_log(count: usize, p: f64) -> f64 {
    if count == 0 {
        0.0
    } else {
        count as f64 * p.ln()
    }
}

/// Bernoulli log-likelihood of `hits` ones and `misses` zeros at rate p.
fn bernoulli(misses: usize, hits: usize, p: f64) -> f64 {
    count_log(misses, 1.0 - p) + count_log(hits, p)
}

/// The three coverage tests of one interval level.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Coverage {
    /// Unconditional coverage: the share of misses is 1 − c. χ²(1).
    pub unconditional: TestResult,
    /// Independence: a miss today does not make one tomorrow likelier
    /// (first-order Markov alternative). χ²(1).
    pub independence: TestResult,
    /// Conditional coverage: both at once, LR_uc + LR_ind. χ²(2).
    pub conditional: TestResult,
}

/// Christoffersen (1998) tests of the misses of a level-c interval, in
/// time order (`true`: the outturn fell outside), nominal miss rate
/// p = 1 − c:
/// LR_uc = −2[ln L(p) − ln L(π̂)], π̂ = n₁/n;
/// LR_ind = −2[ln L(π̂₂) − ln L(π̂₀₁, π̂₁₁)] over the n − 1 transitions,
/// π̂₀₁ = n₀₁/(n₀₀ + n₀₁), π̂₁₁ = n₁₁/(n₁₀ + n₁₁), π̂₂ = (n₀₁ + n₁₁)/(n − 1);
/// LR_cc = LR_uc + LR_ind (the sum, which ignores that LR_uc also counts the
/// first observation, as Christoffersen does). 0·ln 0 = 0. `None` for fewer
/// than two forecasts.
pub fn christoffersen(misses: &[bool], level: f64) -> Option<Coverage> {
    let n = misses.len();
    if n < 2 || !(level > 0.0 && level < 1.0) {
        return None;
    }
    let p = 1.0 - level;
    let n1 = misses.iter().filter(|&&m| m).count();
    let n0 = n - n1;
    let share = n1 as f64 / n as f64;
    let lr_uc = -2.0 * (bernoulli(n0, n1, p) - bernoulli(n0, n1, share));
    let mut t = [[0usize; 2]; 2];
    for w in misses.windows(2) {
        t[w[0] as usize][w[1] as usize] += 1;
    }
    let rate = |a: usize, b: usize| {
        if a + b == 0 {
            0.0
        } else {
            b as f64 / (a + b) as f64
        }
    };
    let pi01 = rate(t[0][0], t[0][1]);
    let pi11 = rate(t[1][0], t[1][1]);
    let pi2 = rate(t[0][0] + t[1][0], t[0][1] + t[1][1]);
    let restricted = bernoulli(t[0][0] + t[1][0], t[0][1] + t[1][1], pi2);
    let markov = bernoulli(t[0][0], t[0][1], pi01) + bernoulli(t[1][0], t[1][1], pi11);
    // Rounding can leave a likelihood ratio a hair below zero.
    let lr_ind = (-2.0 * (restricted - markov)).max(0.0);
    let lr_uc = lr_uc.max(0.0);
    let lr_cc = lr_uc + lr_ind;
    let test = |statistic: f64, df: f64| {
        Some(TestResult {
            statistic,
            p_value: chi2_sf(statistic, df)?,
        })
    };
    Some(Coverage {
        unconditional: test(lr_uc, 1.0)?,
        independence: test(lr_ind, 1.0)?,
        conditional: test(lr_cc, 2.0)?,
    })
}

/// Berkowitz (2001) test of a Gaussian predictive distribution: the
/// transformed values z_t = Φ⁻¹(PIT_t) = (y_t − μ_t)/σ_t are i.i.d. N(0, 1)
/// when the forecast distributions are right. Against the AR(1)
/// z_t − μ = ρ(z_{t−1} − μ) + ε_t, ε ~ N(0, σ²), estimated by maximum
/// likelihood conditional on z_1 (least squares of z_t on 1 and z_{t−1},
/// σ̂² = SSR/(n − 1): the conditional form of Berkowitz's exact
/// likelihood), LR = 2[ln L(μ̂, ρ̂, σ̂²) − ln L(0, 0, 1)] over t = 2..n is
/// χ²(3) under the null. At horizons h > 1 overlapping forecasts make
/// correct z serially correlated (an MA(h − 1)), so a rejection there can
/// come from the overlap alone. `None` for fewer than four values, a
/// constant lagged series or a zero residual variance.
pub fn berkowitz(z: &[f64]) -> Option<TestResult> {
    let n = z.len();
    if n < 4 || !z.iter().all(|v| v.is_finite()) {
        return None;
    }
    let (x, y) = (&z[..n - 1], &z[1..]);
    let m = (n - 1) as f64;
    let (mx, my) = (x.iter().sum::<f64>() / m, y.iter().sum::<f64>() / m);
    let sxx: f64 = x.iter().map(|v| (v - mx) * (v - mx)).sum();
    let sxy: f64 = x.iter().zip(y).map(|(a, b)| (a - mx) * (b - my)).sum();
    if !positive_finite(sxx) {
        return None;
    }
    let rho = sxy / sxx;
    let c = my - rho * mx;
    let ssr: f64 = x
        .iter()
        .zip(y)
        .map(|(a, b)| (b - c - rho * a).powi(2))
        .sum();
    let sigma2 = ssr / m;
    if !positive_finite(sigma2) {
        return None;
    }
    // ln L = −(m/2) ln 2π − (m/2) ln σ² − Σ resid²/(2σ²); the ln 2π terms cancel.
    let alternative = -0.5 * m * sigma2.ln() - 0.5 * ssr / sigma2;
    let null = -0.5 * y.iter().map(|v| v * v).sum::<f64>();
    let statistic = (2.0 * (alternative - null)).max(0.0);
    Some(TestResult {
        statistic,
        p_value: chi2_sf(statistic, 3.0)?,
    })
}
