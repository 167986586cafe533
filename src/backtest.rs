//! backtest: run every cell of the plan in parallel. A cell returns its
//! forecast rows (and, for the first scheme, the outlook rows); it never
//! writes files. Results come back in plan order whatever the thread count.
//! Combinations are formed afterwards from their members' rows (SPEC §6).

use crate::error::{Diagnostic, Error, Location, Result};
use crate::models::{
    arima, combination, linear, simple, smoothing, statespace, EstimationProblem, ForecastRow,
    OutlookRow, Schedule,
};
use crate::plan::Cell;
use crate::spec::{Experiment, Family, MultiStep, SchemeKind, SmoothingSeason, SmoothingTrend};
use rayon::prelude::*;

#[derive(Debug, Clone, Default)]
pub struct CellOutput {
    pub forecasts: Vec<ForecastRow>,
    /// Outlook rows, produced by the cell of the first scheme only.
    pub outlook: Vec<OutlookRow>,
    /// Re-estimations that failed and kept the previous estimate (likelihood families).
    pub fallbacks: usize,
    /// Why the cell failed as a whole (likelihood families, combinations of failed members).
    pub failure: Option<String>,
    /// In-sample residuals of the cell's last estimation (one-step where the
    /// family has them; the shortest horizon's regression for direct models).
    pub residuals: Vec<f64>,
    /// Wall-clock seconds the cell took (recorded only in the manifest's `run` section).
    pub seconds: f64,
    /// Whether the output came from the resume cache (recorded only under `run`).
    pub cached: bool,
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

fn smoothing_spec(
    exp: &Experiment,
    trend: SmoothingTrend,
    season: SmoothingSeason,
) -> std::result::Result<smoothing::EtsSpec, String> {
    let trend = match trend {
        SmoothingTrend::None => smoothing::TrendKind::None,
        SmoothingTrend::Additive => smoothing::TrendKind::Additive,
        SmoothingTrend::Damped => smoothing::TrendKind::Damped,
    };
    let season_kind = match season {
        SmoothingSeason::None => smoothing::SeasonKind::None,
        SmoothingSeason::Additive => smoothing::SeasonKind::Additive,
        SmoothingSeason::Multiplicative => smoothing::SeasonKind::Multiplicative,
    };
    let period = match (season, exp.season_length()) {
        (SmoothingSeason::None, m) => m.unwrap_or(1),
        (_, Some(m)) => m,
        (_, None) => {
            return Err(format!(
                "a seasonal smoothing model needs seasonal data; {} data have no season length",
                exp.frequency.name()
            ))
        }
    };
    smoothing::EtsSpec::new(trend, season_kind, period).map_err(|e| e.to_string())
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
    let invalid = |message: String| EstimationProblem {
        horizon: 0,
        origin: 0,
        message,
    };
    match &candidate.family {
        Family::Ar { .. }
        | Family::Ardl { .. }
        | Family::ArSelect { .. }
        | Family::ArdlSelect { .. } => {
            let design = linear::Design::new(exp, &candidate.family, target)
                .ok_or_else(|| invalid("not a least-squares family".into()))?;
            let iterated = exp.multi_step == MultiStep::Iterated
                && matches!(
                    candidate.family,
                    Family::Ar { .. } | Family::ArSelect { .. }
                );
            let (forecasts, residuals, carried) = linear::backtest(
                &design,
                &candidate.family,
                &sched,
                &exp.horizons,
                iterated,
                with_outlook.then_some(window),
            )?;
            let outlook = match carried {
                Some(rows) => rows,
                None if with_outlook => {
                    linear::outlook(&design, &candidate.family, window, &exp.horizons, iterated)
                }
                None => Vec::new(),
            };
            Ok(CellOutput {
                forecasts,
                outlook,
                residuals,
                ..Default::default()
            })
        }
        Family::Smoothing { trend, season } => {
            let model = statespace::Smoothing {
                spec: smoothing_spec(exp, *trend, *season).map_err(invalid)?,
            };
            Ok(likelihood_cell(
                &model,
                &target.y,
                &sched,
                exp,
                with_outlook,
                window,
            ))
        }
        Family::Combination { .. } => Ok(CellOutput::default()),
        Family::Arima { p, d, q, drift } => {
            let model = statespace::Arima {
                order: arima::ArimaOrder {
                    p: *p,
                    d: *d,
                    q: *q,
                    drift: *drift,
                },
            };
            Ok(likelihood_cell(
                &model,
                &target.y,
                &sched,
                exp,
                with_outlook,
                window,
            ))
        }
        Family::ArimaSelect {
            criterion,
            ps,
            d,
            qs,
            drift,
        } => {
            let orders = ps
                .iter()
                .flat_map(|&p| {
                    qs.iter().map(move |&q| arima::ArimaOrder {
                        p,
                        d: *d,
                        q,
                        drift: *drift,
                    })
                })
                .collect();
            let model = statespace::ArimaSelect {
                criterion: *criterion,
                orders,
            };
            Ok(likelihood_cell(
                &model,
                &target.y,
                &sched,
                exp,
                with_outlook,
                window,
            ))
        }
        family => {
            let forecasts = simple::backtest(family, target, &sched, &exp.horizons, season)?;
            let outlook = if with_outlook {
                simple::outlook(family, target, window, &exp.horizons, season)
            } else {
                Vec::new()
            };
            let last = *sched.origins(exp.horizons[0]).end();
            let end = sched.estimation_end(last);
            let start = crate::plan::sample_start(scheme, end);
            Ok(CellOutput {
                forecasts,
                outlook,
                residuals: simple::residuals(family, &target.y, start, end, season),
                ..Default::default()
            })
        }
    }
}

fn likelihood_cell<M: statespace::Likelihood>(
    model: &M,
    y: &[f64],
    sched: &Schedule,
    exp: &Experiment,
    with_outlook: bool,
    window: Option<usize>,
) -> CellOutput {
    let outcome = statespace::backtest(model, y, sched, &exp.horizons);
    let outlook = if with_outlook && outcome.failure.is_none() {
        statespace::outlook(model, y, window, &exp.horizons)
    } else {
        Vec::new()
    };
    CellOutput {
        forecasts: outcome.forecasts,
        outlook,
        fallbacks: outcome.fallbacks,
        failure: outcome.failure,
        residuals: outcome.residuals,
        cached: false,
        seconds: 0.0,
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
    let horizon = if p.horizon >= 1 {
        format!(" (horizon {}{at})", p.horizon)
    } else {
        String::new()
    };
    let hint = if cand.family.coefficients().is_some() {
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
pub fn combine(exp: &Experiment, cells: &[Cell], outputs: &mut [CellOutput]) {
    for i in 0..cells.len() {
        let cell = &cells[i];
        let Family::Combination { members, weights } = &exp.candidates[cell.candidate].family
        else {
            continue;
        };
        let member_cells: Vec<usize> = members
            .iter()
            .map(|&m| crate::score::cell_index(exp, cell.target, m, cell.scheme))
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
            combination::outlook(*weights, &looks, &rows, y, &exp.horizons)
        } else {
            Vec::new()
        };
        match result {
            Ok(forecasts) => {
                outputs[i].forecasts = forecasts;
                outputs[i].outlook = outlook;
            }
            Err(e) => outputs[i].failure = Some(e),
        }
    }
}

/// Whether a cell computes anything itself (combinations are formed from members).
pub fn is_computed(exp: &Experiment, cell: &Cell) -> bool {
    !matches!(
        exp.candidates[cell.candidate].family,
        Family::Combination { .. }
    )
}

/// Run the selected cells in parallel (reading and filling the cache when
/// given) and return their outputs in the given order. Estimation problems
/// of least-squares and benchmark families make the experiment invalid
/// (SPEC §4) and are reported together.
pub fn run_selected(
    exp: &Experiment,
    cells: &[Cell],
    selected: &[usize],
    cache: Option<&crate::cache::Cache>,
    progress: &(dyn Fn() + Sync),
) -> Result<Vec<CellOutput>> {
    let results: Vec<std::result::Result<CellOutput, EstimationProblem>> = selected
        .par_iter()
        .map(|&i| {
            let cell = &cells[i];
            let key = cache.map(|_| crate::cache::Cache::key(exp, cell));
            if let (Some(c), Some(k)) = (cache, &key) {
                if let Some(mut hit) = c.get(k) {
                    hit.cached = true;
                    progress();
                    return Ok(hit);
                }
            }
            let started = std::time::Instant::now();
            let r = run_cell(exp, cell).map(|mut o| {
                o.seconds = started.elapsed().as_secs_f64();
                o
            });
            if let (Some(c), Some(k), Ok(out)) = (cache, &key, &r) {
                c.put(k, &cell.id, out);
            }
            progress();
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

/// Run every cell and form the combinations: outputs in plan order.
pub fn run(
    exp: &Experiment,
    cells: &[Cell],
    progress: &(dyn Fn() + Sync),
) -> Result<Vec<CellOutput>> {
    let selected: Vec<usize> = (0..cells.len())
        .filter(|&i| is_computed(exp, &cells[i]))
        .collect();
    let computed = run_selected(exp, cells, &selected, None, progress)?;
    let mut outputs = vec![CellOutput::default(); cells.len()];
    for (i, o) in selected.into_iter().zip(computed) {
        outputs[i] = o;
    }
    combine(exp, cells, &mut outputs);
    Ok(outputs)
}
