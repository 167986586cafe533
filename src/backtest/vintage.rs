//! The origin loop on real-time data (docs/arithmetic.md#vintages): at
//! origin T a cell sees vintage T only. Since the past changes from one
//! vintage to the next, nothing estimated on one vintage is carried to
//! the next (no rows folded in, no warm start): every origin estimates
//! from scratch on its vintage (`estimate_once`, the audit's estimation).
//! The scheme fixes the estimation sample (fixed: up to T0; `refit_every`:
//! up to the last refit date), not the estimate: between refits the model
//! is estimated again over the same sample as the new vintage publishes
//! it, so no forecast mixes two vintages.
//!
//! A vintage whose target ends d periods before its own period (a release
//! lag) is forecast from its last value at horizons h + d, and its
//! estimation end moves d periods earlier too.

use super::single::{estimate_once, Estimate, Scratch, Want};
use super::{record_left_out, schedule_of, CellOutput, Estimation};
use crate::models::{EstimationProblem, OutlookRow, Registry};
use crate::plan::{self, Cell};
use crate::progress::Progress;
use crate::spec::{Experiment, TargetData};
use std::borrow::Cow;

/// The experiment as a model on a vintage `gap` periods behind its origin
/// needs it: every horizon `gap` longer (a direct model estimates one
/// regression per horizon). Without targets: a model reads only its own.
fn shifted(exp: &Experiment, gap: usize) -> Cow<'_, Experiment> {
    if gap == 0 {
        return Cow::Borrowed(exp);
    }
    let mut declared = exp.declared.clone();
    declared.horizons = declared.horizons.iter().map(|h| h + gap).collect();
    Cow::Owned(Experiment {
        declared,
        data_path: exp.data_path.clone(),
        data_bytes_sha256: exp.data_bytes_sha256.clone(),
        label_style: exp.label_style,
        targets: Vec::new(),
    })
}

/// The forecasts of `cell` from `origin` at `horizons` on the vintage
/// that origin sees in `target` (the cell's target, or the audit's copy of
/// it with hidden values changed), estimated from scratch. Rows carry the
/// origin and the horizons asked for. Err when the origin has no vintage
/// or the estimation fails.
pub(crate) fn on_vintage<R: Registry>(
    registry: &R,
    exp: &Experiment,
    target: &TargetData,
    cell: &Cell,
    (origin, horizons): (usize, &[usize]),
    want: Want,
) -> std::result::Result<Scratch, String> {
    let vintages = target
        .vintages
        .as_ref()
        .ok_or("the target has no vintages")?;
    let i = vintages.at_origin[origin - 1].ok_or("the origin has no vintage")?;
    let data = &vintages.data[i];
    let gap = origin.saturating_sub(data.n);
    let schedule = schedule_of(exp, cell);
    let end = schedule.estimation_end(origin).saturating_sub(gap);
    if end == 0 {
        return Err(format!(
            "vintage {} ends {gap} periods before its origin, before the estimation sample",
            vintages.labels[i]
        ));
    }
    let exp_here = shifted(exp, gap);
    let asked: Vec<usize> = horizons.iter().map(|h| h + gap).collect();
    let at = Estimate {
        end,
        window: schedule.window(),
        origin: data.n,
    };
    let mut out = estimate_once(registry, &exp_here, data, cell, at, &asked, want)?;
    for (row, &h) in out.rows.iter_mut().zip(horizons) {
        if let Ok(r) = row {
            r.origin = origin;
            r.horizon = h;
        }
    }
    // A direct model's regression for horizon h + gap is the one for h here.
    for p in &mut out.parameters {
        p.horizon = p.horizon.map(|h| h.saturating_sub(gap).max(1));
    }
    Ok(out)
}

/// The estimation end `on_vintage` uses at `origin`.
fn end_at(exp: &Experiment, cell: &Cell, origin: usize) -> usize {
    let target = &exp.targets[cell.target];
    let gap = target.vintages.as_ref().map_or(0, |v| {
        v.at_origin[origin - 1].map_or(0, |i| origin.saturating_sub(v.data[i].n))
    });
    schedule_of(exp, cell)
        .estimation_end(origin)
        .saturating_sub(gap)
}

