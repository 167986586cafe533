//! `scoring.intervals_from: past_errors` (SPEC §7.6): quantiles of a
//! forecast from the empirical quantiles of the candidate's own earlier
//! out-of-sample errors at the same horizon (Williams & Goodman 1971). At
//! origin T the error of the forecast made at T′ for T′ + h is known when
//! T′ + h ≤ T; with fewer than [`MIN_PAST_ERRORS`] of them the forecast has
//! no quantiles. The quantile is forecast + Q(τ) of those errors, Q the
//! empirical quantile of Hyndman & Fan's (1996) type 7 (numpy's default).
//! Any candidate with forecasts gets them: combinations and benchmarks too.

use crate::backtest::CellOutput;
use crate::spec::{Experiment, TargetData};

/// Past errors needed before the first quantiles: with ten, the 10 % and
/// 90 % quantiles of type 7 lie strictly inside the observed errors.
pub const MIN_PAST_ERRORS: usize = 10;

/// Hyndman & Fan (1996) type 7 quantile of ascending `sorted` (non-empty):
/// with h = (n − 1)τ, x₍⌊h⌋₎ + (h − ⌊h⌋)(x₍⌊h⌋+1₎ − x₍⌊h⌋₎), 0-based.
pub fn empirical_quantile(sorted: &[f64], tau: f64) -> f64 {
    let n = sorted.len();
    let h = (n - 1) as f64 * tau;
    let lo = (h.floor() as usize).min(n - 1);
    let hi = (lo + 1).min(n - 1);
    sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
}

/// For each forecast of one horizon (origins ascending, errors beside
/// them), the empirical quantiles at `probs` of the errors known at its
/// origin, or `None` while fewer than [`MIN_PAST_ERRORS`] are. Errors are
/// added to a sorted list as they become known, so the whole series costs
/// one insertion per forecast.
pub fn quantiles_by_origin(
    origins: &[usize],
    errors: &[f64],
    h: usize,
    probs: &[f64],
) -> Vec<Option<Vec<f64>>> {
    let mut known: Vec<f64> = Vec::with_capacity(errors.len());
    let mut next = 0;
    origins
        .iter()
        .map(|&origin| {
            while next < origins.len() && origins[next] + h <= origin {
                let e = errors[next];
                if e.is_finite() {
                    let at = known.partition_point(|v| *v < e);
                    known.insert(at, e);
                }
                next += 1;
            }
            (known.len() >= MIN_PAST_ERRORS).then(|| {
                probs
                    .iter()
                    .map(|&p| empirical_quantile(&known, p))
                    .collect()
            })
        })
        .collect()
}

/// The probabilities of the quantile columns, ascending.
fn probs(exp: &Experiment) -> Vec<f64> {
    exp.quantile_columns().iter().map(|q| q.prob).collect()
}

/// Errors and origins of a cell's forecasts at horizon h, with their
/// indices in `out.forecasts`.
fn horizon_errors(
    target: &TargetData,
    out: &CellOutput,
    h: usize,
) -> (Vec<usize>, Vec<usize>, Vec<f64>) {
    let mut index = Vec::new();
    let mut origins = Vec::new();
    let mut errors = Vec::new();
    for (i, r) in out
        .forecasts
        .iter()
        .enumerate()
        .filter(|(_, r)| r.horizon == h)
    {
        index.push(i);
        origins.push(r.origin);
        errors.push(target.scored()[r.origin + h - 1] - r.forecast);
    }
    (index, origins, errors)
}

/// The quantile offsets of every forecast of a cell, in `out.forecasts`
/// order (each offset is added to the forecast).
pub fn for_forecasts(
    exp: &Experiment,
    target: &TargetData,
    out: &CellOutput,
) -> Vec<Option<Vec<f64>>> {
    let probs = probs(exp);
    let mut all = vec![None; out.forecasts.len()];
    for &h in &exp.horizons {
        let (index, origins, errors) = horizon_errors(target, out, h);
        for (i, q) in index
            .into_iter()
            .zip(quantiles_by_origin(&origins, &errors, h, &probs))
        {
            all[i] = q;
        }
    }
    all
}

/// The quantile offsets of a cell's outlook rows: at the last observed
/// position every backtest error of the horizon is known.
pub fn for_outlook(
    exp: &Experiment,
    target: &TargetData,
    out: &CellOutput,
) -> Vec<Option<Vec<f64>>> {
    let probs = probs(exp);
    out.outlook
        .iter()
        .map(|r| {
            let (_, _, mut errors) = horizon_errors(target, out, r.horizon);
            errors.retain(|e| e.is_finite());
            errors.sort_by(f64::total_cmp);
            (errors.len() >= MIN_PAST_ERRORS).then(|| {
                probs
                    .iter()
                    .map(|&p| empirical_quantile(&errors, p))
                    .collect()
            })
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::score::refdata::{f, floats, load};

    #[test]
    fn type_7_quantiles_against_numpy() {
        // numpy 2.1.3 np.quantile(x, tau) (method='linear', Hyndman & Fan
        // type 7) on forecast errors of macrodata and nile (generate_density.py).
        let r = load("density", "density.json");
        for c in r["empirical"].as_array().unwrap() {
            let mut x = floats(&c["errors"]);
            x.sort_by(f64::total_cmp);
            for (tau, want) in floats(&c["taus"]).iter().zip(floats(&c["quantiles"])) {
                let got = empirical_quantile(&x, *tau);
                assert!(
                    (got - want).abs() <= 1e-12 * want.abs().max(1.0),
                    "{tau}: {got} vs {want}"
                );
            }
        }
    }

    #[test]
    fn only_errors_known_at_the_origin_count() {
        // numpy's np.quantile over errors[: k] at each origin, where k counts
        // the origins T′ with T′ + h ≤ T (generate_density.py, `past`).
        let r = load("density", "density.json");
        for c in r["past"].as_array().unwrap() {
            let h = c["h"].as_u64().unwrap() as usize;
            let errors = floats(&c["errors"]);
            let origins: Vec<usize> = (0..errors.len()).map(|i| 100 + i).collect();
            let probs = floats(&c["taus"]);
            let got = quantiles_by_origin(&origins, &errors, h, &probs);
            for (i, want) in c["quantiles"].as_array().unwrap().iter().enumerate() {
                match (&got[i], want.is_null()) {
                    (None, true) => {}
                    (Some(g), false) => {
                        for (a, b) in g.iter().zip(floats(want)) {
                            assert!(
                                (a - b).abs() <= 1e-12 * b.abs().max(1.0),
                                "origin {i}: {a} vs {b}"
                            );
                        }
                    }
                    (g, _) => panic!("origin {i}: got {g:?}, want {want}"),
                }
            }
            assert_eq!(
                f(&c["first"]) as usize,
                got.iter().position(Option::is_some).unwrap()
            );
        }
    }
}
