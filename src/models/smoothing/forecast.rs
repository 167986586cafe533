//! Forecasts: the deterministic path from the filtered state (all future
//! errors zero) and its variance. With an additive error the state
//! covariance is propagated through the model linearised along that path
//! (see the module docs). With a multiplicative error and no season the
//! book's closed form (class 2); with a season, simulated sample paths.

use super::filter::{initial_state, run_filter, Smooth, State};
use super::{check_data, check_params, EtsError, EtsFit};
use crate::numerics::dist::box_muller;
use rand_chacha::ChaCha20Rng;
use rand_core::{RngCore, SeedableRng};

/// Sample paths behind a simulated forecast variance.
pub(crate) const SIMULATED_PATHS: usize = 10_000;

/// Run the filter with the fit's parameters through all of `y` (which starts
/// at the estimation sample's first period and may extend past its end) and
/// forecast h = 1..=max_h beyond its end: (mean, variance) per horizon.
/// `seed` and `start` (the position of `y[0]`) seed the sample paths of a
/// simulated variance, so the draws depend on the cell, the window's first
/// position and the origin only.
pub(crate) fn forecast(
    fit: &EtsFit,
    y: &[f64],
    max_h: usize,
    seed: u64,
    start: usize,
) -> Result<Vec<(f64, f64)>, EtsError> {
    let spec = &fit.spec;
    spec.validate()?;
    check_params(spec, &fit.params)?;
    check_data(spec, y)?;
    if !(fit.sigma2.is_finite() && fit.sigma2 >= 0.0) {
        return Err(EtsError::NonFinite {
            what: "sigma2".into(),
        });
    }
    let sm = Smooth::of(&fit.params, spec);
    let mult = spec.multiplicative();
    let mut st = initial_state(spec, &fit.params);
    run_filter(mult, &sm, &mut st, y, None).ok_or_else(|| EtsError::NonFinite {
        what: "filtered states".into(),
    })?;
    let linear = forecast_from_state(mult, &sm, fit.sigma2, &st, max_h)?;
    if !spec.mult_error() {
        return Ok(linear);
    }
    let means: Vec<f64> = linear.iter().map(|p| p.0).collect();
    let variances = if spec.has_season() {
        let origin = start + y.len() - 1;
        let stream = ((start as u64) << 32) ^ origin as u64;
        simulated_variances(mult, &sm, fit.sigma2, &st, max_h, (seed, stream))
    } else {
        class2_variances(&sm, fit.sigma2, &means)
    };
    let out: Vec<(f64, f64)> = means.into_iter().zip(variances).collect();
    if out.iter().any(|(m, v)| !(m.is_finite() && v.is_finite())) {
        return Err(EtsError::NonFinite {
            what: "forecast variance".into(),
        });
    }
    Ok(out)
}

/// The ψ-weights of an additive-error model without a multiplicative
/// season, ψ_0 = 1 and ψ_j = c_j = α + β φ_j + γ d_{j,m} (class 1 of
/// Hyndman, Koehler, Ord & Snyder 2008, Table 6.2; φ_j = φ + … + φ^j,
/// d_{j,m} = 1 when m divides j): the h-step error is Σ_{j<h} c_j ε_{T+h−j},
/// whose variances the state propagation of [`forecast`] gives. None for
/// the nonlinear forms (a multiplicative error or season).
pub(crate) fn psi_weights(fit: &EtsFit, count: usize) -> Option<Vec<f64>> {
    let spec = &fit.spec;
    if spec.mult_error() || spec.multiplicative() {
        return None;
    }
    let sm = Smooth::of(&fit.params, spec);
    let season = spec.has_season().then(|| (spec.period.max(1), sm.gamma));
    let mut out = Vec::with_capacity(count);
    if count > 0 {
        out.push(1.0);
        out.extend(class1_weights(&sm, count - 1, season));
    }
    Some(out)
}

/// The covariance of the h-step errors, h = 1..=max_h, of the linear
/// forms from their ψ-weights; None for the nonlinear ones.
pub(crate) fn error_covariance(fit: &EtsFit, max_h: usize) -> Option<Vec<f64>> {
    let psi = psi_weights(fit, max_h)?;
    Some(crate::models::level::covariance_from_psi(
        &psi, fit.sigma2, max_h,
    ))
}

