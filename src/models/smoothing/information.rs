//! The observed information of a linear form with an additive error
//! (additive or no season), block by block. With the weights w fixed, its
//! one-step errors e are affine in the free initial states z, so of
//! ℓ = −n/2·ln(2πσ²) − S/(2σ²), S = Σ e_t², three blocks are exact in the
//! Jacobian J = ∂e/∂z from one tangent pass of the filter:
//! −∂²ℓ/∂z∂zᵀ = JᵀJ/σ², −∂²ℓ/∂z∂σ² = −Jᵀe/σ⁴ and
//! −∂²ℓ/∂(σ²)² = S/σ⁶ − n/(2σ⁴). Only the ≤ 4 weights are moved, by the
//! central differences of `numerics::hessian` (its step rule): of S for
//! their own block and σ², of Jᵀe for the cross block. That takes 2·w²
//! tangent passes where differencing every parameter takes 2·(w + m + 2)²
//! filter passes (about 6000 for a weekly season).

use super::filter::Smooth;
use super::states::residuals_jacobian;
use super::EtsSpec;
use crate::numerics::{dot, hessian};
use nalgebra::DMatrix;

/// S, Jᵀe and J (column-major n × k) of the errors at weights `w`.
type Sums = (f64, Vec<f64>, Vec<f64>);

/// The covariance (row-major) of x = (the free weights, their count
/// `n_w` first; z; σ²) at the estimate x; `smooth_at(w)` the filter's
/// weights with the free ones set to w. None where a value is not finite
/// or −H is not positive definite.
pub(super) fn covariance(
    spec: &EtsSpec,
    y: &[f64],
    x: &[f64],
    n_w: usize,
    smooth_at: &dyn Fn(&[f64]) -> Smooth,
) -> Option<Vec<f64>> {
    let kk = x.len();
    let k = kk - n_w - 1;
    let n = y.len();
    let (z, s2) = (&x[n_w..n_w + k], x[kk - 1]);
    let sums = |w: &[f64]| -> Option<Sums> {
        let (e, jac) = residuals_jacobian(spec, &smooth_at(w), z, y)?;
        let jte = jac.chunks_exact(n).map(|c| dot(c, &e)).collect();
        Some((dot(&e, &e), jte, jac))
    };
    let w0 = &x[..n_w];
    let (s0, g0, jac) = sums(w0)?;
    let mut neg = DMatrix::zeros(kk, kk);
    let mut set = |i: usize, j: usize, v: f64| {
        neg[(i, j)] = v;
        neg[(j, i)] = v;
    };
    let cols: Vec<&[f64]> = jac.chunks_exact(n).collect();
    for a in 0..k {
        for b in 0..=a {
            set(n_w + a, n_w + b, dot(cols[a], cols[b]) / s2);
        }
        set(n_w + a, kk - 1, -g0[a] / (s2 * s2));
    }
    set(
        kk - 1,
        kk - 1,
        s0 / (s2 * s2 * s2) - n as f64 / (2.0 * s2 * s2),
    );
    let h: Vec<f64> = w0.iter().map(|v| hessian::step(*v, 0.1)).collect();
    let moved = |moves: &[(usize, f64)]| {
        let mut w = w0.to_vec();
        for &(i, d) in moves {
            w[i] += d;
        }
        sums(&w)
    };
    for i in 0..n_w {
        let (sp, gp, _) = moved(&[(i, h[i])])?;
        let (sm, gm, _) = moved(&[(i, -h[i])])?;
        set(i, i, (sp - 2.0 * s0 + sm) / (2.0 * s2 * h[i] * h[i]));
        for a in 0..k {
            set(i, n_w + a, (gp[a] - gm[a]) / (2.0 * h[i] * s2));
        }
        set(i, kk - 1, -(sp - sm) / (4.0 * h[i] * s2 * s2));
        for j in 0..i {
            let s = |di: f64, dj: f64| moved(&[(i, di * h[i]), (j, dj * h[j])]).map(|m| m.0);
            let four = s(1.0, 1.0)? - s(1.0, -1.0)? - s(-1.0, 1.0)? + s(-1.0, -1.0)?;
            set(i, j, four / (8.0 * h[i] * h[j] * s2));
        }
    }
    hessian::invert(neg)
}
