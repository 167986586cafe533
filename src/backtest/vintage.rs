//! The origin loop on real-time data (docs/arithmetic.md#vintages): at
//! origin T a cell sees vintage T only, and estimates on it as the
//! ordinary loop would on that data, carrying forward only what an earlier
//! origin estimated on its own (earlier, so then known) vintage:
//! - least squares and the benchmarks estimate every origin from scratch
//!   (their incremental path folds rows into a factorisation, which a
//!   revision of an earlier row would invalidate; from scratch they give
//!   that path's bits on unrevised data);
//! - the likelihood families (`Model::WARM_STARTS`) estimate the first
//!   origin from scratch; at a later origin, when the sample the scheme
//!   sets (its window up to E, less the vintage's lag d) holds, in the
//!   target and every predictor, bit for bit the values the previous
//!   estimate was made on, that estimate is used again outright (the same
//!   input gives the same output: what the ordinary loop does between
//!   refits); otherwise the model is estimated over the sample as vintage
//!   T publishes it, warm-started from the previous estimate, as the
//!   ordinary loop does at every new estimation end, and when that fails
//!   the previous estimate is kept (a fallback, counted).
//!
//! So a vintage file in which every vintage equals the final data
//! reproduces the ordinary run bit for bit, and nothing from a later
//! vintage reaches an origin: state moves forward in time only, within
//! one call of [`run`], which the look-ahead audit never enters (it
//! re-estimates audited origins from scratch, [`on_vintage`], on the
//! changed and on the unchanged copy alike).
//!
//! A vintage whose target ends d periods before its own period (a release
//! lag) is forecast from its last value at horizons h + d, and its
//! estimation end moves d periods earlier too.

use super::single::{estimate_once, forecast_with, Estimate, Scratch, Want};
use super::{record_left_out, schedule_of, CellOutput, Estimation};
use crate::models::{self, CellModel, EstimationProblem, Model, OutlookRow, Registry};
use crate::plan::{self, Cell};
use crate::progress::Progress;
use crate::spec::{Experiment, TargetData, Vintages};
use std::any::Any;
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

/// Where one origin of a cell is estimated: its vintage (index and data),
/// the experiment as the model on it sees it, the horizons asked of it
/// (`gap` longer) and the estimation.
struct Placed<'a> {
    index: usize,
    data: &'a TargetData,
    gap: usize,
    exp: Cow<'a, Experiment>,
    asked: Vec<usize>,
    at: Estimate,
}

/// Place the origin `origin` of `cell` on the vintage it sees in
/// `target`. Err when the origin has no vintage or the vintage ends
/// before the estimation sample.
fn place<'a>(
    exp: &'a Experiment,
    target: &'a TargetData,
    cell: &Cell,
    (origin, horizons): (usize, &[usize]),
) -> std::result::Result<Placed<'a>, String> {
    let vintages = target
        .vintages
        .as_ref()
        .ok_or("the target has no vintages")?;
    let index = vintages.at_origin[origin - 1].ok_or("the origin has no vintage")?;
    let data = &vintages.data[index];
    let gap = origin.saturating_sub(data.n);
    let schedule = schedule_of(exp, cell);
    let end = schedule.estimation_end(origin).saturating_sub(gap);
    if end == 0 {
        return Err(format!(
            "vintage {} ends {gap} periods before its origin, before the estimation sample",
            vintages.labels[index]
        ));
    }
    Ok(Placed {
        index,
        data,
        gap,
        exp: shifted(exp, gap),
        asked: horizons.iter().map(|h| h + gap).collect(),
        at: Estimate {
            end,
            window: schedule.window(),
            origin: data.n,
        },
    })
}

/// Rows and parameters made on a vintage `gap` behind `origin`, labelled
/// with the origin and the horizons asked for.
fn relabel(out: &mut Scratch, origin: usize, horizons: &[usize], gap: usize) {
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
}

