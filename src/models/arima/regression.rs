//! Regression with ARIMA errors (SPEC §7.2): y_t = β′x_t + η_t, η an
//! ARIMA. Differencing the model gives Dy_t = β′Dx_t + Dη_t with Dη an
//! ARMA, so the regressors are differenced with the series and β is
//! concentrated out of the exact likelihood by generalised least squares:
//! every column runs through the Kalman filter with the data's gains, and
//! β solves (Σ v_x v_x′/F) β = Σ v_x v_y/F (Harvey 1989, §3.4.4; the GLS
//! mean of the non-seasonal model is the case of one column of ones).
//! Profiling β out gives the joint maximum of the likelihood.
//!
//! A regressor constant over the estimation sample (a step that has not
//! happened yet, a pulse outside the window) — or one that the
//! differencing turns into zeros (season indicators under D = 1) — is
//! left out of that estimation: its coefficient is 0 and the forecast
//! treats it as absent (SPEC §7.1).

use super::kalman::FilterOut;
use super::ArimaError;
use nalgebra::{DMatrix, DVector};

/// β, the weighted and the unweighted residual sums of squares at β.
pub(super) fn concentrate(fo: &FilterOut) -> Result<(Vec<f64>, f64, f64), ArimaError> {
    let k = fo.wxy.len();
    match k {
        0 => Ok((Vec::new(), fo.wyy, fo.uyy)),
        // One column (the mean or drift): the arithmetic the non-seasonal
        // model always had, so its numbers stay as they were.
        1 => {
            let (wy1, w11) = (fo.wxy[0], fo.wxx[0]);
            if !super::positive(w11) {
                return Err(ArimaError::NonFinite {
                    context: "GLS mean",
                });
            }
            let mu = wy1 / w11;
            let ss_w = fo.wyy - 2.0 * mu * wy1 + mu * mu * w11;
            let ss_u = fo.uyy - 2.0 * mu * fo.uxy[0] + mu * mu * fo.uxx[0];
            Ok((vec![mu], ss_w, ss_u))
        }
        _ => {
            let a = DMatrix::from_row_slice(k, k, &fo.wxx);
            let b = DVector::from_column_slice(&fo.wxy);
            let chol = a.cholesky().ok_or(ArimaError::Degenerate {
                reason: "the regressors are collinear in this estimation window",
            })?;
            let beta: Vec<f64> = chol.solve(&b).iter().copied().collect();
            let quad = |sxy: &[f64], sxx: &[f64], syy: f64| {
                let mut s = syy;
                for j in 0..k {
                    s -= 2.0 * beta[j] * sxy[j];
                    for l in 0..k {
                        s += beta[j] * beta[l] * sxx[j * k + l];
                    }
                }
                s
            };
            let ss_w = quad(&fo.wxy, &fo.wxx, fo.wyy);
            let ss_u = quad(&fo.uxy, &fo.uxx, fo.uyy);
            if !beta.iter().all(|b| b.is_finite()) {
                return Err(ArimaError::NonFinite {
                    context: "regression coefficients",
                });
            }
            Ok((beta, ss_w, ss_u))
        }
    }
}

/// Whether a regressor column is left out of an estimation on this sample:
/// constant there, or (differenced as the model implies) all but zero.
pub(super) fn left_out(raw: &[f64], differenced: &[f64]) -> bool {
    let Some(first) = raw.first() else {
        return true;
    };
    if raw.iter().all(|v| v == first) {
        return true;
    }
    let scale = raw.iter().fold(0.0f64, |a, v| a.max(v.abs()));
    differenced.iter().all(|v| v.abs() <= 1e-10 * scale)
}
