//! The parameters of an arima estimate and their standard errors from the
//! observed information (SPEC §7.4): the numerical Hessian
//! (`numerics::hessian`) of the exact log-likelihood in the natural
//! parameters (φ, θ, Φ, Θ, the mean or drift and regression coefficients,
//! σ²) at the estimate. Estimation concentrates the mean, the regression
//! coefficients and σ² out by GLS; the joint log-likelihood here takes
//! them as free parameters,
//! ℓ = −n/2·ln(2πσ²) − ½Σ ln F_t − (Σ v_t(β)²/F_t)/(2σ²),
//! so the standard errors are those of the joint maximum, as
//! statsmodels' SARIMAX reports with `cov_type='oim'` for the model with
//! the mean and regressors as parameters.

use super::estimate::prepare;
use super::kalman::{run_filter, state_space, LN_2PI};
use super::{poly, ArimaFit, ArimaOrder};
use crate::models::{fit_rows, Parameter};
use crate::numerics::hessian;

/// The natural parameters laid out flat: coefficients, β (the mean or drift
/// first when estimated, then the regressors used), σ².
fn flat(fit: &ArimaFit, used: &[Option<usize>]) -> Vec<f64> {
    let p = &fit.params;
    let mut x: Vec<f64> =
        p.ar.iter()
            .chain(&p.ma)
            .chain(&p.sar)
            .chain(&p.sma)
            .copied()
            .collect();
    if fit.order.has_mean() {
        x.push(p.mean_or_drift);
    }
    x.extend(
        used.iter()
            .zip(&p.beta)
            .filter(|(u, _)| u.is_some())
            .map(|(_, b)| *b),
    );
    x.push(p.sigma2);
    x
}

/// The exact log-likelihood of `w` at the flat parameters `x`; NaN where
/// it does not exist (a perturbed coefficient outside the stationary region).
fn loglik(order: &ArimaOrder, w: &[f64], columns: &[Vec<f64>], x: &[f64]) -> f64 {
    let s = order.season();
    let (ar, rest) = x.split_at(order.p);
    let (ma, rest) = rest.split_at(order.q);
    let (sar, rest) = rest.split_at(s.p);
    let (sma, rest) = rest.split_at(s.q);
    let (beta, sigma2) = rest.split_at(columns.len());
    let sigma2 = sigma2[0];
    let seasonal = order.seasonal.is_some();
    let (phi, theta) = if seasonal {
        (
            poly::multiply_ar(ar, sar, s.m),
            poly::multiply_ma(ma, sma, s.m),
        )
    } else {
        (ar.to_vec(), ma.to_vec())
    };
    if !(sigma2 > 0.0) {
        return f64::NAN;
    }
    let Ok((ss, p0)) = state_space(&phi, &theta, seasonal) else {
        return f64::NAN;
    };
    let Ok(fo) = run_filter(&ss, &p0, w, columns) else {
        return f64::NAN;
    };
    let k = beta.len();
    let mut q = fo.wyy;
    for j in 0..k {
        q -= 2.0 * beta[j] * fo.wxy[j];
        for l in 0..k {
            q += beta[j] * beta[l] * fo.wxx[j * k + l];
        }
    }
    let n = w.len() as f64;
    -0.5 * n * (LN_2PI + sigma2.ln()) - 0.5 * fo.sum_log_f - q / (2.0 * sigma2)
}

/// The rows of parameters.csv of an estimate on `y` (the sample it was
/// estimated on) with its regressor columns named `names`: ar1.., ma1..,
/// sar1.., sma1.., `constant` (the mean, d + D = 0) or `drift`, each
/// regressor used, sigma2, then loglik, aic, aicc, bic (k = n_params,
/// n = nobs, as the order selection counts them).
pub(crate) fn parameters(
    fit: &ArimaFit,
    y: &[f64],
    regressors: &[Vec<f64>],
    names: &[String],
) -> Vec<Parameter> {
    let order = &fit.order;
    let s = order.season();
    let mut labels: Vec<String> = Vec::new();
    labels.extend((1..=order.p).map(|i| format!("ar{i}")));
    labels.extend((1..=order.q).map(|i| format!("ma{i}")));
    labels.extend((1..=s.p).map(|i| format!("sar{i}")));
    labels.extend((1..=s.q).map(|i| format!("sma{i}")));
    if order.has_mean() {
        labels.push(
            if order.differences() == 0 {
                "constant"
            } else {
                "drift"
            }
            .to_string(),
        );
    }
    // The estimate was made on these data, so they prepare as they did then.
    let Ok(prep) = prepare(y, order, regressors) else {
        return fit_rows(fit.loglik, fit.n_params, fit.nobs);
    };
    labels.extend(
        prep.used
            .iter()
            .zip(names)
            .filter(|(u, _)| u.is_some())
            .map(|(_, n)| n.clone()),
    );
    labels.push("sigma2".to_string());
    let x = flat(fit, &prep.used);
    let coefficients = order.coefficients();
    let scale: Vec<f64> = (0..x.len())
        .map(|i| match i {
            i if i < coefficients => 0.1,
            i if i + 1 < x.len() => {
                // A coefficient's natural size: σ over the column's spread.
                let col = &prep.columns[i - coefficients];
                let rms = (col.iter().map(|v| v * v).sum::<f64>() / col.len() as f64).sqrt();
                fit.sigma2.sqrt() / rms.max(f64::MIN_POSITIVE)
            }
            _ => fit.sigma2,
        })
        .collect();
    let se = hessian::covariance(|p| loglik(order, &prep.w, &prep.columns, p), &x, &scale)
        .map(|cov| hessian::std_errors(&cov, x.len()));
    let mut out: Vec<Parameter> = labels
        .into_iter()
        .zip(&x)
        .enumerate()
        .map(|(i, (name, &v))| Parameter::new(name, v, se.as_ref().map(|se| se[i])))
        .collect();
    out.extend(fit_rows(fit.loglik, fit.n_params, fit.nobs));
    out
}
