//! score: pure functions from forecast rows to accuracy tables (SPEC §4–§5):
//! the metrics, the pooled `all` horizon, ranks, and the in-sample versus
//! out-of-sample comparison.

use crate::backtest::CellOutput;
use crate::plan::Cell;
use crate::spec::{Experiment, Metric, Scheme};

/// Forecast errors of one candidate on one target × scheme × horizon.
#[derive(Debug, Clone, Default)]
pub struct Errors {
    pub actual: Vec<f64>,
    pub forecast: Vec<f64>,
    pub is_mse: Vec<Option<f64>>,
}

impl Errors {
    pub fn error(&self, i: usize) -> f64 {
        self.actual[i] - self.forecast[i]
    }
    pub fn len(&self) -> usize {
        self.actual.len()
    }
    pub fn is_empty(&self) -> bool {
        self.actual.is_empty()
    }
    pub fn extend(&mut self, other: &Errors) {
        self.actual.extend_from_slice(&other.actual);
        self.forecast.extend_from_slice(&other.forecast);
        self.is_mse.extend_from_slice(&other.is_mse);
    }
}

/// rmse = sqrt(mean e²)
pub fn rmse(e: &Errors) -> Option<f64> {
    mean((0..e.len()).map(|i| e.error(i).powi(2)), e.len()).map(f64::sqrt)
}
/// mae = mean |e|
pub fn mae(e: &Errors) -> Option<f64> {
    mean((0..e.len()).map(|i| e.error(i).abs()), e.len())
}
/// bias = mean e (positive: forecasts too low on average)
pub fn bias(e: &Errors) -> Option<f64> {
    mean((0..e.len()).map(|i| e.error(i)), e.len())
}
/// mape = 100·mean |e/actual|; undefined when an actual is 0.
pub fn mape(e: &Errors) -> Option<f64> {
    if e.actual.contains(&0.0) {
        return None;
    }
    mean(
        (0..e.len()).map(|i| (e.error(i) / e.actual[i]).abs()),
        e.len(),
    )
    .map(|v| 100.0 * v)
}
/// smape = 200·mean |e|/(|actual|+|forecast|); a 0/0 term counts as 0.
pub fn smape(e: &Errors) -> Option<f64> {
    mean(
        (0..e.len()).map(|i| {
            let den = e.actual[i].abs() + e.forecast[i].abs();
            if den == 0.0 {
                0.0
            } else {
                e.error(i).abs() / den
            }
        }),
        e.len(),
    )
    .map(|v| 200.0 * v)
}
/// mase (Hyndman & Koehler 2006) = mae / scale.
pub fn mase(e: &Errors, scale: Option<f64>) -> Option<f64> {
    match (mae(e), scale) {
        (Some(m), Some(s)) if s > 0.0 => Some(m / s),
        _ => None,
    }
}
/// r2_oos (Campbell & Thompson 2008) = 1 − Σe²/Σe_benchmark².
pub fn r2_oos(e: &Errors, benchmark: &Errors) -> Option<f64> {
    if e.len() != benchmark.len() || e.is_empty() {
        return None;
    }
    let num: f64 = (0..e.len()).map(|i| e.error(i).powi(2)).sum();
    let den: f64 = (0..benchmark.len())
        .map(|i| benchmark.error(i).powi(2))
        .sum();
    if den > 0.0 {
        Some(1.0 - num / den)
    } else {
        None
    }
}

fn mean(values: impl Iterator<Item = f64>, n: usize) -> Option<f64> {
    if n == 0 {
        return None;
    }
    Some(values.sum::<f64>() / n as f64)
}

/// The MASE scale: mean |y_t − y_{t−m}| over the estimation sample of the
/// scheme's first origin (positions a..=T0), m the season length or 1.
pub fn mase_scale(
    y: &[f64],
    scheme: &Scheme,
    first_origin: usize,
    season: Option<usize>,
) -> Option<f64> {
    let m = season.unwrap_or(1);
    let start = crate::plan::sample_start(scheme, first_origin);
    let terms: Vec<f64> = ((start + m)..=first_origin)
        .map(|t| (y[t - 1] - y[t - 1 - m]).abs())
        .collect();
    mean(terms.iter().copied(), terms.len())
}

