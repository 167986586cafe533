//! ar and ardl by least squares (SPEC §4): the alignment of regressors and
//! dependent values, direct and iterated multi-step forecasts, and the
//! estimation schedule of each scheme. Expanding windows fold one new row
//! into the QR factor per origin; rolling windows refactorise their last
//! `window` rows; the fixed scheme estimates once.
//!
//! Order selection (`select`) fits every order on the common estimation
//! sample of the largest order — the rows where all of its regressors exist
//! — and keeps the order with the smallest information criterion
//! n·ln(SSR/n) + penalty·k (AIC: 2, BIC: ln n, HQIC: 2 ln ln n per
//! coefficient; ties go to the smaller order). The chosen order's estimate
//! on that sample gives the forecast, so nothing after the estimation end is
//! ever looked at.

use super::{EstimationProblem, ForecastRow, Order, OutlookRow, Schedule};
use crate::linalg::{LeastSquares, LinalgError, Solution};
use crate::spec::{Criterion, Experiment, Family, TargetData, Trend};

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
            Family::ArSelect {
                max_lags, trend, ..
            } => (*max_lags, 0, Vec::new(), *trend),
            Family::ArdlSelect {
                max_lags,
                predictors,
                trend,
                ..
            } => (*max_lags, *max_lags, predictors.clone(), *trend),
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

/// The candidate orders of a design: column subsets of its largest-order row.
#[derive(Debug, Clone)]
pub struct Submodel {
    pub columns: Vec<usize>,
    pub order: Order,
    pub lags: usize,
}

