//! Levenberg–Marquardt for a nonlinear least-squares problem min Σ r(z)²
//! of a few unknowns (Marquardt 1963, with his scaling of the damping by
//! the Jacobian's column norms; Nocedal & Wright 2006, §10.3). Each trial
//! step solves the damped linear problem [J; √λ·D] δ = [−r; 0] by
//! Householder QR, so JᵀJ is never formed.

use crate::numerics::lsq::householder::least_squares;

/// Minimise Σ r(z)² from `z0`. `residuals(z)` gives r (length `n`) and its
/// Jacobian (column-major n × len z); `sse(z)` gives Σ r(z)², `None` where
/// undefined (a trial step there is rejected; at the start, or a
/// Jacobian that cannot be formed, ends the search with `None`).
///
/// λ starts at 1e-8, falls tenfold (to 1e-12 at least) after an accepted
/// step and rises tenfold after a rejected one; the search stops after 60
/// Jacobians, when the first step of a Jacobian predicts a reduction
/// ‖J δ‖² below 1e-14 of the SSE, when a step gains less than 1e-13 of it,
/// when λ passes 1e8, or when a damped problem cannot be solved. Returns
/// (SSE, z) at the best point reached.
pub(crate) fn levenberg_marquardt(
    mut residuals: impl FnMut(&[f64]) -> Option<(Vec<f64>, Vec<f64>)>,
    mut sse_at: impl FnMut(&[f64]) -> Option<f64>,
    z0: &[f64],
    n: usize,
) -> Option<(f64, Vec<f64>)> {
    let k = z0.len();
    let mut z = z0.to_vec();
    let mut sse = sse_at(&z)?;
    let mut lambda: f64 = 1e-8;
    let mut iter = 0;
    'outer: while iter < 60 {
        iter += 1;
        let (r, jac) = residuals(&z)?;
        let scale: Vec<f64> = (0..k)
            .map(|i| {
                let c = &jac[i * n..(i + 1) * n];
                let s = c.iter().map(|v| v * v).sum::<f64>().sqrt();
                if s > 0.0 {
                    s
                } else {
                    1.0
                }
            })
            .collect();
        let mut first_trial = true;
        loop {
            let Some(d) = damped_step(&jac, &r, &scale, lambda, n) else {
                break 'outer;
            };
            if first_trial {
                // predicted reduction ‖J δ‖²: stop when it is negligible
                first_trial = false;
                if predicted_reduction(&jac, &d, n) <= 1e-14 * sse {
                    break 'outer;
                }
            }
            let cand: Vec<f64> = z.iter().zip(d.iter()).map(|(a, b)| a + b).collect();
            let new = sse_at(&cand).unwrap_or(f64::INFINITY);
            if new < sse {
                let gain = sse - new;
                z = cand;
                sse = new;
                lambda = (lambda * 0.1).max(1e-12);
                if gain <= 1e-13 * sse {
                    break 'outer;
                }
                continue 'outer;
            }
            lambda *= 10.0;
            if lambda > 1e8 {
                break 'outer;
            }
        }
    }
    Some((sse, z))
}

/// δ minimising ‖J δ + r‖² + λ‖D δ‖², D = diag(`scale`).
fn damped_step(jac: &[f64], r: &[f64], scale: &[f64], lambda: f64, n: usize) -> Option<Vec<f64>> {
    let k = scale.len();
    let rows = n + k;
    let mut a = vec![0.0; rows * k];
    let mut rhs = vec![0.0; rows];
    let sl = lambda.sqrt();
    for i in 0..k {
        a[i * rows..i * rows + n].copy_from_slice(&jac[i * n..(i + 1) * n]);
        a[i * rows + n + i] = sl * scale[i];
    }
    for t in 0..n {
        rhs[t] = -r[t];
    }
    least_squares(a, rhs, rows, k)
}

/// ‖J δ‖².
fn predicted_reduction(jac: &[f64], d: &[f64], n: usize) -> f64 {
    let mut pred = 0.0;
    for t in 0..n {
        let mut jd = 0.0;
        for (i, di) in d.iter().enumerate() {
            jd += jac[i * n + t] * di;
        }
        pred += jd * jd;
    }
    pred
}

#[cfg(test)]
mod tests {
    use super::*;

    /// By construction: y_t = 2·exp(0.5·t) exactly, fitted by a·exp(b·t)
    /// from (1, 0), reaches (2, 0.5) with SSE 0 (to rounding).
    #[test]
    fn fits_an_exact_exponential() {
        let t: Vec<f64> = (0..8).map(|i| i as f64 * 0.25).collect();
        let y: Vec<f64> = t.iter().map(|t| 2.0 * (0.5 * t).exp()).collect();
        let n = t.len();
        let resid = |z: &[f64]| -> Vec<f64> {
            t.iter()
                .zip(&y)
                .map(|(t, y)| y - z[0] * (z[1] * t).exp())
                .collect()
        };
        let jacobian = |z: &[f64]| {
            let mut j = vec![0.0; 2 * n];
            for (i, t) in t.iter().enumerate() {
                j[i] = -(z[1] * t).exp();
                j[n + i] = -z[0] * t * (z[1] * t).exp();
            }
            Some((resid(z), j))
        };
        let sse = |z: &[f64]| Some(resid(z).iter().map(|e| e * e).sum());
        let (s, z) = levenberg_marquardt(jacobian, sse, &[1.0, 0.0], n).expect("solves");
        assert!(s < 1e-20, "{s}");
        assert!(
            (z[0] - 2.0).abs() < 1e-9 && (z[1] - 0.5).abs() < 1e-9,
            "{z:?}"
        );
    }
}
