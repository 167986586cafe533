//! Forecasts in the data file's units from forecasts of a transformed
//! target: the arithmetic of the back-transform, one place for every
//! family.
//!
//! Write u for the model-scale level: ln y for `log` and `log_diff`, y for
//! the others. The transformed target z relates to it as
//!
//! | transform | z_t | u_{T+h} from the forecasts ẑ |
//! | --- | --- | --- |
//! | `none`, `log` | u_t | ẑ_{T+h} |
//! | `diff`, `log_diff` | u_t − u_{t−1} | u_T + Σ_{j≤h} ẑ_{T+j} |
//! | `seasonal_diff` | u_t − u_{t−m} | u_{T+h−m} (known when h ≤ m, else its own forecast) + ẑ_{T+h} |
//! | `pct_change` | y_t / y_{t−1} − 1 | y_T · Π_{j≤h} (1 + ẑ_{T+j}) |
//!
//! so the level forecast at horizon h needs the model's forecasts at every
//! horizon 1..h. The additive forms are linear in the errors: the error of
//! û_{T+h} is Σ_k ψ*_k ε_{T+h−k}, ψ* the model's ψ-weights convolved with
//! those of 1/(1 − L) or 1/(1 − L^m), whence its variance σ²Σ_{k<h} ψ*_k²
//! (Box & Jenkins; Hamilton 1994, §3.5). An interval on the u scale
//! carries over exactly through the monotone exp; the point forecast
//! exp(û) is the median of a log-normal level, exp(û + v/2) its mean. A
//! `pct_change` level is a product of the forecasts: its one-step interval
//! carries over exactly (y_T(1 + z) is monotone in z); beyond one step
//! there is no closed form and no interval is given.
//!
//! `backtest::levels` calls this for every forecast of a cell under
//! `scoring.units: original`.

use crate::numerics::dist::normal_interval as interval;
use crate::spec::Transform;

/// Which point of a log-normal level the forecast reports.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Centre {
    /// exp(û): the median (also the plain back-transform).
    Median,
    /// exp(û + v/2): the mean, v the variance of û's error.
    Mean,
}

/// Whether the model-scale level is the log of the data.
pub(crate) fn logged(t: Transform) -> bool {
    matches!(t, Transform::Log | Transform::LogDiff)
}

/// The lag a differencing transform integrates over: 1 for `diff`,
/// `log_diff` and `pct_change`, the season m for `seasonal_diff`; None for
/// the transforms that difference nothing.
pub(crate) fn span(t: Transform, season: usize) -> Option<usize> {
    match t {
        Transform::None | Transform::Log => None,
        Transform::Diff | Transform::LogDiff | Transform::PctChange => Some(1),
        Transform::SeasonalDiff => Some(season.max(1)),
    }
}

/// The model-scale levels u_{T+1..T+H} from the transformed forecasts
/// `z` = ẑ_{T+1..T+H}; `known` holds the data's values up to the origin T
/// (at least the last `span` of them, in the data's own units).
pub(crate) fn integrate(t: Transform, known: &[f64], season: usize, z: &[f64]) -> Option<Vec<f64>> {
    let to_u = |y: f64| if logged(t) { y.ln() } else { y };
    let Some(s) = span(t, season) else {
        return Some(z.to_vec());
    };
    if known.len() < s {
        return None;
    }
    let mut u: Vec<f64> = known[known.len() - s..].iter().map(|&y| to_u(y)).collect();
    for &zh in z {
        let before = u[u.len() - s];
        u.push(if t == Transform::PctChange {
            before * (1.0 + zh)
        } else {
            before + zh
        });
    }
    Some(u.split_off(s))
}

/// The variances of the model-scale level's forecast errors at h = 1..=H
/// from the transformed model's ψ-weights ψ_0 = 1, ψ_1, … (at least H of
/// them) and its innovation variance σ²; None at the horizons where no
/// closed form exists (`pct_change` beyond one step).
// The ψ form: what the covariance route below is checked against.
#[cfg_attr(not(test), allow(dead_code))]
pub(crate) fn level_variances(
    t: Transform,
    season: usize,
    psi: &[f64],
    sigma2: f64,
    horizons: usize,
) -> Vec<Option<f64>> {
    let weights: Vec<f64> = match span(t, season) {
        Some(s) if t != Transform::PctChange => {
            let (d, seasonal_d) = if s == 1 { (1, 0) } else { (0, 1) };
            let iota = super::arima::poly::integration_weights(d, s, seasonal_d, horizons);
            (0..horizons)
                .map(|j| (0..=j).map(|k| psi[k] * iota[j - k]).sum())
                .collect()
        }
        _ => psi[..horizons].to_vec(),
    };
    let mut acc = 0.0;
    weights
        .iter()
        .enumerate()
        .map(|(j, w)| {
            acc += w * w;
            (t != Transform::PctChange || j == 0).then_some(sigma2 * acc)
        })
        .collect()
}

