//! `theta`: the theta method of Assimakopoulos & Nikolopoulos (2000) in the
//! form Hyndman & Billah (2003) showed it to be — simple exponential
//! smoothing with a drift of half the slope of a straight line fitted to the
//! estimation sample — optionally on data divided by classical
//! multiplicative seasonal indices.
//!
//! On an estimation sample x_1..x_n (seasonally adjusted if asked):
//! - b0 is the least-squares slope of x on t (the line a0 + b0 t);
//! - α minimises the sum of squared one-step errors of simple exponential
//!   smoothing started at the first observation (ℓ_0 = x_1), α ∈ [0, 1];
//! - from an origin with T observations x_1..x_T (past the estimation end
//!   under a fixed scheme: α, b0 and the indices stay as estimated),
//!   ℓ_T is the smoothed level and the h-step forecast is
//!   ℓ_T + (b0/2)·(h − 1 + (1 − (1 − α)^T)/α),
//!   multiplied back by the seasonal index of period T + h.
//! - The variance is that of the simple-exponential-smoothing state space
//!   model with drift (an ARIMA(0,1,1) with drift, θ = α − 1):
//!   σ²·(1 + (h − 1)α²) (Hyndman, Koehler, Ord & Snyder 2008, class 1), σ²
//!   the mean squared one-step error of the theta forecasts over the
//!   estimation sample (on the adjusted scale), times the squared seasonal
//!   index when the data were adjusted. The estimated b0 and indices are
//!   treated as known.
//!
//! Seasonal indices (classical decomposition, as in Makridakis,
//! Wheelwright & Hyndman 1998, ch. 3, from memory): a centred moving average of order m
//! (2×m for even m) is the trend; each observation divided by it; the
//! ratios averaged by position in the season and scaled to average 1. They
//! come from the estimation sample only and need two full seasons of it.

use crate::numerics::optimise::brent_minimise;

/// The theta method; `season` is m when the data are seasonally adjusted first.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct Theta {
    pub season: Option<usize>,
}

/// An estimate on one sample.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct ThetaFit {
    pub alpha: f64,
    pub b0: f64,
    /// σ² of the one-step errors on the adjusted scale.
    pub sigma2: f64,
    /// Mean squared one-step error in the data's units.
    pub is_mse: f64,
    /// Seasonal index by position in the sample modulo m (empty: none).
    pub indices: Vec<f64>,
}

/// The seasonal index of 0-based sample position `i`.
fn index_at(indices: &[f64], i: usize) -> f64 {
    if indices.is_empty() {
        1.0
    } else {
        indices[i % indices.len()]
    }
}

/// Classical multiplicative seasonal indices of `y` with season length `m`,
/// by 0-based position modulo m.
pub(crate) fn multiplicative_indices(y: &[f64], m: usize) -> Result<Vec<f64>, String> {
    let n = y.len();
    if m < 2 || n < 2 * m {
        return Err(format!(
            "seasonal adjustment needs two full seasons ({} observations) in the estimation sample, it has {n}",
            2 * m
        ));
    }
    if let Some(i) = y.iter().position(|v| *v <= 0.0) {
        return Err(format!(
            "multiplicative seasonal adjustment needs positive values; observation {} of the estimation sample is {}",
            i + 1,
            y[i]
        ));
    }
    // The centred moving average: weights 1/m over m values (m odd), or
    // 1/(2m), 1/m, …, 1/m, 1/(2m) over m + 1 values (m even).
    let half = m / 2;
    let weights: Vec<f64> = if m % 2 == 1 {
        vec![1.0 / m as f64; m]
    } else {
        let mut w = vec![1.0 / m as f64; m + 1];
        w[0] = 0.5 / m as f64;
        w[m] = 0.5 / m as f64;
        w
    };
    let mut sums = vec![0.0; m];
    let mut counts = vec![0usize; m];
    for i in half..n - half {
        let trend: f64 = weights
            .iter()
            .enumerate()
            .map(|(k, w)| w * y[i - half + k])
            .sum();
        sums[i % m] += y[i] / trend;
        counts[i % m] += 1;
    }
    let mut averages: Vec<f64> = sums
        .iter()
        .zip(&counts)
        .map(|(s, c)| s / *c as f64)
        .collect();
    let mean = averages.iter().sum::<f64>() / m as f64;
    for a in &mut averages {
        *a /= mean;
    }
    Ok(averages)
}

/// The least-squares slope of x on t = 1..n.
fn trend_slope(x: &[f64]) -> f64 {
    let n = x.len() as f64;
    let t_mean = (n + 1.0) / 2.0;
    let x_mean = x.iter().sum::<f64>() / n;
    let (mut sxy, mut sxx) = (0.0, 0.0);
    for (i, v) in x.iter().enumerate() {
        let dt = (i + 1) as f64 - t_mean;
        sxy += dt * (v - x_mean);
        sxx += dt * dt;
    }
    sxy / sxx
}

/// Sum of squared one-step errors of simple exponential smoothing started
/// at the first value.
fn ses_sse(x: &[f64], alpha: f64) -> f64 {
    let mut level = x[0];
    let mut sse = 0.0;
    for v in &x[1..] {
        let e = v - level;
        sse += e * e;
        level += alpha * e;
    }
    sse
}

