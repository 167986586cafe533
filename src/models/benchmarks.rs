//! The benchmark families of SPEC §4: naive, mean, drift and seasonal naive.
//!
//! Their h-step forecast variances ignore parameter uncertainty, like the
//! least-squares intervals of SPEC §4 (common practice), and follow the
//! random-walk algebra of each method (Hyndman & Athanasopoulos, "Forecasting:
//! Principles and Practice", benchmark methods' prediction intervals):
//! mean σ̂² with σ̂² = Σ(y − ȳ)²/(n − 1); naive h·σ̂² with σ̂² the mean squared
//! one-step change; drift h·σ̂² with σ̂² = Σ(one-step residual)²/(n − 1);
//! seasonal naive (⌊(h − 1)/m⌋ + 1)·σ̂² with σ̂² the mean squared seasonal
//! change, all over the estimation sample.

use super::{Model, Parameter, Problem, Step};
use crate::spec::{Family, TargetData};

/// A simple family's forecast at origin T for horizon h with estimation
/// sample a..=E (positions).
#[derive(Debug, Clone, Copy, PartialEq)]
struct Simple {
    forecast: f64,
    is_mse: Option<f64>,
    variance: Option<f64>,
}

fn mean_square(values: impl Iterator<Item = f64>, divisor: usize) -> Option<f64> {
    if divisor == 0 {
        return None;
    }
    Some(values.map(|v| v * v).sum::<f64>() / divisor as f64)
}

fn simple_forecast(
    family: &Family,
    y: &[f64],
    origin: usize,
    horizon: usize,
    start: usize,
    end: usize,
    season: Option<usize>,
) -> Result<Simple, String> {
    let at = |pos: usize| y[pos - 1];
    let h = horizon as f64;
    match family {
        Family::Naive => {
            let steps = end - start;
            let sigma2 = mean_square(((start + 1)..=end).map(|t| at(t) - at(t - 1)), steps);
            Ok(Simple {
                forecast: at(origin),
                is_mse: None,
                variance: sigma2.map(|s| h * s),
            })
        }
        Family::Mean => {
            let sample = &y[start - 1..end];
            let n = sample.len();
            let mean = sample.iter().sum::<f64>() / n as f64;
            let ssq: f64 = sample.iter().map(|v| (v - mean) * (v - mean)).sum();
            Ok(Simple {
                forecast: mean,
                is_mse: Some(ssq / n as f64),
                variance: (n > 1).then(|| ssq / (n - 1) as f64),
            })
        }
        Family::Drift => {
            if end <= start {
                return Err("drift needs an estimation sample of at least two observations".into());
            }
            let steps = end - start;
            let slope = (at(end) - at(start)) / steps as f64;
            let resid = || ((start + 1)..=end).map(|t| at(t) - at(t - 1) - slope);
            let is_mse = mean_square(resid(), steps);
            let sigma2 = if steps > 1 {
                mean_square(resid(), steps - 1)
            } else {
                None
            };
            Ok(Simple {
                forecast: at(origin) + h * slope,
                is_mse,
                variance: sigma2.map(|s| h * s),
            })
        }
        Family::SeasonalNaive => {
            let m = season.ok_or("seasonal_naive needs seasonal data")?;
            let back = m * horizon.div_ceil(m);
            if origin + horizon <= back {
                return Err(format!(
                    "seasonal_naive needs {m} observations before the origin"
                ));
            }
            let terms = (end + 1).saturating_sub(start + m);
            let sigma2 = mean_square(((start + m)..=end).map(|t| at(t) - at(t - m)), terms);
            let k = ((horizon - 1) / m + 1) as f64;
            Ok(Simple {
                forecast: at(origin + horizon - back),
                is_mse: None,
                variance: sigma2.map(|s| k * s),
            })
        }
        _ => Err("not a simple family".into()),
    }
}

/// A benchmark family on one target's series.
pub(crate) struct Benchmark<'a> {
    family: &'a Family,
    y: &'a [f64],
    season: Option<usize>,
}

impl<'a> Benchmark<'a> {
    pub fn new(
        family: &'a Family,
        target: &'a TargetData,
        season: Option<usize>,
    ) -> Result<Self, String> {
        Ok(Benchmark {
            family,
            y: &target.y,
            season,
        })
    }
}

/// The estimation sample a..=E (positions).
pub(crate) struct Sample {
    start: usize,
    end: usize,
}

impl Model for Benchmark<'_> {
    type Fit = Sample;
    const STRICT: bool = true;

    fn fit(&self, end: usize, window: Option<usize>) -> Result<Sample, String> {
        Ok(Sample {
            start: crate::plan::window_start(end, window),
            end,
        })
    }

    fn forecast(
        &self,
        fit: &mut Sample,
        origin: usize,
        horizons: &[usize],
    ) -> Vec<Result<Step, Problem>> {
        horizons
            .iter()
            .map(|&h| {
                let f = simple_forecast(
                    self.family,
                    self.y,
                    origin,
                    h,
                    fit.start,
                    fit.end,
                    self.season,
                )
                .map_err(|message| Problem {
                    horizon: h,
                    message,
                })?;
                Ok(Step {
                    forecast: f.forecast,
                    variance: f.variance,
                    is_mse: f.is_mse,
                    is_var: matches!(self.family, Family::Mean)
                        .then_some(f.is_mse)
                        .flatten(),
                    order: None,
                })
            })
            .collect()
    }

    fn residuals(&self, fit: &mut Sample, end: usize) -> Vec<f64> {
        residuals(self.family, self.y, fit.start, end, self.season)
    }

    fn parameters(&self, fit: &mut Sample) -> Vec<Parameter> {
        parameters(self.family, self.y, fit, self.season)
    }
}

