//! The innovations filter of the additive-error models (Hyndman, Koehler,
//! Ord & Snyder 2008, Table 2.3 with additive errors): one pass over the
//! data from the initial states, its one-step errors and SSE.

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

/// Run the filter over `y` from `st`. Returns the SSE, or `None` when a
/// prediction or state turns non-finite (or a multiplicative divisor is 0).
pub(super) fn run_filter(
    mult: bool,
    sm: &Smooth,
    st: &mut State,
    y: &[f64],
    mut errors: Option<&mut Vec<f64>>,
) -> Option<f64> {
    let m = st.s.len();
    let mut sse = 0.0;
    for &yt in y {
        let idx = st.t % m;
        let u = st.l + sm.phi * st.b;
        let s = st.s[idx];
        let e;
        if mult {
            if s == 0.0 || u == 0.0 {
                return None;
            }
            e = yt - u * s;
            st.l = u + sm.alpha * e / s;
            st.b = sm.phi * st.b + sm.beta * e / s;
            st.s[idx] = s + sm.gamma * e / u;
        } else {
            e = yt - (u + s);
            st.l = u + sm.alpha * e;
            st.b = sm.phi * st.b + sm.beta * e;
            st.s[idx] = s + sm.gamma * e;
        }
        if !(e.is_finite() && st.l.is_finite() && st.b.is_finite() && st.s[idx].is_finite()) {
            return None;
        }
        sse += e * e;
        if let Some(v) = errors.as_deref_mut() {
            v.push(e);
        }
        st.t += 1;
    }
    if sse.is_finite() {
        Some(sse)
    } else {
        None
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
