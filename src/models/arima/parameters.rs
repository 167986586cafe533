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
    if sigma2.is_nan() || sigma2 <= 0.0 {
        return f64::NAN;
    }
    let Ok((ss, start)) = state_space(&phi, &theta, seasonal, false) else {
        return f64::NAN;
    };
    let Ok(fo) = run_filter(&ss, &start, w, columns) else {
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

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::Value;

    /// Estimates, standard errors and fit rows against statsmodels 0.14.4
    /// `ARIMA(y, exog, order, trend='c')` (SARIMAX underneath) on
    /// statsmodels.datasets.macrodata (tests/reference/parameters/
    /// arima_oim.json, written by generate_parameters.py). Both maximise the
    /// same exact likelihood; statsmodels takes the mean and the regression
    /// coefficient as parameters of its search and of its Hessian, outturn
    /// concentrates them out by GLS for the search and puts them back for
    /// the Hessian, so the covariances are of the same joint maximum.
    /// `cov_type='approx'` is statsmodels' numerical (complex-step) Hessian
    /// of the log-likelihood, the quantity outturn computes: to 1e-3.
    /// `cov_type='oim'` is Harvey's (1989, §3.4.5) information formula built
    /// from first derivatives of the innovations and their variances, which
    /// leaves out second-derivative terms that vanish only in expectation:
    /// a different estimator of the same variance (here within 25 %; the
    /// test asks for a factor of 2 and prints the gap).
    #[test]
    fn observed_information_matches_statsmodels() {
        let path = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/tests/reference/parameters/arima_oim.json"
        );
        let r: Value = serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
        let floats = |v: &Value| -> Vec<f64> {
            v.as_array()
                .unwrap()
                .iter()
                .map(|x| x.as_f64().unwrap())
                .collect()
        };
        let (mut worst_est, mut worst_se, mut worst_oim): (f64, f64, f64) = (0.0, 0.0, 0.0);
        for case in r["cases"].as_array().unwrap() {
            let name = case["name"].as_str().unwrap();
            let y = floats(&case["y"]);
            let o = floats(&case["order"]);
            let order = ArimaOrder {
                p: o[0] as usize,
                d: o[1] as usize,
                q: o[2] as usize,
                drift: false,
                seasonal: None,
            };
            let regs: Vec<Vec<f64>> = case["x"]
                .as_array()
                .map(|_| vec![floats(&case["x"])])
                .unwrap_or_default();
            let names = vec!["unemp".to_string(); regs.len()];
            let fit = super::super::estimate(&y, &order, None, &regs).unwrap();
            let rows = parameters(&fit, &y, &regs, &names);
            let get = |n: &str| {
                rows.iter()
                    .find(|p| &*p.name == n)
                    .unwrap_or_else(|| panic!("{name}: no {n}"))
            };
            for p in case["parameters"].as_array().unwrap() {
                let n = p[0].as_str().unwrap();
                let (want, want_se) = (p[1].as_f64().unwrap(), p[2].as_f64().unwrap());
                let oim_se = p[3].as_f64().unwrap();
                let got = get(n);
                let se = got
                    .std_error
                    .unwrap_or_else(|| panic!("{name} {n}: no standard error"));
                let est_gap = (got.estimate - want).abs() / want_se;
                let se_gap = (se - want_se).abs() / want_se;
                worst_est = worst_est.max(est_gap);
                worst_se = worst_se.max(se_gap);
                assert!(est_gap <= 2e-3, "{name} {n}: {} vs {want}", got.estimate);
                assert!(se_gap <= 1e-3, "{name} {n}: s.e. {se} vs {want_se}");
                worst_oim = worst_oim.max((se - oim_se).abs() / oim_se);
                // A different estimator: the same size, not the same number.
                assert!(
                    se < 2.0 * oim_se && oim_se < 2.0 * se,
                    "{name} {n}: s.e. {se} vs oim {oim_se}"
                );
            }
            for n in ["loglik", "aic", "aicc", "bic"] {
                let want = case[n].as_f64().unwrap();
                assert!(
                    (get(n).estimate - want).abs() <= 1e-6 * want.abs(),
                    "{name} {n}"
                );
            }
        }
        eprintln!(
            "worst |estimate gap| / s.e. {worst_est:.1e}; relative s.e. gap: approx {worst_se:.1e}, oim {worst_oim:.1e}"
        );
    }
}
