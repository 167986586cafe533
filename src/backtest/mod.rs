//! backtest: the origin loop, once for every family, and the cells of a
//! plan run through it in parallel. A cell returns its forecast rows (and,
//! for the first scheme, the outlook rows); it never writes files. Results
//! come back in plan order whatever the thread count. Combinations are
//! formed afterwards from their members' rows (SPEC §6). Finished cells go
//! to the resume cache (`cache`) in the lossless text of `cellio`.

pub(crate) mod cache;
pub(crate) mod cellio;
mod levels;
mod single;
mod vintage;
pub(crate) use single::{from_scratch, time_one_estimation, Recomputed, Want};
pub(crate) use vintage::on_vintage;

use crate::error::{Diagnostic, Error, Location, Result};
use crate::models::{
    self, combination, CellModel, EstimationProblem, ForecastRow, Model, OutlookRow, Parameter,
    Problem, Registry,
};
use crate::plan::{self, Cell, Schedule};
use crate::progress::Progress;
use crate::spec::{Experiment, Family};
use rayon::prelude::*;

#[derive(Debug, Clone, Default)]
pub(crate) struct CellOutput {
    pub forecasts: Vec<ForecastRow>,
    /// Outlook rows, produced by the cell of the first scheme only.
    pub outlook: Vec<OutlookRow>,
    /// Re-estimations that failed and kept the previous estimate (likelihood families).
    pub fallbacks: usize,
    /// Regressors left out of some of the cell's estimations because they
    /// were constant in the window (SPEC §7.1), in the order first seen.
    pub left_out: Vec<LeftOut>,
    /// Why the cell failed as a whole (likelihood families, combinations of failed members).
    pub failure: Option<String>,
    /// In-sample residuals of the cell's last estimation (its last
    /// estimation end and window, taken before the outlook moves the
    /// estimate to N): one-step errors, for direct models those of their
    /// h = 1 regression (see `Model::residuals`).
    pub residuals: Vec<f64>,
    /// The parameters of every estimation of the backtest, in time order
    /// (the outlook's estimation at N is not one of them).
    pub parameters: Vec<Estimation>,
    /// Wall-clock seconds the cell took (recorded only in the manifest's `run` section).
    pub seconds: f64,
    /// Whether the output came from the resume cache (recorded only under `run`).
    pub cached: bool,
}

/// The parameters of one estimation, ending at position `end`; under
/// vintages, made at the origin that sees vintage `vintage` (its index in
/// the target's vintages), one per origin.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Estimation {
    pub end: usize,
    pub vintage: Option<usize>,
    pub parameters: Vec<Parameter>,
}

/// A regressor column left out of `estimations` estimations of a cell, the
/// first and last of them ending at positions `first_end` and `last_end`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub(crate) struct LeftOut {
    pub regressor: String,
    pub estimations: usize,
    pub first_end: usize,
    pub last_end: usize,
}

/// Count the columns the estimate ending at `end` left out.
fn record_left_out(out: &mut Vec<LeftOut>, names: Vec<String>, end: usize) {
    for name in names {
        match out.iter_mut().find(|l| l.regressor == name) {
            Some(l) => {
                l.estimations += 1;
                l.last_end = end;
            }
            None => out.push(LeftOut {
                regressor: name,
                estimations: 1,
                first_end: end,
                last_end: end,
            }),
        }
    }
}

/// The origin loop of one cell (SPEC §4): from the first origin to the
/// last, re-estimate whenever the estimation end moves (fit the first time,
/// update afterwards) and forecast at every horizon whose origins include
/// this one; then the residuals of the last estimation and, for the first
/// scheme, the outlook from N with E = N.
///
/// A strict model's failure makes the experiment invalid; the problem
/// reported is the shortest horizon's first one (the others are not
/// computed further). A likelihood model whose re-estimation fails keeps its
/// previous estimate (counted as a fallback); one whose first estimation or
/// any forecast fails fails the cell.
struct OriginLoop<'a> {
    progress: &'a dyn Progress,
    schedule: Schedule<'a>,
    horizons: &'a [usize],
    /// Some(window of the outlook estimation) when this cell gives the outlook.
    outlook: Option<Option<usize>>,
    /// The outlook's horizons, 1..max(horizons).
    outlook_horizons: Vec<usize>,
    n: usize,
    /// The units the rows are in.
    scale: levels::Scale<'a>,
}