/// The forecasts of `cell` from `origin` at `horizons` on the vintage
/// that origin sees in `target` (the cell's target, or the audit's copy of
/// it with hidden values changed), estimated from scratch: what the
/// look-ahead audit recomputes. Rows carry the origin and the horizons
/// asked for. Err when the origin has no vintage or the estimation fails.
pub(crate) fn on_vintage<R: Registry>(
    registry: &R,
    exp: &Experiment,
    target: &TargetData,
    cell: &Cell,
    (origin, horizons): (usize, &[usize]),
    want: Want,
) -> std::result::Result<Scratch, String> {
    let p = place(exp, target, cell, (origin, horizons))?;
    let mut out = estimate_once(registry, &p.exp, p.data, cell, p.at, &p.asked, want)?;
    relabel(&mut out, origin, horizons, p.gap);
    Ok(out)
}

/// The estimate a run on vintages carries to the next origin (models that
/// warm-start only), and the sample it was estimated on: vintage `index`,
/// positions `start..=end`, `gap` periods behind its origin.
struct Carried {
    fit: Box<dyn Any>,
    index: usize,
    start: usize,
    end: usize,
    gap: usize,
}

impl Carried {
    /// Whether `p`'s sample holds, bit for bit, the values this estimate
    /// was made on: the same positions, and the same target and predictor
    /// values over them.
    fn same_sample(&self, vintages: &Vintages, p: &Placed) -> bool {
        let start = plan::window_start(p.at.end, p.at.window);
        if (self.start, self.end, self.gap) != (start, p.at.end, p.gap) {
            return false;
        }
        let (was, now) = (&vintages.data[self.index], p.data);
        let window = start - 1..self.end;
        // Bit for bit (NaN equal to NaN), compared in place.
        let same_y = match (was.y.get(window.clone()), now.y.get(window.clone())) {
            (Some(a), Some(b)) => a.iter().zip(b).all(|(x, y)| x.to_bits() == y.to_bits()),
            _ => false,
        };
        let same_column = |a: &Vec<Option<f64>>, b: &Vec<Option<f64>>| match (
            a.get(window.clone()),
            b.get(window.clone()),
        ) {
            (Some(a), Some(b)) => a
                .iter()
                .zip(b)
                .all(|(x, y)| x.map(f64::to_bits) == y.map(f64::to_bits)),
            _ => false,
        };
        same_y
            && was.predictors.len() == now.predictors.len()
            && was
                .predictors
                .iter()
                .zip(&now.predictors)
                .all(|(a, b)| same_column(a, b))
    }
}

/// How an origin's estimate came about.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Path {
    /// From scratch (the first origin; every origin of a model that does
    /// not warm-start).
    Fresh,
    /// The previous estimate, its sample unchanged.
    Reused,
    /// Re-estimated from the previous estimate.
    Warm,
    /// The warm re-estimation failed: the previous estimate kept.
    Kept,
}

/// One origin of a run on vintages, estimated as [`Path`] says.
struct Chained<'a> {
    at: Estimate,
    horizons: &'a [usize],
    want: Want,
    /// The previous origin's estimate (models that warm-start).
    previous: Option<Box<dyn Any>>,
    /// Whether its sample is this origin's, bit for bit.
    reuse: bool,
    /// The forecasts' units (the model's own: vintages refuse
    /// `units: original`).
    scale: super::levels::Scale<'a>,
}

/// An origin's outcome, the estimate to carry on (models that warm-start)
/// and how it came about.
type Step = (Scratch, Option<Box<dyn Any>>, Path);

impl models::Visitor for Chained<'_> {
    type Out = std::result::Result<Step, String>;
    fn visit<M: Model>(self, model: &M) -> Self::Out {
        let Estimate { end, window, .. } = self.at;
        let previous = match M::WARM_STARTS {
            true => self.previous.and_then(|b| b.downcast::<M::Fit>().ok()),
            false => None,
        };
        let (mut fit, path) = match previous {
            None => (Box::new(model.fit(end, window)?), Path::Fresh),
            Some(fit) if self.reuse => (fit, Path::Reused),
            Some(mut fit) => match model.update(&mut fit, end, window) {
                Ok(()) => (fit, Path::Warm),
                Err(_) => (fit, Path::Kept),
            },
        };
        let out = forecast_with(
            model,
            &mut fit,
            (self.at, &self.scale),
            self.horizons,
            self.want,
        );
        let carried: Option<Box<dyn Any>> = match M::WARM_STARTS {
            true => Some(fit),
            false => None,
        };
        Ok((out, carried, path))
    }
}

