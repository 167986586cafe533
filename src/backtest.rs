//! backtest: run every cell of the plan in parallel. A cell returns its
//! forecast rows (and, for the first scheme, the outlook rows); it never
//! writes files. Results come back in plan order whatever the thread count.

use crate::error::{Diagnostic, Error, Location, Result};
use crate::models::{linear, simple, EstimationProblem, ForecastRow, OutlookRow, Schedule};
use crate::plan::Cell;
use crate::spec::{Experiment, Family, MultiStep, SchemeKind};
use rayon::prelude::*;

#[derive(Debug, Clone)]
pub struct CellOutput {
    pub forecasts: Vec<ForecastRow>,
    /// Outlook rows, produced by the cell of the first scheme only.
    pub outlook: Vec<OutlookRow>,
}

/// The window of the outlook estimation: the last `window` rows when every
/// scheme is rolling (the first scheme's window), else everything.
pub fn outlook_window(exp: &Experiment) -> Option<usize> {
    if exp.schemes.iter().all(|s| s.kind == SchemeKind::Rolling) {
        exp.schemes[0].window
    } else {
        None
    }
}

pub fn run_cell(
    exp: &Experiment,
    cell: &Cell,
) -> std::result::Result<CellOutput, EstimationProblem> {
    let target = &exp.targets[cell.target];
    let candidate = &exp.candidates[cell.candidate];
    let scheme = &exp.schemes[cell.scheme];
    let sched = Schedule {
        scheme,
        first_origin: target.first_origins[cell.scheme],
        n: target.n,
    };
    let season = exp.season_length();
    let with_outlook = cell.scheme == 0;
    let window = outlook_window(exp);
    match &candidate.family {
        Family::Ar { .. }
        | Family::Ardl { .. }
        | Family::ArSelect { .. }
        | Family::ArdlSelect { .. } => {
            let design = linear::Design::new(exp, &candidate.family, target).ok_or_else(|| {
                EstimationProblem {
                    horizon: 0,
                    origin: 0,
                    message: "not a least-squares family".into(),
                }
            })?;
            let iterated = exp.multi_step == MultiStep::Iterated
                && matches!(
                    candidate.family,
                    Family::Ar { .. } | Family::ArSelect { .. }
                );
            let forecasts =
                linear::backtest(&design, &candidate.family, &sched, &exp.horizons, iterated)?;
            let outlook = if with_outlook {
                linear::outlook(&design, &candidate.family, window, &exp.horizons, iterated)
            } else {
                Vec::new()
            };
            Ok(CellOutput { forecasts, outlook })
        }
        family => {
            let forecasts = simple::backtest(family, target, &sched, &exp.horizons, season)?;
            let outlook = if with_outlook {
                simple::outlook(family, target, window, &exp.horizons, season)
            } else {
                Vec::new()
            };
            Ok(CellOutput { forecasts, outlook })
        }
    }
}

/// Turn an estimation problem into a diagnostic that points at the candidate's line.
pub fn problem_diagnostic(exp: &Experiment, cell: &Cell, p: &EstimationProblem) -> Diagnostic {
    let target = &exp.targets[cell.target];
    let cand = &exp.candidates[cell.candidate];
    let scheme = &exp.schemes[cell.scheme];
    let at = if p.origin >= 1 {
        format!(", origin {}", exp.period_label(target, p.origin))
    } else {
        String::new()
    };
    let hint = if cand.family.coefficients().is_some() {
        " — start the scheme later, widen the window, or use fewer lags"
    } else {
        " — start the scheme later"
    };
    Diagnostic::new(
        Some(Location {
            file: exp.source_path.clone(),
            line: Some(cand.line),
            column: None,
        }),
        format!(
            "candidate {} on target '{}' under scheme {} (horizon {}{at}): {}{hint}",
            cand.id, target.name, scheme.id, p.horizon, p.message
        ),
    )
}

/// Run cells in parallel and return their outputs in the given order.
/// Estimation problems make the experiment invalid (SPEC §4), and all of
/// them are reported together.
pub fn run(
    exp: &Experiment,
    cells: &[Cell],
    progress: &(dyn Fn() + Sync),
) -> Result<Vec<CellOutput>> {
    let results: Vec<std::result::Result<CellOutput, EstimationProblem>> = cells
        .par_iter()
        .map(|cell| {
            let r = run_cell(exp, cell);
            progress();
            r
        })
        .collect();
    let mut diags = Vec::new();
    let mut outputs = Vec::with_capacity(results.len());
    for (cell, r) in cells.iter().zip(results) {
        match r {
            Ok(o) => outputs.push(o),
            Err(p) => diags.push(problem_diagnostic(exp, cell, &p)),
        }
    }
    if !diags.is_empty() {
        return Err(Error::Invalid(diags));
    }
    Ok(outputs)
}
