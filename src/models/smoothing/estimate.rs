//! Estimation by maximum likelihood (minimum SSE, σ² concentrated out):
//! Nelder–Mead over the at most four smoothing parameters mapped onto the
//! unit box, the initial states concentrated out at every evaluation, from
//! a grid of starts or a warm start, with restarts.

use super::filter::{initial_state, relative_sums, run_filter, Smooth, State};
use super::states::{heuristic_z, inner_solve, params_from, z_from_params};
use super::{check_data, EtsError, EtsFit, EtsParams, EtsSpec, PAR_HI, PAR_LO, PHI_HI, PHI_LO};
use crate::numerics::optimise::nelder_mead::{nelder_mead, Simplex};
use crate::spec::SmoothingTrend;

fn smooth_from_u(spec: &EtsSpec, u: &[f64]) -> Smooth {
    let map = |v: f64, lo: f64, hi: f64| lo + (hi - lo) * v.clamp(0.0, 1.0);
    let mut i = 0;
    let alpha = map(u[i], PAR_LO, PAR_HI);
    i += 1;
    let mut beta = 0.0;
    if spec.has_trend() {
        beta = alpha * map(u[i], PAR_LO, PAR_HI);
        i += 1;
    }
    let mut gamma = 0.0;
    if spec.has_season() {
        gamma = (1.0 - alpha) * map(u[i], PAR_LO, PAR_HI);
        i += 1;
    }
    let mut phi = 1.0;
    if spec.trend == SmoothingTrend::Damped {
        phi = map(u[i], PHI_LO, PHI_HI);
    }
    Smooth {
        alpha,
        beta,
        gamma,
        phi,
    }
}

fn u_from_params(spec: &EtsSpec, p: &EtsParams) -> Option<Vec<f64>> {
    let inv = |v: f64, lo: f64, hi: f64| ((v - lo) / (hi - lo)).clamp(0.0, 1.0);
    if !(p.alpha.is_finite() && p.beta.is_finite() && p.gamma.is_finite() && p.phi.is_finite()) {
        return None;
    }
    let alpha = p.alpha.clamp(PAR_LO, PAR_HI);
    let mut u = vec![inv(alpha, PAR_LO, PAR_HI)];
    if spec.has_trend() {
        u.push(inv(p.beta / alpha, PAR_LO, PAR_HI));
    }
    if spec.has_season() {
        u.push(inv(p.gamma / (1.0 - alpha), PAR_LO, PAR_HI));
    }
    if spec.trend == SmoothingTrend::Damped {
        u.push(inv(p.phi, PHI_LO, PHI_HI));
    }
    Some(u)
}

/// The outer problem: ln SSE (for a multiplicative error, ln of the
/// likelihood's least-squares form) over the smoothing parameters in the unit box,
/// with the best point and initial states seen so far.
struct Problem<'a> {
    spec: &'a EtsSpec,
    y: &'a [f64],
    z_start: Vec<f64>,
    evals: usize,
    best_f: f64,
    best_u: Vec<f64>,
    best_z: Vec<f64>,
}

impl Problem<'_> {
    /// ln SSE at u (initial states concentrated out); +∞ where undefined.
    fn eval(&mut self, u: &[f64]) -> f64 {
        self.evals += 1;
        let sm = smooth_from_u(self.spec, u);
        let nonlinear = self.spec.nonlinear_states();
        let start = if nonlinear && !self.best_z.is_empty() {
            self.best_z.clone()
        } else {
            self.z_start.clone()
        };
        let mut res = inner_solve(self.spec, &sm, self.y, &start);
        if res.is_none() && nonlinear {
            res = inner_solve(self.spec, &sm, self.y, &self.z_start);
        }
        let f = match res {
            Some((sse, z)) if sse.is_finite() && sse > 0.0 => {
                let f = sse.ln();
                if f < self.best_f {
                    self.best_f = f;
                    self.best_u = u.to_vec();
                    self.best_z = z;
                }
                f
            }
            Some((0.0, z)) => {
                // a perfect fit: keep it, with a finite objective
                let f = f64::MIN_POSITIVE.ln();
                if f < self.best_f {
                    self.best_f = f;
                    self.best_u = u.to_vec();
                    self.best_z = z;
                }
                f
            }
            _ => f64::INFINITY,
        };
        if f.is_nan() {
            f64::INFINITY
        } else {
            f
        }
    }
}