/// The class-1 weights c_1..c_count, c_j = α + β φ_j (+ γ when the season
/// `(m, γ)` is given and m divides j), φ_j = φ + … + φ^j.
fn class1_weights(sm: &Smooth, count: usize, season: Option<(usize, f64)>) -> Vec<f64> {
    let (mut phi_j, mut power) = (0.0, 1.0);
    (1..=count)
        .map(|j| {
            power *= sm.phi;
            phi_j += power;
            let c = sm.alpha + sm.beta * phi_j;
            match season {
                Some((m, gamma)) if j % m == 0 => c + gamma,
                Some(_) => c + 0.0,
                None => c,
            }
        })
        .collect()
}

/// Forecast variances of ETS(M,N,N), (M,A,N) and (M,Ad,N), class 2 of
/// Hyndman, Koehler, Ord & Snyder (2008, §6.3):
/// v_h = (1 + σ²) θ_h − μ_h², θ_1 = μ_1², θ_h = μ_h² + σ² Σ_{j=1}^{h−1} c_j² θ_{h−j},
/// with the class-1 weights c_j = α + β φ_j, φ_j = φ + … + φ^j (β = 0
/// without a trend, φ = 1 without damping) and μ_h the point forecasts.
fn class2_variances(sm: &Smooth, sigma2: f64, means: &[f64]) -> Vec<f64> {
    let h_max = means.len();
    let c = class1_weights(sm, h_max.saturating_sub(1), None);
    let mut theta: Vec<f64> = Vec::with_capacity(h_max);
    for (h, &mu) in means.iter().enumerate() {
        let lagged: f64 = (1..=h).map(|j| c[j - 1] * c[j - 1] * theta[h - j]).sum();
        theta.push(mu * mu + sigma2 * lagged);
    }
    theta
        .iter()
        .zip(means)
        .map(|(th, mu)| ((1.0 + sigma2) * th - mu * mu).max(0.0))
        .collect()
}

/// 32-bit words of the random stream reserved for one sample path: 2²⁰
/// words, 2¹⁸ normal pairs, far more than the longest horizon allowed.
const PATH_BLOCK_WORDS: u128 = 1 << 20;

/// Forecast variances of a multiplicative-error model by simulation: from
/// the filtered state, [`SIMULATED_PATHS`] sample paths with
/// y_{t} = ŷ_t (1 + ε_t), ε_t ~ N(0, σ²) drawn from ChaCha20 seeded with
/// `seed` on stream `stream`, the states advanced by the filter's
/// equations; the variance of the paths' values at each horizon (divided
/// by the number of paths). Non-finite paths are left out.
fn simulated_variances(
    mult_season: bool,
    sm: &Smooth,
    sigma2: f64,
    st: &State,
    max_h: usize,
    (seed, stream): (u64, u64),
) -> Vec<f64> {
    let mut rng = ChaCha20Rng::seed_from_u64(seed);
    rng.set_stream(stream);
    let uniform = |rng: &mut ChaCha20Rng| (rng.next_u64() >> 11) as f64 / (1u64 << 53) as f64;
    let sigma = sigma2.sqrt();
    let m = st.s.len();
    let mut sum = vec![0.0; max_h];
    let mut sum_sq = vec![0.0; max_h];
    let mut count = 0usize;
    let mut draws = Vec::with_capacity(max_h + 1);
    let mut path = vec![0.0; max_h];
    let mut s = st.s.clone();
    for k in 0..SIMULATED_PATHS {
        // Each path reads its own fixed block of the stream, so a path's
        // first h draws (and the variance at h) do not depend on how many
        // horizons are asked for.
        rng.set_word_pos(k as u128 * PATH_BLOCK_WORDS);
        draws.clear();
        while draws.len() < max_h {
            let (z1, z2) = box_muller(1.0 - uniform(&mut rng), uniform(&mut rng));
            draws.extend([z1, z2]);
        }
        let (mut l, mut b) = (st.l, st.b);
        s.copy_from_slice(&st.s);
        let mut finite = true;
        for j in 0..max_h {
            let idx = (st.t + j) % m;
            let u = l + sm.phi * b;
            let sv = s[idx];
            let mean = if mult_season { u * sv } else { u + sv };
            let e = mean * sigma * draws[j];
            if mult_season {
                l = u + sm.alpha * e / sv;
                b = sm.phi * b + sm.beta * e / sv;
                s[idx] = sv + sm.gamma * e / u;
            } else {
                l = u + sm.alpha * e;
                b = sm.phi * b + sm.beta * e;
                s[idx] = sv + sm.gamma * e;
            }
            path[j] = mean + e;
            finite &= path[j].is_finite();
        }
        if finite {
            count += 1;
            for j in 0..max_h {
                sum[j] += path[j];
                sum_sq[j] += path[j] * path[j];
            }
        }
    }
    let nf = count as f64;
    // One step ahead the variance is exact: ŷ² σ² (Hyndman et al. 2008, ch. 6).
    let first = {
        let u = st.l + sm.phi * st.b;
        let sv = st.s[st.t % m];
        let mean = if mult_season { u * sv } else { u + sv };
        mean * mean * sigma2
    };
    (0..max_h)
        .map(|j| {
            if j == 0 {
                return first;
            }
            let mean = sum[j] / nf;
            (sum_sq[j] / nf - mean * mean).max(0.0)
        })
        .collect()
}

