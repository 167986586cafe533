//! The free initial states z = (l_0, [b_0], s_{1−m}, …, s_{−1}) (s_0 makes
//! the season sum to 0, or average 1) and their concentration: for given
//! smoothing parameters the best z solves a least-squares problem, exactly
//! by one Gauss–Newton step for the linear models and by
//! Levenberg–Marquardt for a multiplicative season, with the Jacobian from
//! a forward-mode (tangent) pass of the filter.

use super::filter::{initial_state, relative_sums, run_filter, Smooth};
use super::{EtsParams, EtsSpec};
use crate::numerics::lsq::householder::least_squares;
use crate::numerics::optimise::levenberg_marquardt::levenberg_marquardt;

fn z_to_states(spec: &EtsSpec, z: &[f64]) -> (f64, f64, Vec<f64>) {
    let l0 = z[0];
    let mut k = 1;
    let b0 = if spec.has_trend() {
        k += 1;
        z[1]
    } else {
        0.0
    };
    let season0 = if spec.has_season() {
        let m = spec.period;
        let c = if spec.multiplicative() { m as f64 } else { 0.0 };
        let mut s: Vec<f64> = z[k..k + m - 1].to_vec();
        let sum: f64 = s.iter().sum();
        s.push(c - sum);
        s
    } else {
        Vec::new()
    };
    (l0, b0, season0)
}

pub(super) fn params_from(spec: &EtsSpec, sm: &Smooth, z: &[f64]) -> EtsParams {
    let (level0, trend0, season0) = z_to_states(spec, z);
    EtsParams {
        alpha: sm.alpha,
        beta: sm.beta,
        gamma: sm.gamma,
        phi: sm.phi,
        level0,
        trend0,
        season0,
    }
}

/// Free initial states of given (possibly unnormalised) states, normalised.
pub(super) fn z_from_params(spec: &EtsSpec, p: &EtsParams) -> Option<Vec<f64>> {
    let mut z = vec![p.level0];
    if spec.has_trend() {
        z.push(p.trend0);
    }
    if spec.has_season() {
        let m = spec.period;
        if p.season0.len() != m || p.season0.iter().any(|v| !v.is_finite()) {
            return None;
        }
        if spec.multiplicative() {
            let mean = p.season0.iter().sum::<f64>() / m as f64;
            if mean <= 0.0 {
                return None;
            }
            z[0] *= mean;
            if spec.has_trend() {
                z[1] *= mean;
            }
            z.extend(p.season0[..m - 1].iter().map(|v| v / mean));
        } else {
            let mean = p.season0.iter().sum::<f64>() / m as f64;
            z[0] += mean;
            z.extend(p.season0[..m - 1].iter().map(|v| v - mean));
        }
    }
    if z.iter().all(|v| v.is_finite()) {
        Some(z)
    } else {
        None
    }
}

/// Classical start for the initial states: level = mean of the first season
/// (first few values without a season), trend = mean change between the first
/// two seasons, seasonal states = first season's deviations (ratios).
pub(super) fn heuristic_z(spec: &EtsSpec, y: &[f64]) -> Vec<f64> {
    let n = y.len();
    let m = if spec.has_season() { spec.period } else { 1 };
    let mean = |a: &[f64]| a.iter().sum::<f64>() / a.len() as f64;
    let w = if spec.has_season() { m } else { n.min(4) };
    let l0 = mean(&y[..w]);
    let mut z = vec![l0];
    if spec.has_trend() {
        let b0 = if spec.has_season() && n >= 2 * m {
            (mean(&y[m..2 * m]) - l0) / m as f64
        } else if n >= 2 {
            y[1] - y[0]
        } else {
            0.0
        };
        z.push(b0);
    }
    if spec.has_season() {
        let mut s: Vec<f64> = if spec.multiplicative() {
            y[..m].iter().map(|v| v / l0).collect()
        } else {
            y[..m].iter().map(|v| v - l0).collect()
        };
        let mean_s = mean(&s);
        for v in &mut s {
            if spec.multiplicative() {
                *v /= mean_s;
            } else {
                *v -= mean_s;
            }
        }
        z.extend_from_slice(&s[..m - 1]);
    }
    z
}