/// What the loop does when an estimation fails.
enum Refit {
    /// Estimated (or kept the previous estimate, counted).
    Ready,
    /// The cell fails: no earlier estimate to keep.
    CellFails(String),
}

impl OriginLoop<'_> {
    /// Estimate for `end`: fit the first time, update afterwards; a failed
    /// update keeps the previous estimate (a fallback).
    fn estimate<M: Model>(
        &self,
        model: &M,
        current: &mut Option<M::Fit>,
        (origin, end): (usize, usize),
        out: &mut CellOutput,
    ) -> std::result::Result<Refit, EstimationProblem> {
        let window = self.schedule.window();
        let fitted = match current.as_mut() {
            Some(fit) => model.update(fit, end, window),
            None => model.fit(end, window).map(|f| *current = Some(f)),
        };
        match fitted {
            Ok(()) => Ok(Refit::Ready),
            // Strict models report their problems at the forecast; a
            // failure here has no horizon.
            Err(message) if M::STRICT => Err(EstimationProblem {
                horizon: 0,
                origin,
                message,
            }),
            Err(_) if current.is_some() => {
                out.fallbacks += 1;
                Ok(Refit::Ready)
            }
            Err(e) => Ok(Refit::CellFails(format!(
                "estimation failed at the first estimation end (position {end}): {e}"
            ))),
        }
    }

    /// The outlook from N with E = N: the backtest's estimate carried on
    /// when the model can and the windows agree, else a fresh fit; rows
    /// without a forecast where the model cannot give one.
    fn outlook<M: Model>(
        &self,
        model: &M,
        current: &mut Option<M::Fit>,
        outlook_window: Option<usize>,
        left_out: &mut Vec<LeftOut>,
    ) -> Vec<OutlookRow> {
        let window = self.schedule.window();
        let carried = M::CARRIES && outlook_window == window;
        let fit = match current.as_mut() {
            Some(fit) if carried => model.update(fit, self.n, window).ok().map(|_| fit),
            _ => {
                *current = model.fit(self.n, outlook_window).ok();
                current.as_mut()
            }
        };
        let horizons = &self.outlook_horizons;
        match fit {
            Some(fit) => {
                let rows = horizons
                    .iter()
                    .zip(self.scale.forecast(model, fit, self.n, horizons))
                    .map(|(&h, step)| OutlookRow {
                        horizon: h,
                        forecast: step.as_ref().ok().map(|s| s.forecast),
                        variance: step.ok().and_then(|s| s.variance),
                    })
                    .collect();
                record_left_out(left_out, model.left_out(fit), self.n);
                rows
            }
            None => horizons
                .iter()
                .map(|&h| OutlookRow {
                    horizon: h,
                    forecast: None,
                    variance: None,
                })
                .collect(),
        }
    }
}