/// (1 − (1 − α)^T)/α, which tends to T as α → 0, computed without
/// cancellation.
fn drift_weight(alpha: f64, t: usize) -> f64 {
    if alpha <= 0.0 {
        return t as f64;
    }
    -(t as f64 * (-alpha).ln_1p()).exp_m1() / alpha
}

impl Theta {
    /// The adjusted values of a sample with the fit's indices.
    fn adjusted(indices: &[f64], y: &[f64]) -> Vec<f64> {
        y.iter()
            .enumerate()
            .map(|(i, v)| v / index_at(indices, i))
            .collect()
    }

    pub(crate) fn estimate(&self, y: &[f64]) -> Result<ThetaFit, String> {
        if y.len() < 3 {
            return Err(format!(
                "the theta method needs at least 3 observations, the estimation sample has {}",
                y.len()
            ));
        }
        let indices = match self.season {
            Some(m) => multiplicative_indices(y, m)?,
            None => Vec::new(),
        };
        let x = Self::adjusted(&indices, y);
        let b0 = trend_slope(&x);
        let alpha = brent_minimise(|a| ses_sse(&x, a), 0.0, 1.0, 1e-10, 40);
        let mut fit = ThetaFit {
            alpha,
            b0,
            sigma2: f64::NAN,
            is_mse: f64::NAN,
            indices,
        };
        let (adjusted, original) = self.one_step_errors(&fit, y);
        let mean_sq = |e: &[f64]| e.iter().map(|v| v * v).sum::<f64>() / e.len() as f64;
        fit.sigma2 = mean_sq(&adjusted);
        fit.is_mse = mean_sq(&original);
        if !(fit.sigma2.is_finite() && fit.is_mse.is_finite() && b0.is_finite()) {
            return Err("the theta method's estimate is not finite on this sample".into());
        }
        Ok(fit)
    }

    /// The rows of parameters.csv of an estimate on `y` (its sample):
    /// `alpha` with the standard error of the observed information of
    /// simple exponential smoothing's likelihood with σ² concentrated
    /// out, ℓ(α) = −m/2·ln(SSE(α)/m) + const over the m = n − 1 one-step
    /// errors (none when α is on the edge of [0, 1]); `drift`, b0/2; and
    /// `sigma2`, the mean squared one-step error of the theta forecasts
    /// on the adjusted scale. The line's slope and the seasonal indices
    /// are estimated by least squares and averaging, not by the
    /// likelihood: no standard errors, no fit rows.
    pub(crate) fn parameters(&self, fit: &ThetaFit, y: &[f64]) -> Vec<super::Parameter> {
        let x = Self::adjusted(&fit.indices, y);
        let m = (x.len() - 1) as f64;
        let interior = fit.alpha > 1e-6 && fit.alpha < 1.0 - 1e-6;
        let se = interior
            .then(|| {
                let profile = |a: &[f64]| -0.5 * m * (ses_sse(&x, a[0]) / m).ln();
                crate::numerics::hessian::covariance(profile, &[fit.alpha], &[0.1])
            })
            .flatten()
            .map(|c| c[0].max(0.0).sqrt());
        vec![
            super::Parameter::new("alpha", fit.alpha, se),
            super::Parameter::new("drift", 0.5 * fit.b0, None),
            super::Parameter::new("sigma2", fit.sigma2, None),
        ]
    }

    /// One-step errors of the theta forecasts over a sample (from its second
    /// value on): on the adjusted scale and in the data's units.
    pub(crate) fn one_step_errors(&self, fit: &ThetaFit, y: &[f64]) -> (Vec<f64>, Vec<f64>) {
        let x = Self::adjusted(&fit.indices, y);
        let mut level = x[0];
        let mut adjusted = Vec::with_capacity(x.len().saturating_sub(1));
        let mut original = Vec::with_capacity(x.len().saturating_sub(1));
        for (i, v) in x.iter().enumerate().skip(1) {
            // The forecast of value i + 1 (1-based) from the i values before it.
            let f = level + 0.5 * fit.b0 * drift_weight(fit.alpha, i);
            adjusted.push(v - f);
            original.push(y[i] - f * index_at(&fit.indices, i));
            level += fit.alpha * (v - level);
        }
        (adjusted, original)
    }

    /// Forecasts h = 1..=max_h beyond the end of `y` (which starts where the
    /// estimation sample started): (mean, variance).
    pub(crate) fn forecast(&self, fit: &ThetaFit, y: &[f64], max_h: usize) -> Vec<(f64, f64)> {
        let x = Self::adjusted(&fit.indices, y);
        let mut level = x[0];
        for v in &x[1..] {
            level += fit.alpha * (v - level);
        }
        let t = x.len();
        let base = drift_weight(fit.alpha, t);
        (1..=max_h)
            .map(|h| {
                let s = index_at(&fit.indices, t + h - 1);
                let mean = level + 0.5 * fit.b0 * (h as f64 - 1.0 + base);
                let var = fit.sigma2 * (1.0 + (h as f64 - 1.0) * fit.alpha * fit.alpha);
                (mean * s, var * s * s)
            })
            .collect()
    }
}

#[cfg(test)]
mod tests;