/// The filter's states along a pass and their derivatives (tangents) with
/// respect to the free initial states z.
struct Tangents {
    l: f64,
    b: f64,
    s: Vec<f64>,
    dl: Vec<f64>,
    db: Vec<f64>,
    /// ∂s/∂z, slot by slot (m × k).
    ds: Vec<f64>,
    du: Vec<f64>,
    /// ∂e_t/∂z of the last period.
    de: Vec<f64>,
}

impl Tangents {
    /// The initial states of z and their tangents: ∂l_0/∂z_0 = 1,
    /// ∂b_0/∂z_1 = 1, and s_{1−m+j} = z_j except the last, minus their sum.
    fn start(spec: &EtsSpec, z: &[f64]) -> Tangents {
        let k = z.len();
        let m = spec.slots();
        let (l0, b0, season0) = z_to_states(spec, z);
        let s = if spec.has_season() {
            season0
        } else {
            vec![0.0]
        };
        let mut dl = vec![0.0; k];
        let mut db = vec![0.0; k];
        let mut ds = vec![0.0; m * k];
        dl[0] = 1.0;
        let mut off = 1;
        if spec.has_trend() {
            db[1] = 1.0;
            off = 2;
        }
        if spec.has_season() {
            for j in 0..m - 1 {
                ds[j * k + off + j] = 1.0;
                ds[(m - 1) * k + off + j] = -1.0;
            }
        }
        Tangents {
            l: l0,
            b: b0,
            s,
            dl,
            db,
            ds,
            du: vec![0.0; k],
            de: vec![0.0; k],
        }
    }

    /// Period t with observation yt: the one-step error (its gradient left in
    /// `de`), states and tangents advanced; `None` when a multiplicative
    /// divisor is 0 or a value turns non-finite.
    fn step(&mut self, sm: &Smooth, mult: bool, t: usize, yt: f64) -> Option<f64> {
        let k = self.dl.len();
        let idx = t % self.s.len();
        let u = self.l + sm.phi * self.b;
        let si = self.s[idx];
        let (dl, db, du, de) = (&mut self.dl, &mut self.db, &mut self.du, &mut self.de);
        for i in 0..k {
            du[i] = dl[i] + sm.phi * db[i];
        }
        let dsi = &mut self.ds[idx * k..(idx + 1) * k];
        let e;
        if mult {
            if si == 0.0 || u == 0.0 {
                return None;
            }
            e = yt - u * si;
            for i in 0..k {
                de[i] = -(du[i] * si + u * dsi[i]);
            }
            let inv_s = 1.0 / si;
            let inv_u = 1.0 / u;
            for i in 0..k {
                let d_es = de[i] * inv_s - e * dsi[i] * inv_s * inv_s;
                let d_eu = de[i] * inv_u - e * du[i] * inv_u * inv_u;
                dl[i] = du[i] + sm.alpha * d_es;
                db[i] = sm.phi * db[i] + sm.beta * d_es;
                dsi[i] += sm.gamma * d_eu;
            }
            self.l = u + sm.alpha * e * inv_s;
            self.b = sm.phi * self.b + sm.beta * e * inv_s;
            self.s[idx] = si + sm.gamma * e * inv_u;
        } else {
            e = yt - (u + si);
            for i in 0..k {
                de[i] = -(du[i] + dsi[i]);
            }
            for i in 0..k {
                dl[i] = du[i] + sm.alpha * de[i];
                db[i] = sm.phi * db[i] + sm.beta * de[i];
                dsi[i] += sm.gamma * de[i];
            }
            self.l = u + sm.alpha * e;
            self.b = sm.phi * self.b + sm.beta * e;
            self.s[idx] = si + sm.gamma * e;
        }
        let finite =
            e.is_finite() && self.l.is_finite() && self.b.is_finite() && self.s[idx].is_finite();
        finite.then_some(e)
    }
}

/// One-step errors and their Jacobian with respect to z (column-major n×k)
/// by a forward-mode pass of the filter. `None` when non-finite.
pub(super) fn residuals_jacobian(
    spec: &EtsSpec,
    sm: &Smooth,
    z: &[f64],
    y: &[f64],
) -> Option<(Vec<f64>, Vec<f64>)> {
    let n = y.len();
    let k = z.len();
    let mult = spec.multiplicative();
    let mut tan = Tangents::start(spec, z);
    let mut r = vec![0.0; n];
    let mut jac = vec![0.0; n * k];
    for (t, &yt) in y.iter().enumerate() {
        r[t] = tan.step(sm, mult, t, yt)?;
        for i in 0..k {
            jac[i * n + t] = tan.de[i];
        }
    }
    if jac.iter().all(|v| v.is_finite()) {
        Some((r, jac))
    } else {
        None
    }
}

