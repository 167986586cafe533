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
//! Not yet called by the pipeline: `scoring.units: original` (scoring and
//! the outlook in these units) is still to be wired through spec, the
//! cells, scores and reports; the arithmetic is here, tested against
//! statsmodels, for that step.
#![cfg_attr(not(test), allow(dead_code))]

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
fn span(t: Transform, season: usize) -> Option<usize> {
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
