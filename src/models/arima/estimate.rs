//! Estimation by exact maximum likelihood: the profile objective in the
//! unconstrained coefficients, the warm start, the screened cold starts and
//! the BFGS runs (see the module docs of `arima` for the strategy).

use super::kalman::profile;
use super::reparam::{constrain, constrain_seasonal, unconstrain_seasonal, unconstrain_start};
use super::start::hannan_rissanen;
use super::{
    check_order, difference_order, positive, ArimaError, ArimaFit, ArimaOrder, ArimaParams,
};
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
/// (coefficients, regression columns and σ²) and at least r + 1 for the state.
fn min_obs(order: &ArimaOrder, columns: usize) -> usize {
    let s = order.season();
    let k = order.coefficients() + columns + 1;
    (k + 1).max((order.p + s.m * s.p).max(order.q + s.m * s.q + 1) + 1)
}

/// What the likelihood is computed on: w = Δ^d Δ_m^D y, the regression
/// columns (a column of ones for the mean or drift, then the differenced
/// regressors that are not left out), the regressors left out, and x, the
/// series the start values are computed from (w centred on its mean, or
/// its least-squares residuals on the columns).
pub(super) struct Prepared {
    pub(super) w: Vec<f64>,
    pub(super) columns: Vec<Vec<f64>>,
    /// Index of each regressor in `columns` (None: left out).
    pub(super) used: Vec<Option<usize>>,
    x: Vec<f64>,
}

/// The modelled series and its regression columns, after the checks on
/// order, data and length.
pub(super) fn prepare(
    y: &[f64],
    order: &ArimaOrder,
    regressors: &[Vec<f64>],
) -> Result<Prepared, ArimaError> {
    check_order(order)?;
    if !y.iter().all(|v| v.is_finite()) {
        return Err(ArimaError::NonFinite { context: "data" });
    }
    let w = difference_order(y, order);
    let mut columns = Vec::new();
    if order.has_mean() {
        columns.push(vec![1.0; w.len()]);
    }
    let mut used = Vec::with_capacity(regressors.len());
    for raw in regressors {
        if raw.len() != y.len() || !raw.iter().all(|v| v.is_finite()) {
            return Err(ArimaError::NonFinite {
                context: "regressor values",
            });
        }
        let dx = difference_order(raw, order);
        if super::regression::left_out(raw, &dx) {
            used.push(None);
        } else {
            used.push(Some(columns.len()));
            columns.push(dx);
        }
    }
    let needed = min_obs(order, columns.len());
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
    let x: Vec<f64> = if columns.len() > usize::from(order.has_mean()) {
        ols_residuals(&w, &columns)
    } else {
        w.iter().map(|v| v - centre).collect()
    };
    let spread = x.iter().fold(0.0f64, |a, v| a.max(v.abs()));
    if !positive(spread - 1e-12 * (1.0 + centre.abs())) {
        return Err(ArimaError::Degenerate {
            reason: "the (differenced) series is constant; the likelihood is unbounded",
        });
    }
    Ok(Prepared {
        w,
        columns,
        used,
        x,
    })
}