/// The same variances from the full covariance `cov` (row-major H × H,
/// innovation variance included) of the transformed model's h-step
/// forecast errors: the level's error at h is Σ_j ι_{h−j} e_j, ι the
/// integration weights of the transform, so its variance is ι′ C ι over
/// steps 1..h. With C_jk = σ² Σ_i ψ_{j−1−i} ψ_{k−1−i} this is
/// [`level_variances`]; a Kalman filter's exact C (arima) gives the exact
/// variance of a finite sample.
pub(crate) fn level_variances_from_covariance(
    t: Transform,
    season: usize,
    cov: &[f64],
    horizons: usize,
) -> Vec<Option<f64>> {
    let iota = match span(t, season) {
        Some(s) if t != Transform::PctChange => {
            let (d, seasonal_d) = if s == 1 { (1, 0) } else { (0, 1) };
            super::arima::poly::integration_weights(d, s, seasonal_d, horizons)
        }
        _ => (0..horizons).map(|j| f64::from(u8::from(j == 0))).collect(),
    };
    (0..horizons)
        .map(|h| {
            if t == Transform::PctChange && h > 0 {
                return None;
            }
            let mut v = 0.0;
            for j in 0..=h {
                for k in 0..=h {
                    v += iota[h - j] * iota[h - k] * cov[j * horizons + k];
                }
            }
            Some(v)
        })
        .collect()
}

/// The covariance (row-major H × H) of h-step forecast errors Σ_{k<h}
/// ψ_k ε_{T+h−k} with innovation variance σ²: C_jk = σ² Σ_{i≤min(j,k)}
/// ψ_{j−i} ψ_{k−i} (0-based steps).
pub(crate) fn covariance_from_psi(psi: &[f64], sigma2: f64, horizons: usize) -> Vec<f64> {
    let mut c = vec![0.0; horizons * horizons];
    for j in 0..horizons {
        for k in 0..horizons {
            c[j * horizons + k] =
                sigma2 * (0..=j.min(k)).map(|i| psi[j - i] * psi[k - i]).sum::<f64>();
        }
    }
    c
}

/// The point forecast in the data's units of a model-scale level `u` whose
/// error variance is `variance`: u itself, or for a logged level the
/// median exp(u) or the mean exp(u + v/2) (None without a variance).
pub(crate) fn point(t: Transform, u: f64, variance: Option<f64>, centre: Centre) -> Option<f64> {
    if !logged(t) {
        return Some(u);
    }
    match centre {
        Centre::Median => Some(u.exp()),
        Centre::Mean => variance.map(|v| (u + v / 2.0).exp()),
    }
}

/// The level-c interval in the data's units: the Gaussian interval of the
/// model-scale level û with variance v, carried through exp for a logged
/// level. For `pct_change` (one step only) `z` and `z_variance` are the
/// transformed forecast and its variance and `last` is y_T.
// Rows carry pct_change's one-step level as Gaussian with variance
// y_T²·v (the same interval); this form is kept as its check.
#[cfg_attr(not(test), allow(dead_code))]
pub(crate) fn bounds(
    t: Transform,
    (u, v): (f64, f64),
    level: f64,
    pct_change_step: Option<(f64, f64, f64)>,
) -> Option<(f64, f64)> {
    if t == Transform::PctChange {
        let (z, zv, last) = pct_change_step?;
        let (lo, hi) = interval(z, zv.sqrt(), level);
        let (a, b) = (last * (1.0 + lo), last * (1.0 + hi));
        return Some((a.min(b), a.max(b)));
    }
    let (lo, hi) = interval(u, v.sqrt(), level);
    Some(if logged(t) {
        (lo.exp(), hi.exp())
    } else {
        (lo, hi)
    })
}

#[cfg(test)]
mod tests;
