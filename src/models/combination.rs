//! Forecast combinations (SPEC §4), computed from the member cells' forecast
//! rows after the cells have run (SPEC §6), so they also work across shards.
//! Weights use only outturns known at each origin: for a forecast from origin
//! T at horizon h, a member's earlier forecast from origin T′ counts once its
//! outturn at T′ + h ≤ T is known. Bates & Granger (1969) for the idea;
//! Stock & Watson (2004) for inverse-MSE and trimmed means in practice.

use super::{ForecastRow, OutlookRow};
use crate::spec::CombinationWeights;

/// Combine member forecasts at one origin with the given weights (None: equal).
fn combine_values(kind: CombinationWeights, values: &[f64], weights: Option<&[f64]>) -> f64 {
    match (kind, weights) {
        (CombinationWeights::Trimmed, _) => {
            let mut v = values.to_vec();
            v.sort_by(f64::total_cmp);
            let inner = &v[1..v.len() - 1];
            inner.iter().sum::<f64>() / inner.len() as f64
        }
        (CombinationWeights::InverseMse, Some(w)) => {
            let total: f64 = w.iter().sum();
            values.iter().zip(w).map(|(v, w)| v * w).sum::<f64>() / total
        }
        _ => values.iter().sum::<f64>() / values.len() as f64,
    }
}

/// Running squared errors of each member at one horizon, by origin.
struct Track {
    /// (origin, squared error) in origin order, per member.
    errors: Vec<Vec<(usize, f64)>>,
}

impl Track {
    /// Inverse-MSE weights from errors whose outturn is known at `origin`,
    /// or None while some member has none (equal weights then).
    fn weights_at(&self, origin: usize, horizon: usize) -> Option<Vec<f64>> {
        self.errors
            .iter()
            .map(|errs| {
                let known: Vec<f64> = errs
                    .iter()
                    .take_while(|(o, _)| o + horizon <= origin)
                    .map(|(_, e)| *e)
                    .collect();
                if known.is_empty() {
                    return None;
                }
                let mse = known.iter().sum::<f64>() / known.len() as f64;
                (mse > 0.0).then(|| 1.0 / mse)
            })
            .collect()
    }
}

/// Combined backtest forecasts of one target × scheme from its members' rows.
pub fn backtest(
    kind: CombinationWeights,
    members: &[&[ForecastRow]],
    y: &[f64],
    horizons: &[usize],
) -> Result<Vec<ForecastRow>, String> {
    let mut out = Vec::new();
    for &h in horizons {
        let rows: Vec<Vec<&ForecastRow>> = members
            .iter()
            .map(|m| m.iter().filter(|r| r.horizon == h).collect())
            .collect();
        let n = rows[0].len();
        if rows.iter().any(|r| r.len() != n) {
            return Err("members have forecasts at different origins".into());
        }
        let track = Track {
            errors: rows
                .iter()
                .map(|r| {
                    r.iter()
                        .map(|f| (f.origin, (y[f.origin + h - 1] - f.forecast).powi(2)))
                        .collect()
                })
                .collect(),
        };
        for i in 0..n {
            let origin = rows[0][i].origin;
            if rows.iter().any(|r| r[i].origin != origin) {
                return Err("members have forecasts at different origins".into());
            }
            let values: Vec<f64> = rows.iter().map(|r| r[i].forecast).collect();
            let weights = if kind == CombinationWeights::InverseMse {
                track.weights_at(origin, h)
            } else {
                None
            };
            out.push(ForecastRow {
                horizon: h,
                origin,
                forecast: combine_values(kind, &values, weights.as_deref()),
                is_mse: None,
                is_var: None,
                variance: None,
                order: None,
            });
        }
    }
    Ok(out)
}

