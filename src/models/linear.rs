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

use super::{CellModel, Model, Order, Problem, Step};
use crate::numerics::ic::{concentrated_gaussian, Smallest};
use crate::numerics::lsq::{LeastSquares, LinalgError, Solution};
use crate::spec::{Criterion, Experiment, Family, TargetData, Trend};

/// The regressors of an ar or ardl candidate for one target.
pub(crate) struct Design<'a> {
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
pub(crate) struct Submodel {
    pub columns: Vec<usize>,
    pub order: Order,
    pub lags: usize,
}

/// Submodels of a family: one (all columns) unless it selects its order.
fn submodels(family: &Family, design: &Design) -> (Vec<Submodel>, Option<Criterion>) {
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
/// and picks one. The rows, series and submodels are the model's; the
/// estimator holds only the factorisations.
struct Estimator {
    h: usize,
    window: Option<usize>,
    ls: Vec<LeastSquares>,
    scratch: Vec<f64>,
    next_s: usize,
    last_end: Option<usize>,
    chosen: Option<Chosen>,
}

/// What an estimator reads: one horizon's rows, the series and the submodels.
struct Inputs<'r> {
    rows: &'r Rows,
    y: &'r [f64],
    subs: &'r [Submodel],
    criterion: Option<Criterion>,
}

impl Estimator {
    fn new(k: usize, h: usize, window: Option<usize>, subs: &[Submodel]) -> Self {
        Estimator {
            h,
            window,
            ls: subs
                .iter()
                .map(|s| LeastSquares::new(s.columns.len()))
                .collect(),
            scratch: vec![0.0; k],
            next_s: 1,
            last_end: None,
            chosen: None,
        }
    }

    fn add(&mut self, inp: &Inputs, s: usize) {
        let Some(x) = inp.rows.at(s) else { return };
        let dep = inp.y[s + self.h - 1];
        for (ls, sub) in self.ls.iter_mut().zip(inp.subs) {
            let buf = &mut self.scratch[..sub.columns.len()];
            for (b, &c) in buf.iter_mut().zip(&sub.columns) {
                *b = x[c];
            }
            ls.add_row(buf, dep);
        }
    }

    fn at(&mut self, inp: &Inputs, end: usize) -> Result<&Chosen, LinalgError> {
        if self.last_end != Some(end) || self.chosen.is_none() {
            match self.window {
                None => {
                    while self.next_s + self.h <= end {
                        self.add(inp, self.next_s);
                        self.next_s += 1;
                    }
                }
                Some(w) => {
                    // The last `w` regression rows with s + h ≤ E (all while fewer exist).
                    self.ls.iter_mut().for_each(LeastSquares::clear);
                    let rows = inp.rows;
                    for s in crate::plan::last_rows(end.saturating_sub(self.h), w, |s| {
                        rows.at(s).is_some()
                    }) {
                        self.add(inp, s);
                    }
                }
            }
            self.chosen = Some(self.choose(inp)?);
            self.last_end = Some(end);
        }
        self.chosen.as_ref().ok_or(LinalgError::NonFinite)
    }

    /// Residuals of the estimation at `end` for the chosen submodel, in time order.
    fn residuals(&self, inp: &Inputs, end: usize, chosen: &Chosen) -> Vec<f64> {
        let mut rows: Vec<usize> = (1..=end.saturating_sub(self.h))
            .filter(|&s| inp.rows.at(s).is_some())
            .collect();
        if let Some(w) = self.window {
            if rows.len() > w {
                rows.drain(..rows.len() - w);
            }
        }
        let columns = &inp.subs[chosen.index].columns;
        rows.iter()
            .filter_map(|&s| {
                let x = inp.rows.at(s)?;
                Some(inp.y[s + self.h - 1] - predict(&chosen.solution, x, columns))
            })
            .collect()
    }

    fn choose(&self, inp: &Inputs) -> Result<Chosen, LinalgError> {
        let Some(criterion) = inp.criterion else {
            return Ok(Chosen {
                index: 0,
                solution: self.ls[0].solve()?,
            });
        };
        // The largest order must be estimable: it fixes the common sample.
        self.ls[self.ls.len() - 1].check()?;
        let mut best = Smallest::default();
        for (i, ls) in self.ls.iter().enumerate() {
            if ls.check().is_err() {
                continue;
            }
            let penalty = criterion.penalty(ls.rows());
            best.offer(
                concentrated_gaussian(ls.ssr(), ls.rows(), ls.coefficients(), penalty),
                i,
            );
        }
        let (_, index) = best.get().ok_or(LinalgError::RankDeficient { column: 0 })?;
        Ok(Chosen {
            index,
            solution: self.ls[index].solve()?,
        })
    }
}

fn problem(h: usize, e: impl ToString) -> Problem {
    Problem {
        horizon: h,
        message: e.to_string(),
    }
}

fn missing_regressors(h: usize) -> Problem {
    problem(h, "the regressors at this origin do not exist yet (too few earlier observations for the lags)")
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

/// ar or ardl for one target: direct forecasts (one regression per
/// horizon), or iterated ones for ar under `multi_step: iterated` (one
/// one-step regression). Expanding windows fold new rows into the QR
/// factors as the estimation end moves; rolling windows refactorise their
/// last `window` rows; the fixed scheme estimates once.
pub(crate) struct Linear<'a> {
    design: Design<'a>,
    subs: Vec<Submodel>,
    criterion: Option<Criterion>,
    iterated: bool,
    /// The experiment's horizons; direct models hold one set of rows per horizon.
    horizons: &'a [usize],
    rows: Vec<Rows>,
    /// The one-step regression's rows of a direct model whose horizons do
    /// not include 1: its residuals are the ones Ljung–Box reads.
    one_step: Option<Rows>,
}