impl models::Visitor for OriginLoop<'_> {
    type Out = std::result::Result<CellOutput, EstimationProblem>;

    /// The origin loop itself, written once for every family: estimate,
    /// refit or update as the schedule says, forecast, record parameters
    /// and left-out columns. One function because those steps share the
    /// estimate and the schedule's position at every origin.
    fn visit<M: Model>(self, model: &M) -> Self::Out {
        let sched = self.schedule;
        let horizons = self.horizons;
        let mut out = CellOutput::default();
        let mut per_h: Vec<Vec<ForecastRow>> = vec![Vec::new(); horizons.len()];
        // A strict model's first problem per horizon.
        let mut problems: Vec<Option<EstimationProblem>> = vec![None; horizons.len()];
        let last = *sched.origins(horizons[0]).end();
        let mut current: Option<M::Fit> = None;
        let mut last_end = None;
        let mut wanted: Vec<usize> = Vec::with_capacity(horizons.len());
        let mut asked: Vec<usize> = Vec::with_capacity(horizons.len());
        for origin in sched.first_origin..=last {
            wanted.clear();
            wanted.extend((0..horizons.len()).filter(|&i| {
                problems[i].is_none() && sched.origins(horizons[i]).contains(&origin)
            }));
            if wanted.is_empty() {
                continue;
            }
            let end = sched.estimation_end(origin);
            let new_end = last_end != Some(end);
            if new_end {
                if let Refit::CellFails(why) =
                    self.estimate(model, &mut current, (origin, end), &mut out)?
                {
                    out.failure = Some(why);
                    return Ok(out);
                }
                last_end = Some(end);
            }
            let Some(fit) = current.as_mut() else {
                continue;
            };
            asked.clear();
            asked.extend(wanted.iter().map(|&i| horizons[i]));
            self.progress.forecasts_done(asked.len());
            for (&i, step) in wanted
                .iter()
                .zip(self.scale.forecast(model, fit, origin, &asked))
            {
                match step {
                    Ok(step) => per_h[i].push(ForecastRow::of(horizons[i], origin, step)),
                    Err(Problem { horizon, message }) if M::STRICT => {
                        problems[i] = Some(EstimationProblem {
                            horizon,
                            origin,
                            message,
                        });
                    }
                    Err(Problem { message, .. }) => {
                        out.failure = Some(format!(
                            "forecasting failed at origin position {origin}: {message}"
                        ));
                        return Ok(out);
                    }
                }
            }
            if new_end {
                record_left_out(&mut out.left_out, model.left_out(fit), end);
                // Under units: original a direct model also estimates the
                // unlisted horizons a cumulated level needs; parameters.csv
                // keeps to the listed ones.
                let mut parameters = model.parameters(fit);
                parameters.retain(|p| p.horizon.is_none_or(|h| horizons.contains(&h)));
                out.parameters.push(Estimation {
                    end,
                    vintage: None,
                    parameters,
                });
            }
        }
        if let Some(p) = problems.into_iter().flatten().next() {
            return Err(p);
        }
        out.forecasts = per_h.into_iter().flatten().collect();
        if let (Some(fit), Some(end)) = (current.as_mut(), last_end) {
            out.residuals = model.residuals(fit, end);
        }
        if let Some(outlook_window) = self.outlook {
            out.outlook = self.outlook(model, &mut current, outlook_window, &mut out.left_out);
        }
        Ok(out)
    }
}

/// Run one cell: its model through the origin loop.
pub(crate) fn run_cell(
    exp: &Experiment,
    cell: &Cell,
    progress: &dyn Progress,
) -> std::result::Result<CellOutput, EstimationProblem> {
    run_cell_in(&models::Families, exp, cell, progress)
}

/// Run one cell with the model `registry` gives it.
pub(crate) fn run_cell_in<R: Registry>(
    registry: &R,
    exp: &Experiment,
    cell: &Cell,
    progress: &dyn Progress,
) -> std::result::Result<CellOutput, EstimationProblem> {
    let target = &exp.targets[cell.target];
    let candidate = &exp.candidates[cell.candidate];
    if matches!(candidate.family, Family::Combination { .. }) {
        return Ok(CellOutput::default());
    }
    if target.vintages.is_some() {
        let strict = !models::is_likelihood(&candidate.family);
        return vintage::run(registry, exp, cell, strict, progress);
    }
    let schedule = Schedule {
        scheme: &exp.schemes[cell.scheme],
        first_origin: target.first_origins[cell.scheme],
        n: target.n,
    };
    let with_outlook = cell.scheme == 0;
    let seen = levels::seen_by(exp, target, cell.candidate);
    let model = CellModel {
        exp,
        family: &candidate.family,
        target: &seen,
        seed: models::cell_seed(exp.seed, &cell.id),
    };
    let origin_loop = OriginLoop {
        progress,
        schedule,
        horizons: &exp.horizons,
        outlook: with_outlook.then(|| plan::outlook_window(exp)),
        outlook_horizons: plan::outlook_horizons(exp),
        n: target.n,
        scale: levels::Scale::of(exp, target, cell.candidate),
    };
    registry
        .visit(&model, origin_loop)
        .map_err(|message| EstimationProblem {
            horizon: 0,
            origin: 0,
            message,
        })?
}

/// The schedule of a cell.
pub(crate) fn schedule_of<'a>(exp: &'a Experiment, cell: &Cell) -> Schedule<'a> {
    let target = &exp.targets[cell.target];
    Schedule {
        scheme: &exp.schemes[cell.scheme],
        first_origin: target.first_origins[cell.scheme],
        n: target.n,
    }
}

