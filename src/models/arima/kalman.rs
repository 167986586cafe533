//! The state-space form of an ARMA and its Kalman filter: the stationary
//! initial covariance, the filter that runs the data and a column of ones
//! in lockstep (for the GLS mean), and the profile likelihood with μ and σ²
//! concentrated out (Harvey 1989; Durbin & Koopman 2001, §3.4 and §5.6).

use super::{positive, ArimaError};
use nalgebra::{DMatrix, DVector};

// State space (Harvey 1989): α_{t+1} = T α_t + R ε_{t+1}, w_t − μ = α_t[0]
// T[i][0] = φ_{i+1}, T[i][i+1] = 1;  R = (1, θ_1, …, θ_{r−1})';  r = max(p, q+1)

pub(super) struct StateSpace {
    pub(super) r: usize,
    /// length r, zero padded
    pub(super) phi: Vec<f64>,
    /// length r: 1, θ_1, …, zero padded
    pub(super) rv: Vec<f64>,
}

impl StateSpace {
    pub(super) fn new(phi: &[f64], theta: &[f64]) -> Self {
        let r = phi.len().max(theta.len() + 1);
        let mut ph = vec![0.0; r];
        ph[..phi.len()].copy_from_slice(phi);
        let mut rv = vec![0.0; r];
        rv[0] = 1.0;
        rv[1..=theta.len()].copy_from_slice(theta);
        StateSpace { r, phi: ph, rv }
    }

    /// out = T x
    pub(super) fn transition(&self, x: &[f64], out: &mut [f64]) {
        let r = self.r;
        for i in 0..r {
            out[i] = self.phi[i] * x[0] + if i + 1 < r { x[i + 1] } else { 0.0 };
        }
    }

    /// out = T P T' + R R' (row-major r×r), using `m` as scratch for T P.
    pub(super) fn propagate(&self, p: &[f64], m: &mut [f64], out: &mut [f64]) {
        let r = self.r;
        for i in 0..r {
            for j in 0..r {
                m[i * r + j] =
                    self.phi[i] * p[j] + if i + 1 < r { p[(i + 1) * r + j] } else { 0.0 };
            }
        }
        for i in 0..r {
            for j in 0..r {
                out[i * r + j] = self.phi[j] * m[i * r]
                    + if j + 1 < r { m[i * r + j + 1] } else { 0.0 }
                    + self.rv[i] * self.rv[j];
            }
        }
    }

    /// Stationary state covariance for unit innovation variance: the solution
    /// of P = T P T' + R R', via (I − T⊗T) vec P = vec(R R'). The r²×r² system
    /// is tiny for the orders used in practice (r ≤ 5 → 25×25).
    pub(super) fn stationary_cov(&self) -> Result<Vec<f64>, ArimaError> {
        let r = self.r;
        if r == 1 {
            let denom = 1.0 - self.phi[0] * self.phi[0];
            let v = self.rv[0] * self.rv[0] / denom;
            if !(v.is_finite() && v > 0.0) {
                return Err(ArimaError::NonFinite {
                    context: "initial state covariance",
                });
            }
            return Ok(vec![v]);
        }
        let t = |i: usize, k: usize| -> f64 {
            if k == 0 {
                self.phi[i]
            } else if k == i + 1 {
                1.0
            } else {
                0.0
            }
        };
        let n = r * r;
        let mut a = DMatrix::<f64>::zeros(n, n);
        let mut b = DVector::<f64>::zeros(n);
        for i in 0..r {
            for j in 0..r {
                let row = i * r + j;
                b[row] = self.rv[i] * self.rv[j];
                for k in 0..r {
                    let tik = t(i, k);
                    if tik == 0.0 {
                        continue;
                    }
                    for l in 0..r {
                        let tjl = t(j, l);
                        if tjl != 0.0 {
                            a[(row, k * r + l)] -= tik * tjl;
                        }
                    }
                }
                a[(row, row)] += 1.0;
            }
        }
        let sol = a.lu().solve(&b).ok_or(ArimaError::NonFinite {
            context: "initial state covariance",
        })?;
        let mut p: Vec<f64> = sol.iter().copied().collect();
        // symmetrise
        for i in 0..r {
            for j in 0..i {
                let v = 0.5 * (p[i * r + j] + p[j * r + i]);
                p[i * r + j] = v;
                p[j * r + i] = v;
            }
        }
        if !p.iter().all(|x| x.is_finite()) || !positive(p[0]) {
            return Err(ArimaError::NonFinite {
                context: "initial state covariance",
            });
        }
        Ok(p)
    }
}

/// Sums accumulated by the filter (unit innovation variance).
#[derive(Default)]
pub(super) struct FilterOut {
    pub(super) sum_log_f: f64,
    /// Σ v_y²/F and, per regressor column j (its innovations v_j), Σ v_y v_j/F
    /// and Σ v_j v_l/F (row-major k × k).
    pub(super) wyy: f64,
    pub(super) wxy: Vec<f64>,
    pub(super) wxx: Vec<f64>,
    /// The same sums unweighted.
    pub(super) uyy: f64,
    pub(super) uxy: Vec<f64>,
    pub(super) uxx: Vec<f64>,
    /// predicted state of the data column after the last observation
    pub(super) a_y: Vec<f64>,
    /// its covariance (unit innovation variance)
    pub(super) p: Vec<f64>,
}

/// Relative tolerance for switching to the steady-state filter.
const STEADY_TOL: f64 = 1e-13;

