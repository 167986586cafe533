//! The observed information of a log-likelihood by central differences:
//! the Hessian H of ℓ at its maximum x̂, its negative inverted by Cholesky,
//! the covariance of the estimates (−H)⁻¹.
//!
//! Step rule: parameter i moves by h_i = ε^{1/4}·max(|x̂_i|, s_i), ε the
//! f64 machine epsilon (ε^{1/4} ≈ 1.2e-4) and s_i a scale the caller gives
//! (the size below which the parameter counts as zero: 0.1 for a
//! coefficient, the data's spread for a level). ε^{1/4} balances the
//! truncation error O(h²) of the central second difference against its
//! rounding error O(ε/h²) (Dennis & Schnabel 1983, §5.6, from memory).
//! Diagonal: (ℓ(x + h_i) − 2ℓ(x) + ℓ(x − h_i))/h_i²; off the diagonal the
//! four-point formula (ℓ(++) − ℓ(+−) − ℓ(−+) + ℓ(−−))/(4 h_i h_j).

use nalgebra::DMatrix;

/// ε^{1/4} for f64.
const STEP: f64 = 1.220_703_125e-4;

/// The covariance (−H)⁻¹ (row-major, k × k) of the maximiser `x` of
/// `loglik`, with `scale` as in the module docs; None when a value is not
/// finite or −H is not positive definite (x is not a strict maximum).
pub(crate) fn covariance(
    mut loglik: impl FnMut(&[f64]) -> f64,
    x: &[f64],
    scale: &[f64],
) -> Option<Vec<f64>> {
    let k = x.len();
    if k == 0 {
        return Some(Vec::new());
    }
    let h: Vec<f64> = x.iter().zip(scale).map(|(v, s)| step(*v, *s)).collect();
    let mut p = x.to_vec();
    let mut at = |p: &mut Vec<f64>, moves: &[(usize, f64)]| {
        for &(i, d) in moves {
            p[i] = x[i] + d;
        }
        let v = loglik(p);
        for &(i, _) in moves {
            p[i] = x[i];
        }
        v
    };
    let f0 = at(&mut p, &[]);
    let mut neg = DMatrix::zeros(k, k);
    for i in 0..k {
        let up = at(&mut p, &[(i, h[i])]);
        let down = at(&mut p, &[(i, -h[i])]);
        neg[(i, i)] = -(up - 2.0 * f0 + down) / (h[i] * h[i]);
        for j in 0..i {
            let pp = at(&mut p, &[(i, h[i]), (j, h[j])]);
            let pm = at(&mut p, &[(i, h[i]), (j, -h[j])]);
            let mp = at(&mut p, &[(i, -h[i]), (j, h[j])]);
            let mm = at(&mut p, &[(i, -h[i]), (j, -h[j])]);
            let v = -(pp - pm - mp + mm) / (4.0 * h[i] * h[j]);
            neg[(i, j)] = v;
            neg[(j, i)] = v;
        }
    }
    invert(neg)
}

/// The step of a parameter at `v` with scale `s` (the module docs' rule).
pub(crate) fn step(v: f64, s: f64) -> f64 {
    STEP * v.abs().max(s)
}

/// The covariance (row-major) from −H; None when a value is not finite or
/// −H is not positive definite.
pub(crate) fn invert(neg: DMatrix<f64>) -> Option<Vec<f64>> {
    let k = neg.nrows();
    if !neg.iter().all(|v| v.is_finite()) {
        return None;
    }
    let inv = neg.cholesky()?.inverse();
    let out: Vec<f64> = (0..k)
        .flat_map(|i| (0..k).map(move |j| (i, j)))
        .map(|(i, j)| inv[(i, j)])
        .collect();
    out.iter().all(|v| v.is_finite()).then_some(out)
}

/// Standard errors: the square roots of a covariance's diagonal.
pub(crate) fn std_errors(cov: &[f64], k: usize) -> Vec<f64> {
    (0..k).map(|i| cov[i * k + i].max(0.0).sqrt()).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_normal_sample_gives_the_textbook_errors() {
        // Gaussian log-likelihood of a sample in (μ, σ²): the observed
        // information at the MLE is diag(n/σ̂², n/(2σ̂⁴)), so the standard
        // errors are σ̂/√n and σ̂²·√(2/n) (common practice).
        let y = [2.0, 4.0, 4.0, 4.0, 5.0, 5.0, 7.0, 9.0];
        let n = y.len() as f64;
        let mu = y.iter().sum::<f64>() / n;
        let s2 = y.iter().map(|v| (v - mu) * (v - mu)).sum::<f64>() / n;
        let ll = |p: &[f64]| {
            let ss: f64 = y.iter().map(|v| (v - p[0]) * (v - p[0])).sum();
            -0.5 * n * (2.0 * std::f64::consts::PI * p[1]).ln() - ss / (2.0 * p[1])
        };
        let cov = covariance(ll, &[mu, s2], &[1.0, 1.0]).unwrap();
        let se = std_errors(&cov, 2);
        assert!((se[0] - (s2 / n).sqrt()).abs() < 1e-6 * se[0], "{se:?}");
        assert!(
            (se[1] - s2 * (2.0 / n).sqrt()).abs() < 1e-6 * se[1],
            "{se:?}"
        );
        assert!(cov[1].abs() < 1e-6);
        // A minimum is not a maximum: no covariance.
        assert!(covariance(|p: &[f64]| p[0] * p[0], &[0.0], &[1.0]).is_none());
    }
}