/// Starting grid on the unit box.
fn start_grid(spec: &EtsSpec) -> Vec<Vec<f64>> {
    let to_u = |v: f64, lo: f64, hi: f64| (v - lo) / (hi - lo);
    let alphas = [0.05, 0.2, 0.5, 0.8, 0.98];
    let betas: &[f64] = if spec.has_trend() {
        &[0.02, 0.2, 0.6]
    } else {
        &[f64::NAN]
    };
    let gammas: &[f64] = if spec.has_season() {
        &[0.02, 0.2, 0.5]
    } else {
        &[f64::NAN]
    };
    let phis: &[f64] = if spec.trend == SmoothingTrend::Damped {
        &[0.85, 0.95]
    } else {
        &[f64::NAN]
    };
    let mut out = Vec::new();
    for &a in &alphas {
        for &b in betas {
            for &g in gammas {
                for &p in phis {
                    let mut u = vec![to_u(a, PAR_LO, PAR_HI)];
                    if !b.is_nan() {
                        u.push(to_u(b, PAR_LO, PAR_HI));
                    }
                    if !g.is_nan() {
                        u.push(to_u(g, PAR_LO, PAR_HI));
                    }
                    if !p.is_nan() {
                        u.push(to_u(p, PHI_LO, PHI_HI));
                    }
                    out.push(u);
                }
            }
        }
    }
    out
}

const MAX_NM: usize = 1500;
/// ln-SSE margin: a grid point up to ~3 % worse than the warm optimum may
/// still lie in a better basin.
const WARM_MARGIN: f64 = 0.03;

impl Problem<'_> {
    /// A Nelder–Mead descent from `start` with an initial simplex `step`.
    fn descend(&mut self, start: &[f64], step: f64) -> Simplex {
        nelder_mead(&mut |u: &[f64]| self.eval(u), start, step, MAX_NM)
    }

    /// From a warm start, with insurance against a stale one in a
    /// multimodal likelihood: scan the grid (cheap) and descend from its
    /// best point away from the warm optimum when that point is not clearly
    /// worse (a basin whose minimum may be lower). Whether a run converged.
    fn search_from_warm(&mut self, u0: &[f64], grid: &[Vec<f64>]) -> bool {
        let r = self.descend(u0, 0.05);
        let mut converged = r.converged;
        let (warm_f, warm_x) = (r.f, r.x);
        let mut best_g: Option<(f64, usize)> = None;
        for (i, u) in grid.iter().enumerate() {
            let f = self.eval(u);
            let far = u
                .iter()
                .zip(warm_x.iter())
                .any(|(a, b)| (a - b).abs() > 0.15);
            if far && best_g.is_none_or(|(bf, _)| f < bf) {
                best_g = Some((f, i));
            }
        }
        if let Some((gf, gi)) = best_g {
            if gf < warm_f + WARM_MARGIN {
                converged |= self.descend(&grid[gi], 0.1).converged;
            }
        }
        converged
    }

    /// Cold: descend from the three best finite grid points (ties by grid
    /// order). Whether a run converged.
    fn search_from_grid(&mut self, grid: &[Vec<f64>]) -> bool {
        let mut scored: Vec<(f64, usize)> = grid
            .iter()
            .enumerate()
            .map(|(i, u)| (self.eval(u), i))
            .collect();
        scored.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
        let mut converged = false;
        for &(_, i) in scored.iter().filter(|(f, _)| f.is_finite()).take(3) {
            converged |= self.descend(&grid[i], 0.1).converged;
        }
        converged
    }

    /// Finer restarts from the best point (simplex steps 0.01 and 0.002),
    /// for a multiplicative error: its likelihood often has a narrow ridge
    /// along the box's edge (e.g. γ at 1 − α), where the coarser restarts
    /// stop at a corner. Whether a run converged.
    fn polish(&mut self) -> bool {
        let mut converged = false;
        for step in [0.01, 0.002] {
            let start = self.best_u.clone();
            converged |= self.descend(&start, step).converged;
        }
        converged
    }

    /// Restarts from the best point until they stop improving (at most 4).
    /// Whether a run converged.
    fn restart(&mut self) -> bool {
        let mut converged = false;
        for _ in 0..4 {
            let before = self.best_f;
            let start = self.best_u.clone();
            converged |= self.descend(&start, 0.05).converged;
            if before - self.best_f <= 1e-10 {
                break;
            }
        }
        converged
    }
}

