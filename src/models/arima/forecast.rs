//! Forecasts of the level: the filter run to the end of the data, the
//! differenced series' forecasts with the full covariance of their errors,
//! integrated back (d times, and D times at the season), plus the
//! regressors' known future values.

use super::kalman::{run_filter, FilterOut, Initial, StateSpace};
use super::{check_order, check_params, difference, difference_order, ArimaError, ArimaFit};

/// Filter `y` (which may extend beyond the estimation sample) with the fit's
/// parameters and forecast h = 1..=max_h steps beyond the end of `y`: returns
/// (mean, variance) per step, for the level of y (undifferenced).
/// `regressors` hold each regressor column over the positions of `y` and
/// the max_h after it (known ahead); the forecast is β′x_{T+h} plus the
/// forecast of the ARIMA error η = y − β′x, whose variance it has.
pub(crate) fn forecast(
    fit: &ArimaFit,
    y: &[f64],
    regressors: &[Vec<f64>],
    max_h: usize,
) -> Result<Vec<(f64, f64)>, ArimaError> {
    forecast_with(fit, y, regressors, max_h, None)
}

/// The covariance (row-major `max_h` × `max_h`, σ² included) of the level
/// forecast errors at steps 1..=max_h from the end of `y`: Ψ C Ψ′ σ² with C
/// the filter's covariance of the differenced series' errors and Ψ the
/// integration weights (its diagonal is [`forecast`]'s variances). The
/// regressors move the mean only, so they are not needed.
pub(crate) fn error_covariance(
    fit: &ArimaFit,
    y: &[f64],
    max_h: usize,
) -> Result<Vec<f64>, ArimaError> {
    let mut full = Vec::new();
    let no_regressors = ArimaFit {
        params: super::ArimaParams {
            beta: Vec::new(),
            ..fit.params.clone()
        },
        left_out: Vec::new(),
        ..fit.clone()
    };
    forecast_with(&no_regressors, y, &[], max_h, Some(&mut full))?;
    Ok(full)
}

fn forecast_with(
    fit: &ArimaFit,
    y: &[f64],
    regressors: &[Vec<f64>],
    max_h: usize,
    full: Option<&mut Vec<f64>>,
) -> Result<Vec<(f64, f64)>, ArimaError> {
    let order = &fit.order;
    check_order(order)?;
    check_params(&fit.params, order)?;
    if !y.iter().all(|v| v.is_finite()) {
        return Err(ArimaError::NonFinite { context: "data" });
    }
    let d = order.differences();
    if y.len() < d + 1 {
        return Err(ArimaError::TooShort {
            needed: d + 1,
            got: y.len(),
        });
    }
    if max_h == 0 {
        return Ok(Vec::new());
    }
    let n = y.len();
    // The regressors with a coefficient (those left out contribute nothing).
    let active: Vec<(f64, &Vec<f64>)> = fit
        .params
        .beta
        .iter()
        .zip(regressors)
        .enumerate()
        .filter(|(j, _)| !fit.left_out.contains(j))
        .map(|(_, (b, x))| (*b, x))
        .collect();
    if fit.params.beta.len() != regressors.len()
        || active
            .iter()
            .any(|(_, x)| x.len() < n + max_h || !x.iter().all(|v| v.is_finite()))
    {
        return Err(ArimaError::InvalidParams {
            reason: "regressor values do not cover the sample and the horizons",
        });
    }
    let eta: Vec<f64>;
    let errors: &[f64] = if active.is_empty() {
        y
    } else {
        eta = (0..n)
            .map(|t| y[t] - active.iter().map(|(b, x)| b * x[t]).sum::<f64>())
            .collect();
        &eta
    };
    let mut out = match order.seasonal {
        None => error_forecast(fit, errors, max_h, full)?,
        Some(_) => seasonal_error_forecast(fit, errors, max_h, full)?,
    };
    for (h, step) in out.iter_mut().enumerate() {
        step.0 += active.iter().map(|(b, x)| b * x[n + h]).sum::<f64>();
        if !step.0.is_finite() {
            return Err(ArimaError::NonFinite {
                context: "forecast",
            });
        }
    }
    Ok(out)
}

