//! Distribution functions, through `statrs`: the standard normal (quantile,
//! distribution function, density), Student's t (two-sided p-value) and the
//! χ² upper tail. Upper normal tails are Φ(−z): one distribution function.
//!
//! The normal distribution function goes through statrs' regularized
//! incomplete gamma function rather than its `erfc` (behind `Normal::cdf`
//! and `Normal::sf`): statrs 0.18's `erfc` is off by up to ~1e-10
//! relative, its incomplete gamma agrees with scipy's `norm.cdf` and
//! `norm.sf` and with mpmath to ~1e-15.

use statrs::distribution::{ChiSquared, Continuous, ContinuousCDF, Normal};
use statrs::function::gamma::{checked_gamma_lr, checked_gamma_ur};

/// The central level-c interval of N(mean, sd²): mean ± z_{(1+c)/2}·sd.
pub(crate) fn normal_interval(mean: f64, sd: f64, level: f64) -> (f64, f64) {
    let z = normal_quantile((1.0 + level) / 2.0);
    (mean - z * sd, mean + z * sd)
}

/// Standard normal quantile Φ⁻¹(p) (statrs' `Normal::inverse_cdf`).
pub(crate) fn normal_quantile(p: f64) -> f64 {
    Normal::standard().inverse_cdf(p)
}

/// Standard normal distribution function Φ(z) through the regularized
/// incomplete gamma function, by the identity erf(x) = P(½, x²):
/// Φ(z) = ½·Q(½, z²/2) for z ≤ −1 (and the mirror for z ≥ 1),
/// ½ ± ½·P(½, z²/2) in between. `NaN` for NaN.
pub(crate) fn normal_cdf(z: f64) -> f64 {
    if z.is_nan() {
        return f64::NAN;
    }
    if z == f64::INFINITY {
        return 1.0;
    }
    if z == f64::NEG_INFINITY {
        return 0.0;
    }
    let h = 0.5 * z * z;
    if h == 0.0 {
        return 0.5;
    }
    if z.abs() < 1.0 {
        let p = checked_gamma_lr(0.5, h).unwrap_or(f64::NAN);
        if z < 0.0 {
            0.5 - 0.5 * p
        } else {
            0.5 + 0.5 * p
        }
    } else {
        let q = checked_gamma_ur(0.5, h).unwrap_or(f64::NAN);
        if z < 0.0 {
            0.5 * q
        } else {
            1.0 - 0.5 * q
        }
    }
}

/// Standard normal density φ(z) (statrs' `Normal::pdf`).
pub(crate) fn normal_pdf(z: f64) -> f64 {
    Normal::standard().pdf(z)
}

/// Two-sided p-value 2·P(T > |t|) of Student's t with `df` degrees of
/// freedom, as the regularized incomplete beta I_{df/(df+t²)}(df/2, 1/2)
/// (the incomplete-beta form of the t tail). `None` for a non-finite t or
/// df ≤ 0.
pub(crate) fn student_t_two_sided(t: f64, df: f64) -> Option<f64> {
    if !(t.is_finite() && df.is_finite() && df > 0.0) {
        return None;
    }
    let x = df / (df + t * t);
    statrs::function::beta::checked_beta_reg(df / 2.0, 0.5, x)
        .ok()
        .filter(|p| p.is_finite())
}

/// Upper tail of the χ² distribution with `df` degrees of freedom (statrs'
/// `ChiSquared::sf`); 1 for x ≤ 0, `None` for non-finite arguments or df ≤ 0.
pub(crate) fn chi2_sf(x: f64, df: f64) -> Option<f64> {
    if !x.is_finite() || !df.is_finite() || df <= 0.0 {
        return None;
    }
    if x <= 0.0 {
        return Some(1.0);
    }
    let dist = ChiSquared::new(df).ok()?;
    let p = dist.sf(x);
    p.is_finite().then_some(p)
}

/// Two independent standard normal draws from two uniforms on (0, 1]
/// and [0, 1) by the Box–Muller transform (Box & Muller 1958).
pub(crate) fn box_muller(u1: f64, u2: f64) -> (f64, f64) {
    let r = (-2.0 * u1.ln()).sqrt();
    let a = 2.0 * std::f64::consts::PI * u2;
    (r * a.cos(), r * a.sin())
}