/// Kalman filter over `x`, with regressor columns (a column of ones for the
/// GLS mean, differenced regressors) run through the same gains in
/// lockstep. The covariance recursion stops once it has converged.
///
/// One function because it is the likelihood's inner loop: the state, its
/// covariance and the regressors' states live in local buffers updated
/// together at every step; split, they would be passed on every step.
pub(super) fn run_filter(
    ss: &StateSpace,
    p0: &[f64],
    x: &[f64],
    columns: &[Vec<f64>],
) -> Result<FilterOut, ArimaError> {
    let r = ss.r;
    let kc = columns.len();
    let mut p = p0.to_vec();
    let mut pn = vec![0.0; r * r];
    let mut m = vec![0.0; r * r];
    let mut k = vec![0.0; r];
    let mut a_y = vec![0.0; r];
    let mut a_x = vec![vec![0.0; r]; kc];
    let mut v = vec![0.0; kc];
    let mut tmp = vec![0.0; r];
    let mut out = FilterOut {
        wxy: vec![0.0; kc],
        wxx: vec![0.0; kc * kc],
        uxy: vec![0.0; kc],
        uxx: vec![0.0; kc * kc],
        ..FilterOut::default()
    };
    let mut steady = false;
    let mut f = p[0];
    let mut log_f = 0.0;
    for (t, &xt) in x.iter().enumerate() {
        if !steady || t == 0 {
            f = p[0];
            if !(f.is_finite() && f > 0.0) {
                return Err(ArimaError::NonFinite {
                    context: "Kalman filter prediction variance",
                });
            }
            log_f = f.ln();
            // K = T P Z' / F, Z = e_1
            for i in 0..r {
                k[i] = (ss.phi[i] * p[0] + if i + 1 < r { p[(i + 1) * r] } else { 0.0 }) / f;
            }
        }
        out.sum_log_f += log_f;
        let vy = xt - a_y[0];
        out.wyy += vy * vy / f;
        out.uyy += vy * vy;
        ss.transition(&a_y, &mut tmp);
        for i in 0..r {
            a_y[i] = tmp[i] + k[i] * vy;
        }
        for (j, (col, a)) in columns.iter().zip(a_x.iter_mut()).enumerate() {
            let vj = col[t] - a[0];
            v[j] = vj;
            out.wxy[j] += vy * vj / f;
            out.uxy[j] += vy * vj;
            ss.transition(a, &mut tmp);
            for i in 0..r {
                a[i] = tmp[i] + k[i] * vj;
            }
        }
        for j in 0..kc {
            for l in 0..=j {
                out.wxx[j * kc + l] += v[j] * v[l] / f;
                out.uxx[j * kc + l] += v[j] * v[l];
            }
        }
        if !steady {
            ss.propagate(&p, &mut m, &mut pn);
            let mut diff: f64 = 0.0;
            let mut scale: f64 = 1.0;
            for i in 0..r {
                for j in 0..r {
                    let v = pn[i * r + j] - k[i] * k[j] * f;
                    pn[i * r + j] = v;
                    diff = diff.max((v - p[i * r + j]).abs());
                    scale = scale.max(v.abs());
                }
            }
            std::mem::swap(&mut p, &mut pn);
            if diff <= STEADY_TOL * scale {
                steady = true;
            }
        }
    }
    if !(out.wyy.is_finite() && out.sum_log_f.is_finite()) {
        return Err(ArimaError::NonFinite {
            context: "Kalman filter innovations",
        });
    }
    for j in 0..kc {
        for l in 0..j {
            out.wxx[l * kc + j] = out.wxx[j * kc + l];
            out.uxx[l * kc + j] = out.uxx[j * kc + l];
        }
    }
    out.a_y = a_y;
    out.p = p;
    Ok(out)
}

/// Profile (β and σ² concentrated) evaluation at given ARMA coefficients.
pub(super) struct Profile {
    pub(super) loglik: f64,
    /// GLS coefficients of the columns (the mean or drift first when estimated).
    pub(super) beta: Vec<f64>,
    pub(super) sigma2: f64,
    pub(super) is_mse: f64,
}

pub(super) const LN_2PI: f64 = 1.837_877_066_409_345_3;

/// The state space of expanded polynomials and its stationary covariance:
/// the Kronecker solution for the non-seasonal model (its numbers as they
/// always were), the autocovariance route for the seasonal one.
pub(super) fn state_space(
    phi: &[f64],
    theta: &[f64],
    seasonal: bool,
) -> Result<(StateSpace, Vec<f64>), ArimaError> {
    let ss = StateSpace::new(phi, theta);
    let p0 = if seasonal {
        super::covariance::stationary_cov(&ss, phi, theta)?
    } else {
        ss.stationary_cov()?
    };
    Ok((ss, p0))
}

/// The exact log-likelihood of `w` with the regression coefficients of
/// `columns` and σ² concentrated out (generalised least squares through
/// the filter's innovations).
pub(super) fn profile(
    w: &[f64],
    columns: &[Vec<f64>],
    phi: &[f64],
    theta: &[f64],
    seasonal: bool,
) -> Result<Profile, ArimaError> {
    let (ss, p0) = state_space(phi, theta, seasonal)?;
    let fo = run_filter(&ss, &p0, w, columns)?;
    let n = w.len() as f64;
    let (beta, ss_w, ss_u) = super::regression::concentrate(&fo)?;
    let sigma2 = ss_w / n;
    if !(sigma2.is_finite() && sigma2 > 0.0) {
        return Err(ArimaError::NonFinite {
            context: "innovation variance",
        });
    }
    let loglik = -0.5 * n * (LN_2PI + 1.0 + sigma2.ln()) - 0.5 * fo.sum_log_f;
    if !loglik.is_finite() {
        return Err(ArimaError::NonFinite {
            context: "log-likelihood",
        });
    }
    Ok(Profile {
        loglik,
        beta,
        sigma2,
        is_mse: (ss_u / n).max(0.0),
    })
}
