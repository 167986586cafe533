//! Estimation by exact maximum likelihood: the profile objective in the
//! unconstrained coefficients, the warm start, the screened cold starts and
//! the BFGS runs (see the module docs of `arima` for the strategy).

use super::kalman::profile;
use super::reparam::{constrain, unconstrain_start};
use super::start::hannan_rissanen;
use super::{check_order, difference, positive, ArimaError, ArimaFit, ArimaOrder, ArimaParams};
use crate::numerics::optimise::bfgs::{bfgs, BfgsError, Optimum};

const MAX_ITER: usize = 400;
/// Iterations of the screening run from each cold start.
const SCREEN_ITER: usize = 12;
/// Screened starts continued to convergence.
const KEEP_STARTS: usize = 3;

impl From<BfgsError> for ArimaError {
    fn from(e: BfgsError) -> Self {
        match e {
            BfgsError::NonFiniteStart => ArimaError::NonFinite {
                context: "log-likelihood at the start values",
            },
            BfgsError::NonConvergence {
                iterations,
                gradient,
            } => ArimaError::NonConvergence {
                iterations,
                gradient,
            },
        }
    }
}

fn run_bfgs(
    f: impl FnMut(&[f64]) -> f64,
    x0: &[f64],
    max_iter: usize,
    strict: bool,
) -> Result<Optimum, ArimaError> {
    Ok(bfgs(f, x0, max_iter, strict)?)
}

/// Fewest differenced observations accepted: one more than the parameters
/// (coefficients, mean and σ²) and at least r + 1 for the state.
fn min_obs(order: &ArimaOrder) -> usize {
    let k = order.p + order.q + usize::from(order.has_mean()) + 1;
    (k + 1).max(order.p.max(order.q + 1) + 1)
}

/// The modelled series: w = Δ^d y and its centred copy x (centred on its
/// mean when μ is estimated), after the checks on order, data and length.
fn prepare(y: &[f64], order: &ArimaOrder) -> Result<(Vec<f64>, Vec<f64>), ArimaError> {
    check_order(order)?;
    if !y.iter().all(|v| v.is_finite()) {
        return Err(ArimaError::NonFinite { context: "data" });
    }
    let w = difference(y, order.d);
    let needed = min_obs(order);
    if w.len() < needed {
        return Err(ArimaError::TooShort {
            needed,
            got: w.len(),
        });
    }
    let n = w.len() as f64;
    let centre = if order.has_mean() {
        w.iter().sum::<f64>() / n
    } else {
        0.0
    };
    let x: Vec<f64> = w.iter().map(|v| v - centre).collect();
    let spread = x.iter().fold(0.0f64, |a, v| a.max(v.abs()));
    if !positive(spread - 1e-12 * (1.0 + centre.abs())) {
        return Err(ArimaError::Degenerate {
            reason: "the (differenced) series is constant; the likelihood is unbounded",
        });
    }
    Ok((w, x))
}

/// The best optimum so far and the last failure.
#[derive(Default)]
struct Search {
    best: Option<Optimum>,
    last_err: Option<ArimaError>,
}

impl Search {
    fn consider(&mut self, res: Result<Optimum, ArimaError>) {
        match res {
            Ok(o) => {
                if self.best.as_ref().is_none_or(|b| o.fx < b.fx) {
                    self.best = Some(o);
                }
            }
            Err(e) => self.last_err = Some(e),
        }
    }
}

/// The cold starts in the unconstrained coefficients. ARMA likelihoods are
/// often multimodal: e.g. an MA(1) on an over-differenced series has an
/// interior mode and a better one near θ = −1, and Nile ARIMA(2,1,2) has
/// modes at −630.445 and −630.155; Hannan–Rissanen and the origin both lead
/// to the worse mode there. So a cold fit also starts from a fixed
/// space-filling set (Kronecker sequence with golden-ratio steps) of partial
/// autocorrelations in (−0.9, 0.9): deterministic, hence reproducible.
/// After a warm fit only the structured starts (Hannan–Rissanen, the
/// origin, near a unit root) are screened: the space-filling set is what
/// makes a cold fit expensive.
fn cold_starts(x: &[f64], p: usize, q: usize, after_warm: bool) -> Vec<Vec<f64>> {
    let mut starts = Vec::new();
    let (phi0, theta0) = hannan_rissanen(x, p, q);
    let u_hr = unconstrain_start(&phi0, &theta0);
    starts.push(u_hr.clone());
    if p + q == 0 {
        return starts;
    }
    starts.push(vec![0.0; p + q]);
    // Near a unit root at z = 1 (1 − Σa_j = Π(1 − r_k), so r_1 → 1): the MA
    // mode of over-differenced series, the AR mode of persistent ones.
    let near_one = 0.95f64.atanh();
    if q > 0 {
        let mut u = u_hr.clone();
        u[p..].iter_mut().for_each(|v| *v = 0.0);
        u[p] = near_one;
        starts.push(u);
    }
    if p > 0 {
        let mut u = u_hr.clone();
        u[..p].iter_mut().for_each(|v| *v = 0.0);
        u[0] = near_one;
        starts.push(u);
    }
    let extra = if after_warm {
        0
    } else {
        2 + 2 * (p + q).min(3)
    };
    let alpha: Vec<f64> = (0..p + q)
        .map(|i| ((i as f64 + 2.0).sqrt() * 0.5 + 0.618_033_988_749_894_8 * (i + 1) as f64).fract())
        .collect();
    for k in 1..=extra {
        let u = alpha
            .iter()
            .map(|a| {
                let v = (0.5 + k as f64 * a).fract();
                (1.8 * v - 0.9).atanh()
            })
            .collect();
        starts.push(u);
    }
    starts
}