/// Combined outlook from the members' outlook rows at each of `horizons`
/// (1..max of the `listed` ones); inverse-MSE weights use every backtest
/// forecast of the first scheme (all outturns are known at N) at the
/// horizon itself, or at an unlisted horizon, which has no scored errors,
/// at the nearest listed horizon above it.
pub fn outlook(
    kind: CombinationWeights,
    members: &[&[OutlookRow]],
    backtests: &[&[ForecastRow]],
    y: &[f64],
    (horizons, listed): (&[usize], &[usize]),
) -> Vec<OutlookRow> {
    horizons
        .iter()
        .map(|&h| {
            let values: Option<Vec<f64>> = members
                .iter()
                .map(|m| m.iter().find(|r| r.horizon == h).and_then(|r| r.forecast))
                .collect();
            let scored = listed
                .iter()
                .copied()
                .filter(|&l| l >= h)
                .min()
                .unwrap_or(h);
            let weights = (kind == CombinationWeights::InverseMse).then(|| {
                let track = Track {
                    errors: backtests
                        .iter()
                        .map(|rows| {
                            rows.iter()
                                .filter(|f| f.horizon == scored)
                                .map(|f| {
                                    (f.origin, (y[f.origin + scored - 1] - f.forecast).powi(2))
                                })
                                .collect()
                        })
                        .collect(),
                };
                track.weights_at(usize::MAX / 2, scored)
            });
            OutlookRow {
                horizon: h,
                forecast: values.map(|v| combine_values(kind, &v, weights.flatten().as_deref())),
                variance: None,
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn row(origin: usize, forecast: f64) -> ForecastRow {
        ForecastRow {
            horizon: 1,
            origin,
            forecast,
            is_mse: None,
            is_var: None,
            variance: None,
            order: None,
        }
    }

    #[test]
    fn equal_and_trimmed_by_hand() {
        // Hand-computed from SPEC §4: mean of 1, 2, 6 is 3; trimmed drops 1 and 6 → 2.
        assert_eq!(
            combine_values(CombinationWeights::Equal, &[1.0, 2.0, 6.0], None),
            3.0
        );
        assert_eq!(
            combine_values(CombinationWeights::Trimmed, &[6.0, 1.0, 2.0, 3.0], None),
            2.5
        );
    }

    #[test]
    fn inverse_mse_uses_only_known_outturns() {
        // y at positions 1..=4; member a forecasts perfectly except at origin 1,
        // member b is off by 2 at origin 1 and by 1 at origin 2 (hand-computed).
        let y = [0.0, 1.0, 2.0, 3.0];
        let a = [row(1, 2.0), row(2, 2.0), row(3, 3.0)]; // errors (h=1): y2−2 = −1, y3−2 = 0, y4−3 = 0
        let b = [row(1, 3.0), row(2, 3.0), row(3, 5.0)]; // errors: −2, −1, −2
        let out = backtest(CombinationWeights::InverseMse, &[&a, &b], &y, &[1]).unwrap();
        // origin 1: nothing known yet → equal weights: (2 + 3)/2
        assert_eq!(out[0].forecast, 2.5);
        // origin 2: known errors from origin 1 only: mse a = 1, b = 4 → weights 1, 1/4
        assert!((out[1].forecast - (2.0 * 1.0 + 3.0 * 0.25) / 1.25).abs() < 1e-15);
        // origin 3: mse a = (1 + 0)/2, b = (4 + 1)/2 → weights 2, 0.4
        assert!((out[2].forecast - (3.0 * 2.0 + 5.0 * 0.4) / 2.4).abs() < 1e-15);
    }

    #[test]
    fn an_unlisted_outlook_horizon_takes_the_next_listed_horizons_weights() {
        // Horizons [1, 3] listed; the outlook has 1, 2, 3. Hand-computed:
        // at h = 3 member a's backtest error is 1 (mse 1), b's is 2 (mse 4),
        // so weights 1 and 1/4; h = 2 has no backtest rows and uses them too.
        let y = [0.0, 0.0, 0.0, 0.0, 0.0];
        let at3 = |origin, forecast| ForecastRow {
            horizon: 3,
            ..row(origin, forecast)
        };
        let (ba, bb) = ([at3(1, -1.0)], [at3(1, 2.0)]);
        let look = |f: [f64; 3]| -> Vec<OutlookRow> {
            (1..=3)
                .map(|h| OutlookRow {
                    horizon: h,
                    forecast: Some(f[h - 1]),
                    variance: None,
                })
                .collect()
        };
        let (la, lb) = (look([10.0, 20.0, 30.0]), look([20.0, 40.0, 60.0]));
        let out = outlook(
            CombinationWeights::InverseMse,
            &[&la, &lb],
            &[&ba, &bb],
            &y,
            (&[1, 2, 3], &[1, 3]),
        );
        let w = |a: f64, b: f64| (a + 0.25 * b) / 1.25;
        assert_eq!(out.iter().map(|r| r.horizon).collect::<Vec<_>>(), [1, 2, 3]);
        // h = 1 has no backtest rows in this example: equal weights.
        assert_eq!(out[0].forecast, Some(15.0));
        assert!((out[1].forecast.unwrap() - w(20.0, 40.0)).abs() < 1e-12);
        assert!((out[2].forecast.unwrap() - w(30.0, 60.0)).abs() < 1e-12);
    }

    #[test]
    fn changing_future_outturns_leaves_earlier_combinations_unchanged() {
        // No look-ahead, by construction: alter y after position 3 and the
        // combined forecasts from origins ≤ 2 (whose weights use outturns up to 2) stay equal.
        let a = [row(1, 2.0), row(2, 2.0), row(3, 3.0)];
        let b = [row(1, 3.0), row(2, 3.0), row(3, 5.0)];
        let y1 = [0.0, 1.0, 2.0, 3.0];
        let y2 = [0.0, 1.0, 2.0, 300.0];
        let o1 = backtest(CombinationWeights::InverseMse, &[&a, &b], &y1, &[1]).unwrap();
        let o2 = backtest(CombinationWeights::InverseMse, &[&a, &b], &y2, &[1]).unwrap();
        assert_eq!(o1[..3], o2[..3]);
        let y3 = [0.0, 1.0, 200.0, 300.0];
        let o3 = backtest(CombinationWeights::InverseMse, &[&a, &b], &y3, &[1]).unwrap();
        assert_eq!(o1[..2], o3[..2]);
        assert_ne!(o1[2], o3[2]);
    }
}