/// The non-seasonal model's level forecasts, computed as they always were.
fn error_forecast(
    fit: &ArimaFit,
    y: &[f64],
    max_h: usize,
    full: Option<&mut Vec<f64>>,
) -> Result<Vec<(f64, f64)>, ArimaError> {
    let order = &fit.order;
    let d = order.d;
    let mu = if order.has_mean() {
        fit.params.mean_or_drift
    } else {
        0.0
    };
    let s2 = fit.params.sigma2;
    let x: Vec<f64> = difference(y, d).iter().map(|v| v - mu).collect();
    let ss = StateSpace::new(&fit.params.ar, &fit.params.ma);
    let start = Initial::Full(ss.stationary_cov()?);
    let fo = run_filter(&ss, &start, &x, &[])?;
    let (wf, cov) = differenced_forecasts(&ss, &fo, mu, max_h);
    let psi = integration_weights(d, max_h);
    let levels = undifference(y, d, wf)?;
    if let Some(full) = full {
        *full = level_covariance(&cov, &psi, s2, max_h);
    }
    collect(&levels, &cov, &psi, s2, max_h)
}

/// Ψ C Ψ′ σ², Ψ the lower-triangular Toeplitz matrix of `psi`.
fn level_covariance(cov: &[f64], psi: &[f64], s2: f64, max_h: usize) -> Vec<f64> {
    let mut m = vec![0.0; max_h * max_h];
    for h in 0..max_h {
        for l in 0..max_h {
            m[h * max_h + l] = (0..=h).map(|k| psi[h - k] * cov[k * max_h + l]).sum();
        }
    }
    let mut out = vec![0.0; max_h * max_h];
    for h in 0..max_h {
        for g in 0..max_h {
            out[h * max_h + g] = s2 * (0..=g).map(|l| m[h * max_h + l] * psi[g - l]).sum::<f64>();
        }
    }
    out
}

/// The seasonal model's level forecasts: the differenced series w = Δ^d
/// Δ_m^D y is forecast with the covariance of its errors, and integrated
/// back through 1/((1 − L)^d (1 − L^m)^D). Differencing outside the state
/// space gives the same forecasts and variances as the level model with
/// an exact diffuse start for the d + mD nonstationary states (Durbin &
/// Koopman 2012, §5.7; the reference tests check it against statsmodels'
/// level model so initialised).
fn seasonal_error_forecast(
    fit: &ArimaFit,
    y: &[f64],
    max_h: usize,
    full: Option<&mut Vec<f64>>,
) -> Result<Vec<(f64, f64)>, ArimaError> {
    let order = &fit.order;
    let s = order.season();
    let mu = if order.has_mean() {
        fit.params.mean_or_drift
    } else {
        0.0
    };
    let x: Vec<f64> = difference_order(y, order).iter().map(|v| v - mu).collect();
    let (phi, theta) = fit.params.expanded(s.m);
    let (ss, start) = super::kalman::state_space(&phi, &theta, true, true)?;
    let fo = run_filter(&ss, &start, &x, &[])?;
    let (wf, cov) = differenced_forecasts(&ss, &fo, mu, max_h);
    let psi = super::poly::integration_weights(order.d, s.m, s.d, max_h);
    // Undo the differences in reverse order: D seasonal ones, then d.
    let mut lags = vec![1; order.d];
    lags.extend(std::iter::repeat_n(s.m, s.d));
    let mut levels = wf;
    for k in (0..lags.len()).rev() {
        let mut base = difference(y, order.d.min(k));
        if k > order.d {
            base = super::seasonal_difference(&base, s.m, k - order.d);
        }
        let lag = lags[k];
        let nb = base.len();
        if nb < lag {
            return Err(ArimaError::TooShort {
                needed: order.differences() + 1,
                got: y.len(),
            });
        }
        let mut up: Vec<f64> = Vec::with_capacity(max_h);
        for (i, v) in levels.iter().enumerate() {
            let prev = if i >= lag {
                up[i - lag]
            } else {
                base[nb - lag + i]
            };
            up.push(v + prev);
        }
        levels = up;
    }
    if let Some(full) = full {
        *full = level_covariance(&cov, &psi, fit.params.sigma2, max_h);
    }
    collect(&levels, &cov, &psi, fit.params.sigma2, max_h)
}