fn sse_at_z(spec: &EtsSpec, sm: &Smooth, z: &[f64], y: &[f64]) -> Option<f64> {
    let p = params_from(spec, sm, z);
    let mut st = initial_state(spec, &p);
    run_filter(spec.multiplicative(), sm, &mut st, y, None)
}

/// The least-squares form of a multiplicative-error likelihood at z:
/// Σ (g ε_t)², g the geometric mean of the predictions (see
/// [`super::filter::RelativeSums::scaled`]).
fn scaled_at_z(spec: &EtsSpec, sm: &Smooth, z: &[f64], y: &[f64]) -> Option<f64> {
    let p = params_from(spec, sm, z);
    let mut st = initial_state(spec, &p);
    relative_sums(spec.multiplicative(), sm, &mut st, y).map(|r| r.scaled(y.len()))
}

/// The residuals r_t = g ε_t of the multiplicative-error likelihood in
/// least-squares form and their Jacobian (column-major n×k), from the
/// one-step errors' tangents: with ŷ_t = y_t − e_t, ∂ε_t = ∂e_t · y_t/ŷ_t²
/// and ∂ln g = −(1/n) Σ_t ∂e_t/ŷ_t. `None` where some ŷ_t ≤ 0.
fn relative_residuals_jacobian(
    spec: &EtsSpec,
    sm: &Smooth,
    z: &[f64],
    y: &[f64],
) -> Option<(Vec<f64>, Vec<f64>)> {
    let (mut r, mut jac) = residuals_jacobian(spec, sm, z, y)?;
    let n = y.len();
    let yhat: Vec<f64> = y.iter().zip(&r).map(|(yt, e)| yt - e).collect();
    if yhat.iter().any(|&v| v <= 0.0 || !v.is_finite()) {
        return None;
    }
    let nf = n as f64;
    let g = (yhat.iter().map(|v| v.ln()).sum::<f64>() / nf).exp();
    for (rt, mu) in r.iter_mut().zip(&yhat) {
        *rt /= mu; // ε_t
    }
    for col in jac.chunks_mut(n) {
        let dlng = -col.iter().zip(&yhat).map(|(d, mu)| d / mu).sum::<f64>() / nf;
        for t in 0..n {
            col[t] = g * (col[t] * y[t] / (yhat[t] * yhat[t]) + r[t] * dlng);
        }
    }
    for rt in &mut r {
        *rt *= g;
    }
    let finite = g.is_finite() && jac.iter().all(|v| v.is_finite());
    finite.then_some((r, jac))
}

/// Best initial states for given smoothing parameters, from `z0`.
/// Linear models with an additive error: one exact Gauss–Newton (least
/// squares) step. Multiplicative season: Levenberg–Marquardt. Multiplicative
/// error: Levenberg–Marquardt on the likelihood's least-squares form.
/// Returns (SSE, z), the SSE of that least-squares form.
pub(super) fn inner_solve(
    spec: &EtsSpec,
    sm: &Smooth,
    y: &[f64],
    z0: &[f64],
) -> Option<(f64, Vec<f64>)> {
    let n = y.len();
    if spec.mult_error() {
        return levenberg_marquardt(
            |z: &[f64]| relative_residuals_jacobian(spec, sm, z, y),
            |z: &[f64]| scaled_at_z(spec, sm, z, y),
            z0,
            n,
        );
    }
    if spec.multiplicative() {
        return levenberg_marquardt(
            |z: &[f64]| residuals_jacobian(spec, sm, z, y),
            |z: &[f64]| sse_at_z(spec, sm, z, y),
            z0,
            n,
        );
    }
    let (mut r, jac) = residuals_jacobian(spec, sm, z0, y)?;
    for v in &mut r {
        *v = -*v;
    }
    let d = least_squares(jac, r, n, z0.len())?;
    let z: Vec<f64> = z0.iter().zip(d.iter()).map(|(zi, di)| zi + di).collect();
    let sse = sse_at_z(spec, sm, &z, y)?;
    Some((sse, z))
}