/// How many estimations a cell makes: one per estimation end its origins
/// meet, or under vintages one per origin (each on its own vintage).
pub(crate) fn estimations(exp: &Experiment, cell: &Cell) -> usize {
    let schedule = schedule_of(exp, cell);
    if exp.targets[cell.target].vintages.is_some() {
        return schedule.origins(exp.horizons[0]).count();
    }
    let mut ends: Vec<usize> = schedule
        .origins(exp.horizons[0])
        .map(|o| schedule.estimation_end(o))
        .collect();
    ends.dedup();
    ends.len()
}

/// Whether a cell's output read back from a file (a shard folder, the
/// cache) is what that cell computes: one forecast per horizon and origin
/// of its schedule, in plan order, or none for a failed cell; the outlook's
/// horizons for a cell of the first scheme; at most N residuals. Rows that
/// came from anywhere else would be scored against positions that do not
/// exist.
pub(crate) fn check_output(
    exp: &Experiment,
    cell: &Cell,
    out: &CellOutput,
) -> std::result::Result<(), String> {
    let target = &exp.targets[cell.target];
    if out.failure.is_some() {
        if out.forecasts.is_empty() && out.outlook.is_empty() {
            return Ok(());
        }
        return Err("a failed cell holds forecast rows".into());
    }
    let schedule = Schedule {
        scheme: &exp.schemes[cell.scheme],
        first_origin: target.first_origins[cell.scheme],
        n: target.n,
    };
    let mut rows = out.forecasts.iter();
    for &h in &exp.horizons {
        for origin in schedule.origins(h) {
            match rows.next() {
                Some(r) if r.horizon == h && r.origin == origin => {}
                Some(r) => {
                    return Err(format!(
                        "a forecast for horizon {} from origin {} where the plan has horizon {h} from origin {origin}",
                        r.horizon, r.origin
                    ))
                }
                None => return Err(format!("no forecast for horizon {h} from origin {origin}")),
            }
        }
    }
    if rows.next().is_some() {
        return Err("more forecasts than the plan has".into());
    }
    let outlook: Vec<usize> = out.outlook.iter().map(|r| r.horizon).collect();
    let expected = if cell.scheme == 0 {
        plan::outlook_horizons(exp)
    } else {
        Vec::new()
    };
    if outlook != expected {
        return Err(format!(
            "outlook rows for horizons {outlook:?} where the plan has {expected:?}"
        ));
    }
    if out.residuals.len() > target.n {
        return Err("more residuals than observations".into());
    }
    let vintages = target.vintages.as_ref().map_or(0, |v| v.labels.len());
    for e in &out.parameters {
        if e.end == 0 || e.end > target.n {
            return Err(format!(
                "parameters of an estimation ending at position {}",
                e.end
            ));
        }
        match e.vintage {
            Some(i) if i >= vintages => {
                return Err(format!("parameters of an estimation on vintage {}", i + 1))
            }
            None if vintages > 0 => {
                return Err("parameters of an estimation without its vintage".into())
            }
            _ => {}
        }
        if let Some(h) = e
            .parameters
            .iter()
            .filter_map(|p| p.horizon)
            .find(|h| !exp.horizons.contains(h))
        {
            return Err(format!(
                "parameters of horizon {h}, not a horizon of the plan"
            ));
        }
    }
    Ok(())
}

/// Turn an estimation problem into a diagnostic that points at the candidate's line.
pub(crate) fn problem_diagnostic(
    exp: &Experiment,
    cell: &Cell,
    p: &EstimationProblem,
) -> Diagnostic {
    let target = &exp.targets[cell.target];
    let cand = &exp.candidates[cell.candidate];
    let scheme = &exp.schemes[cell.scheme];
    let at = if p.origin >= 1 {
        format!(", origin {}", exp.period_label(target, p.origin))
    } else {
        String::new()
    };
    let horizon = if p.horizon >= 1 {
        format!(" (horizon {}{at})", p.horizon)
    } else {
        String::new()
    };
    let hint = if cand.family.coefficients().is_some() && !p.message.starts_with("back_transform") {
        " — start the scheme later, widen the window, or use fewer lags"
    } else {
        ""
    };
    Diagnostic::new(
        Some(Location {
            file: exp.source_path.clone(),
            line: Some(cand.line),
            column: None,
        }),
        format!(
            "candidate {} on target '{}' under scheme {}{horizon}: {}{hint}",
            cand.id, target.name, scheme.id, p.message
        ),
    )
}