/// (mean, variance) per step: the level error at step h is Σ_k
/// ψ*_{h−k}·(w-error_k), so its variance is ψ*′ Cov ψ* times σ².
fn collect(
    levels: &[f64],
    cov: &[f64],
    psi: &[f64],
    s2: f64,
    max_h: usize,
) -> Result<Vec<(f64, f64)>, ArimaError> {
    let mut out = Vec::with_capacity(max_h);
    for h in 0..max_h {
        let mut var = 0.0;
        for k in 0..=h {
            for l in 0..=h {
                var += psi[h - k] * psi[h - l] * cov[k * max_h + l];
            }
        }
        let var = var * s2;
        let mean = levels[h];
        if !(mean.is_finite() && var.is_finite() && var >= 0.0) {
            return Err(ArimaError::NonFinite {
                context: "forecast",
            });
        }
        out.push((mean, var));
    }
    Ok(out)
}

/// Differenced-series forecasts μ + a_{n+k} and the covariance of their
/// errors (unit innovation variance, row-major max_h × max_h):
/// e_k = α_{n+k} − a_{n+k}, Var e_1 = P, e_{k+1} = T e_k + R ε,
/// Cov(w-error_i, w-error_j) = (T^{j−i} P_i)[0][0] for j ≥ i.
fn differenced_forecasts(
    ss: &StateSpace,
    fo: &FilterOut,
    mu: f64,
    max_h: usize,
) -> (Vec<f64>, Vec<f64>) {
    let r = ss.r;
    let mut wf = Vec::with_capacity(max_h);
    let mut cov = vec![0.0; max_h * max_h];
    let mut a = fo.a_y.clone();
    let mut pk = fo.p.clone();
    let mut pn = vec![0.0; r * r];
    let mut m = vec![0.0; r * r];
    let mut c = vec![0.0; r];
    let mut tmp = vec![0.0; r];
    for i in 0..max_h {
        wf.push(mu + a[0]);
        for (row, ci) in c.iter_mut().enumerate() {
            *ci = pk[row * r];
        }
        cov[i * max_h + i] = c[0];
        for j in (i + 1)..max_h {
            ss.transition(&c, &mut tmp);
            c.copy_from_slice(&tmp);
            cov[i * max_h + j] = c[0];
            cov[j * max_h + i] = c[0];
        }
        ss.transition(&a, &mut tmp);
        a.copy_from_slice(&tmp);
        ss.propagate(&pk, &mut m, &mut pn);
        std::mem::swap(&mut pk, &mut pn);
    }
    (wf, cov)
}

/// Integrating d times: the level error at step h is Σ_k ψ_{h−k}·(w-error_k),
/// ψ_j = C(j + d − 1, d − 1) (ψ_j = [j = 0] for d = 0).
fn integration_weights(d: usize, max_h: usize) -> Vec<f64> {
    (0..max_h)
        .map(|j| {
            if d == 0 {
                if j == 0 {
                    1.0
                } else {
                    0.0
                }
            } else {
                // C(j + d − 1, d − 1) as a running product
                (1..d).fold(1.0, |acc, i| acc * (j + i) as f64 / i as f64)
            }
        })
        .collect()
}

/// Level forecasts: undo the differencing of `wf` with the last observed
/// value of each difference order of `y`.
fn undifference(y: &[f64], d: usize, wf: Vec<f64>) -> Result<Vec<f64>, ArimaError> {
    let mut levels = wf;
    for k in (0..d).rev() {
        let dk = difference(y, k);
        let mut last = *dk.last().ok_or(ArimaError::TooShort {
            needed: d + 1,
            got: y.len(),
        })?;
        for v in levels.iter_mut() {
            last += *v;
            *v = last;
        }
    }
    Ok(levels)
}