/// One origin of a run on vintages: its outcome, estimated as the module
/// comment says from what `carried` holds (taken, and replaced by what
/// the next origin may carry on). Err when the origin has no vintage, the
/// model cannot be built or a fresh estimation fails.
fn step<R: Registry>(
    registry: &R,
    exp: &Experiment,
    cell: &Cell,
    (origin, horizons): (usize, &[usize]),
    want: Want,
    carried: &mut Option<Carried>,
) -> std::result::Result<(Scratch, Path), String> {
    let target = &exp.targets[cell.target];
    let p = place(exp, target, cell, (origin, horizons))?;
    let vintages = target
        .vintages
        .as_deref()
        .ok_or("the target has no vintages")?;
    let before = carried.take();
    let reuse = before.as_ref().is_some_and(|c| c.same_sample(vintages, &p));
    let model = CellModel {
        exp: &p.exp,
        family: &exp.candidates[cell.candidate].family,
        target: p.data,
        seed: models::cell_seed(exp.seed, &cell.id),
    };
    let chained = Chained {
        at: p.at,
        horizons: &p.asked,
        want,
        previous: before.map(|c| c.fit),
        reuse,
        scale: super::levels::Scale::of(exp, p.data, cell.candidate),
    };
    let (mut out, fit, path) = registry.visit(&model, chained)??;
    // The estimate carried on is the one this origin's sample gave (made,
    // used again on the same values, or kept when the re-estimation
    // failed): the next origin uses it again when its sample holds the
    // same values, as the ordinary loop keeps its estimate, kept or not,
    // until the estimation end moves.
    *carried = fit.map(|fit| Carried {
        fit,
        index: p.index,
        start: plan::window_start(p.at.end, p.at.window),
        end: p.at.end,
        gap: p.gap,
    });
    relabel(&mut out, origin, horizons, p.gap);
    Ok((out, path))
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

/// A cell on real-time data: every origin on its vintage as the module
/// comment says, the parameters of every origin's estimate (with its
/// vintage) and the residuals of the last, then (first scheme) the outlook from the last
/// vintage. A strict model's problem makes the experiment invalid as in
/// the ordinary loop; a likelihood model whose first estimation or any
/// forecast fails fails the cell, one whose warm re-estimation fails keeps
/// its previous estimate (counted in `fallbacks`).
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
    let mut carried = None;
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
            parameters: true,
            residuals: origin == last,
        };
        progress.forecasts_done(asked.len());
        let problem = |message: String, horizon: usize| EstimationProblem {
            horizon,
            origin,
            message,
        };
        let (scratch, path) = match step(registry, exp, cell, (origin, &asked), want, &mut carried)
        {
            Ok(s) => s,
            Err(m) if strict => return Err(problem(m, 0)),
            Err(m) => {
                out.failure = Some(format!(
                    "estimation failed at origin position {origin}: {m}"
                ));
                return Ok(out);
            }
        };
        out.fallbacks += usize::from(path == Path::Kept);
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
            last_end = Some(end);
        }
        // Every origin's estimate, on its vintage (the same estimate used
        // again is listed again, with the vintage that used it).
        out.parameters.push(Estimation {
            end,
            vintage: target
                .vintages
                .as_ref()
                .and_then(|v| v.at_origin[origin - 1]),
            parameters: scratch.parameters,
        });
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
    let horizons = plan::outlook_horizons(exp);
    let scratch = estimate_once(registry, exp, target, cell, at, &horizons, want);
    let rows = scratch.as_ref().map(|s| s.rows.as_slice()).unwrap_or(&[]);
    if let Ok(s) = &scratch {
        record_left_out(left_out, s.left_out.clone(), target.n);
    }
    horizons
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
