//! Start values for the likelihood search: Hannan & Rissanen (1982) — a
//! long Yule–Walker autoregression for the innovations, then least squares
//! on lagged values and lagged innovations.

use super::positive;
use super::reparam::pacf_to_coef;
use crate::numerics::acov::lag_product_sum;
use crate::numerics::lsq::normal_equations::least_squares;

/// Yule–Walker AR(m) by Durbin–Levinson on the sample autocovariances (always
/// stationary); returns the coefficients.
fn yule_walker(x: &[f64], m: usize) -> Vec<f64> {
    let n = x.len() as f64;
    // About zero: the caller has centred x (or fits no mean).
    let gamma: Vec<f64> = (0..=m).map(|k| lag_product_sum(x, k) / n).collect();
    if !positive(gamma[0]) {
        return vec![0.0; m];
    }
    let mut pacf = Vec::with_capacity(m);
    let mut phi: Vec<f64> = Vec::new();
    let mut v = gamma[0];
    for k in 1..=m {
        let num = gamma[k]
            - phi
                .iter()
                .enumerate()
                .map(|(j, c)| c * gamma[k - 1 - j])
                .sum::<f64>();
        let rk = (num / v).clamp(-0.999, 0.999);
        pacf.push(rk);
        phi = pacf_to_coef(&pacf);
        v *= 1.0 - rk * rk;
    }
    phi
}

/// Hannan–Rissanen start values for (φ, θ) from the demeaned series.
pub(super) fn hannan_rissanen(x: &[f64], p: usize, q: usize) -> (Vec<f64>, Vec<f64>) {
    let n = x.len();
    let zeros = (vec![0.0; p], vec![0.0; q]);
    if p + q == 0 {
        return zeros;
    }
    // residuals from a long autoregression (none needed for pure AR)
    let (resid, m) = if q > 0 {
        let m = ((12.0 * (n as f64 / 100.0).powf(0.25)).floor() as usize)
            .max(2 * p.max(q))
            .min(n / 4);
        if m == 0 {
            return zeros;
        }
        let a = yule_walker(x, m);
        let mut e = vec![0.0; n];
        for t in m..n {
            e[t] = x[t] - (0..m).map(|j| a[j] * x[t - 1 - j]).sum::<f64>();
        }
        (e, m)
    } else {
        (vec![0.0; n], 0)
    };
    let t0 = p.max(m + q);
    if n <= t0 + p + q + 1 {
        return zeros;
    }
    let rows: Vec<Vec<f64>> = (t0..n)
        .map(|t| {
            (1..=p)
                .map(|j| x[t - j])
                .chain((1..=q).map(|j| resid[t - j]))
                .collect()
        })
        .collect();
    match least_squares(&rows, &x[t0..]) {
        Some(b) => (b[..p].to_vec(), b[p..].to_vec()),
        None => zeros,
    }
}
