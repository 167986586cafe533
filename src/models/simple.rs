//! The benchmark families of SPEC §4: naive, mean, drift and seasonal naive.

use super::{EstimationProblem, ForecastRow, OutlookRow, Schedule};
use crate::spec::{Family, TargetData};

/// Forecast of a simple family at origin T for horizon h with estimation
/// sample a..=E (positions). Returns (forecast, in-sample MSE).
fn simple_forecast(
    family: &Family,
    y: &[f64],
    origin: usize,
    horizon: usize,
    start: usize,
    end: usize,
    season: Option<usize>,
) -> Result<(f64, Option<f64>), String> {
    let at = |pos: usize| y[pos - 1];
    match family {
        Family::Naive => Ok((at(origin), None)),
        Family::Mean => {
            let sample = &y[start - 1..end];
            let mean = sample.iter().sum::<f64>() / sample.len() as f64;
            let mse =
                sample.iter().map(|v| (v - mean) * (v - mean)).sum::<f64>() / sample.len() as f64;
            Ok((mean, Some(mse)))
        }
        Family::Drift => {
            if end <= start {
                return Err("drift needs an estimation sample of at least two observations".into());
            }
            let slope = (at(end) - at(start)) / (end - start) as f64;
            let mse = ((start + 1)..=end)
                .map(|t| (at(t) - at(t - 1) - slope).powi(2))
                .sum::<f64>()
                / (end - start) as f64;
            Ok((at(origin) + horizon as f64 * slope, Some(mse)))
        }
        Family::SeasonalNaive => {
            let m = season.ok_or("seasonal_naive needs seasonal data")?;
            let back = m * horizon.div_ceil(m);
            if origin + horizon <= back {
                return Err(format!(
                    "seasonal_naive needs {m} observations before the origin"
                ));
            }
            Ok((at(origin + horizon - back), None))
        }
        _ => Err("not a simple family".into()),
    }
}

pub fn backtest(
    family: &Family,
    target: &TargetData,
    sched: &Schedule,
    horizons: &[usize],
    season: Option<usize>,
) -> Result<Vec<ForecastRow>, EstimationProblem> {
    let mut rows = Vec::new();
    for &h in horizons {
        for origin in sched.origins(h) {
            let end = sched.estimation_end(origin);
            let start = crate::plan::sample_start(sched.scheme, end);
            let (forecast, is_mse) = simple_forecast(
                family, &target.y, origin, h, start, end, season,
            )
            .map_err(|message| EstimationProblem {
                horizon: h,
                origin,
                message,
            })?;
            rows.push(ForecastRow {
                horizon: h,
                origin,
                forecast,
                is_mse,
            });
        }
    }
    Ok(rows)
}

/// Forecasts beyond the data from origin N with E = N (the last `window`
/// observations when `window` is given).
pub fn outlook(
    family: &Family,
    target: &TargetData,
    window: Option<usize>,
    horizons: &[usize],
    season: Option<usize>,
) -> Vec<OutlookRow> {
    let n = target.n;
    let start = match window {
        Some(w) if n > w => n - w + 1,
        _ => 1,
    };
    horizons
        .iter()
        .map(|&h| OutlookRow {
            horizon: h,
            forecast: simple_forecast(family, &target.y, n, h, start, n, season)
                .ok()
                .map(|r| r.0),
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    // Definitions of SPEC §4 worked by hand on y = 1, 3, 2, 6, 5, 9 (positions 1..6).
    const Y: [f64; 6] = [1.0, 3.0, 2.0, 6.0, 5.0, 9.0];

    #[test]
    fn naive_mean_drift_seasonal_naive_by_hand() {
        let f = |fam: Family, origin, h, start, end, m| {
            simple_forecast(&fam, &Y, origin, h, start, end, m).unwrap()
        };
        assert_eq!(f(Family::Naive, 4, 2, 1, 4, None).0, 6.0);
        // mean of 1,3,2,6 = 3; squared deviations 4,0,1,9 → mse 3.5
        assert_eq!(f(Family::Mean, 4, 1, 1, 4, None), (3.0, Some(3.5)));
        // drift from a=1..E=4: slope (6−1)/3; forecast y_4 + 2·5/3
        let (d, mse) = f(Family::Drift, 4, 2, 1, 4, None);
        assert!((d - (6.0 + 10.0 / 3.0)).abs() < 1e-12);
        // one-step residuals: (2−5/3), (−1−5/3), (4−5/3)
        let want = ((1.0f64 / 3.0).powi(2) + (8.0f64 / 3.0).powi(2) + (7.0f64 / 3.0).powi(2)) / 3.0;
        assert!((mse.unwrap() - want).abs() < 1e-12);
        // m = 2: h = 1 → y_{T+1−2} = y_{T−1}; h = 3 → y_{T+3−4} = y_{T−1}; h = 2 → y_T
        assert_eq!(f(Family::SeasonalNaive, 4, 1, 1, 4, Some(2)).0, 2.0);
        assert_eq!(f(Family::SeasonalNaive, 4, 2, 1, 4, Some(2)).0, 6.0);
        assert_eq!(f(Family::SeasonalNaive, 4, 3, 1, 4, Some(2)).0, 2.0);
    }

    #[test]
    fn drift_needs_two_observations() {
        assert!(simple_forecast(&Family::Drift, &Y, 4, 1, 4, 4, None).is_err());
    }
}
