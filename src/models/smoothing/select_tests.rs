//! `smoothing(aicc)` against statsmodels 0.14.4 (tests/reference/smoothing/
//! select_reference.json, written by generate_select.py from the fits in
//! smoothing_reference.json): the parameter count, the AICc and the form
//! chosen on five open series (statsmodels.datasets nile, macrodata realgdp,
//! co2 quarterly and monthly, elnino monthly).

use super::*;
use crate::spec::{SmoothingSeason, SmoothingTrend};
use serde_json::Value;

const REF: &str = concat!(
    env!("CARGO_MANIFEST_DIR"),
    "/tests/reference/smoothing/select_reference.json"
);

fn trend(s: &str) -> SmoothingTrend {
    match s {
        "none" => SmoothingTrend::None,
        "additive" => SmoothingTrend::Additive,
        "damped" => SmoothingTrend::Damped,
        t => panic!("trend {t}"),
    }
}

fn season(s: &str) -> SmoothingSeason {
    match s {
        "none" => SmoothingSeason::None,
        "additive" => SmoothingSeason::Additive,
        t => panic!("season {t}"),
    }
}

/// statsmodels counts all m initial seasonal states; outturn's seasonal
/// states are normalised (they sum to zero), so it estimates m − 1 of them
/// (Hyndman et al. 2008, §2.5): its k is one less for a seasonal form.
fn our_k(form: &Value) -> usize {
    let k = form["df_model"].as_u64().unwrap() as usize;
    k - usize::from(form["season"] != "none")
}

#[test]
fn the_choice_by_aicc_is_statsmodels_choice_where_it_is_clear() {
    let text = std::fs::read_to_string(REF).expect("reference JSON");
    let v: Value = serde_json::from_str(&text).expect("valid JSON");
    let mut decided = 0;
    for series in v["series"].as_array().unwrap() {
        let name = series["name"].as_str().unwrap();
        let period = series["period"].as_u64().unwrap() as usize;
        let y: Vec<f64> = series["y"]
            .as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_f64().unwrap())
            .collect();
        let forms = series["forms"].as_array().unwrap();
        let specs: Vec<EtsSpec> = forms
            .iter()
            .map(|f| {
                EtsSpec::new(
                    trend(f["trend"].as_str().unwrap()),
                    season(f["season"].as_str().unwrap()),
                    period,
                )
                .unwrap()
            })
            .collect();
        // Their AICc, with statsmodels' own count and formula, reproduced.
        let mut theirs = Vec::new();
        for f in forms {
            let (llf, n) = (
                f["llf"].as_f64().unwrap(),
                f["nobs"].as_u64().unwrap() as usize,
            );
            let k = f["df_model"].as_u64().unwrap() as usize;
            let a = crate::numerics::ic::aicc(llf, k, n);
            assert!(
                (a - f["aicc"].as_f64().unwrap()).abs() < 1e-9 * a.abs(),
                "{name}"
            );
            theirs.push(crate::numerics::ic::aicc(llf, our_k(f), n));
        }
        let model = SmoothingSelect {
            specs: specs.clone(),
            seed: 0,
        };
        let fit = model.estimate(&y, 1, None).unwrap();
        for (i, f) in forms.iter().enumerate() {
            let ours = fit.fits[i].as_ref().unwrap();
            assert_eq!(ours.n_params + 1, our_k(f), "{name} form {i}");
            // At least as good a likelihood as statsmodels' best start.
            let llf = f["llf"].as_f64().unwrap();
            assert!(
                ours.loglik >= llf - 1e-6 * llf.abs(),
                "{name} form {i}: {} < {llf}",
                ours.loglik
            );
        }
        let mut order: Vec<usize> = (0..theirs.len()).collect();
        order.sort_by(|a, b| theirs[*a].total_cmp(&theirs[*b]));
        if theirs.len() > 1 && theirs[order[1]] - theirs[order[0]] > 1.0 {
            assert_eq!(
                fit.chosen, order[0],
                "{name}: chose form {} of {order:?}",
                fit.chosen
            );
            decided += 1;
        }
        assert!(matches!(model.order(&fit), Some(Order::Smoothing(..))));
    }
    assert!(decided >= 3, "only {decided} series had a clear choice");
}
