//! One estimation of a cell outside its origin loop: made from scratch at
//! one origin (what the look-ahead audit recomputes) or timed at the first
//! origin (what `check` estimates the run time from).

use super::{problem_diagnostic, schedule_of};
use crate::error::Diagnostic;
use crate::models::{self, CellModel, EstimationProblem, ForecastRow, Model, Parameter, Registry};
use crate::plan::Cell;
use crate::spec::Experiment;

/// One origin's forecasts from an estimation made from scratch at `end`:
/// what the look-ahead audit recomputes, and what a run on vintages makes
/// at every origin (with the parameters and residuals `want` asks for).
struct FromScratch<'a> {
    at: Estimate,
    horizons: &'a [usize],
    want: Want,
    scale: super::levels::Scale<'a>,
}

/// Where an estimation from scratch ends, its window, and the origin it
/// forecasts from.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Estimate {
    pub end: usize,
    pub window: Option<usize>,
    pub origin: usize,
}

/// What an estimation from scratch reports besides its forecasts.
#[derive(Debug, Clone, Copy, Default)]
pub(crate) struct Want {
    /// Its parameters and the regressors it left out.
    pub parameters: bool,
    /// Its in-sample residuals.
    pub residuals: bool,
}

/// A forecast of one horizon, or why it could not be made.
pub(crate) type Recomputed = std::result::Result<ForecastRow, String>;

/// The outcome of one estimation from scratch.
#[derive(Debug, Default)]
pub(crate) struct Scratch {
    /// One per horizon asked, in order.
    pub rows: Vec<Recomputed>,
    pub parameters: Vec<Parameter>,
    pub left_out: Vec<String>,
    pub residuals: Vec<f64>,
}

impl models::Visitor for FromScratch<'_> {
    type Out = std::result::Result<Scratch, String>;
    fn visit<M: Model>(self, model: &M) -> Self::Out {
        let mut fit = model.fit(self.at.end, self.at.window)?;
        Ok(forecast_with(
            model,
            &mut fit,
            (self.at, &self.scale),
            self.horizons,
            self.want,
        ))
    }
}

/// The forecasts of an estimate `fit` of `model` from `at.origin` at
/// `horizons` in the units `scale` gives, with the parameters and
/// residuals `want` asks for.
pub(crate) fn forecast_with<M: Model>(
    model: &M,
    fit: &mut M::Fit,
    (at, scale): (Estimate, &super::levels::Scale),
    horizons: &[usize],
    want: Want,
) -> Scratch {
    let origin = at.origin;
    let rows = horizons
        .iter()
        .zip(scale.forecast(model, fit, origin, horizons))
        .map(|(&horizon, step)| {
            step.map(|step| ForecastRow::of(horizon, origin, step))
                .map_err(|p| p.message)
        })
        .collect();
    let mut out = Scratch {
        rows,
        ..Scratch::default()
    };
    if want.parameters {
        out.parameters = model.parameters(fit);
        out.left_out = model.left_out(fit);
    }
    if want.residuals {
        out.residuals = model.residuals(fit, at.end);
    }
    out
}

/// The forecasts of `cell` from `origin` at `horizons` (ascending), its
/// model estimated from scratch at that origin's estimation end on
/// `target` (the cell's target, or a copy of it with other data): Err when
/// the model cannot be built or the estimation fails.
pub(crate) fn from_scratch<R: Registry>(
    registry: &R,
    exp: &Experiment,
    target: &crate::spec::TargetData,
    cell: &Cell,
    origin: usize,
    horizons: &[usize],
) -> std::result::Result<Vec<Recomputed>, String> {
    let schedule = schedule_of(exp, cell);
    let at = Estimate {
        end: schedule.estimation_end(origin),
        window: schedule.window(),
        origin,
    };
    estimate_once(registry, exp, target, cell, at, horizons, Want::default()).map(|s| s.rows)
}

/// One estimation of `cell`'s model from scratch on `target`, as `at`
/// says, and its forecasts at `horizons` (ascending; `exp`'s horizons are
/// the ones a direct model estimates for).
pub(crate) fn estimate_once<R: Registry>(
    registry: &R,
    exp: &Experiment,
    target: &crate::spec::TargetData,
    cell: &Cell,
    at: Estimate,
    horizons: &[usize],
    want: Want,
) -> std::result::Result<Scratch, String> {
    let seen = super::levels::seen_by(exp, target, cell.candidate);
    let model = CellModel {
        exp,
        family: &exp.candidates[cell.candidate].family,
        target: &seen,
        seed: models::cell_seed(exp.seed, &cell.id),
    };
    let scale = super::levels::Scale::of(exp, target, cell.candidate);
    registry.visit(
        &model,
        FromScratch {
            at,
            horizons,
            want,
            scale,
        },
    )?
}

/// Times one estimation of a cell's model at its first estimation end.
struct TimeOneFit {
    end: usize,
    window: Option<usize>,
}

impl models::Visitor for TimeOneFit {
    type Out = std::result::Result<f64, String>;
    fn visit<M: Model>(self, model: &M) -> std::result::Result<f64, String> {
        let started = std::time::Instant::now();
        model.fit(self.end, self.window)?;
        Ok(started.elapsed().as_secs_f64())
    }
}

/// The seconds one estimation of the cell's model takes at its first
/// origin, or why that estimation fails; `Err` when the model cannot be
/// built on these data at all (the run refuses such a cell), as a
/// diagnostic at the candidate's line.
pub(crate) fn time_one_estimation(
    exp: &Experiment,
    cell: &Cell,
) -> std::result::Result<std::result::Result<f64, String>, Diagnostic> {
    let schedule = schedule_of(exp, cell);
    let seen = super::levels::seen_by(exp, &exp.targets[cell.target], cell.candidate);
    let model = CellModel {
        exp,
        family: &exp.candidates[cell.candidate].family,
        target: &seen,
        seed: models::cell_seed(exp.seed, &cell.id),
    };
    let timer = TimeOneFit {
        end: schedule.first_origin,
        window: schedule.window(),
    };
    models::visit(&model, timer).map_err(|message| {
        let p = EstimationProblem {
            horizon: 0,
            origin: 0,
            message,
        };
        problem_diagnostic(exp, cell, &p)
    })
}