/// Estimate ARIMA(p, d, q) on `y` (levels) by exact maximum likelihood.
/// `warm`: the parameters of a previous fit of the same order (e.g. the last
/// window), run first; cold starts are screened and continued only if better.
pub(crate) fn estimate(
    y: &[f64],
    order: &ArimaOrder,
    warm: Option<&ArimaParams>,
) -> Result<ArimaFit, ArimaError> {
    let (w, x) = prepare(y, order)?;
    let (p, q) = (order.p, order.q);
    let has_mean = order.has_mean();
    let n = w.len() as f64;
    let objective = |u: &[f64]| -> f64 {
        let (phi, theta) = constrain(u, p);
        match profile(&w, &phi, &theta, has_mean) {
            Ok(pr) => -pr.loglik / n,
            Err(_) => f64::INFINITY,
        }
    };
    let mut search = Search::default();
    if let Some(wp) = warm.filter(|wp| wp.ar.len() == p && wp.ma.len() == q) {
        let start = unconstrain_start(&wp.ar, &wp.ma);
        search.consider(run_bfgs(objective, &start, MAX_ITER, true));
    }
    // A warm start alone can stay on a lower mode that the previous window
    // preferred; the cold starts are therefore always screened (a short run
    // each), the best few continued to convergence, and after a warm fit
    // only those already better than it.
    let warm_found = search.best.is_some();
    let mut stage1: Vec<Optimum> = Vec::new();
    for u in &cold_starts(&x, p, q, warm_found) {
        match run_bfgs(objective, u, SCREEN_ITER, false) {
            Ok(o) => stage1.push(o),
            Err(e) => search.last_err = Some(e),
        }
    }
    stage1.sort_by(|a, b| a.fx.total_cmp(&b.fx));
    if warm_found {
        stage1.retain(|o| {
            search
                .best
                .as_ref()
                .is_some_and(|b| o.fx < b.fx - 1e-9 * (1.0 + b.fx.abs()))
        });
    }
    for o in stage1.into_iter().take(KEEP_STARTS) {
        if o.converged {
            search.consider(Ok(o));
        } else {
            search.consider(run_bfgs(objective, &o.x, MAX_ITER, true));
        }
    }
    let opt = match search.best {
        Some(o) => o,
        None => {
            return Err(search.last_err.unwrap_or(ArimaError::NonFinite {
                context: "log-likelihood",
            }));
        }
    };
    fit_at(&w, order, &opt)
}

/// The fit at an optimum: coefficients, GLS mean, σ² and the likelihood.
fn fit_at(w: &[f64], order: &ArimaOrder, opt: &Optimum) -> Result<ArimaFit, ArimaError> {
    let (p, q) = (order.p, order.q);
    let has_mean = order.has_mean();
    let (phi, theta) = constrain(&opt.x, p);
    let pr = profile(w, &phi, &theta, has_mean)?;
    let params = ArimaParams {
        ar: phi,
        ma: theta,
        mean_or_drift: pr.mu,
        sigma2: pr.sigma2,
    };
    if !(pr.is_mse.is_finite() && params.mean_or_drift.is_finite()) {
        return Err(ArimaError::NonFinite {
            context: "estimates",
        });
    }
    Ok(ArimaFit {
        order: *order,
        sigma2: pr.sigma2,
        params,
        loglik: pr.loglik,
        is_mse: pr.is_mse,
        n_params: p + q + usize::from(has_mean) + 1,
        nobs: w.len(),
        iterations: opt.iterations,
    })
}