/// Residuals of w on the columns by least squares (start values only).
fn ols_residuals(w: &[f64], columns: &[Vec<f64>]) -> Vec<f64> {
    let rows: Vec<Vec<f64>> = (0..w.len())
        .map(|t| columns.iter().map(|c| c[t]).collect())
        .collect();
    match crate::numerics::lsq::normal_equations::least_squares(&rows, w) {
        Some(b) => (0..w.len())
            .map(|t| w[t] - rows[t].iter().zip(&b).map(|(x, c)| x * c).sum::<f64>())
            .collect(),
        None => w.to_vec(),
    }
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
fn cold_starts(x: &[f64], order: &ArimaOrder, after_warm: bool) -> Vec<Vec<f64>> {
    let (p, q) = (order.p, order.q);
    let s = order.season();
    let all = order.coefficients();
    let mut starts = Vec::new();
    let (phi0, theta0) = hannan_rissanen(x, p, q);
    let mut u_hr = unconstrain_start(&phi0, &theta0);
    u_hr.resize(all, 0.0);
    starts.push(u_hr.clone());
    if all == 0 {
        return starts;
    }
    starts.push(vec![0.0; all]);
    // Near a unit root at z = 1 (1 − Σa_j = Π(1 − r_k), so r_1 → 1): the MA
    // mode of over-differenced series, the AR mode of persistent ones.
    let near_one = 0.95f64.atanh();
    if q > 0 {
        let mut u = u_hr.clone();
        u[p..p + q].iter_mut().for_each(|v| *v = 0.0);
        u[p] = near_one;
        starts.push(u);
    }
    if p > 0 {
        let mut u = u_hr.clone();
        u[..p].iter_mut().for_each(|v| *v = 0.0);
        u[0] = near_one;
        starts.push(u);
    }
    // The same at the seasonal lag: Θ_1 → −1 is the mode of a seasonally
    // over-differenced series, Φ_1 → 1 that of a persistent season.
    if s.q > 0 {
        let mut u = u_hr.clone();
        u[p + q + s.p] = near_one;
        starts.push(u);
    }
    if s.p > 0 {
        let mut u = u_hr.clone();
        u[p + q] = near_one;
        starts.push(u);
    }
    let extra = if after_warm { 0 } else { 2 + 2 * all.min(3) };
    let alpha: Vec<f64> = (0..all)
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

/// The expanded (φ, θ) of unconstrained values: the non-seasonal map as it
/// always was, or the four seasonal factors multiplied out.
fn coefficients_of(u: &[f64], order: &ArimaOrder) -> (Vec<f64>, Vec<f64>) {
    match order.seasonal {
        None => constrain(u, order.p),
        Some(s) => {
            let [phi, theta, sphi, stheta] = constrain_seasonal(u, [order.p, order.q, s.p, s.q]);
            (
                super::poly::multiply_ar(&phi, &sphi, s.m),
                super::poly::multiply_ma(&theta, &stheta, s.m),
            )
        }
    }
}

/// The warm start in unconstrained values, when its lengths fit the order.
fn warm_start(wp: &ArimaParams, order: &ArimaOrder) -> Option<Vec<f64>> {
    let s = order.season();
    let fits = wp.ar.len() == order.p
        && wp.ma.len() == order.q
        && wp.sar.len() == s.p
        && wp.sma.len() == s.q;
    fits.then(|| match order.seasonal {
        None => unconstrain_start(&wp.ar, &wp.ma),
        Some(_) => unconstrain_seasonal(&wp.ar, &wp.ma, &wp.sar, &wp.sma),
    })
}

/// Estimate ARIMA(p, d, q)(P, D, Q)m on `y` (levels) by exact maximum
/// likelihood, with regressors (columns aligned with `y`, undifferenced).
/// `warm`: the parameters of a previous fit of the same order (e.g. the
/// last window), run first; cold starts are screened and continued only if
/// better.
pub(crate) fn estimate(
    y: &[f64],
    order: &ArimaOrder,
    warm: Option<&ArimaParams>,
    regressors: &[Vec<f64>],
) -> Result<ArimaFit, ArimaError> {
    let prep = prepare(y, order, regressors)?;
    let (w, columns) = (&prep.w, &prep.columns);
    let seasonal = order.seasonal.is_some();
    let n = w.len() as f64;
    let objective = |u: &[f64]| -> f64 {
        let (phi, theta) = coefficients_of(u, order);
        match profile(w, columns, &phi, &theta, seasonal) {
            Ok(pr) => -pr.loglik / n,
            Err(_) => f64::INFINITY,
        }
    };
    let mut search = Search::default();
    if let Some(start) = warm.and_then(|wp| warm_start(wp, order)) {
        search.consider(run_bfgs(objective, &start, MAX_ITER, true));
    }
    // A warm start alone can stay on a lower mode that the previous window
    // preferred; the cold starts are therefore always screened (a short run
    // each), the best few continued to convergence, and after a warm fit
    // only those already better than it.
    let warm_found = search.best.is_some();
    let mut stage1: Vec<Optimum> = Vec::new();
    for u in &cold_starts(&prep.x, order, warm_found) {
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
    fit_at(&prep, order, &opt)
}

/// The fit at an optimum: coefficients, GLS regression coefficients, σ²
/// and the likelihood.
fn fit_at(prep: &Prepared, order: &ArimaOrder, opt: &Optimum) -> Result<ArimaFit, ArimaError> {
    let (ar, ma, sar, sma) = match order.seasonal {
        None => {
            let (phi, theta) = constrain(&opt.x, order.p);
            (phi, theta, Vec::new(), Vec::new())
        }
        Some(s) => {
            let [a, b, c, d] = constrain_seasonal(&opt.x, [order.p, order.q, s.p, s.q]);
            (a, b, c, d)
        }
    };
    let (phi, theta) = coefficients_of(&opt.x, order);
    let pr = profile(
        &prep.w,
        &prep.columns,
        &phi,
        &theta,
        order.seasonal.is_some(),
    )?;
    let offset = usize::from(order.has_mean());
    let params = ArimaParams {
        ar,
        ma,
        sar,
        sma,
        mean_or_drift: if order.has_mean() { pr.beta[0] } else { 0.0 },
        beta: prep
            .used
            .iter()
            .map(|u| u.map_or(0.0, |i| pr.beta[i]))
            .collect(),
        sigma2: pr.sigma2,
    };
    debug_assert!(prep.used.iter().flatten().all(|&i| i >= offset));
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
        n_params: order.coefficients() + prep.columns.len() + 1,
        nobs: prep.w.len(),
        iterations: opt.iterations,
        left_out: prep
            .used
            .iter()
            .enumerate()
            .filter(|(_, u)| u.is_none())
            .map(|(j, _)| j)
            .collect(),
    })
}
