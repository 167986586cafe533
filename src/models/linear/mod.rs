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

use super::{CellModel, Model, Order, Parameter, Problem, Step};
use crate::numerics::lsq::Solution;
use crate::spec::{Criterion, Trend};

mod design;
mod estimator;

pub(crate) use design::Design;
use design::{submodels, Rows, Submodel};
use estimator::{predict, Chosen, Estimator, Inputs};
fn problem(h: usize, e: impl ToString) -> Problem {
    Problem {
        horizon: h,
        message: e.to_string(),
    }
}

fn missing_regressors(h: usize) -> Problem {
    problem(h, "the regressors at this origin do not exist yet (too few earlier observations for the lags)")
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
    /// The experiment's horizons (the backtest forecasts these).
    horizons: &'a [usize],
    /// The horizons a direct model has a regression for: 1..max(horizons),
    /// because the outlook forecasts every horizon up to the furthest
    /// listed one; an iterated model's single regression is horizon 1.
    all: Vec<usize>,
    /// Each regression's rows (of `all`), built when first used: a horizon
    /// that is not listed is only estimated for the outlook.
    rows: Vec<std::cell::OnceCell<Rows>>,
    /// Whether a direct model's horizons leave 1 out: its residuals (the
    /// ones Ljung–Box reads) then come from an h = 1 regression estimated
    /// for them alone.
    one_step_unlisted: bool,
    /// The design's column names, then `sigma2`, for parameters.csv.
    names: Vec<std::sync::Arc<str>>,
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
        let all: Vec<usize> = if iterated {
            vec![1]
        } else {
            (1..=horizons.iter().copied().max().unwrap_or(1)).collect()
        };
        let rows = all.iter().map(|_| std::cell::OnceCell::new()).collect();
        let one_step_unlisted = !iterated && !horizons.contains(&1);
        let mut names: Vec<std::sync::Arc<str>> =
            design.column_names().into_iter().map(Into::into).collect();
        names.push("sigma2".into());
        Ok(Linear {
            names,
            design,
            subs,
            criterion,
            iterated,
            horizons,
            all,
            rows,
            one_step_unlisted,
        })
    }

    /// The rows of regression `i` (of `all`).
    fn rows(&self, i: usize) -> &Rows {
        self.rows[i].get_or_init(|| Rows::build(&self.design, self.all[i]))
    }

    fn inputs(&self, i: usize) -> Inputs<'_> {
        Inputs {
            rows: self.rows(i),
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
            self.all
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
                let i =
                    self.all.iter().position(|&x| x == h).ok_or_else(|| {
                        problem(h, "beyond the furthest horizon of the experiment")
                    })?;
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

    /// An iterated model's forecast errors are Σ_{k<h} ψ_k ε_{T+h−k} with
    /// the one-step regression's ψ-weights and σ̂² (SPEC §4's iterated
    /// variances are the diagonal); a direct model's h-step regressions
    /// have no joint error model, so none.
    fn error_covariance(
        &self,
        fit: &mut LinearFit,
        _origin: usize,
        count: usize,
    ) -> Option<Vec<f64>> {
        if !self.iterated {
            return None;
        }
        let inputs = self.inputs(0);
        let chosen = fit.estimators[0].at(&inputs, fit.end).ok()?;
        let sub = &self.subs[chosen.index];
        let t = self.design.trend.terms();
        let psi = psi_weights(&chosen.solution.coef[t..t + sub.lags], count);
        Some(super::level::covariance_from_psi(
            &psi,
            chosen.solution.sigma2(),
            count,
        ))
    }

    /// The coefficients of each regression solved at the current end with
    /// their classical standard errors s·√((X′X)⁻¹)_jj, s² = SSR/(n − k),
    /// and `sigma2` = s² (no standard error); a direct model's rows carry
    /// their horizon, an iterated model's none. Least squares is not a
    /// likelihood fit: no fit rows.
    fn parameters(&self, fit: &mut LinearFit) -> Vec<Parameter> {
        let names = &self.names;
        let mut out = Vec::new();
        for (i, est) in fit.estimators.iter().enumerate() {
            let Some((chosen, diag)) = est.solved_at(fit.end) else {
                continue;
            };
            let horizon = (!self.iterated).then(|| self.all[i]);
            let s2 = chosen.solution.sigma2();
            let columns = &self.subs[chosen.index].columns;
            let rows = chosen
                .solution
                .coef
                .iter()
                .zip(columns)
                .zip(&diag)
                .map(|((&b, &c), &d)| Parameter::new(names[c].clone(), b, Some((s2 * d).sqrt())));
            out.extend(
                rows.chain([Parameter::new(names[names.len() - 1].clone(), s2, None)])
                    .map(|p| Parameter { horizon, ..p }),
            );
        }
        out
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
        // Horizon 1 is the first regression of `all` either way.
        let inputs = self.inputs(0);
        if self.one_step_unlisted {
            let window = fit.estimators.first().and_then(|e| e.window);
            let mut est = Estimator::new(self.design.coefficients(), 1, window, &self.subs);
            return one_step(&mut est, &inputs);
        }
        one_step(&mut fit.estimators[0], &inputs)
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