/// Fill the combination cells from their members' rows.
pub(crate) fn combine(
    exp: &Experiment,
    cells: &[Cell],
    outputs: &mut [CellOutput],
    progress: &dyn Progress,
) {
    for i in 0..cells.len() {
        let cell = &cells[i];
        let Family::Combination { members, weights } = &exp.candidates[cell.candidate].family
        else {
            continue;
        };
        progress.cell_done();
        let member_cells: Vec<usize> = members
            .iter()
            .map(|&m| plan::cell_index(exp, cell.target, m, cell.scheme))
            .collect();
        if let Some(&bad) = member_cells.iter().find(|&&j| outputs[j].failure.is_some()) {
            outputs[i].failure = Some(format!(
                "member {} failed",
                exp.candidates[cells[bad].candidate].id
            ));
            continue;
        }
        let y = &exp.targets[cell.target].y;
        let rows: Vec<&[ForecastRow]> = member_cells
            .iter()
            .map(|&j| outputs[j].forecasts.as_slice())
            .collect();
        let result = combination::backtest(*weights, &rows, y, &exp.horizons);
        let outlook = if cell.scheme == 0 {
            let looks: Vec<&[OutlookRow]> = member_cells
                .iter()
                .map(|&j| outputs[j].outlook.as_slice())
                .collect();
            let horizons = plan::outlook_horizons(exp);
            combination::outlook(*weights, &looks, &rows, y, (&horizons, &exp.horizons))
        } else {
            Vec::new()
        };
        match result {
            Ok(forecasts) => {
                progress.forecasts_done(forecasts.len());
                outputs[i].forecasts = forecasts;
                outputs[i].outlook = outlook;
            }
            Err(e) => outputs[i].failure = Some(e),
        }
    }
}

/// Whether a cell computes anything itself (combinations are formed from members).
pub(crate) fn is_computed(exp: &Experiment, cell: &Cell) -> bool {
    !matches!(
        exp.candidates[cell.candidate].family,
        Family::Combination { .. }
    )
}

/// Run the selected cells in parallel (reading and filling the cache when
/// given) and return their outputs in the given order. Estimation problems
/// of least-squares and benchmark families make the experiment invalid
/// (SPEC §4) and are reported together.
pub(crate) fn run_selected(
    exp: &Experiment,
    cells: &[Cell],
    selected: &[usize],
    cache: Option<&cache::Cache>,
    progress: &dyn Progress,
) -> Result<Vec<CellOutput>> {
    let results: Vec<std::result::Result<CellOutput, EstimationProblem>> = selected
        .par_iter()
        .map(|&i| {
            let cell = &cells[i];
            let key = cache.map(|_| cache::Cache::key(exp, cell));
            if let (Some(c), Some(k)) = (cache, &key) {
                if let Some(mut hit) = c.get(k).filter(|o| check_output(exp, cell, o).is_ok()) {
                    hit.cached = true;
                    progress.forecasts_done(hit.forecasts.len());
                    progress.cell_done();
                    return Ok(hit);
                }
            }
            let started = std::time::Instant::now();
            let r = run_cell(exp, cell, progress).map(|mut o| {
                o.seconds = started.elapsed().as_secs_f64();
                o
            });
            if let (Some(c), Some(k), Ok(out)) = (cache, &key, &r) {
                c.put(k, &cell.id, out);
            }
            progress.cell_done();
            r
        })
        .collect();
    let mut diags = Vec::new();
    let mut outputs = Vec::with_capacity(results.len());
    for (&i, r) in selected.iter().zip(results) {
        match r {
            Ok(o) => outputs.push(o),
            Err(p) => {
                diags.push(problem_diagnostic(exp, &cells[i], &p));
                outputs.push(CellOutput::default());
            }
        }
    }
    if !diags.is_empty() {
        return Err(Error::Invalid(diags));
    }
    Ok(outputs)
}
