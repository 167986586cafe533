//! ar and ardl by least squares (SPEC §4): the alignment of regressors and
//! dependent values, direct and iterated multi-step forecasts, and the
//! estimation schedule of each scheme. Expanding windows fold one new row
//! into the QR factor per origin; rolling windows refactorise their last
//! `window` rows; the fixed scheme estimates once.

use super::{EstimationProblem, ForecastRow, OutlookRow, Schedule};
use crate::linalg::{LeastSquares, LinalgError, Solution};
use crate::spec::{Experiment, Family, TargetData, Trend};

/// The regressors of an ar or ardl candidate for one target.
pub struct Design<'a> {
    y: &'a [f64],
    n: usize,
    trend: Trend,
    lags: usize,
    /// (values at positions 1.., release lag, known ahead)
    predictors: Vec<(&'a [Option<f64>], usize, bool)>,
    predictor_lags: usize,
}

impl<'a> Design<'a> {
    pub fn new(exp: &'a Experiment, family: &Family, target: &'a TargetData) -> Option<Design<'a>> {
        let (lags, predictor_lags, preds, trend) = match family {
            Family::Ar { lags, trend } => (*lags, 0, Vec::new(), *trend),
            Family::Ardl {
                lags,
                predictor_lags,
                predictors,
                trend,
            } => (*lags, *predictor_lags, predictors.clone(), *trend),
            _ => return None,
        };
        let predictors = preds
            .iter()
            .map(|&i| {
                (
                    target.predictors[i].as_slice(),
                    exp.predictors[i].release_lag,
                    exp.predictors[i].known_ahead,
                )
            })
            .collect();
        Some(Design {
            y: &target.y,
            n: target.n,
            trend,
            lags,
            predictors,
            predictor_lags,
        })
    }

    pub fn coefficients(&self) -> usize {
        self.trend.terms() + self.lags + self.predictor_lags * self.predictors.len()
    }

    /// Regressors at origin s for a dependent value at position s + h; false
    /// when any of them does not exist (SPEC §4).
    pub fn row(&self, s: usize, h: usize, out: &mut [f64]) -> bool {
        let mut i = 0;
        if self.trend != Trend::None {
            out[i] = 1.0;
            i += 1;
        }
        if self.trend == Trend::Linear {
            out[i] = (s + h) as f64;
            i += 1;
        }
        for j in 0..self.lags {
            if s <= j || s - j > self.n {
                return false;
            }
            out[i] = self.y[s - j - 1];
            i += 1;
        }
        for &(values, release_lag, known_ahead) in &self.predictors {
            let latest = if known_ahead {
                s + h
            } else if s > release_lag {
                s - release_lag
            } else {
                return false;
            };
            for j in 0..self.predictor_lags {
                if latest <= j {
                    return false;
                }
                match values.get(latest - j - 1) {
                    Some(Some(v)) => out[i] = *v,
                    _ => return false,
                }
                i += 1;
            }
        }
        true
    }
}

/// Regressor rows of one horizon at every origin s = 1..=N, laid out flat.
struct Rows {
    k: usize,
    x: Vec<f64>,
    valid: Vec<bool>,
}

impl Rows {
    fn build(design: &Design, h: usize) -> Rows {
        let k = design.coefficients();
        let n = design.n;
        let mut x = vec![0.0; n * k];
        let mut valid = vec![false; n];
        for s in 1..=n {
            valid[s - 1] = design.row(s, h, &mut x[(s - 1) * k..s * k]);
        }
        Rows { k, x, valid }
    }
    fn at(&self, s: usize) -> Option<&[f64]> {
        if s >= 1 && s <= self.valid.len() && self.valid[s - 1] {
            Some(&self.x[(s - 1) * self.k..s * self.k])
        } else {
            None
        }
    }
}

/// Solves the regression of y_{s+h} on the rows at s for a nondecreasing
/// sequence of estimation ends E (rows with s + h ≤ E).
struct Estimator<'r> {
    rows: &'r Rows,
    y: &'r [f64],
    h: usize,
    window: Option<usize>,
    ls: LeastSquares,
    next_s: usize,
    last_end: Option<usize>,
    solution: Option<Solution>,
}

impl<'r> Estimator<'r> {
    fn new(rows: &'r Rows, y: &'r [f64], h: usize, window: Option<usize>) -> Self {
        Estimator {
            rows,
            y,
            h,
            window,
            ls: LeastSquares::new(rows.k),
            next_s: 1,
            last_end: None,
            solution: None,
        }
    }

    fn at(&mut self, end: usize) -> Result<&Solution, LinalgError> {
        if self.last_end != Some(end) || self.solution.is_none() {
            match self.window {
                None => {
                    while self.next_s + self.h <= end {
                        if let Some(x) = self.rows.at(self.next_s) {
                            self.ls.add_row(x, self.y[self.next_s + self.h - 1]);
                        }
                        self.next_s += 1;
                    }
                }
                Some(w) => {
                    // The last `w` regression rows with s + h ≤ E (all while fewer exist).
                    self.ls.clear();
                    let mut chosen = Vec::with_capacity(w);
                    let mut s = end.saturating_sub(self.h);
                    while s >= 1 && chosen.len() < w {
                        if self.rows.at(s).is_some() {
                            chosen.push(s);
                        }
                        s -= 1;
                    }
                    for &s in chosen.iter().rev() {
                        if let Some(x) = self.rows.at(s) {
                            self.ls.add_row(x, self.y[s + self.h - 1]);
                        }
                    }
                }
            }
            self.solution = Some(self.ls.solve()?);
            self.last_end = Some(end);
        }
        self.solution.as_ref().ok_or(LinalgError::NonFinite)
    }
}

