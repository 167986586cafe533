//! The regressors of ar and ardl (SPEC §4): every row's values at an
//! origin, the submodels an order selection compares, and the rows of one
//! horizon laid out flat.

use super::Order;
use crate::spec::{Criterion, Experiment, Family, TargetData, Trend};

/// The regressors of an ar or ardl candidate for one target.
pub(crate) struct Design<'a> {
    pub(super) y: &'a [f64],
    pub(super) n: usize,
    pub(super) trend: Trend,
    pub(super) lags: usize,
    /// (values at positions 1.., release lag, known ahead)
    pub(super) predictors: Vec<(&'a [Option<f64>], usize, bool)>,
    pub(super) predictor_lags: usize,
    /// The predictors' column names, for parameters.csv.
    pub(super) predictor_names: Vec<&'a str>,
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
            predictor_names: preds
                .iter()
                .map(|&i| exp.predictors[i].column.as_str())
                .collect(),
        })
    }

    pub fn coefficients(&self) -> usize {
        self.trend.terms() + self.lags + self.predictor_lags * self.predictors.len()
    }

    /// The name of every column of a row (SPEC §7.4): `constant`, `trend`,
    /// `ar1..` (ar1 the latest value), `<predictor>_1..` (the latest first).
    pub fn column_names(&self) -> Vec<String> {
        let mut names = Vec::with_capacity(self.coefficients());
        if self.trend != Trend::None {
            names.push("constant".to_string());
        }
        if self.trend == Trend::Linear {
            names.push("trend".to_string());
        }
        names.extend((1..=self.lags).map(|j| format!("ar{j}")));
        for p in &self.predictor_names {
            names.extend((1..=self.predictor_lags).map(|j| format!("{p}_{j}")));
        }
        names
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
pub(super) fn submodels(family: &Family, design: &Design) -> (Vec<Submodel>, Option<Criterion>) {
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
pub(super) struct Rows {
    k: usize,
    x: Vec<f64>,
    valid: Vec<bool>,
}

impl Rows {
    pub(super) fn build(design: &Design, h: usize) -> Rows {
        let k = design.coefficients();
        let n = design.n;
        let mut x = vec![0.0; n * k];
        let mut valid = vec![false; n];
        for s in 1..=n {
            valid[s - 1] = design.row(s, h, &mut x[(s - 1) * k..s * k]);
        }
        Rows { k, x, valid }
    }
    pub(super) fn at(&self, s: usize) -> Option<&[f64]> {
        if s >= 1 && s <= self.valid.len() && self.valid[s - 1] {
            Some(&self.x[(s - 1) * self.k..s * self.k])
        } else {
            None
        }
    }
}
