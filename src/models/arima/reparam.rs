//! The stationarity and invertibility reparametrisation (Jones 1980;
//! Monahan 1984): unconstrained values ↦ partial autocorrelations
//! tanh(u) ∈ (−1, 1) ↦ coefficients by the Durbin–Levinson recursion, and
//! back for start values. The seasonal model applies the same map to each
//! of its four polynomials φ, θ, Φ, Θ separately: a product of stationary
//! (invertible) factors is stationary (invertible), so the optimiser
//! cannot leave the region.

/// Partial autocorrelations in (−1, 1) → AR coefficients (Durbin–Levinson).
pub(super) fn pacf_to_coef(r: &[f64]) -> Vec<f64> {
    let n = r.len();
    let mut phi = vec![0.0; n];
    let mut prev = vec![0.0; n];
    for k in 0..n {
        phi[k] = r[k];
        for j in 0..k {
            phi[j] = prev[j] - r[k] * prev[k - 1 - j];
        }
        prev[..=k].copy_from_slice(&phi[..=k]);
    }
    phi
}

/// AR coefficients → partial autocorrelations; `None` if not stationary.
pub(super) fn coef_to_pacf(phi: &[f64]) -> Option<Vec<f64>> {
    let n = phi.len();
    let mut cur = phi.to_vec();
    let mut r = vec![0.0; n];
    for k in (0..n).rev() {
        let rk = cur[k];
        if !rk.is_finite() || rk.abs() >= 1.0 {
            return None;
        }
        r[k] = rk;
        let denom = 1.0 - rk * rk;
        let prev: Vec<f64> = (0..k)
            .map(|j| (cur[j] + rk * cur[k - 1 - j]) / denom)
            .collect();
        cur[..k].copy_from_slice(&prev);
    }
    Some(r)
}

/// Unconstrained vector (p + q) → (φ, θ).
/// Bound on the unconstrained parameters: |partial autocorrelation| ≤
/// tanh(10) = 1 − 4.1e-9. MLEs on the unit-root boundary (over-differenced
/// series drive θ to −1) would otherwise make the optimiser creep towards
/// infinity for hundreds of evaluations to gain < 1e-6 in log-likelihood; the
/// objective is flat beyond the bound, which stops it.
const U_MAX: f64 = 10.0;

pub(super) fn constrain(u: &[f64], p: usize) -> (Vec<f64>, Vec<f64>) {
    let t = |x: &f64| x.clamp(-U_MAX, U_MAX).tanh();
    let ra: Vec<f64> = u[..p].iter().map(t).collect();
    let rm: Vec<f64> = u[p..].iter().map(t).collect();
    let phi = pacf_to_coef(&ra);
    let theta = pacf_to_coef(&rm).into_iter().map(|x| -x).collect();
    (phi, theta)
}

/// The four coefficient lists of u = (u_φ, u_θ, u_Φ, u_Θ) with lengths
/// (p, q, P, Q) = `lengths`: (φ, θ, Φ, Θ).
pub(super) fn constrain_seasonal(u: &[f64], lengths: [usize; 4]) -> [Vec<f64>; 4] {
    let t = |x: &f64| x.clamp(-U_MAX, U_MAX).tanh();
    let mut at = 0;
    let mut part = |len: usize, sign: f64| {
        let r: Vec<f64> = u[at..at + len].iter().map(t).collect();
        at += len;
        pacf_to_coef(&r)
            .into_iter()
            .map(|x| sign * x)
            .collect::<Vec<f64>>()
    };
    let phi = part(lengths[0], 1.0);
    let theta = part(lengths[1], -1.0);
    let sphi = part(lengths[2], 1.0);
    let stheta = part(lengths[3], -1.0);
    [phi, theta, sphi, stheta]
}

/// (φ, θ, Φ, Θ) → unconstrained, each shrunk into its region as for
/// [`unconstrain_start`].
pub(super) fn unconstrain_seasonal(
    phi: &[f64],
    theta: &[f64],
    sphi: &[f64],
    stheta: &[f64],
) -> Vec<f64> {
    let mut u = unconstrain_start(phi, theta);
    u.extend(unconstrain_start(sphi, stheta));
    u
}

/// Largest |partial autocorrelation| allowed for a start value.
const START_PACF_MAX: f64 = 0.99;

/// (φ, θ) → unconstrained; coefficients outside the region are shrunk towards
/// it (roots pushed outwards) until they are inside. Used for start values.
pub(super) fn unconstrain_start(phi: &[f64], theta: &[f64]) -> Vec<f64> {
    fn one(c: &[f64]) -> Vec<f64> {
        let mut scale = 1.0;
        for _ in 0..60 {
            let scaled: Vec<f64> = c
                .iter()
                .enumerate()
                .map(|(j, x)| x * scale_pow(scale, j + 1))
                .collect();
            if let Some(r) = coef_to_pacf(&scaled) {
                return r
                    .iter()
                    .map(|x| x.clamp(-START_PACF_MAX, START_PACF_MAX).atanh())
                    .collect();
            }
            scale *= 0.9;
        }
        vec![0.0; c.len()]
    }
    fn scale_pow(s: f64, k: usize) -> f64 {
        s.powi(k as i32)
    }
    let mut u = one(phi);
    let neg: Vec<f64> = theta.iter().map(|x| -x).collect();
    u.extend(one(&neg));
    u
}