fn problem(h: usize, origin: usize, e: impl ToString) -> EstimationProblem {
    EstimationProblem {
        horizon: h,
        origin,
        message: e.to_string(),
    }
}

fn missing_regressors(h: usize, origin: usize) -> EstimationProblem {
    problem(h, origin, "the regressors at this origin do not exist yet (too few earlier observations for the lags)")
}

/// Direct forecasts (and iterated ones for ar under `multi_step: iterated`).
pub fn backtest(
    design: &Design,
    sched: &Schedule,
    horizons: &[usize],
    iterated: bool,
) -> Result<Vec<ForecastRow>, EstimationProblem> {
    let mut out = Vec::new();
    if iterated {
        let rows = Rows::build(design, 1);
        let mut est = Estimator::new(&rows, design.y, 1, sched.window());
        let max_h = horizons.iter().copied().max().unwrap_or(1);
        let mut per_h: Vec<Vec<ForecastRow>> = vec![Vec::new(); horizons.len()];
        let first = sched.first_origin;
        let last = sched.origins(horizons[0]).end().to_owned();
        let mut path = vec![0.0; max_h];
        for origin in first..=last {
            let wanted: Vec<usize> = (0..horizons.len())
                .filter(|&i| sched.origins(horizons[i]).contains(&origin))
                .collect();
            if wanted.is_empty() {
                continue;
            }
            let end = sched.estimation_end(origin);
            let sol = est.at(end).map_err(|e| problem(1, origin, e))?;
            iterate_path(design, sol, origin, &mut path)
                .ok_or_else(|| missing_regressors(1, origin))?;
            for i in wanted {
                let h = horizons[i];
                per_h[i].push(ForecastRow {
                    horizon: h,
                    origin,
                    forecast: path[h - 1],
                    is_mse: Some(sol.mse()),
                });
            }
        }
        out.extend(per_h.into_iter().flatten());
        return Ok(out);
    }
    for &h in horizons {
        let rows = Rows::build(design, h);
        let mut est = Estimator::new(&rows, design.y, h, sched.window());
        for origin in sched.origins(h) {
            let end = sched.estimation_end(origin);
            let sol = est.at(end).map_err(|e| problem(h, origin, e))?;
            let x = rows
                .at(origin)
                .ok_or_else(|| missing_regressors(h, origin))?;
            out.push(ForecastRow {
                horizon: h,
                origin,
                forecast: sol.predict(x),
                is_mse: Some(sol.mse()),
            });
        }
    }
    Ok(out)
}

/// Iterated forecasts ŷ_{T+1..T+H} of an ar design from origin T: earlier
/// forecasts stand in for values after T; nothing after T is read.
fn iterate_path(design: &Design, sol: &Solution, origin: usize, path: &mut [f64]) -> Option<()> {
    let k = design.coefficients();
    let mut x = vec![0.0; k];
    if origin < design.lags {
        return None;
    }
    for step in 1..=path.len() {
        let mut i = 0;
        if design.trend != Trend::None {
            x[i] = 1.0;
            i += 1;
        }
        if design.trend == Trend::Linear {
            x[i] = (origin + step) as f64;
            i += 1;
        }
        for j in 1..=design.lags {
            let pos = origin + step - j;
            x[i] = if pos > origin {
                path[pos - origin - 1]
            } else {
                design.y[pos - 1]
            };
            i += 1;
        }
        path[step - 1] = sol.predict(&x);
    }
    Some(())
}

/// Forecasts beyond the data from origin N with E = N.
pub fn outlook(
    design: &Design,
    window: Option<usize>,
    horizons: &[usize],
    iterated: bool,
) -> Vec<OutlookRow> {
    let n = design.n;
    if iterated {
        let rows = Rows::build(design, 1);
        let mut est = Estimator::new(&rows, design.y, 1, window);
        let max_h = horizons.iter().copied().max().unwrap_or(1);
        let mut path = vec![0.0; max_h];
        let ok = match est.at(n) {
            Ok(sol) => iterate_path(design, sol, n, &mut path).is_some(),
            Err(_) => false,
        };
        return horizons
            .iter()
            .map(|&h| OutlookRow {
                horizon: h,
                forecast: ok.then(|| path[h - 1]),
            })
            .collect();
    }
    horizons
        .iter()
        .map(|&h| {
            let rows = Rows::build(design, h);
            let mut est = Estimator::new(&rows, design.y, h, window);
            let mut x = vec![0.0; rows.k];
            let forecast = match est.at(n) {
                Ok(sol) if design.row(n, h, &mut x) => Some(sol.predict(&x)),
                _ => None,
            };
            OutlookRow {
                horizon: h,
                forecast,
            }
        })
        .collect()
}