/// Deterministic path and linearised covariance propagation from a state.
///
/// One function because the mean path and the variance recursion advance
/// the same state together, step by step.
pub(super) fn forecast_from_state(
    mult: bool,
    sm: &Smooth,
    sigma2: f64,
    st: &State,
    max_h: usize,
) -> Result<Vec<(f64, f64)>, EtsError> {
    let m = st.s.len();
    let dim = 2 + m; // l, b, seasonal slots
    let mut p = vec![0.0; dim * dim]; // row-major covariance of the state
    let mut l = st.l;
    let mut b = st.b;
    let s = st.s.clone();
    let mut out = Vec::with_capacity(max_h);
    let phi = sm.phi;
    for j in 1..=max_h {
        let idx = (st.t + j - 1) % m;
        let si = 2 + idx;
        let u = l + phi * b;
        let sv = s[idx];
        let (mean, w_l, w_b, w_s) = if mult {
            (u * sv, sv, phi * sv, u)
        } else {
            (u + sv, 1.0, phi, 1.0)
        };
        // v = σ² + w P wᵀ, w nonzero at l, b, si
        let ids = [0usize, 1, si];
        let ws = [w_l, w_b, w_s];
        let mut quad = 0.0;
        for (a, &ia) in ids.iter().enumerate() {
            for (c, &ic) in ids.iter().enumerate() {
                quad += ws[a] * ws[c] * p[ia * dim + ic];
            }
        }
        let mut var = sigma2 + quad;
        if mult {
            let var_u = p[0] + 2.0 * phi * p[1] + phi * phi * p[dim + 1];
            let var_s = p[si * dim + si];
            let cov_us = p[si] + phi * p[dim + si];
            var += var_u * var_s + cov_us * cov_us;
        }
        if !(mean.is_finite() && var.is_finite()) {
            return Err(EtsError::NonFinite {
                what: format!("forecast at horizon {j}"),
            });
        }
        out.push((mean, var.max(0.0)));
        // propagate: P ← F P Fᵀ + σ² g gᵀ (F: l ← l + φ b, b ← φ b)
        for c in 0..dim {
            let pl = p[c];
            let pb = p[dim + c];
            p[c] = pl + phi * pb;
            p[dim + c] = phi * pb;
        }
        for r in 0..dim {
            let pl = p[r * dim];
            let pb = p[r * dim + 1];
            p[r * dim] = pl + phi * pb;
            p[r * dim + 1] = phi * pb;
        }
        let (kl, ks) = if mult {
            (1.0 / sv, 1.0 / u)
        } else {
            (1.0, 1.0)
        };
        let g = [
            (0usize, sm.alpha * kl),
            (1, sm.beta * kl),
            (si, sm.gamma * ks),
        ];
        for &(ia, ga) in &g {
            for &(ic, gc) in &g {
                p[ia * dim + ic] += sigma2 * ga * gc;
            }
        }
        l = u;
        b *= phi;
    }
    Ok(out)
}
