//! One estimation of a cell outside its origin loop: made from scratch at
//! one origin (what the look-ahead audit recomputes) or timed at the first
//! origin (what `check` estimates the run time from).

use super::{problem_diagnostic, schedule_of};
use crate::error::Diagnostic;
use crate::models::{self, CellModel, EstimationProblem, ForecastRow, Model, Registry};
use crate::plan::Cell;
use crate::spec::Experiment;

/// One origin's forecasts from an estimation made from scratch at its
/// estimation end: what the look-ahead audit recomputes.
struct FromScratch<'a> {
    end: usize,
    window: Option<usize>,
    origin: usize,
    horizons: &'a [usize],
}

/// A forecast of one horizon, or why it could not be made.
pub(crate) type Recomputed = std::result::Result<ForecastRow, String>;

impl models::Visitor for FromScratch<'_> {
    type Out = std::result::Result<Vec<Recomputed>, String>;
    fn visit<M: Model>(self, model: &M) -> Self::Out {
        let mut fit = model.fit(self.end, self.window)?;
        Ok(self
            .horizons
            .iter()
            .zip(model.forecast(&mut fit, self.origin, self.horizons))
            .map(|(&horizon, step)| {
                step.map(|step| ForecastRow {
                    horizon,
                    origin: self.origin,
                    forecast: step.forecast,
                    is_mse: step.is_mse,
                    is_var: step.is_var,
                    variance: step.variance,
                    order: step.order,
                })
                .map_err(|p| p.message)
            })
            .collect())
    }
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
    let model = CellModel {
        exp,
        family: &exp.candidates[cell.candidate].family,
        target,
        seed: models::cell_seed(exp.seed, &cell.id),
    };
    let visitor = FromScratch {
        end: schedule.estimation_end(origin),
        window: schedule.window(),
        origin,
        horizons,
    };
    registry.visit(&model, visitor)?
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
    let model = CellModel {
        exp,
        family: &exp.candidates[cell.candidate].family,
        target: &exp.targets[cell.target],
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
