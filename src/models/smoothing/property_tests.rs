//! Properties of the smoothing models that hold by construction or by a
//! published closed form: the variance formulas of Hyndman et al. (2008,
//! ch. 6), a simulation of the multiplicative season, typed errors, and fits
//! at least as good as the parameters that generated the data.

use super::filter::{initial_state, run_filter, Smooth, State};
use super::forecast::forecast_from_state;
use super::*;

/// The propagated variance equals the closed forms of Hyndman et al.
/// (2008, ch. 6) as statsmodels writes them, for every linear model.
#[test]
fn linear_variances_equal_closed_forms() {
    let (alpha, beta, gamma, phi, m, s2) = (0.6, 0.15, 0.2, 0.9, 4usize, 2.5);
    for trend in [
        SmoothingTrend::None,
        SmoothingTrend::Additive,
        SmoothingTrend::Damped,
    ] {
        for season in [SmoothingSeason::None, SmoothingSeason::Additive] {
            let spec = EtsSpec::new(trend, season, m).unwrap();
            let sm = Smooth {
                alpha,
                beta: if spec.has_trend() { beta } else { 0.0 },
                gamma: if spec.has_season() { gamma } else { 0.0 },
                phi: if trend == SmoothingTrend::Damped {
                    phi
                } else {
                    1.0
                },
            };
            let st = State {
                l: 10.0,
                b: 0.5,
                s: if spec.has_season() {
                    vec![1.0, -2.0, 0.5, 0.5]
                } else {
                    vec![0.0]
                },
                t: 7,
            };
            let fc = forecast_from_state(false, &sm, s2, &st, 30).unwrap();
            for (i, &(_, v)) in fc.iter().enumerate() {
                let h = (i + 1) as f64;
                let k = ((i) / m) as f64;
                let (a, b, g, p, mm) = (alpha, beta, gamma, phi, m as f64);
                let damped = (b * p * h) / (1.0 - p).powi(2) * (2.0 * a * (1.0 - p) + b * p)
                    - (b * p * (1.0 - p.powf(h))) / ((1.0 - p).powi(2) * (1.0 - p * p))
                        * (2.0 * a * (1.0 - p * p) + b * p * (1.0 + 2.0 * p - p.powf(h)));
                let rel = match (trend, season) {
                    (SmoothingTrend::None, SmoothingSeason::None) => 1.0 + a * a * (h - 1.0),
                    (SmoothingTrend::Additive, SmoothingSeason::None) => {
                        1.0 + (h - 1.0) * (a * a + a * b * h + b * b * h / 6.0 * (2.0 * h - 1.0))
                    }
                    (SmoothingTrend::Damped, SmoothingSeason::None) => {
                        1.0 + a * a * (h - 1.0) + damped
                    }
                    (SmoothingTrend::None, SmoothingSeason::Additive) => {
                        1.0 + a * a * (h - 1.0) + g * k * (2.0 * a + g)
                    }
                    (SmoothingTrend::Additive, SmoothingSeason::Additive) => {
                        1.0 + (h - 1.0) * (a * a + a * b * h + b * b / 6.0 * h * (2.0 * h - 1.0))
                            + g * k * (2.0 * a + g + b * mm * (k + 1.0))
                    }
                    (SmoothingTrend::Damped, SmoothingSeason::Additive) => {
                        1.0 + a * a * (h - 1.0)
                            + g * k * (2.0 * a + g)
                            + damped
                            + (2.0 * b * g * p) / ((1.0 - p) * (1.0 - p.powf(mm)))
                                * (k * (1.0 - p.powf(mm)) - p.powf(mm) * (1.0 - p.powf(mm * k)))
                    }
                    _ => unreachable!(),
                };
                assert!(
                    (v - s2 * rel).abs() <= 1e-10 * v,
                    "{} h={h}: {v} vs {}",
                    spec.short_name(),
                    s2 * rel
                );
            }
        }
    }
}