/// What a benchmark estimates on a..=E: the mean (`constant`, s.e. σ̂/√n)
/// and drift (`drift`, the mean one-step change, s.e. σ̂/√(E − a)), and
/// every benchmark's `sigma2`, the σ̂² its intervals use (module docs).
fn parameters(family: &Family, y: &[f64], fit: &Sample, season: Option<usize>) -> Vec<Parameter> {
    let origin = fit.end;
    let Ok(f) = simple_forecast(family, y, origin, 1, fit.start, fit.end, season) else {
        return Vec::new();
    };
    let Some(sigma2) = f.variance else {
        return Vec::new();
    };
    let mut out = Vec::new();
    match family {
        Family::Mean => {
            let n = (fit.end + 1 - fit.start) as f64;
            out.push(Parameter::new(
                "constant",
                f.forecast,
                Some((sigma2 / n).sqrt()),
            ));
        }
        Family::Drift => {
            let steps = (fit.end - fit.start) as f64;
            let slope = (y[fit.end - 1] - y[fit.start - 1]) / steps;
            out.push(Parameter::new(
                "drift",
                slope,
                Some((sigma2 / steps).sqrt()),
            ));
        }
        _ => {}
    }
    out.push(Parameter::new("sigma2", sigma2, None));
    out
}

/// In-sample residuals of a simple family over the estimation sample a..=E:
/// one-step changes (naive), deviations from the mean (mean), one-step
/// residuals net of the slope (drift), seasonal changes (seasonal naive).
fn residuals(
    family: &Family,
    y: &[f64],
    start: usize,
    end: usize,
    season: Option<usize>,
) -> Vec<f64> {
    let at = |pos: usize| y[pos - 1];
    match family {
        Family::Naive => ((start + 1)..=end).map(|t| at(t) - at(t - 1)).collect(),
        Family::Mean => {
            let sample = &y[start - 1..end];
            let mean = sample.iter().sum::<f64>() / sample.len() as f64;
            sample.iter().map(|v| v - mean).collect()
        }
        Family::Drift if end > start => {
            let slope = (at(end) - at(start)) / (end - start) as f64;
            ((start + 1)..=end)
                .map(|t| at(t) - at(t - 1) - slope)
                .collect()
        }
        Family::SeasonalNaive => match season {
            Some(m) => ((start + m)..=end).map(|t| at(t) - at(t - m)).collect(),
            None => Vec::new(),
        },
        _ => Vec::new(),
    }
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
        let naive = f(Family::Naive, 4, 2, 1, 4, None);
        assert_eq!(naive.forecast, 6.0);
        // one-step changes 2, −1, 4 → σ̂² = 21/3 = 7; h = 2 → variance 14
        assert!((naive.variance.unwrap() - 14.0).abs() < 1e-12);
        // mean of 1,3,2,6 = 3; squared deviations 4,0,1,9 → mse 3.5, σ̂² = 14/3
        let mean = f(Family::Mean, 4, 1, 1, 4, None);
        assert_eq!((mean.forecast, mean.is_mse), (3.0, Some(3.5)));
        assert!((mean.variance.unwrap() - 14.0 / 3.0).abs() < 1e-12);
        // drift from a=1..E=4: slope (6−1)/3; forecast y_4 + 2·5/3
        let drift = f(Family::Drift, 4, 2, 1, 4, None);
        assert!((drift.forecast - (6.0 + 10.0 / 3.0)).abs() < 1e-12);
        // one-step residuals: (2−5/3), (−1−5/3), (4−5/3)
        let ssq = (1.0f64 / 3.0).powi(2) + (8.0f64 / 3.0).powi(2) + (7.0f64 / 3.0).powi(2);
        assert!((drift.is_mse.unwrap() - ssq / 3.0).abs() < 1e-12);
        assert!((drift.variance.unwrap() - 2.0 * ssq / 2.0).abs() < 1e-12);
        // m = 2: h = 1 → y_{T+1−2} = y_{T−1}; h = 3 → y_{T+3−4} = y_{T−1}; h = 2 → y_T
        assert_eq!(f(Family::SeasonalNaive, 4, 1, 1, 4, Some(2)).forecast, 2.0);
        assert_eq!(f(Family::SeasonalNaive, 4, 2, 1, 4, Some(2)).forecast, 6.0);
        let sn = f(Family::SeasonalNaive, 4, 3, 1, 4, Some(2));
        assert_eq!(sn.forecast, 2.0);
        // seasonal changes (m = 2): 2−1 = 1, 6−3 = 3 → σ̂² = 5; h = 3 → k = 2 → 10
        assert!((sn.variance.unwrap() - 10.0).abs() < 1e-12);
    }

    #[test]
    fn drift_needs_two_observations() {
        assert!(simple_forecast(&Family::Drift, &Y, 4, 1, 4, 4, None).is_err());
    }
}
