//! The stationary covariance of Harvey's ARMA state for the seasonal
//! model, where the state is long (r = max(p + mP, q + mQ + 1), 14 for the
//! airline model) and solving (I − T⊗T) vec P = vec(RR′) — an r² × r²
//! system — would cost more than the filter itself.
//!
//! Instead the state is written as a linear map of lagged values and
//! innovations, α_t = M z_t with z_t = (w_{t−1}, …, w_{t−p}, ε_t, …, ε_{t−r+1})
//! and α_t[i] = Σ_k φ_{i+k+1} w_{t−1−k} + Σ_k θ_{i+k} ε_{t−k} (unrolling the
//! transition), so P = M Var(z) M′. Var(z) holds the autocovariances γ_k
//! of the ARMA (the Toeplitz block), the cross-covariances
//! E[w_{t−1−k} ε_{t−l}] = σ² ψ_{l−1−k} (ψ the MA(∞) weights) and the
//! identity. The γ_0..γ_p solve the p + 1 linear equations
//! γ_k − Σ φ_i γ_{|k−i|} = σ² Σ_{j=k}^{q} θ_j ψ_{j−k} (Brockwell & Davis
//! 1991, §3.3, the third method). Both routes solve the same Lyapunov
//! equation; a test checks that they agree. The non-seasonal model keeps
//! the Kronecker route, so its numbers are unchanged.

use super::kalman::StateSpace;
use super::ArimaError;
use nalgebra::{DMatrix, DVector};

/// MA(∞) weights ψ_0..ψ_{count−1} of θ(L)/φ(L).
fn psi_weights(phi: &[f64], theta: &[f64], count: usize) -> Vec<f64> {
    let mut psi = vec![0.0; count];
    for j in 0..count {
        let mut v = if j == 0 {
            1.0
        } else {
            theta.get(j - 1).copied().unwrap_or(0.0)
        };
        for i in 1..=phi.len().min(j) {
            v += phi[i - 1] * psi[j - i];
        }
        psi[j] = v;
    }
    psi
}

/// Autocovariances γ_0..γ_p of the ARMA with unit innovation variance.
fn autocovariances(phi: &[f64], theta: &[f64], psi: &[f64]) -> Result<Vec<f64>, ArimaError> {
    let p = phi.len();
    let q = theta.len();
    let mut a = DMatrix::<f64>::zeros(p + 1, p + 1);
    let mut b = DVector::<f64>::zeros(p + 1);
    for k in 0..=p {
        a[(k, k)] += 1.0;
        for i in 1..=p {
            a[(k, k.abs_diff(i))] -= phi[i - 1];
        }
        let mut rhs = 0.0;
        for j in k..=q {
            let th = if j == 0 { 1.0 } else { theta[j - 1] };
            rhs += th * psi[j - k];
        }
        b[k] = rhs;
    }
    let sol = a.lu().solve(&b).ok_or(ArimaError::NonFinite {
        context: "initial state covariance",
    })?;
    Ok(sol.iter().copied().collect())
}

/// α_t = M z_t and Var(z) (see the module docs): M (r × width) and Var(z)
/// (width × width), row-major, width = p + r.
struct LaggedForm {
    width: usize,
    m: Vec<f64>,
    v: Vec<f64>,
}

fn lagged_form(ss: &StateSpace, phi: &[f64], theta: &[f64]) -> Result<LaggedForm, ArimaError> {
    let r = ss.r;
    let p = phi.len();
    let psi = psi_weights(phi, theta, r.max(theta.len() + 1));
    let gamma = if p > 0 {
        autocovariances(phi, theta, &psi)?
    } else {
        Vec::new()
    };
    let width = p + r;
    let mut m = vec![0.0; r * width];
    for i in 0..r {
        for k in 0..p.min(r - i) {
            m[i * width + k] = ss.phi[i + k];
        }
        for k in 0..r - i {
            m[i * width + p + k] = ss.rv[i + k];
        }
    }
    let mut v = vec![0.0; width * width];
    for k in 0..p {
        for l in 0..p {
            v[k * width + l] = gamma[k.abs_diff(l)];
        }
        for l in (k + 1)..r {
            let c = psi[l - 1 - k];
            v[k * width + p + l] = c;
            v[(p + l) * width + k] = c;
        }
    }
    for l in 0..r {
        v[(p + l) * width + p + l] = 1.0;
    }
    Ok(LaggedForm { width, m, v })
}

