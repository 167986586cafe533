//! The innovations filter (Hyndman, Koehler, Ord & Snyder 2008, Table 2.3):
//! one pass over the data from the initial states, its one-step errors and
//! SSE. Written in the one-step error e_t = y_t − ŷ_t, the state equations
//! of a multiplicative-error model are those of its additive-error twin
//! (e.g. ETS(M,A,N): l_t = (l_{t−1} + b_{t−1})(1 + α ε_t) = l_{t−1} +
//! b_{t−1} + α e_t), so one filter serves both; the error changes the
//! likelihood ([`relative_sums`]) and the forecast variances.

use super::{check_data, check_params, EtsError, EtsParams, EtsSpec};
use crate::spec::SmoothingTrend;

/// Smoothing parameters as the filter uses them (neutral values filled in).
#[derive(Debug, Clone, Copy)]
pub(super) struct Smooth {
    pub(super) alpha: f64,
    pub(super) beta: f64,
    pub(super) gamma: f64,
    pub(super) phi: f64,
}

impl Smooth {
    pub(super) fn of(p: &EtsParams, spec: &EtsSpec) -> Smooth {
        Smooth {
            alpha: p.alpha,
            beta: if spec.has_trend() { p.beta } else { 0.0 },
            gamma: if spec.has_season() { p.gamma } else { 0.0 },
            phi: match spec.trend {
                SmoothingTrend::Damped => p.phi,
                _ => 1.0,
            },
        }
    }
}

/// Filter state after some observations: level, trend, the seasonal ring
/// (slot `t % m` holds s_{t−m+1}... i.e. the factor the next period at
/// position t uses) and the number of observations consumed.
#[derive(Debug, Clone)]
pub(super) struct State {
    pub(super) l: f64,
    pub(super) b: f64,
    pub(super) s: Vec<f64>,
    pub(super) t: usize,
}

pub(super) fn initial_state(spec: &EtsSpec, p: &EtsParams) -> State {
    let s = if spec.has_season() {
        p.season0.clone()
    } else {
        vec![0.0]
    };
    State {
        l: p.level0,
        b: if spec.has_trend() { p.trend0 } else { 0.0 },
        s,
        t: 0,
    }
}

/// Run the filter over `y` from `st`, handing each period's one-step error
/// e_t and prediction ŷ_t to `each`. `false` when a prediction or state
/// turns non-finite (or a multiplicative divisor is 0).
pub(super) fn filter_each(
    mult: bool,
    sm: &Smooth,
    st: &mut State,
    y: &[f64],
    mut each: impl FnMut(f64, f64),
) -> bool {
    let m = st.s.len();
    for &yt in y {
        let idx = st.t % m;
        let u = st.l + sm.phi * st.b;
        let s = st.s[idx];
        let e;
        let yhat;
        if mult {
            if s == 0.0 || u == 0.0 {
                return false;
            }
            yhat = u * s;
            e = yt - yhat;
            st.l = u + sm.alpha * e / s;
            st.b = sm.phi * st.b + sm.beta * e / s;
            st.s[idx] = s + sm.gamma * e / u;
        } else {
            yhat = u + s;
            e = yt - yhat;
            st.l = u + sm.alpha * e;
            st.b = sm.phi * st.b + sm.beta * e;
            st.s[idx] = s + sm.gamma * e;
        }
        if !(e.is_finite() && st.l.is_finite() && st.b.is_finite() && st.s[idx].is_finite()) {
            return false;
        }
        each(e, yhat);
        st.t += 1;
    }
    true
}

/// Run the filter over `y` from `st`. Returns the SSE, or `None` when a
/// prediction or state turns non-finite (or a multiplicative divisor is 0).
pub(super) fn run_filter(
    mult: bool,
    sm: &Smooth,
    st: &mut State,
    y: &[f64],
    mut errors: Option<&mut Vec<f64>>,
) -> Option<f64> {
    let mut sse = 0.0;
    let ok = filter_each(mult, sm, st, y, |e, _| {
        sse += e * e;
        if let Some(v) = errors.as_deref_mut() {
            v.push(e);
        }
    });
    if ok && sse.is_finite() {
        Some(sse)
    } else {
        None
    }
}

/// The sums of a multiplicative-error likelihood over `y` from `st`:
/// SSE of the one-step errors, Σ ε_t² of the relative errors
/// ε_t = e_t / ŷ_t and Σ ln ŷ_t. `None` when the filter fails or some
/// ŷ_t ≤ 0 (the model is then undefined).
pub(super) fn relative_sums(
    mult: bool,
    sm: &Smooth,
    st: &mut State,
    y: &[f64],
) -> Option<RelativeSums> {
    let mut r = RelativeSums {
        sse: 0.0,
        sum_eps2: 0.0,
        sum_ln_yhat: 0.0,
    };
    let mut positive = true;
    let ok = filter_each(mult, sm, st, y, |e, yhat| {
        positive &= yhat > 0.0;
        let eps = e / yhat;
        r.sse += e * e;
        r.sum_eps2 += eps * eps;
        r.sum_ln_yhat += yhat.ln();
    });
    (ok && positive && r.sse.is_finite() && r.sum_eps2.is_finite() && r.sum_ln_yhat.is_finite())
        .then_some(r)
}

/// See [`relative_sums`].
#[derive(Debug, Clone, Copy)]
pub(super) struct RelativeSums {
    pub(super) sse: f64,
    pub(super) sum_eps2: f64,
    pub(super) sum_ln_yhat: f64,
}

impl RelativeSums {
    /// The least-squares form of the concentrated likelihood:
    /// Σ (g ε_t)² with g the geometric mean of ŷ_t, so that
    /// −n/2·(ln(2π S/n) + 1) is the log-likelihood.
    pub(super) fn scaled(&self, n: usize) -> f64 {
        self.sum_eps2 * (2.0 * self.sum_ln_yhat / n as f64).exp()
    }
}

/// One-step prediction errors of `params` over `y` (`y[0]` is the first period
/// after the initial states).
pub(crate) fn one_step_errors(
    spec: &EtsSpec,
    params: &EtsParams,
    y: &[f64],
) -> Result<Vec<f64>, EtsError> {
    spec.validate()?;
    check_params(spec, params)?;
    check_data(spec, y)?;
    let sm = Smooth::of(params, spec);
    let mut st = initial_state(spec, params);
    let mut e = Vec::with_capacity(y.len());
    run_filter(spec.multiplicative(), &sm, &mut st, y, Some(&mut e)).ok_or_else(|| {
        EtsError::NonFinite {
            what: "one-step errors".into(),
        }
    })?;
    Ok(e)
}

/// The log-likelihood of `params` over `y`: −n/2·(ln(2π σ̂²) + 1), σ̂² the
/// mean squared one-step error, less Σ ln ŷ_t and with σ̂² the mean squared
/// relative error for a multiplicative error.
#[cfg(test)]
pub(super) fn log_likelihood(spec: &EtsSpec, params: &EtsParams, y: &[f64]) -> Option<f64> {
    let sm = Smooth::of(params, spec);
    let mut st = initial_state(spec, params);
    let nf = y.len() as f64;
    let ll = |s2: f64| -0.5 * nf * ((2.0 * std::f64::consts::PI * s2).ln() + 1.0);
    if spec.mult_error() {
        let r = relative_sums(spec.multiplicative(), &sm, &mut st, y)?;
        Some(ll(r.sum_eps2 / nf) - r.sum_ln_yhat)
    } else {
        run_filter(spec.multiplicative(), &sm, &mut st, y, None).map(|sse| ll(sse / nf))
    }
}