/// A small deterministic Monte Carlo of ETS(A,A,M) against the
/// approximation, well past one season.
#[test]
fn multiplicative_variance_approximation_vs_simulation() {
    let sm = Smooth {
        alpha: 0.4,
        beta: 0.05,
        gamma: 0.3,
        phi: 1.0,
    };
    let st = State {
        l: 50.0,
        b: 0.4,
        s: vec![0.7, 1.3, 1.1, 0.9],
        t: 40,
    };
    let sigma2: f64 = 4.0;
    let h = 12;
    let approx = forecast_from_state(true, &sm, sigma2, &st, h).unwrap();
    // xorshift + Box–Muller, fixed seed
    let mut seed: u64 = 0x9E37_79B9_7F4A_7C15;
    let mut unif = || {
        seed ^= seed << 13;
        seed ^= seed >> 7;
        seed ^= seed << 17;
        ((seed >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    };
    let reps = 100_000;
    let mut sum = vec![0.0; h];
    let mut sum2 = vec![0.0; h];
    for _ in 0..reps {
        let (mut l, mut b, mut s) = (st.l, st.b, st.s.clone());
        for j in 0..h {
            let idx = (st.t + j) % 4;
            let (u1, u2) = (unif(), unif());
            let e =
                sigma2.sqrt() * (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos();
            let u = l + b;
            let yv = u * s[idx] + e;
            l = u + sm.alpha * e / s[idx];
            b += sm.beta * e / s[idx];
            s[idx] += sm.gamma * e / u;
            sum[j] += yv;
            sum2[j] += yv * yv;
        }
    }
    for j in 0..h {
        let mean = sum[j] / reps as f64;
        let var = sum2[j] / reps as f64 - mean * mean;
        let rel = (approx[j].1 - var).abs() / var;
        eprintln!(
            "h={} approx {:.4} sim {:.4} rel {:.4}",
            j + 1,
            approx[j].1,
            var,
            rel
        );
        // s.e. of a simulated variance with 1e5 draws ≈ 0.5 %
        assert!(rel < 0.03, "h={} approx {} sim {}", j + 1, approx[j].1, var);
    }
}

#[test]
fn typed_errors() {
    let y: Vec<f64> = (0..40).map(|t| 10.0 + (t as f64 * 0.7).sin()).collect();
    assert!(matches!(
        EtsSpec::new(SmoothingTrend::None, SmoothingSeason::Additive, 1),
        Err(EtsError::InvalidSpec { .. })
    ));
    let bad = EtsSpec {
        error: crate::spec::SmoothingError::Additive,
        trend: SmoothingTrend::None,
        season: SmoothingSeason::Multiplicative,
        period: 1,
    };
    assert!(matches!(
        estimate(&y, &bad, None),
        Err(EtsError::InvalidSpec { .. })
    ));
    let aam = EtsSpec::new(SmoothingTrend::Additive, SmoothingSeason::Additive, 12).unwrap();
    assert!(matches!(
        estimate(&y[..20], &aam, None),
        Err(EtsError::TooShort {
            needed: 24,
            got: 20
        })
    ));
    let anm = EtsSpec::new(SmoothingTrend::None, SmoothingSeason::Multiplicative, 4).unwrap();
    let mut z = y.clone();
    z[5] = 0.0;
    assert!(matches!(
        estimate(&z, &anm, None),
        Err(EtsError::NonPositive { index: 5, .. })
    ));
    let mut w = y.clone();
    w[3] = f64::NAN;
    let ann = EtsSpec::new(SmoothingTrend::None, SmoothingSeason::None, 1).unwrap();
    assert!(matches!(
        estimate(&w, &ann, None),
        Err(EtsError::NonFinite { .. })
    ));
    let huge: Vec<f64> = (0..40)
        .map(|t| if t % 2 == 0 { 1e300 } else { -1e300 })
        .collect();
    match estimate(&huge, &ann, None) {
        Err(EtsError::NonFinite { .. }) | Err(EtsError::NonConvergence { .. }) => {}
        Ok(f) => assert!(f.is_mse.is_finite()),
        Err(e) => panic!("unexpected {e}"),
    }
    // constant data: a perfect fit must not produce NaN or panic
    let flat = vec![5.0; 30];
    match estimate(&flat, &ann, None) {
        Ok(f) => assert!(f.is_mse.is_finite() && f.loglik.is_finite()),
        Err(e) => assert!(matches!(e, EtsError::NonFinite { .. })),
    }
    // a fit forecasts past an extended sample
    let f = estimate(&y, &ann, None).unwrap();
    let fc = forecast(&f, &y, 3, 0, 1).unwrap();
    assert_eq!(fc.len(), 3);
    assert!(fc.iter().all(|(m, v)| m.is_finite() && *v > 0.0));
}

/// The parameters the simulated data of every model come from.
fn generating_parameters(spec: &EtsSpec) -> EtsParams {
    EtsParams {
        alpha: 0.3,
        beta: if spec.has_trend() { 0.05 } else { 0.0 },
        gamma: if spec.has_season() { 0.1 } else { 0.0 },
        phi: if spec.trend == SmoothingTrend::Damped {
            0.9
        } else {
            1.0
        },
        level0: 100.0,
        trend0: if spec.has_trend() { 0.5 } else { 0.0 },
        season0: match spec.season {
            SmoothingSeason::None => vec![],
            SmoothingSeason::Additive => vec![-6.0, -3.0, 0.0, 1.0, 2.0, 3.0, 3.0],
            SmoothingSeason::Multiplicative => vec![0.94, 0.97, 1.0, 1.01, 1.02, 1.03, 1.03],
        },
    }
}

/// Simulated daily data (m = 7) from every model: the estimate fits at
/// least as well as the generating parameters and forecasts are finite.
#[test]
fn every_model_beats_its_generating_parameters() {
    let mut seed: u64 = 0x2545_F491_4F6C_DD1D;
    let mut normal = move || {
        let mut u = || {
            seed ^= seed << 13;
            seed ^= seed >> 7;
            seed ^= seed << 17;
            ((seed >> 11) as f64 + 0.5) / (1u64 << 53) as f64
        };
        let (a, b) = (u(), u());
        (-2.0 * a.ln()).sqrt() * (2.0 * std::f64::consts::PI * b).cos()
    };
    for trend in [
        SmoothingTrend::None,
        SmoothingTrend::Additive,
        SmoothingTrend::Damped,
    ] {
        for season in [
            SmoothingSeason::None,
            SmoothingSeason::Additive,
            SmoothingSeason::Multiplicative,
        ] {
            let spec = EtsSpec::new(trend, season, 7).unwrap();
            let mult = spec.multiplicative();
            let truth = generating_parameters(&spec);
            let sm = Smooth::of(&truth, &spec);
            let mut st = initial_state(&spec, &truth);
            let mut y = Vec::new();
            for t in 0..140 {
                let idx = t % st.s.len();
                let u = st.l + sm.phi * st.b;
                let s = st.s[idx];
                let e = 2.0 * normal();
                let yt = if mult { u * s + e } else { u + s + e };
                y.push(yt);
                run_filter(mult, &sm, &mut st, &[yt], None).unwrap();
            }
            let e_true = one_step_errors(&spec, &truth, &y).unwrap();
            let sse_true: f64 = e_true.iter().map(|v| v * v).sum();
            let fit = estimate(&y, &spec, None).unwrap();
            assert!(
                fit.sse <= sse_true * (1.0 + 1e-9),
                "{}: {} > {}",
                spec.short_name(),
                fit.sse,
                sse_true
            );
            let p = &fit.params;
            assert!(p.alpha >= PAR_LO && p.alpha <= PAR_HI);
            if spec.has_trend() {
                assert!(p.beta > 0.0 && p.beta < p.alpha);
            }
            if spec.has_season() {
                assert!(p.gamma > 0.0 && p.gamma < 1.0 - p.alpha);
            }
            assert!((PHI_LO..=PHI_HI).contains(&p.phi) || p.phi == 1.0);
            let fc = forecast(&fit, &y, 14, 0, 1).unwrap();
            assert!(fc
                .iter()
                .all(|(m, v)| m.is_finite() && v.is_finite() && *v > 0.0));
            assert!(fc.windows(2).all(|w| w[1].1 >= w[0].1 * 0.5));
        }
    }
}

#[test]
fn spec_bookkeeping() {
    let s = EtsSpec::new(SmoothingTrend::Damped, SmoothingSeason::Multiplicative, 12).unwrap();
    assert_eq!(s.short_name(), "ETS(A,Ad,M)");
    assert_eq!(s.n_smoothing(), 4);
    assert_eq!(s.n_initial(), 13);
    assert_eq!(s.n_params(), 17);
    assert_eq!(s.min_obs(), 24); // max(17 + 4, 2·12)
    let n = EtsSpec::new(SmoothingTrend::None, SmoothingSeason::None, 1).unwrap();
    assert_eq!(n.n_params(), 2);
    assert_eq!(n.min_obs(), 6);
}
