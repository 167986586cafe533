//! The theta method against statsmodels 0.14.4's ThetaModel (two-step fit)
//! and SARIMAX (the ARIMA(0,1,1) forecast variance), on open series that
//! statsmodels ships (tests/reference/theta/, written by generate_theta.py).

use super::*;
use serde_json::Value;

const REF: &str = concat!(
    env!("CARGO_MANIFEST_DIR"),
    "/tests/reference/theta/theta_reference.json"
);

fn cases() -> Vec<Value> {
    let text = std::fs::read_to_string(REF).expect("reference JSON");
    let v: Value = serde_json::from_str(&text).expect("valid JSON");
    v["cases"].as_array().expect("cases").clone()
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|x| x.as_f64().expect("number"))
        .collect()
}

fn model(case: &Value) -> Theta {
    Theta {
        season: case["multiplicative"]
            .as_bool()
            .expect("bool")
            .then(|| case["period"].as_u64().expect("period") as usize),
    }
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}

#[test]
fn seasonal_indices_match_statsmodels_seasonal_decompose() {
    let mut checked = 0;
    for case in cases() {
        let expected = floats(&case["seasonal"]);
        if expected.is_empty() {
            continue;
        }
        let y = floats(&case["y"]);
        let m = case["period"].as_u64().unwrap() as usize;
        let ours = multiplicative_indices(&y, m).unwrap();
        for (a, b) in ours.iter().zip(&expected) {
            assert!(rel(*a, *b) < 1e-12, "{}: {a} vs {b}", case["name"]);
        }
        checked += 1;
    }
    assert_eq!(checked, 6);
}

/// With statsmodels' own b0 and α, the forecast formula and the smoothing
/// filter must reproduce its forecasts to rounding.
#[test]
fn forecasts_at_the_reference_parameters_match_to_rounding() {
    for case in cases() {
        let y = floats(&case["y"]);
        let m = model(&case);
        let indices = match m.season {
            Some(p) => multiplicative_indices(&y, p).unwrap(),
            None => Vec::new(),
        };
        let fit = ThetaFit {
            alpha: case["alpha"].as_f64().unwrap(),
            b0: case["b0"].as_f64().unwrap(),
            sigma2: 1.0,
            is_mse: 1.0,
            indices,
        };
        let expected = floats(&case["forecast"]);
        let ours = m.forecast(&fit, &y, expected.len());
        for (h, ((f, _), e)) in ours.iter().zip(&expected).enumerate() {
            assert!(
                rel(*f, *e) < 1e-10,
                "{} h={}: {f} vs {e}",
                case["name"],
                h + 1
            );
        }
    }
}

/// Our estimate: the same least-squares slope; an α whose sum of squared
/// errors is at least as small as statsmodels' (whose optimiser stops near
/// the edge α = 1 on random-walk-like series); where its α is inside the
/// interval the optimum is sharp and α and the forecasts agree closely.
#[test]
fn estimates_match_statsmodels_or_fit_at_least_as_well() {
    let mut interior = 0;
    for case in cases() {
        let name = case["name"].as_str().unwrap().to_string();
        let y = floats(&case["y"]);
        let m = model(&case);
        let fit = m.estimate(&y).unwrap();
        let b0 = case["b0"].as_f64().unwrap();
        assert!(rel(fit.b0, b0) < 1e-9, "{name}: b0 {} vs {b0}", fit.b0);
        let alpha = case["alpha"].as_f64().unwrap();
        let x = Theta::adjusted(&fit.indices, &y);
        let (ours, theirs) = (ses_sse(&x, fit.alpha), ses_sse(&x, alpha));
        assert!(
            ours <= theirs * (1.0 + 1e-12),
            "{name}: SSE {ours} > {theirs}"
        );
        let expected = floats(&case["forecast"]);
        let path = m.forecast(&fit, &y, expected.len());
        if alpha > 1e-3 && alpha < 0.999 {
            interior += 1;
            assert!(
                (fit.alpha - alpha).abs() < 1e-4,
                "{name}: α {} vs {alpha}",
                fit.alpha
            );
            for (h, ((f, _), e)) in path.iter().zip(&expected).enumerate() {
                assert!(rel(*f, *e) < 1e-5, "{name} h={}: {f} vs {e}", h + 1);
            }
        } else {
            // α on the edge: the forecasts still agree to what the
            // distance between the two α (about 1e-4) moves them.
            for (h, ((f, _), e)) in path.iter().zip(&expected).enumerate() {
                assert!(rel(*f, *e) < 1e-3, "{name} h={}: {f} vs {e}", h + 1);
            }
        }
    }
    assert!(interior >= 5, "only {interior} interior cases");
}

/// The closed-form variance 1 + (h − 1)α² per unit σ² against the exact
/// ARIMA(0,1,1) forecast variance SARIMAX gives at ma = α − 1.
#[test]
fn variances_follow_the_arima_0_1_1_of_simple_smoothing() {
    for case in cases() {
        if case["multiplicative"].as_bool().unwrap() {
            continue;
        }
        let y = floats(&case["y"]);
        let alpha = case["alpha"].as_f64().unwrap();
        let fit = ThetaFit {
            alpha,
            b0: case["b0"].as_f64().unwrap(),
            sigma2: 1.0,
            is_mse: 1.0,
            indices: Vec::new(),
        };
        let expected = floats(&case["ima_variance"]);
        let ours = Theta { season: None }.forecast(&fit, &y, expected.len());
        for (h, ((_, v), e)) in ours.iter().zip(&expected).enumerate() {
            assert!(
                rel(*v, *e) < 1e-8,
                "{} h={}: {v} vs {e}",
                case["name"],
                h + 1
            );
        }
    }
}

#[test]
fn refuses_what_it_cannot_adjust() {
    let m = Theta { season: Some(4) };
    let short = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0];
    assert!(m.estimate(&short).unwrap_err().contains("two full seasons"));
    let mut y: Vec<f64> = (1..=16).map(f64::from).collect();
    y[5] = 0.0;
    let e = m.estimate(&y).unwrap_err();
    assert!(e.contains("observation 6"), "{e}");
}
