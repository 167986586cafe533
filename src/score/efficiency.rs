//! Forecast efficiency (`scoring.tests.efficiency`): the Mincer & Zarnowitz
//! (1969) regression of the outturn on the forecast, y_t = a + b·ŷ_t + u_t,
//! by least squares, with Newey & West (1987) standard errors: Bartlett
//! kernel with h − 1 lags (weights 1 − l/h), no small-sample correction
//! (statsmodels' `cov_type='HAC'` default, `use_correction=False`). An
//! unbiased, efficient forecast has a = 0 and b = 1; the Wald statistic of
//! that joint hypothesis is χ²(2) under it.

use super::positive_finite;
use crate::numerics::dist::{chi2_sf, normal_cdf};

/// The regression, its HAC covariance and the tests.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Efficiency {
    pub intercept: f64,
    pub slope: f64,
    /// HAC standard errors of intercept and slope.
    pub se_intercept: f64,
    pub se_slope: f64,
    /// Two-sided normal p-values of a = 0 and of b = 1.
    pub p_intercept: f64,
    pub p_slope: f64,
    /// Wald statistic of (a, b) = (0, 1) and its χ²(2) p-value.
    pub wald: f64,
    pub p_wald: f64,
}

type Matrix = [[f64; 2]; 2];

fn product(a: &Matrix, b: &Matrix) -> Matrix {
    let mut out = [[0.0; 2]; 2];
    for i in 0..2 {
        for j in 0..2 {
            out[i][j] = a[i][0] * b[0][j] + a[i][1] * b[1][j];
        }
    }
    out
}

/// The inverse of a 2 × 2 matrix, `None` when its determinant is not
/// positive (both matrices inverted here are positive semi-definite).
fn inverse(m: &Matrix) -> Option<Matrix> {
    let det = m[0][0] * m[1][1] - m[0][1] * m[1][0];
    positive_finite(det).then(|| {
        [
            [m[1][1] / det, -m[0][1] / det],
            [-m[1][0] / det, m[0][0] / det],
        ]
    })
}

/// Newey–West long-run sum of the scores g_t = x_t·u_t (uncentred: least
/// squares makes their mean zero): Σ_t g_t g_t' + Σ_{l=1}^{L} (1 − l/(L+1))
/// Σ_t (g_t g_{t−l}' + g_{t−l} g_t'), L = h − 1.
fn long_run(g: &[[f64; 2]], lags: usize) -> Matrix {
    let mut s = [[0.0; 2]; 2];
    for l in 0..=lags.min(g.len().saturating_sub(1)) {
        let w = 1.0 - l as f64 / (lags + 1) as f64;
        let mut gamma = [[0.0; 2]; 2];
        for t in l..g.len() {
            for i in 0..2 {
                for j in 0..2 {
                    gamma[i][j] += g[t][i] * g[t - l][j];
                }
            }
        }
        for i in 0..2 {
            for j in 0..2 {
                s[i][j] += if l == 0 {
                    gamma[i][j]
                } else {
                    w * (gamma[i][j] + gamma[j][i])
                };
            }
        }
    }
    s
}

/// The Mincer–Zarnowitz regression at horizon h. `None` for fewer than
/// three forecasts, non-finite values, forecasts that do not vary, or a
/// singular HAC covariance.
pub fn mincer_zarnowitz(actual: &[f64], forecast: &[f64], h: usize) -> Option<Efficiency> {
    let n = actual.len();
    if n < 3 || forecast.len() != n || h == 0 {
        return None;
    }
    if !actual.iter().chain(forecast).all(|v| v.is_finite()) {
        return None;
    }
    let nf = n as f64;
    let (mf, my) = (
        forecast.iter().sum::<f64>() / nf,
        actual.iter().sum::<f64>() / nf,
    );
    let sff: f64 = forecast.iter().map(|f| (f - mf) * (f - mf)).sum();
    let sfy: f64 = forecast
        .iter()
        .zip(actual)
        .map(|(f, y)| (f - mf) * (y - my))
        .sum();
    // Forecasts that barely vary leave the slope unidentified.
    if !positive_finite(sff) || sff <= 1e-12 * forecast.iter().map(|f| f * f).sum::<f64>() {
        return None;
    }
    let slope = sfy / sff;
    let intercept = my - slope * mf;
    let sum_f: f64 = forecast.iter().sum();
    let sum_ff: f64 = forecast.iter().map(|f| f * f).sum();
    let xtx_inv = inverse(&[[nf, sum_f], [sum_f, sum_ff]])?;
    let scores: Vec<[f64; 2]> = forecast
        .iter()
        .zip(actual)
        .map(|(f, y)| {
            let u = y - intercept - slope * f;
            [u, f * u]
        })
        .collect();
    let s = long_run(&scores, h - 1);
    let cov = product(&product(&xtx_inv, &s), &xtx_inv);
    let (se_a, se_b) = (cov[0][0].sqrt(), cov[1][1].sqrt());
    if !positive_finite(se_a) || !positive_finite(se_b) {
        return None;
    }
    let d = [intercept, slope - 1.0];
    let v = inverse(&cov)?;
    let wald = d[0] * (v[0][0] * d[0] + v[0][1] * d[1]) + d[1] * (v[1][0] * d[0] + v[1][1] * d[1]);
    let two_sided = |z: f64| 2.0 * normal_cdf(-z.abs());
    Some(Efficiency {
        intercept,
        slope,
        se_intercept: se_a,
        se_slope: se_b,
        p_intercept: two_sided(intercept / se_a),
        p_slope: two_sided((slope - 1.0) / se_b),
        wald,
        p_wald: chi2_sf(wald.max(0.0), 2.0)?,
    })
}
