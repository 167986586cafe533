//! The least-squares estimator of one horizon: the QR factors of every
//! submodel moved along the estimation ends (rows folded in, or the
//! window refactorised), and the submodel chosen at each end.

use super::design::{Rows, Submodel};
use crate::numerics::ic::{concentrated_gaussian, Smallest};
use crate::numerics::lsq::{LeastSquares, LinalgError, Solution};
use crate::spec::Criterion;

/// A solved submodel at one estimation end.
pub(super) struct Chosen {
    pub(super) index: usize,
    pub(super) solution: Solution,
}

/// Solves the regressions of y_{s+h} on the rows at s for a nondecreasing
/// sequence of estimation ends E (rows with s + h ≤ E), for every submodel,
/// and picks one. The rows, series and submodels are the model's; the
/// estimator holds only the factorisations.
pub(super) struct Estimator {
    h: usize,
    pub(super) window: Option<usize>,
    ls: Vec<LeastSquares>,
    scratch: Vec<f64>,
    next_s: usize,
    last_end: Option<usize>,
    chosen: Option<Chosen>,
}

/// What an estimator reads: one horizon's rows, the series and the submodels.
pub(super) struct Inputs<'r> {
    pub(super) rows: &'r Rows,
    pub(super) y: &'r [f64],
    pub(super) subs: &'r [Submodel],
    pub(super) criterion: Option<Criterion>,
}

impl Estimator {
    pub(super) fn new(k: usize, h: usize, window: Option<usize>, subs: &[Submodel]) -> Self {
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

    pub(super) fn at(&mut self, inp: &Inputs, end: usize) -> Result<&Chosen, LinalgError> {
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

    /// The solved submodel at `end` and the diagonal of its (X′X)⁻¹, if
    /// this estimator was solved there (a direct model solves only the
    /// horizons it forecasts at an end).
    pub(super) fn solved_at(&self, end: usize) -> Option<(&Chosen, Vec<f64>)> {
        if self.last_end != Some(end) {
            return None;
        }
        let chosen = self.chosen.as_ref()?;
        Some((chosen, self.ls[chosen.index].xtx_inv_diag()))
    }

    /// Residuals of the estimation at `end` for the chosen submodel, in time order.
    pub(super) fn residuals(&self, inp: &Inputs, end: usize, chosen: &Chosen) -> Vec<f64> {
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

pub(super) fn predict(sol: &Solution, x: &[f64], columns: &[usize]) -> f64 {
    sol.coef.iter().zip(columns).map(|(b, &c)| b * x[c]).sum()
}