/// The estimators of a linear model and the estimation end they stand at
/// (solved lazily, only for the horizons forecast there).
pub(crate) struct LinearFit {
    estimators: Vec<Estimator>,
    end: usize,
}

impl<'a> Linear<'a> {
    pub fn new(cell: &CellModel<'a>, iterated: bool) -> Result<Linear<'a>, String> {
        let design =
            Design::new(cell.exp, cell.family, cell.target).ok_or("not a least-squares family")?;
        let (subs, criterion) = submodels(cell.family, &design);
        let horizons = cell.exp.horizons.as_slice();
        let rows = if iterated {
            vec![Rows::build(&design, 1)]
        } else {
            horizons.iter().map(|&h| Rows::build(&design, h)).collect()
        };
        let one_step = (!iterated && !horizons.contains(&1)).then(|| Rows::build(&design, 1));
        Ok(Linear {
            design,
            subs,
            criterion,
            iterated,
            horizons,
            rows,
            one_step,
        })
    }

    fn inputs(&self, i: usize) -> Inputs<'_> {
        Inputs {
            rows: &self.rows[i],
            y: self.design.y,
            subs: &self.subs,
            criterion: self.criterion,
        }
    }

    fn step(&self, chosen: &Chosen, forecast: f64, variance: f64) -> Step {
        Step {
            forecast,
            variance: Some(variance),
            is_mse: Some(chosen.solution.mse()),
            is_var: Some(chosen.solution.sst / chosen.solution.rows as f64),
            order: self
                .criterion
                .is_some()
                .then_some(self.subs[chosen.index].order),
        }
    }
}

impl Model for Linear<'_> {
    type Fit = LinearFit;
    const STRICT: bool = true;
    const CARRIES: bool = true;

    fn fit(&self, end: usize, window: Option<usize>) -> Result<LinearFit, String> {
        let k = self.design.coefficients();
        let estimators = if self.iterated {
            vec![Estimator::new(k, 1, window, &self.subs)]
        } else {
            self.horizons
                .iter()
                .map(|&h| Estimator::new(k, h, window, &self.subs))
                .collect()
        };
        Ok(LinearFit { estimators, end })
    }

    fn update(
        &self,
        fit: &mut LinearFit,
        end: usize,
        _window: Option<usize>,
    ) -> Result<(), String> {
        fit.end = end;
        Ok(())
    }

    fn forecast(
        &self,
        fit: &mut LinearFit,
        origin: usize,
        horizons: &[usize],
    ) -> Vec<Result<Step, Problem>> {
        let end = fit.end;
        if self.iterated {
            let inputs = self.inputs(0);
            let one = (|| -> Result<Vec<Step>, Problem> {
                let chosen = fit.estimators[0]
                    .at(&inputs, end)
                    .map_err(|e| problem(1, e))?;
                let sub = &self.subs[chosen.index];
                let max_h = self.horizons.iter().copied().max().unwrap_or(1);
                let mut path = vec![0.0; max_h];
                iterate_path(&self.design, sub, &chosen.solution, origin, &mut path)
                    .ok_or_else(|| missing_regressors(1))?;
                let variances = iterated_variances(&self.design, sub, &chosen.solution, max_h);
                Ok(horizons
                    .iter()
                    .map(|&h| self.step(chosen, path[h - 1], variances[h - 1]))
                    .collect::<Vec<_>>())
            })();
            return match one {
                Ok(steps) => steps.into_iter().map(Ok).collect(),
                Err(p) => horizons.iter().map(|_| Err(p.clone())).collect(),
            };
        }
        horizons
            .iter()
            .map(|&h| {
                let i = self
                    .horizons
                    .iter()
                    .position(|&x| x == h)
                    .ok_or_else(|| problem(h, "not a horizon of the experiment"))?;
                let inputs = self.inputs(i);
                let chosen = fit.estimators[i]
                    .at(&inputs, end)
                    .map_err(|e| problem(h, e))?;
                let x = inputs
                    .rows
                    .at(origin)
                    .ok_or_else(|| missing_regressors(h))?;
                let sub = &self.subs[chosen.index];
                Ok(self.step(
                    chosen,
                    predict(&chosen.solution, x, &sub.columns),
                    chosen.solution.sigma2(),
                ))
            })
            .collect()
    }

    /// The one-step regression's residuals at `end` (the cell's last
    /// estimation end, with the scheme's window): the iterated model's own
    /// regression; for a direct model its h = 1 regression, estimated here
    /// when 1 is not among the horizons.
    fn residuals(&self, fit: &mut LinearFit, end: usize) -> Vec<f64> {
        let one_step = |est: &mut Estimator, inputs: &Inputs| {
            let Ok(c) = est.at(inputs, end) else {
                return Vec::new();
            };
            let c = Chosen {
                index: c.index,
                solution: c.solution.clone(),
            };
            est.residuals(inputs, end, &c)
        };
        if let Some(rows) = &self.one_step {
            let inputs = Inputs {
                rows,
                y: self.design.y,
                subs: &self.subs,
                criterion: self.criterion,
            };
            let window = fit.estimators.first().and_then(|e| e.window);
            let mut est = Estimator::new(self.design.coefficients(), 1, window, &self.subs);
            return one_step(&mut est, &inputs);
        }
        let i = if self.iterated {
            0
        } else {
            self.horizons.iter().position(|&h| h == 1).unwrap_or(0)
        };
        let inputs = self.inputs(i);
        one_step(&mut fit.estimators[i], &inputs)
    }
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