/// A cell on real-time data: every origin from scratch on its vintage,
/// the parameters of each new estimation end and the residuals of the
/// last, then (first scheme) the outlook from the last vintage. A strict
/// model's problem makes the experiment invalid as in the ordinary loop; a
/// likelihood model that fails at any origin fails the cell (there is no
/// earlier estimate on this vintage to keep).
pub(crate) fn run<R: Registry>(
    registry: &R,
    exp: &Experiment,
    cell: &Cell,
    strict: bool,
    progress: &dyn Progress,
) -> std::result::Result<CellOutput, EstimationProblem> {
    let target = &exp.targets[cell.target];
    let schedule = schedule_of(exp, cell);
    let horizons = &exp.horizons;
    let mut out = CellOutput::default();
    let mut per_h: Vec<Vec<crate::models::ForecastRow>> = vec![Vec::new(); horizons.len()];
    let last = *schedule.origins(horizons[0]).end();
    let mut last_end = None;
    for origin in schedule.first_origin..=last {
        let wanted: Vec<usize> = (0..horizons.len())
            .filter(|&i| schedule.origins(horizons[i]).contains(&origin))
            .collect();
        if wanted.is_empty() {
            continue;
        }
        let asked: Vec<usize> = wanted.iter().map(|&i| horizons[i]).collect();
        let end = end_at(exp, cell, origin);
        let new_end = last_end != Some(end);
        let want = Want {
            parameters: new_end,
            residuals: origin == last,
        };
        progress.forecasts_done(asked.len());
        let problem = |message: String, horizon: usize| EstimationProblem {
            horizon,
            origin,
            message,
        };
        let scratch = match on_vintage(registry, exp, target, cell, (origin, &asked), want) {
            Ok(s) => s,
            Err(m) if strict => return Err(problem(m, 0)),
            Err(m) => {
                out.failure = Some(format!(
                    "estimation failed at origin position {origin}: {m}"
                ));
                return Ok(out);
            }
        };
        for (&i, row) in wanted.iter().zip(scratch.rows) {
            match row {
                Ok(r) => per_h[i].push(r),
                Err(m) if strict => return Err(problem(m, horizons[i])),
                Err(m) => {
                    out.failure = Some(format!(
                        "forecasting failed at origin position {origin}: {m}"
                    ));
                    return Ok(out);
                }
            }
        }
        if new_end {
            record_left_out(&mut out.left_out, scratch.left_out, end);
            out.parameters.push(Estimation {
                end,
                parameters: scratch.parameters,
            });
            last_end = Some(end);
        }
        if origin == last {
            out.residuals = scratch.residuals;
        }
    }
    out.forecasts = per_h.into_iter().flatten().collect();
    if cell.scheme == 0 {
        out.outlook = outlook(registry, exp, cell, &mut out.left_out);
    }
    Ok(out)
}

/// The outlook from the last vintage's last value N, estimated with E = N
/// (the outlook's window), always from scratch; rows without a forecast
/// where the model cannot give one.
fn outlook<R: Registry>(
    registry: &R,
    exp: &Experiment,
    cell: &Cell,
    left_out: &mut Vec<super::LeftOut>,
) -> Vec<OutlookRow> {
    let target = &exp.targets[cell.target];
    let at = Estimate {
        end: target.n,
        window: plan::outlook_window(exp),
        origin: target.n,
    };
    let want = Want {
        parameters: true,
        residuals: false,
    };
    let scratch = estimate_once(registry, exp, target, cell, at, &exp.horizons, want);
    let rows = scratch.as_ref().map(|s| s.rows.as_slice()).unwrap_or(&[]);
    if let Ok(s) = &scratch {
        record_left_out(left_out, s.left_out.clone(), target.n);
    }
    exp.horizons
        .iter()
        .enumerate()
        .map(|(j, &h)| {
            let step = rows.get(j).and_then(|r| r.as_ref().ok());
            OutlookRow {
                horizon: h,
                forecast: step.map(|s| s.forecast),
                variance: step.and_then(|s| s.variance),
            }
        })
        .collect()
}