/// In-sample rmse: the square root of the mean of `is_mse` over the forecasts (SPEC §4).
pub fn in_sample_rmse(e: &Errors) -> Option<f64> {
    let vals: Vec<f64> = e.is_mse.iter().filter_map(|v| *v).collect();
    if vals.len() != e.len() || vals.is_empty() {
        return None;
    }
    Some((vals.iter().sum::<f64>() / vals.len() as f64).sqrt())
}

#[derive(Debug, Clone, PartialEq)]
pub struct ScoreRow {
    pub target: usize,
    pub candidate: usize,
    pub scheme: usize,
    /// None is the pooled `all` horizon.
    pub horizon: Option<usize>,
    pub period_set: String,
    pub n: usize,
    /// One value per `Experiment::metrics`, in that order.
    pub metrics: Vec<Option<f64>>,
    pub is_rmse: Option<f64>,
    pub gap: Option<f64>,
    pub rank: usize,
}

/// Errors per cell and horizon: `[cell][horizon index]`.
pub fn cell_errors(exp: &Experiment, cells: &[Cell], outputs: &[CellOutput]) -> Vec<Vec<Errors>> {
    cells
        .iter()
        .zip(outputs)
        .map(|(cell, out)| {
            let y = &exp.targets[cell.target].y;
            exp.horizons
                .iter()
                .map(|&h| {
                    let mut e = Errors::default();
                    for r in out.forecasts.iter().filter(|r| r.horizon == h) {
                        e.actual.push(y[r.origin + h - 1]);
                        e.forecast.push(r.forecast);
                        e.is_mse.push(r.is_mse);
                    }
                    e
                })
                .collect()
        })
        .collect()
}

fn metric_value(metric: Metric, e: &Errors, bench: &Errors, scale: Option<f64>) -> Option<f64> {
    match metric {
        Metric::Rmse => rmse(e),
        Metric::Mae => mae(e),
        Metric::Bias => bias(e),
        Metric::Mape => mape(e),
        Metric::Smape => smape(e),
        Metric::Mase => mase(e, scale),
        Metric::R2Oos => r2_oos(e, bench),
    }
}

/// Sort key so that rank 1 is best: smaller loss, larger r2_oos, smaller |bias|.
fn rank_key(metric: Metric, v: Option<f64>) -> f64 {
    match v {
        None => f64::INFINITY,
        Some(v) if metric.higher_is_better() => -v,
        Some(v) if metric == Metric::Bias => v.abs(),
        Some(v) => v,
    }
}

/// The scores table in output order (SPEC §5).
pub fn scores(exp: &Experiment, cells: &[Cell], errors: &[Vec<Errors>]) -> Vec<ScoreRow> {
    let n_c = exp.candidates.len();
    let n_s = exp.schemes.len();
    let index = |t: usize, c: usize, s: usize| (t * n_c + c) * n_s + s;
    debug_assert_eq!(cells.len(), exp.targets.len() * n_c * n_s);
    let mut horizons: Vec<Option<usize>> = (0..exp.horizons.len()).map(Some).collect();
    if exp.horizons.len() > 1 {
        horizons.push(None);
    }
    let rank_pos = exp.metrics.iter().position(|m| *m == exp.rank_by);
    let mut rows = Vec::new();
    for (t, target) in exp.targets.iter().enumerate() {
        for (s, scheme) in exp.schemes.iter().enumerate() {
            let scale = mase_scale(
                &target.y,
                scheme,
                target.first_origins[s],
                exp.season_length(),
            );
            for &hi in &horizons {
                let pooled = |c: usize| -> Errors {
                    let per_h = &errors[index(t, c, s)];
                    match hi {
                        Some(i) => per_h[i].clone(),
                        None => {
                            let mut all = Errors::default();
                            per_h.iter().for_each(|e| all.extend(e));
                            all
                        }
                    }
                };
                let bench = pooled(exp.benchmark);
                let mut group: Vec<ScoreRow> = (0..n_c)
                    .map(|c| {
                        let e = pooled(c);
                        let metrics = exp
                            .metrics
                            .iter()
                            .map(|&m| metric_value(m, &e, &bench, scale))
                            .collect();
                        let is_rmse = in_sample_rmse(&e);
                        let gap = match (rmse(&e), is_rmse) {
                            (Some(o), Some(i)) if i > 0.0 => Some(o / i),
                            _ => None,
                        };
                        ScoreRow {
                            target: t,
                            candidate: c,
                            scheme: s,
                            horizon: hi.map(|i| exp.horizons[i]),
                            period_set: "all".into(),
                            n: e.len(),
                            metrics,
                            is_rmse,
                            gap,
                            rank: 0,
                        }
                    })
                    .collect();
                let mut order: Vec<usize> = (0..n_c).collect();
                order.sort_by(|&a, &b| {
                    let va = rank_pos
                        .map(|p| rank_key(exp.rank_by, group[a].metrics[p]))
                        .unwrap_or(0.0);
                    let vb = rank_pos
                        .map(|p| rank_key(exp.rank_by, group[b].metrics[p]))
                        .unwrap_or(0.0);
                    va.total_cmp(&vb)
                        .then_with(|| exp.candidates[a].id.cmp(&exp.candidates[b].id))
                });
                for (r, &c) in order.iter().enumerate() {
                    group[c].rank = r + 1;
                }
                rows.extend(group);
            }
        }
    }
    // Output order: targets, candidates, schemes, horizons (all last).
    rows.sort_by_key(|r| {
        (
            r.target,
            r.candidate,
            r.scheme,
            r.horizon.map_or(usize::MAX, |h| h),
        )
    });
    rows
}

