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

    /// a ← T a + k v, in place (each a[i + 1] is read before it is written).
    fn update(&self, a: &mut [f64], k: &[f64], v: f64) {
        let r = self.r;
        let a0 = a[0];
        for i in 0..r - 1 {
            a[i] = (self.phi[i] * a0 + a[i + 1]) + k[i] * v;
        }
        a[r - 1] = self.phi[r - 1] * a0 + k[r - 1] * v;
    }

    /// x ← T x, in place.
    fn advance(&self, x: &mut [f64]) {
        let r = self.r;
        let x0 = x[0];
        for i in 0..r - 1 {
            x[i] = self.phi[i] * x0 + x[i + 1];
        }
        x[r - 1] = self.phi[r - 1] * x0;
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

/// The initial state covariance the filter starts from (unit innovation
/// variance): its first column, which is all the likelihood needs, or the
/// whole matrix, when the covariance at the end is wanted (forecasts).
pub(super) enum Initial {
    /// P_1 e_1 (length r)
    Column(Vec<f64>),
    /// P_1 (row-major r × r, symmetric)
    Full(Vec<f64>),
}

impl Initial {
    fn column(&self, r: usize) -> Vec<f64> {
        match self {
            Initial::Column(c) => c.clone(),
            Initial::Full(p) => (0..r).map(|i| p[i * r]).collect(),
        }
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
    /// its covariance (unit innovation variance); empty when the filter
    /// started from [`Initial::Column`]
    pub(super) p: Vec<f64>,
}

/// Relative tolerance for switching to the steady-state filter.
const STEADY_TOL: f64 = 1e-13;

/// The covariance recursion in Chandrasekhar form (Morf, Sidhu & Kailath
/// 1974; Herbst 2015): for a time-invariant model started from its
/// stationary covariance P_1 = T P_1 T′ + R R′, the increments
/// P_{t+1} − P_t = M_t W_t W_t′ have rank one, so F_t = P_t[0][0] and the
/// unnormalised gain K̄_t = T P_t e_1 follow in O(r) per step instead of
/// the O(r²) of propagating P. With u = T W_t and g = W_t[0]:
/// F_{t+1} = F_t + M_t g², K̄_{t+1} = K̄_t + M_t g u,
/// W_{t+1} = u − K̄_t g / F_t, M_{t+1} = M_t F_t / F_{t+1};
/// W_1 = K̄_1, M_1 = −1/F_1 (the stationary equation).
struct Gain {
    /// F_t
    f: f64,
    /// K̄_t / F_t, the gain the state update uses
    k: Vec<f64>,
    kbar: Vec<f64>,
    w: Vec<f64>,
    m: f64,
    /// F_1, the scale of the steady-state test
    scale: f64,
    /// P_t in full, when asked for
    p: Option<Vec<f64>>,
    steady: bool,
}

impl Gain {
    fn new(ss: &StateSpace, start: &Initial) -> Result<Self, ArimaError> {
        let r = ss.r;
        let col = start.column(r);
        let f = col[0];
        let mut kbar = vec![0.0; r];
        ss.transition(&col, &mut kbar);
        let p = match start {
            Initial::Full(p) => Some(p.clone()),
            Initial::Column(_) => None,
        };
        let mut g = Gain {
            f,
            k: vec![0.0; r],
            w: kbar.clone(),
            kbar,
            m: -1.0 / f,
            scale: f.max(1.0),
            p,
            steady: false,
        };
        g.check()?;
        Ok(g)
    }

    /// F_t finite and positive; the normalised gain from K̄_t.
    fn check(&mut self) -> Result<(), ArimaError> {
        if !(self.f.is_finite() && self.f > 0.0) {
            return Err(ArimaError::NonFinite {
                context: "Kalman filter prediction variance",
            });
        }
        let inv = 1.0 / self.f;
        for (k, kb) in self.k.iter_mut().zip(&self.kbar) {
            *k = kb * inv;
        }
        Ok(())
    }

    /// From step t to t + 1 (nothing once steady).
    fn advance(&mut self, ss: &StateSpace) -> Result<(), ArimaError> {
        if self.steady {
            return Ok(());
        }
        let r = ss.r;
        let (m, g) = (self.m, self.w[0]);
        if let Some(p) = self.p.as_mut() {
            for i in 0..r {
                let mwi = m * self.w[i];
                for j in 0..r {
                    p[i * r + j] += mwi * self.w[j];
                }
            }
        }
        let wmax = self.w.iter().fold(0.0f64, |a, wi| a.max(wi * wi));
        ss.advance(&mut self.w);
        let f_next = self.f + m * g * g;
        let kg = g / self.f;
        let mg = m * g;
        for (w, kbar) in self.w.iter_mut().zip(self.kbar.iter_mut()) {
            let u = *w;
            *w = u - *kbar * kg;
            *kbar += mg * u;
        }
        self.m = m * self.f / f_next;
        self.f = f_next;
        self.check()?;
        // The increment just applied was below the tolerance: P has converged.
        if (m.abs() * wmax) <= STEADY_TOL * self.scale {
            self.steady = true;
        }
        Ok(())
    }
}

/// Σ ln F_t as the logarithm of running products (one logarithm per
/// stretch of the product within 1e±150, not one per step).
struct LogSum {
    sum: f64,
    product: f64,
}

impl Default for LogSum {
    fn default() -> Self {
        LogSum {
            sum: 0.0,
            product: 1.0,
        }
    }
}

impl LogSum {
    fn add(&mut self, f: f64) {
        if (1e-100..1e100).contains(&f) {
            self.product *= f;
            if !(1e-150..1e150).contains(&self.product) {
                self.sum += self.product.ln();
                self.product = 1.0;
            }
        } else {
            self.sum += f.ln();
        }
    }

    fn total(&self) -> f64 {
        self.sum + self.product.ln()
    }
}

/// Kalman filter over `x`, with regressor columns (a column of ones for the
/// GLS mean, differenced regressors) run through the same gains in
/// lockstep. The gain follows the Chandrasekhar recursion ([`Gain`]) and
/// stops once the covariance has converged.
///
/// One function because it is the likelihood's inner loop: the state and
/// the regressors' states live in local buffers updated together at every
/// step; split, they would be passed on every step.
pub(super) fn run_filter(
    ss: &StateSpace,
    start: &Initial,
    x: &[f64],
    columns: &[Vec<f64>],
) -> Result<FilterOut, ArimaError> {
    let r = ss.r;
    let kc = columns.len();
    let mut gain = Gain::new(ss, start)?;
    let mut a_y = vec![0.0; r];
    let mut a_x = vec![vec![0.0; r]; kc];
    let mut v = vec![0.0; kc];
    let mut out = FilterOut {
        wxy: vec![0.0; kc],
        wxx: vec![0.0; kc * kc],
        uxy: vec![0.0; kc],
        uxx: vec![0.0; kc * kc],
        ..FilterOut::default()
    };
    let mut log_f = LogSum::default();
    for (t, &xt) in x.iter().enumerate() {
        let f = gain.f;
        log_f.add(f);
        let vy = xt - a_y[0];
        out.wyy += vy * vy / f;
        out.uyy += vy * vy;
        ss.update(&mut a_y, &gain.k, vy);
        for (j, (col, a)) in columns.iter().zip(a_x.iter_mut()).enumerate() {
            let vj = col[t] - a[0];
            v[j] = vj;
            out.wxy[j] += vy * vj / f;
            out.uxy[j] += vy * vj;
            ss.update(a, &gain.k, vj);
        }
        for j in 0..kc {
            for l in 0..=j {
                out.wxx[j * kc + l] += v[j] * v[l] / f;
                out.uxx[j * kc + l] += v[j] * v[l];
            }
        }
        gain.advance(ss)?;
    }
    out.sum_log_f = log_f.total();
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
    out.p = gain.p.unwrap_or_default();
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
/// the Kronecker solution for the non-seasonal model, the autocovariance
/// route for the seasonal one; in full (`full`, for the covariance at the
/// end of the data) or only its first column (the likelihood).
pub(super) fn state_space(
    phi: &[f64],
    theta: &[f64],
    seasonal: bool,
    full: bool,
) -> Result<(StateSpace, Initial), ArimaError> {
    let ss = StateSpace::new(phi, theta);
    let start = match (seasonal, full) {
        (true, true) => Initial::Full(super::covariance::stationary_cov(&ss, phi, theta)?),
        (true, false) => Initial::Column(super::covariance::stationary_column(&ss, phi, theta)?),
        (false, _) => Initial::Full(ss.stationary_cov()?),
    };
    Ok((ss, start))
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
    let (ss, start) = state_space(phi, theta, seasonal, false)?;
    let fo = run_filter(&ss, &start, w, columns)?;
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

#[cfg(test)]
mod tests {
    use super::*;

    /// The textbook covariance recursion P_{t+1} = T P_t T′ + R R′ − K̄ K̄′/F
    /// (Durbin & Koopman 2012, §4.3), run for `steps`: (Σ ln F_t, P_end).
    fn plain_recursion(ss: &StateSpace, p0: &[f64], steps: usize) -> (f64, Vec<f64>) {
        let r = ss.r;
        let (mut p, mut m, mut pn) = (p0.to_vec(), vec![0.0; r * r], vec![0.0; r * r]);
        let mut sum_log_f = 0.0;
        for _ in 0..steps {
            let f = p[0];
            sum_log_f += f.ln();
            let col: Vec<f64> = (0..r).map(|i| p[i * r]).collect();
            let mut kbar = vec![0.0; r];
            ss.transition(&col, &mut kbar);
            ss.propagate(&p, &mut m, &mut pn);
            for i in 0..r {
                for j in 0..r {
                    pn[i * r + j] -= kbar[i] * kbar[j] / f;
                }
            }
            std::mem::swap(&mut p, &mut pn);
        }
        (sum_log_f, p)
    }

    #[test]
    fn chandrasekhar_gain_equals_the_plain_covariance_recursion() {
        // The same recursion rewritten (algebraic identity): Σ ln F and
        // the covariance at the end agree with the O(r²) form, for short
        // samples (before the steady state) and long ones (after it).
        let cases: [(&[f64], &[f64], bool); 4] = [
            (&[0.6], &[0.3], false),
            (&[0.5, -0.3], &[0.4, 0.2], false),
            // airline-like: (1 − 0.4L)(1 − 0.6L¹²) expanded
            (
                &[],
                &[-0.4, 0., 0., 0., 0., 0., 0., 0., 0., 0., 0., -0.6, 0.24],
                true,
            ),
            (
                &[0.3, 0., 0., 0.5, -0.15],
                &[0.2, 0., 0., -0.7, -0.14],
                true,
            ),
        ];
        for (phi, theta, seasonal) in cases {
            for steps in [3usize, 40, 400] {
                let (ss, full) = state_space(phi, theta, seasonal, true).unwrap();
                let Initial::Full(p0) = &full else { panic!() };
                let x = vec![0.0; steps];
                let fo = run_filter(&ss, &full, &x, &[]).unwrap();
                let (want_log_f, want_p) = plain_recursion(&ss, p0, steps);
                assert!((fo.sum_log_f - want_log_f).abs() < 1e-10 * (1.0 + want_log_f.abs()));
                for (a, b) in fo.p.iter().zip(&want_p) {
                    assert!(
                        (a - b).abs() < 1e-10,
                        "{phi:?} {theta:?} {steps}: {a} vs {b}"
                    );
                }
                let (_, column) = state_space(phi, theta, seasonal, false).unwrap();
                let fc = run_filter(&ss, &column, &x, &[]).unwrap();
                assert!((fc.sum_log_f - fo.sum_log_f).abs() < 1e-12 * (1.0 + want_log_f.abs()));
            }
        }
    }
}
