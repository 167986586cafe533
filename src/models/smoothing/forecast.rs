//! Forecasts: the deterministic path from the filtered state (all future
//! errors zero) and its variance, the state covariance propagated through
//! the model linearised along that path (see the module docs).

use super::filter::{initial_state, run_filter, Smooth, State};
use super::{check_data, check_params, EtsError, EtsFit};

/// Run the filter with the fit's parameters through all of `y` (which starts
/// at the estimation sample's first period and may extend past its end) and
/// forecast h = 1..=max_h beyond its end: (mean, variance) per horizon.
pub(crate) fn forecast(fit: &EtsFit, y: &[f64], max_h: usize) -> Result<Vec<(f64, f64)>, EtsError> {
    let spec = &fit.spec;
    spec.validate()?;
    check_params(spec, &fit.params)?;
    check_data(spec, y)?;
    if !(fit.sigma2.is_finite() && fit.sigma2 >= 0.0) {
        return Err(EtsError::NonFinite {
            what: "sigma2".into(),
        });
    }
    let sm = Smooth::of(&fit.params, spec);
    let mult = spec.multiplicative();
    let mut st = initial_state(spec, &fit.params);
    run_filter(mult, &sm, &mut st, y, None).ok_or_else(|| EtsError::NonFinite {
        what: "filtered states".into(),
    })?;
    forecast_from_state(mult, &sm, fit.sigma2, &st, max_h)
}

/// Deterministic path and linearised covariance propagation from a state.
///
/// One function because the mean path and the variance recursion advance
/// the same state together, step by step.
pub(super) fn forecast_from_state(
    mult: bool,
    sm: &Smooth,
    sigma2: f64,
    st: &State,
    max_h: usize,
) -> Result<Vec<(f64, f64)>, EtsError> {
    let m = st.s.len();
    let dim = 2 + m; // l, b, seasonal slots
    let mut p = vec![0.0; dim * dim]; // row-major covariance of the state
    let mut l = st.l;
    let mut b = st.b;
    let s = st.s.clone();
    let mut out = Vec::with_capacity(max_h);
    let phi = sm.phi;
    for j in 1..=max_h {
        let idx = (st.t + j - 1) % m;
        let si = 2 + idx;
        let u = l + phi * b;
        let sv = s[idx];
        let (mean, w_l, w_b, w_s) = if mult {
            (u * sv, sv, phi * sv, u)
        } else {
            (u + sv, 1.0, phi, 1.0)
        };
        // v = σ² + w P wᵀ, w nonzero at l, b, si
        let ids = [0usize, 1, si];
        let ws = [w_l, w_b, w_s];
        let mut quad = 0.0;
        for (a, &ia) in ids.iter().enumerate() {
            for (c, &ic) in ids.iter().enumerate() {
                quad += ws[a] * ws[c] * p[ia * dim + ic];
            }
        }
        let mut var = sigma2 + quad;
        if mult {
            let var_u = p[0] + 2.0 * phi * p[1] + phi * phi * p[dim + 1];
            let var_s = p[si * dim + si];
            let cov_us = p[si] + phi * p[dim + si];
            var += var_u * var_s + cov_us * cov_us;
        }
        if !(mean.is_finite() && var.is_finite()) {
            return Err(EtsError::NonFinite {
                what: format!("forecast at horizon {j}"),
            });
        }
        out.push((mean, var.max(0.0)));
        // propagate: P ← F P Fᵀ + σ² g gᵀ (F: l ← l + φ b, b ← φ b)
        for c in 0..dim {
            let pl = p[c];
            let pb = p[dim + c];
            p[c] = pl + phi * pb;
            p[dim + c] = phi * pb;
        }
        for r in 0..dim {
            let pl = p[r * dim];
            let pb = p[r * dim + 1];
            p[r * dim] = pl + phi * pb;
            p[r * dim + 1] = phi * pb;
        }
        let (kl, ks) = if mult {
            (1.0 / sv, 1.0 / u)
        } else {
            (1.0, 1.0)
        };
        let g = [
            (0usize, sm.alpha * kl),
            (1, sm.beta * kl),
            (si, sm.gamma * ks),
        ];
        for &(ia, ga) in &g {
            for &(ic, gc) in &g {
                p[ia * dim + ic] += sigma2 * ga * gc;
            }
        }
        l = u;
        b *= phi;
    }
    Ok(out)
}