#[cfg(test)]
mod tests {
    use super::*;

    fn errs(actual: &[f64], forecast: &[f64]) -> Errors {
        Errors {
            actual: actual.to_vec(),
            forecast: forecast.to_vec(),
            is_mse: vec![None; actual.len()],
        }
    }

    #[test]
    fn metrics_by_hand() {
        // Hand-computed from the SPEC §4 definitions: actual 2, 4, 5; forecast 1, 5, 5 → e = 1, −1, 0.
        let e = errs(&[2.0, 4.0, 5.0], &[1.0, 5.0, 5.0]);
        assert!((rmse(&e).unwrap() - (2.0f64 / 3.0).sqrt()).abs() < 1e-15);
        assert!((mae(&e).unwrap() - 2.0 / 3.0).abs() < 1e-15);
        assert_eq!(bias(&e), Some(0.0));
        // mape = 100·(1/2 + 1/4 + 0)/3 = 25
        assert!((mape(&e).unwrap() - 25.0).abs() < 1e-12);
        // smape = 200·(1/3 + 1/9 + 0)/3 = 200·4/27
        assert!((smape(&e).unwrap() - 800.0 / 27.0).abs() < 1e-12);
        assert!((mase(&e, Some(2.0)).unwrap() - 1.0 / 3.0).abs() < 1e-15);
        // benchmark errors 2, 2, 2 → Σe² = 2, Σe_b² = 12 → r2_oos = 1 − 2/12
        let b = errs(&[2.0, 4.0, 5.0], &[0.0, 2.0, 3.0]);
        assert!((r2_oos(&e, &b).unwrap() - (1.0 - 2.0 / 12.0)).abs() < 1e-15);
    }

    #[test]
    fn undefined_cases() {
        // mape with a zero actual is undefined (SPEC §4); smape counts 0/0 as 0.
        let e = errs(&[0.0, 1.0], &[0.0, 2.0]);
        assert_eq!(mape(&e), None);
        assert!((smape(&e).unwrap() - 200.0 * (0.0 + 1.0 / 3.0) / 2.0).abs() < 1e-12);
        assert_eq!(rmse(&Errors::default()), None);
    }

    #[test]
    fn mase_scale_uses_the_first_estimation_sample() {
        use crate::spec::{SchemeKind, SchemeStart};
        let s = Scheme {
            id: "expanding".into(),
            kind: SchemeKind::Expanding,
            start: SchemeStart::Half,
            window: None,
            refit_every: 1,
            origins_first: false,
            line: 1,
        };
        // y = 1, 3, 2, 6, 5; T0 = 4, m = 1: mean(|3−1|, |2−3|, |6−2|) = 7/3
        let y = [1.0, 3.0, 2.0, 6.0, 5.0];
        assert!((mase_scale(&y, &s, 4, None).unwrap() - 7.0 / 3.0).abs() < 1e-15);
        // m = 2: mean(|2−1|, |6−3|) = 2
        assert!((mase_scale(&y, &s, 4, Some(2)).unwrap() - 2.0).abs() < 1e-15);
    }
}