/// Submodels of a family: one (all columns) unless it selects its order.
pub fn submodels(family: &Family, design: &Design) -> (Vec<Submodel>, Option<Criterion>) {
    let t = design.trend.terms();
    let max_p = design.lags;
    let max_q = design.predictor_lags;
    let n_pred = design.predictors.len();
    let build = |p: usize, q: usize| -> Vec<usize> {
        let mut cols: Vec<usize> = (0..t).collect();
        cols.extend(t..t + p);
        for k in 0..n_pred {
            let base = t + max_p + k * max_q;
            cols.extend(base..base + q);
        }
        cols
    };
    match family {
        Family::ArSelect { criterion, .. } => (
            (1..=max_p)
                .map(|p| Submodel {
                    columns: build(p, 0),
                    order: Order::Ar(p),
                    lags: p,
                })
                .collect(),
            Some(*criterion),
        ),
        Family::ArdlSelect { criterion, .. } => {
            let mut subs = Vec::new();
            for p in 0..=max_p {
                for q in 1..=max_q {
                    subs.push(Submodel {
                        columns: build(p, q),
                        order: Order::Ardl(p, q),
                        lags: p,
                    });
                }
            }
            (subs, Some(*criterion))
        }
        _ => (
            vec![Submodel {
                columns: (0..design.coefficients()).collect(),
                order: if n_pred > 0 {
                    Order::Ardl(max_p, max_q)
                } else {
                    Order::Ar(max_p)
                },
                lags: max_p,
            }],
            None,
        ),
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

/// A solved submodel at one estimation end.
struct Chosen {
    index: usize,
    solution: Solution,
}

/// Solves the regressions of y_{s+h} on the rows at s for a nondecreasing
/// sequence of estimation ends E (rows with s + h ≤ E), for every submodel,
/// and picks one.
struct Estimator<'r> {
    rows: &'r Rows,
    y: &'r [f64],
    h: usize,
    window: Option<usize>,
    subs: &'r [Submodel],
    criterion: Option<Criterion>,
    ls: Vec<LeastSquares>,
    scratch: Vec<f64>,
    next_s: usize,
    last_end: Option<usize>,
    chosen: Option<Chosen>,
}

impl<'r> Estimator<'r> {
    fn new(
        rows: &'r Rows,
        y: &'r [f64],
        h: usize,
        window: Option<usize>,
        subs: &'r [Submodel],
        criterion: Option<Criterion>,
    ) -> Self {
        Estimator {
            rows,
            y,
            h,
            window,
            subs,
            criterion,
            ls: subs
                .iter()
                .map(|s| LeastSquares::new(s.columns.len()))
                .collect(),
            scratch: vec![0.0; rows.k],
            next_s: 1,
            last_end: None,
            chosen: None,
        }
    }

    fn add(&mut self, s: usize) {
        let Some(x) = self.rows.at(s) else { return };
        let dep = self.y[s + self.h - 1];
        for (ls, sub) in self.ls.iter_mut().zip(self.subs) {
            let buf = &mut self.scratch[..sub.columns.len()];
            for (b, &c) in buf.iter_mut().zip(&sub.columns) {
                *b = x[c];
            }
            ls.add_row(buf, dep);
        }
    }

    fn at(&mut self, end: usize) -> Result<&Chosen, LinalgError> {
        if self.last_end != Some(end) || self.chosen.is_none() {
            match self.window {
                None => {
                    while self.next_s + self.h <= end {
                        self.add(self.next_s);
                        self.next_s += 1;
                    }
                }
                Some(w) => {
                    // The last `w` regression rows with s + h ≤ E (all while fewer exist).
                    self.ls.iter_mut().for_each(LeastSquares::clear);
                    let mut chosen = Vec::with_capacity(w);
                    let mut s = end.saturating_sub(self.h);
                    while s >= 1 && chosen.len() < w {
                        if self.rows.at(s).is_some() {
                            chosen.push(s);
                        }
                        s -= 1;
                    }
                    for &s in chosen.iter().rev() {
                        self.add(s);
                    }
                }
            }
            self.chosen = Some(self.choose()?);
            self.last_end = Some(end);
        }
        self.chosen.as_ref().ok_or(LinalgError::NonFinite)
    }

    /// Residuals of the estimation at `end` for the chosen submodel, in time order.
    fn residuals(&self, end: usize, chosen: &Chosen) -> Vec<f64> {
        let mut rows: Vec<usize> = (1..=end.saturating_sub(self.h))
            .filter(|&s| self.rows.at(s).is_some())
            .collect();
        if let Some(w) = self.window {
            if rows.len() > w {
                rows.drain(..rows.len() - w);
            }
        }
        let columns = &self.subs[chosen.index].columns;
        rows.iter()
            .filter_map(|&s| {
                let x = self.rows.at(s)?;
                Some(self.y[s + self.h - 1] - predict(&chosen.solution, x, columns))
            })
            .collect()
    }

    fn choose(&self) -> Result<Chosen, LinalgError> {
        let Some(criterion) = self.criterion else {
            return Ok(Chosen {
                index: 0,
                solution: self.ls[0].solve()?,
            });
        };
        // The largest order must be estimable: it fixes the common sample.
        self.ls[self.ls.len() - 1].check()?;
        let mut best: Option<(f64, usize)> = None;
        for (i, ls) in self.ls.iter().enumerate() {
            if ls.check().is_err() {
                continue;
            }
            let n = ls.rows() as f64;
            let ic =
                n * (ls.ssr() / n).ln() + criterion.penalty(ls.rows()) * ls.coefficients() as f64;
            if best.is_none_or(|(b, _)| ic < b) {
                best = Some((ic, i));
            }
        }
        let (_, index) = best.ok_or(LinalgError::RankDeficient { column: 0 })?;
        Ok(Chosen {
            index,
            solution: self.ls[index].solve()?,
        })
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

fn predict(sol: &Solution, x: &[f64], columns: &[usize]) -> f64 {
    sol.coef.iter().zip(columns).map(|(b, &c)| b * x[c]).sum()
}

/// ψ-weights of an AR polynomial: ψ_0 = 1, ψ_j = Σ_{i=1}^{min(j,p)} φ_i ψ_{j−i}
/// (Box & Jenkins; Hamilton 1994, §3.5).
pub fn psi_weights(phi: &[f64], count: usize) -> Vec<f64> {
    let mut psi = vec![0.0; count];
    if count > 0 {
        psi[0] = 1.0;
    }
    for j in 1..count {
        psi[j] = (1..=phi.len().min(j))
            .map(|i| phi[i - 1] * psi[j - i])
            .sum();
    }
    psi
}

/// h-step variances of iterated AR forecasts: σ̂²·Σ_{j<h} ψ_j².
fn iterated_variances(design: &Design, sub: &Submodel, sol: &Solution, max_h: usize) -> Vec<f64> {
    let t = design.trend.terms();
    let phi = &sol.coef[t..t + sub.lags];
    let psi = psi_weights(phi, max_h);
    let sigma2 = sol.sigma2();
    let mut acc = 0.0;
    psi.iter()
        .map(|p| {
            acc += p * p;
            sigma2 * acc
        })
        .collect()
}

/// Direct forecasts (and iterated ones for ar under `multi_step: iterated`).
/// Backtest forecasts, and the residuals of the last estimation of the
/// shortest horizon's regression (for residual diagnostics). With
/// `outlook: Some(window)` the outlook (E = N, the last `window` rows) is
/// also produced by carrying the same estimator on to N when its window is
/// the scheme's own; otherwise it is left to [`outlook`] (None returned).
pub type Backtest = (Vec<ForecastRow>, Vec<f64>, Option<Vec<OutlookRow>>);

pub fn backtest(
    design: &Design,
    family: &Family,
    sched: &Schedule,
    horizons: &[usize],
    iterated: bool,
    outlook: Option<Option<usize>>,
) -> Result<Backtest, EstimationProblem> {
    let carry_on = outlook.is_some_and(|w| w == sched.window());
    let n = design.n;
    let (subs, criterion) = submodels(family, design);
    let record_order = criterion.is_some();
    let mut out = Vec::new();
    if iterated {
        let rows = Rows::build(design, 1);
        let mut est = Estimator::new(&rows, design.y, 1, sched.window(), &subs, criterion);
        let max_h = horizons.iter().copied().max().unwrap_or(1);
        let mut per_h: Vec<Vec<ForecastRow>> = vec![Vec::new(); horizons.len()];
        let first = sched.first_origin;
        let last = *sched.origins(horizons[0]).end();
        let mut path = vec![0.0; max_h];
        for origin in first..=last {
            let wanted: Vec<usize> = (0..horizons.len())
                .filter(|&i| sched.origins(horizons[i]).contains(&origin))
                .collect();
            if wanted.is_empty() {
                continue;
            }
            let end = sched.estimation_end(origin);
            let chosen = est.at(end).map_err(|e| problem(1, origin, e))?;
            let sub = &subs[chosen.index];
            iterate_path(design, sub, &chosen.solution, origin, &mut path)
                .ok_or_else(|| missing_regressors(1, origin))?;
            let variances = iterated_variances(design, sub, &chosen.solution, max_h);
            for i in wanted {
                let h = horizons[i];
                per_h[i].push(ForecastRow {
                    horizon: h,
                    origin,
                    forecast: path[h - 1],
                    is_mse: Some(chosen.solution.mse()),
                    is_var: Some(chosen.solution.sst / chosen.solution.rows as f64),
                    variance: Some(variances[h - 1]),
                    order: record_order.then_some(sub.order),
                });
            }
        }
        out.extend(per_h.into_iter().flatten());
        let end = sched.estimation_end(last);
        let residuals = est.at(end).ok().map(|c| Chosen {
            index: c.index,
            solution: c.solution.clone(),
        });
        let residuals = residuals
            .map(|c| est.residuals(end, &c))
            .unwrap_or_default();
        let look = carry_on.then(|| match est.at(n) {
            Ok(chosen) => {
                let sub = &subs[chosen.index];
                let ok = iterate_path(design, sub, &chosen.solution, n, &mut path).is_some();
                let variances = iterated_variances(design, sub, &chosen.solution, max_h);
                horizons
                    .iter()
                    .map(|&h| OutlookRow {
                        horizon: h,
                        forecast: ok.then(|| path[h - 1]),
                        variance: ok.then(|| variances[h - 1]),
                    })
                    .collect()
            }
            Err(_) => horizons
                .iter()
                .map(|&h| OutlookRow {
                    horizon: h,
                    forecast: None,
                    variance: None,
                })
                .collect(),
        });
        return Ok((out, residuals, look));
    }
    let mut residuals = Vec::new();
    let mut look = Vec::new();
    out.reserve(horizons.iter().map(|&h| sched.origins(h).count()).sum());
    for (hi, &h) in horizons.iter().enumerate() {
        let rows = Rows::build(design, h);
        let mut est = Estimator::new(&rows, design.y, h, sched.window(), &subs, criterion);
        for origin in sched.origins(h) {
            let end = sched.estimation_end(origin);
            let chosen = est.at(end).map_err(|e| problem(h, origin, e))?;
            let sub = &subs[chosen.index];
            let x = rows
                .at(origin)
                .ok_or_else(|| missing_regressors(h, origin))?;
            out.push(ForecastRow {
                horizon: h,
                origin,
                forecast: predict(&chosen.solution, x, &sub.columns),
                is_mse: Some(chosen.solution.mse()),
                is_var: Some(chosen.solution.sst / chosen.solution.rows as f64),
                variance: Some(chosen.solution.sigma2()),
                order: record_order.then_some(sub.order),
            });
        }
        if carry_on {
            let mut x = vec![0.0; rows.k];
            look.push(match est.at(n) {
                Ok(chosen) if design.row(n, h, &mut x) => OutlookRow {
                    horizon: h,
                    forecast: Some(predict(&chosen.solution, &x, &subs[chosen.index].columns)),
                    variance: Some(chosen.solution.sigma2()),
                },
                _ => OutlookRow {
                    horizon: h,
                    forecast: None,
                    variance: None,
                },
            });
        }
        if hi == 0 {
            let end = sched.estimation_end(*sched.origins(h).end());
            if let Ok(c) = est.at(end) {
                let c = Chosen {
                    index: c.index,
                    solution: c.solution.clone(),
                };
                residuals = est.residuals(end, &c);
            }
        }
    }
    Ok((out, residuals, carry_on.then_some(look)))
}

/// Iterated forecasts ŷ_{T+1..T+H} of an ar design from origin T: earlier
/// forecasts stand in for values after T; nothing after T is read.
fn iterate_path(
    design: &Design,
    sub: &Submodel,
    sol: &Solution,
    origin: usize,
    path: &mut [f64],
) -> Option<()> {
    let t = design.trend.terms();
    if origin < sub.lags {
        return None;
    }
    for step in 1..=path.len() {
        let mut f = 0.0;
        if design.trend != Trend::None {
            f += sol.coef[0];
        }
        if design.trend == Trend::Linear {
            f += sol.coef[1] * (origin + step) as f64;
        }
        for j in 1..=sub.lags {
            let pos = origin + step - j;
            let v = if pos > origin {
                path[pos - origin - 1]
            } else {
                design.y[pos - 1]
            };
            f += sol.coef[t + j - 1] * v;
        }
        path[step - 1] = f;
    }
    Some(())
}

/// Forecasts beyond the data from origin N with E = N.
pub fn outlook(
    design: &Design,
    family: &Family,
    window: Option<usize>,
    horizons: &[usize],
    iterated: bool,
) -> Vec<OutlookRow> {
    let n = design.n;
    let (subs, criterion) = submodels(family, design);
    let none = |h| OutlookRow {
        horizon: h,
        forecast: None,
        variance: None,
    };
    if iterated {
        let rows = Rows::build(design, 1);
        let mut est = Estimator::new(&rows, design.y, 1, window, &subs, criterion);
        let max_h = horizons.iter().copied().max().unwrap_or(1);
        let mut path = vec![0.0; max_h];
        let Ok(chosen) = est.at(n) else {
            return horizons.iter().map(|&h| none(h)).collect();
        };
        let sub = &subs[chosen.index];
        if iterate_path(design, sub, &chosen.solution, n, &mut path).is_none() {
            return horizons.iter().map(|&h| none(h)).collect();
        }
        let variances = iterated_variances(design, sub, &chosen.solution, max_h);
        return horizons
            .iter()
            .map(|&h| OutlookRow {
                horizon: h,
                forecast: Some(path[h - 1]),
                variance: Some(variances[h - 1]),
            })
            .collect();
    }
    horizons
        .iter()
        .map(|&h| {
            let rows = Rows::build(design, h);
            let mut est = Estimator::new(&rows, design.y, h, window, &subs, criterion);
            let mut x = vec![0.0; rows.k];
            match est.at(n) {
                Ok(chosen) if design.row(n, h, &mut x) => OutlookRow {
                    horizon: h,
                    forecast: Some(predict(&chosen.solution, &x, &subs[chosen.index].columns)),
                    variance: Some(chosen.solution.sigma2()),
                },
                _ => none(h),
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn psi_weights_of_an_ar1_are_powers() {
        // AR(1): ψ_j = φ^j (Hamilton 1994, eq. 3.4.xx; common practice).
        let psi = psi_weights(&[0.5], 4);
        assert_eq!(psi, vec![1.0, 0.5, 0.25, 0.125]);
        // AR(2) with φ = (0.5, 0.3): ψ_2 = 0.5·0.5 + 0.3 = 0.55
        let psi = psi_weights(&[0.5, 0.3], 3);
        assert!((psi[2] - 0.55).abs() < 1e-15);
    }
}
