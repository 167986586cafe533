//! Forecasts of the level: the filter run to the end of the data, the
//! differenced series' forecasts with the full covariance of their errors,
//! integrated d times.

use super::kalman::{run_filter, FilterOut, StateSpace};
use super::{check_order, check_params, difference, ArimaError, ArimaFit};

/// Filter `y` (which may extend beyond the estimation sample) with the fit's
/// parameters and forecast h = 1..=max_h steps beyond the end of `y`: returns
/// (mean, variance) per step, for the level of y (undifferenced).
pub(crate) fn forecast(
    fit: &ArimaFit,
    y: &[f64],
    max_h: usize,
) -> Result<Vec<(f64, f64)>, ArimaError> {
    let order = &fit.order;
    check_order(order)?;
    check_params(&fit.params, order)?;
    if !y.iter().all(|v| v.is_finite()) {
        return Err(ArimaError::NonFinite { context: "data" });
    }
    let d = order.d;
    if y.len() < d + 1 {
        return Err(ArimaError::TooShort {
            needed: d + 1,
            got: y.len(),
        });
    }
    if max_h == 0 {
        return Ok(Vec::new());
    }
    let mu = if order.has_mean() {
        fit.params.mean_or_drift
    } else {
        0.0
    };
    let s2 = fit.params.sigma2;
    let x: Vec<f64> = difference(y, d).iter().map(|v| v - mu).collect();
    let ss = StateSpace::new(&fit.params.ar, &fit.params.ma);
    let p0 = ss.stationary_cov()?;
    let fo = run_filter(&ss, &p0, &x, false)?;
    let (wf, cov) = differenced_forecasts(&ss, &fo, mu, max_h);
    let psi = integration_weights(d, max_h);
    let levels = undifference(y, d, wf)?;
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