/// Estimate an ETS(·,·,·) model on `y` by maximum likelihood. `warm` (for
/// example the previous origin's parameters in an expanding or rolling window)
/// is tried first; an incompatible warm start (wrong season length) only
/// contributes what fits.
pub(crate) fn estimate(
    y: &[f64],
    spec: &EtsSpec,
    warm: Option<&EtsParams>,
) -> Result<EtsFit, EtsError> {
    spec.validate()?;
    let n = y.len();
    if n < spec.min_obs() {
        return Err(EtsError::TooShort {
            needed: spec.min_obs(),
            got: n,
        });
    }
    check_data(spec, y)?;
    let z_heur = heuristic_z(spec, y);
    let mut prob = Problem {
        spec,
        y,
        z_start: z_heur.clone(),
        evals: 0,
        best_f: f64::INFINITY,
        best_u: Vec::new(),
        best_z: Vec::new(),
    };
    let warm_u = warm.and_then(|w| u_from_params(spec, w));
    if let Some(w) = warm {
        if spec.nonlinear_states() {
            if let Some(z) = z_from_params(spec, w) {
                prob.z_start = z;
            }
        }
    }
    let grid = start_grid(spec);
    let mut any_converged = match warm_u {
        Some(u0) => prob.search_from_warm(&u0, &grid),
        None => prob.search_from_grid(&grid),
    };
    if !prob.best_f.is_finite() {
        return Err(EtsError::NonFinite {
            what: "likelihood at every starting point".into(),
        });
    }
    any_converged |= prob.restart();
    if spec.mult_error() {
        any_converged |= prob.polish();
    }
    if !any_converged {
        return Err(EtsError::NonConvergence {
            evaluations: prob.evals,
            detail: format!("Nelder-Mead budget of {MAX_NM} evaluations per run exhausted"),
        });
    }
    fit_at(spec, y, &prob)
}

/// The fit at the best point found: parameters, SSE and the concentrated
/// likelihood −n/2·(ln(2π σ̂²) + 1), σ̂² = SSE/n.
fn fit_at(spec: &EtsSpec, y: &[f64], prob: &Problem) -> Result<EtsFit, EtsError> {
    let n = y.len();
    let sm = smooth_from_u(spec, &prob.best_u);
    let params = params_from(spec, &sm, &prob.best_z);
    let mut st = initial_state(spec, &params);
    if spec.mult_error() {
        return relative_fit(spec, y, prob, params, st);
    }
    let sse = run_filter(spec.multiplicative(), &sm, &mut st, y, None).ok_or_else(|| {
        EtsError::NonFinite {
            what: "filter at the estimated parameters".into(),
        }
    })?;
    let nf = n as f64;
    let sigma2 = sse / nf;
    let loglik = -0.5 * nf * ((2.0 * std::f64::consts::PI * sigma2).ln() + 1.0);
    if !(sse.is_finite() && loglik.is_finite()) {
        return Err(EtsError::NonFinite {
            what: "likelihood at the estimated parameters (a perfect fit?)".into(),
        });
    }
    Ok(EtsFit {
        spec: *spec,
        params,
        sse,
        is_mse: sigma2,
        sigma2,
        loglik,
        n_params: spec.n_params(),
        nobs: n,
        evaluations: prob.evals,
    })
}

/// The fit of a multiplicative-error model: σ̂² = Σ ε_t²/n of the relative
/// errors and ℓ = −n/2·(ln(2π σ̂²) + 1) − Σ ln ŷ_t (Hyndman et al. 2008,
/// §5.2); `is_mse` stays the mean squared one-step error y_t − ŷ_t.
fn relative_fit(
    spec: &EtsSpec,
    y: &[f64],
    prob: &Problem,
    params: EtsParams,
    mut st: State,
) -> Result<EtsFit, EtsError> {
    let sm = Smooth::of(&params, spec);
    let sums = relative_sums(spec.multiplicative(), &sm, &mut st, y).ok_or_else(|| {
        EtsError::NonFinite {
            what: "filter at the estimated parameters (a prediction ≤ 0?)".into(),
        }
    })?;
    let nf = y.len() as f64;
    let sigma2 = sums.sum_eps2 / nf;
    let loglik = -0.5 * nf * ((2.0 * std::f64::consts::PI * sigma2).ln() + 1.0) - sums.sum_ln_yhat;
    if !(sigma2 > 0.0 && loglik.is_finite()) {
        return Err(EtsError::NonFinite {
            what: "likelihood at the estimated parameters (a perfect fit?)".into(),
        });
    }
    Ok(EtsFit {
        spec: *spec,
        params,
        sse: sums.sse,
        is_mse: sums.sse / nf,
        sigma2,
        loglik,
        n_params: spec.n_params(),
        nobs: y.len(),
        evaluations: prob.evals,
    })
}