fn checked(out: Vec<f64>) -> Result<Vec<f64>, ArimaError> {
    if !out.iter().all(|x| x.is_finite()) || !super::positive(out[0]) {
        return Err(ArimaError::NonFinite {
            context: "initial state covariance",
        });
    }
    Ok(out)
}

/// P = Var(α_t) for unit innovation variance (row-major r × r); `phi` and
/// `theta` the expanded polynomials the state space was built from.
pub(super) fn stationary_cov(
    ss: &StateSpace,
    phi: &[f64],
    theta: &[f64],
) -> Result<Vec<f64>, ArimaError> {
    let r = ss.r;
    let LaggedForm { width, m, v } = lagged_form(ss, phi, theta)?;
    // A = M V, then P = A M′ (symmetric: the upper triangle is mirrored).
    let mut a = vec![0.0; r * width];
    for i in 0..r {
        for k in 0..width {
            let mik = m[i * width + k];
            if mik == 0.0 {
                continue;
            }
            for l in 0..width {
                a[i * width + l] += mik * v[k * width + l];
            }
        }
    }
    let mut out = vec![0.0; r * r];
    for i in 0..r {
        for j in i..r {
            let s: f64 = (0..width)
                .map(|l| a[i * width + l] * m[j * width + l])
                .sum();
            out[i * r + j] = s;
            out[j * r + i] = s;
        }
    }
    checked(out)
}

/// The first column of [`stationary_cov`], P e_1 = M Var(z) M′ e_1: all
/// that the likelihood's filter needs (O(width²) instead of O(r·width²)).
pub(super) fn stationary_column(
    ss: &StateSpace,
    phi: &[f64],
    theta: &[f64],
) -> Result<Vec<f64>, ArimaError> {
    let r = ss.r;
    let LaggedForm { width, m, v } = lagged_form(ss, phi, theta)?;
    // b = Var(z) M′ e_1 (Var(z) is symmetric), then M b.
    let m0 = &m[..width];
    let b: Vec<f64> = (0..width)
        .map(|k| {
            v[k * width..(k + 1) * width]
                .iter()
                .zip(m0)
                .map(|(a, c)| a * c)
                .sum()
        })
        .collect();
    let out = (0..r)
        .map(|i| {
            m[i * width..(i + 1) * width]
                .iter()
                .zip(&b)
                .map(|(a, c)| a * c)
                .sum()
        })
        .collect();
    checked(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn agrees_with_the_kronecker_solution_of_the_lyapunov_equation() {
        // Both solve P = TPT′ + RR′ (property by construction): the
        // Kronecker route of the non-seasonal model is the yardstick.
        let cases: [(&[f64], &[f64]); 5] = [
            (&[0.6], &[]),
            (&[], &[0.4, -0.2]),
            (&[0.5, -0.3], &[0.4]),
            (&[0.9, 0.0, 0.0, 0.5, -0.45], &[0.3, 0.0, 0.0, -0.6, -0.18]),
            (&[0.2, 0.1, 0.05], &[0.7, 0.1, 0.0, 0.2, 0.1]),
        ];
        for (phi, theta) in cases {
            let ss = StateSpace::new(phi, theta);
            let kron = ss.stationary_cov().unwrap();
            let ours = stationary_cov(&ss, phi, theta).unwrap();
            let column = stationary_column(&ss, phi, theta).unwrap();
            for (i, c) in column.iter().enumerate() {
                let a = kron[i * ss.r];
                assert!(
                    (a - c).abs() < 1e-10 * (1.0 + a.abs()),
                    "{phi:?} {theta:?}: {a} vs {c}"
                );
            }
            for (a, b) in kron.iter().zip(&ours) {
                assert!(
                    (a - b).abs() < 1e-10 * (1.0 + a.abs()),
                    "{phi:?} {theta:?}: {a} vs {b}"
                );
            }
        }
    }
}
