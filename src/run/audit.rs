//! `outturn audit`, and `audit:` in a run: the look-ahead audit
//! (docs/commands.md#audit). For a few seeded origins of every cell, every
//! value the visibility rules hide at that origin (docs/arithmetic.md: the
//! target after T, a predictor after T − release_lag, a known-ahead
//! predictor after T + h) is replaced in the data file's raw values, before
//! any transform, by another finite value; the cell's model is estimated
//! again from scratch at that origin's estimation end on the changed data
//! and its forecasts compared bit for bit with the same estimation on the
//! unchanged data and with the run's own forecasts. A forecast that moves
//! used something it could not have seen.
//!
//! What is compared: every field of a forecast row (the forecast, its
//! variance, from which every interval bound follows, the in-sample MSE and
//! variance, and the chosen order), as f64 bits. A check passes when the
//! changed data give the run's own forecast exactly. Otherwise the
//! unchanged data are estimated from scratch too: a difference between the
//! two is a moved forecast; where the two agree but the run's own forecast
//! differs, the run reached that estimation end by another path (rows
//! folded into a factorisation, a likelihood warm-started at the previous
//! optimum) whose last bits may legitimately differ for the likelihood
//! families — counted as a path difference for them, except where the run
//! itself estimated from scratch (the cell's first estimation end, so every
//! origin of a fixed scheme; under vintages the cell's first origin); for
//! least squares and the benchmarks, and at those origins, it is a moved
//! forecast (state carried from one estimation to the next that should not
//! be there).
//!
//! Nothing passes between the run and the audit's estimations, nor from
//! one of them to another: each is made from scratch on its own copy of
//! the data (under vintages, `backtest::on_vintage`), so an estimate
//! warm-started or used again by a run on vintages never carries a changed
//! value into an unchanged estimation or back.

use crate::backtest::{self, CellOutput, Recomputed};
use crate::error::{Error, Result};
use crate::models::{combination, Families, ForecastRow, Registry};
use crate::plan::{self, Cell, Schedule};
use crate::spec::resolve::{self, RawColumn, Visible};
use crate::spec::{self, Experiment, Family, TargetData};
use rand_chacha::ChaCha20Rng;
use rand_core::{RngCore, SeedableRng};
use rayon::prelude::*;
use std::path::Path;

#[cfg(test)]
mod tests;

/// What `outturn audit` is asked.
pub struct AuditOptions {
    /// Origins per cell (else the experiment's `audit.origins`, else the default).
    pub origins: Option<usize>,
    pub jobs: Option<usize>,
}

/// A forecast that moved when hidden data changed.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Moved {
    pub target: String,
    pub candidate: String,
    pub scheme: String,
    pub horizon: usize,
    /// The origin's period label.
    pub origin: String,
    /// What moved, and from what to what.
    pub what: String,
}

/// The audit's outcome, summed over cells in plan order.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct AuditOutcome {
    /// Origins per cell asked for.
    pub origins: usize,
    /// Cells audited (failed cells have no forecasts to audit).
    pub cells: usize,
    /// Forecasts compared.
    pub checks: usize,
    pub moved: Vec<Moved>,
    /// Forecasts of the run that differ from the same estimation made from
    /// scratch on the same data, where the run took another path to it.
    pub path_differences: usize,
    /// Checks not made: the estimation from scratch failed with and
    /// without the change (the run kept an earlier estimate there).
    pub unchecked: usize,
}

impl AuditOutcome {
    pub(crate) fn add(&mut self, other: AuditOutcome) {
        self.cells += other.cells;
        self.checks += other.checks;
        self.moved.extend(other.moved);
        self.path_differences += other.path_differences;
        self.unchecked += other.unchecked;
    }

    /// The outcome as manifest.json records it.
    pub(crate) fn record(&self) -> crate::results::manifest::AuditRecord {
        crate::results::manifest::AuditRecord {
            cells: self.cells,
            checks: self.checks,
            moved: self
                .moved
                .iter()
                .map(|m| crate::results::manifest::MovedRecord {
                    candidate: m.candidate.clone(),
                    horizon: m.horizon,
                    origin: m.origin.clone(),
                    scheme: m.scheme.clone(),
                    target: m.target.clone(),
                    what: m.what.clone(),
                })
                .collect(),
            origins: self.origins,
            path_differences: self.path_differences,
            unchecked: self.unchecked,
        }
    }
}

/// Run the experiment in memory and audit it; writes nothing.
pub fn audit(path: &Path, opts: &AuditOptions) -> Result<AuditOutcome> {
    let exp = spec::load(path)?;
    plan::check_size(&exp)?;
    let origins = opts
        .origins
        .or(exp.audit)
        .unwrap_or(spec::DEFAULT_AUDIT_ORIGINS);
    if origins == 0 || origins > spec::MAX_AUDIT_ORIGINS {
        return Err(Error::invalid(
            None,
            format!(
                "--origins {origins}: audit 1 to {} origins per cell",
                spec::MAX_AUDIT_ORIGINS
            ),
        ));
    }
    let cells = plan::cells(&exp);
    let (pool, _) = super::thread_pool(opts.jobs)?;
    pool.install(|| {
        let selected: Vec<usize> = (0..cells.len())
            .filter(|&i| backtest::is_computed(&exp, &cells[i]))
            .collect();
        let computed = backtest::run_selected(&exp, &cells, &selected, None, &super::Silent)?;
        let mut outputs = vec![CellOutput::default(); cells.len()];
        for (i, o) in selected.into_iter().zip(computed) {
            outputs[i] = o;
        }
        backtest::combine(&exp, &cells, &mut outputs, &super::Silent);
        Ok(audit_outputs(&Families, &exp, &cells, &outputs, origins))
    })
}

/// Audit every cell of `cells` (with their outputs, combinations formed)
/// at `origins` seeded origins each, in parallel; the outcome is in plan
/// order whatever the thread count.
pub(crate) fn audit_outputs<R: Registry>(
    registry: &R,
    exp: &Experiment,
    cells: &[Cell],
    outputs: &[CellOutput],
    origins: usize,
) -> AuditOutcome {
    let per_cell: Vec<AuditOutcome> = (0..cells.len())
        .into_par_iter()
        .map(|i| {
            let audit = CellAudit {
                exp,
                cells,
                outputs,
                index: i,
            };
            audit.run(registry, origins)
        })
        .collect();
    let mut total = AuditOutcome {
        origins,
        ..AuditOutcome::default()
    };
    for c in per_cell {
        total.add(c);
    }
    total
}

/// A portable seeded stream for one cell (and one origin of it): from the
/// experiment's seed and the cell id, so it depends neither on the thread
/// count nor on the order cells run in.
fn stream(seed: u64, cell_id: &str, origin: Option<usize>) -> ChaCha20Rng {
    let key = match origin {
        Some(o) => format!("audit/{seed}/{cell_id}/{o}"),
        None => format!("audit/{seed}/{cell_id}"),
    };
    let hex = crate::digest::sha256_hex(key.as_bytes());
    ChaCha20Rng::seed_from_u64(u64::from_str_radix(&hex[..16], 16).unwrap_or(0))
}

/// A uniform draw in [0, 1).
fn uniform(rng: &mut ChaCha20Rng) -> f64 {
    (rng.next_u64() >> 11) as f64 / (1u64 << 53) as f64
}

/// The origins audited in a cell: all of them when there are at most
/// `k`; else the last (where an incremental estimate has travelled
/// farthest), the first when k ≥ 2 (the run's estimation from scratch),
/// and k − 2 more drawn without replacement from those between.
fn chosen_origins(all: &[usize], k: usize, rng: &mut ChaCha20Rng) -> Vec<usize> {
    if all.len() <= k {
        return all.to_vec();
    }
    let mut chosen = vec![all[all.len() - 1]];
    if k >= 2 {
        chosen.push(all[0]);
        let mut inner: Vec<usize> = all[1..all.len() - 1].to_vec();
        for j in 0..k - 2 {
            let last = inner.len() - 1;
            let pick = j + (uniform(rng) * (inner.len() - j) as f64) as usize;
            inner.swap(j, pick.min(last));
            chosen.push(inner[j]);
        }
    }
    chosen.sort_unstable();
    chosen
}

/// Whether a candidate reads a known-ahead predictor, whose visible rows
/// depend on the horizon (one change per horizon then).
fn reads_known_ahead(exp: &Experiment, family: &Family) -> bool {
    let used: &[usize] = match family {
        Family::Ardl { predictors, .. } | Family::ArdlSelect { predictors, .. } => predictors,
        Family::Arima { regressors, .. } | Family::ArimaSelect { regressors, .. } => regressors,
        _ => &[],
    };
    used.iter()
        .any(|&i| exp.predictors.get(i).is_some_and(|p| p.known_ahead))
}

/// What is visible at origin T for horizon h (docs/arithmetic.md).
fn visible_at(exp: &Experiment, origin: usize, horizon: usize) -> Visible {
    let t = origin as i64;
    Visible {
        target: t,
        predictors: exp
            .predictors
            .iter()
            .map(|p| {
                if p.known_ahead {
                    t + horizon as i64
                } else {
                    t - p.release_lag as i64
                }
            })
            .collect(),
    }
}

/// The mean absolute value of a column's values (1 when it has none but
/// zeros): the scale of a value written where a cell was empty or 0.
fn scale_of(values: &[Option<f64>]) -> f64 {
    let (sum, count) = values
        .iter()
        .flatten()
        .filter(|v| v.is_finite())
        .fold((0.0, 0usize), |(s, c), v| (s + v.abs(), c + 1));
    if count == 0 || sum == 0.0 {
        1.0
    } else {
        sum / count as f64
    }
}

/// The cell's target with every hidden raw value replaced: a value times a
/// seeded factor in [1.5, 3) (the sign kept, so logs and ratios stay
/// defined), an empty cell or a 0 by the column's scale times such a factor.
fn changed(
    exp: &Experiment,
    target: &TargetData,
    visible: &Visible,
    rng: &mut ChaCha20Rng,
) -> std::result::Result<TargetData, String> {
    let scales: Vec<f64> = std::iter::once(scale_of(&target.source.target))
        .chain(target.source.predictors.iter().map(|p| scale_of(p)))
        .collect();
    let mut replace = |column: RawColumn, _row: usize, value: Option<f64>| {
        let factor = 1.5 + 1.5 * uniform(rng);
        match (value, column) {
            (Some(v), _) if v != 0.0 => v * factor,
            (_, RawColumn::Target) => scales[0] * factor,
            (_, RawColumn::Predictor(i)) => scales[i + 1] * factor,
        }
    };
    resolve::remade(
        target,
        exp.transform,
        &exp.predictors,
        exp.season_length(),
        visible,
        &mut replace,
    )
}

/// Under vintages (docs/arithmetic.md#vintages), the cell's target with
/// every value hidden at `origin` changed: in the vintage labelled with the
/// origin's period what the rules above hide (after its own last value;
/// `horizon` as the model on that vintage counts it), every value of every
/// later vintage, the last vintage's data the target itself holds, and
/// the outturns. Which vintages are later follows from their labels, not
/// from the vintage the run picks, so a run that read a later one is
/// caught. Earlier vintages stay as they are.
fn changed_vintages(
    exp: &Experiment,
    target: &TargetData,
    (origin, horizon): (usize, usize),
    rng: &mut ChaCha20Rng,
) -> std::result::Result<TargetData, String> {
    let Some(v) = &target.vintages else {
        return changed(exp, target, &visible_at(exp, origin, horizon), rng);
    };
    let period = target.ordinals[origin - 1];
    let nothing = Visible {
        target: i64::MIN / 2,
        predictors: vec![i64::MIN / 2; exp.predictors.len()],
    };
    let mut changed_v = (**v).clone();
    for (j, data) in changed_v.data.iter_mut().enumerate() {
        let ordinal = v.ordinals[j];
        if ordinal == period {
            let gap = origin.saturating_sub(data.n);
            *data = changed(exp, data, &visible_at(exp, data.n, horizon + gap), rng)?;
        } else if ordinal > period {
            *data = changed(exp, data, &nothing, rng)?;
        }
    }
    for a in changed_v.actual.iter_mut() {
        *a *= 1.5 + 1.5 * uniform(rng);
    }
    let mut out = changed(exp, target, &nothing, rng)?;
    out.vintages = Some(std::sync::Arc::new(changed_v));
    Ok(out)
}

/// The forecasts of `cell` from `origin` at `horizons`, estimated from
/// scratch on `target` as the run estimates them: on the origin's vintage
/// under vintages, else at the origin's estimation end.
fn recompute<R: Registry>(
    registry: &R,
    exp: &Experiment,
    target: &TargetData,
    cell: &Cell,
    origin: usize,
    horizons: &[usize],
) -> std::result::Result<Vec<Recomputed>, String> {
    if target.vintages.is_some() {
        let want = backtest::Want::default();
        return backtest::on_vintage(registry, exp, target, cell, (origin, horizons), want)
            .map(|s| s.rows);
    }
    backtest::from_scratch(registry, exp, target, cell, origin, horizons)
}

/// Whether two forecast rows agree in every bit.
fn same_bits(a: &ForecastRow, b: &ForecastRow) -> bool {
    let bits = |v: Option<f64>| v.map(f64::to_bits);
    a.horizon == b.horizon
        && a.origin == b.origin
        && a.forecast.to_bits() == b.forecast.to_bits()
        && bits(a.variance) == bits(b.variance)
        && bits(a.is_mse) == bits(b.is_mse)
        && bits(a.is_var) == bits(b.is_var)
        && a.order == b.order
}

/// The first field in which two rows differ, as "field a → b".
fn difference(a: &ForecastRow, b: &ForecastRow) -> String {
    let text = |v: Option<f64>| v.map_or("empty".to_string(), |v| v.to_string());
    let fields = [
        ("forecast", Some(a.forecast), Some(b.forecast)),
        ("variance", a.variance, b.variance),
        ("is_mse", a.is_mse, b.is_mse),
        ("is_var", a.is_var, b.is_var),
    ];
    for (name, x, y) in fields {
        if x.map(f64::to_bits) != y.map(f64::to_bits) {
            return format!("{name} {} → {}", text(x), text(y));
        }
    }
    let order = |o: Option<crate::models::Order>| o.map_or("none".to_string(), |o| o.to_string());
    format!("order {} → {}", order(a.order), order(b.order))
}

/// One cell's audit.
struct CellAudit<'a> {
    exp: &'a Experiment,
    cells: &'a [Cell],
    outputs: &'a [CellOutput],
    index: usize,
}

impl CellAudit<'_> {
    fn cell(&self) -> &Cell {
        &self.cells[self.index]
    }

    fn schedule(&self) -> Schedule<'_> {
        backtest::schedule_of(self.exp, self.cell())
    }

    fn moved(&self, horizon: usize, origin: usize, what: String) -> Moved {
        let cell = self.cell();
        let target = &self.exp.targets[cell.target];
        Moved {
            target: target.name.clone(),
            candidate: self.exp.candidates[cell.candidate].id.clone(),
            scheme: self.exp.schemes[cell.scheme].id.clone(),
            horizon,
            origin: self.exp.period_label(target, origin),
            what,
        }
    }

    /// The run's own forecast at (horizon, origin).
    fn own(&self, horizon: usize, origin: usize) -> Option<&ForecastRow> {
        self.outputs[self.index]
            .forecasts
            .iter()
            .find(|r| r.horizon == horizon && r.origin == origin)
    }

    fn run<R: Registry>(&self, registry: &R, k: usize) -> AuditOutcome {
        let mut out = AuditOutcome::default();
        if self.outputs[self.index].failure.is_some() {
            return out;
        }
        out.cells = 1;
        let schedule = self.schedule();
        let exp = self.exp;
        let all: Vec<usize> = schedule.origins(exp.horizons[0]).collect();
        let mut rng = stream(exp.seed, &self.cell().id, None);
        for origin in chosen_origins(&all, k, &mut rng) {
            let horizons: Vec<usize> = exp
                .horizons
                .iter()
                .copied()
                .filter(|&h| schedule.origins(h).contains(&origin))
                .collect();
            let mut rng = stream(exp.seed, &self.cell().id, Some(origin));
            match &exp.candidates[self.cell().candidate].family {
                Family::Combination { members, weights } => {
                    self.combination(members, *weights, origin, &horizons, &mut rng, &mut out)
                }
                family => {
                    let groups: Vec<Vec<usize>> = if reads_known_ahead(exp, family) {
                        horizons.iter().map(|&h| vec![h]).collect()
                    } else {
                        vec![horizons.clone()]
                    };
                    let mut unchanged = None;
                    for group in groups {
                        self.model(
                            registry,
                            (origin, &horizons),
                            &group,
                            &mut unchanged,
                            &mut rng,
                            &mut out,
                        );
                    }
                }
            }
        }
        out
    }

    /// Check a model's forecasts from `origin` at `horizons`, the data
    /// changed as the smallest of them sees them (the others see more of a
    /// known-ahead predictor only, which the model then does not read).
    /// `unchanged` holds the estimation from scratch on the unchanged data
    /// at every horizon of the origin (`at_origin`), made once per origin
    /// when first needed.
    #[allow(clippy::too_many_arguments)]
    fn model<R: Registry>(
        &self,
        registry: &R,
        (origin, at_origin): (usize, &[usize]),
        horizons: &[usize],
        unchanged: &mut Option<std::result::Result<Vec<Recomputed>, String>>,
        rng: &mut ChaCha20Rng,
        out: &mut AuditOutcome,
    ) {
        let exp = self.exp;
        let cell = self.cell();
        let target = &exp.targets[cell.target];
        let changed_rows = changed_vintages(exp, target, (origin, horizons[0]), rng)
            .and_then(|t| recompute(registry, exp, &t, cell, origin, horizons));
        let schedule = self.schedule();
        // Where the run's own path must give the same bits as an estimation
        // from scratch: where it estimated from scratch itself (the first
        // estimation end; under vintages the first origin, after which a
        // likelihood model is warm-started or its estimate used again), and
        // for least squares and the benchmarks, whose rows folded in or
        // refactored give the bits a fresh fit gives (under vintages they
        // estimate every origin from scratch); only the likelihood
        // families' warm starts may stop elsewhere.
        let from_scratch = match target.vintages {
            Some(_) => origin == schedule.first_origin,
            None => {
                schedule.estimation_end(origin) == schedule.estimation_end(schedule.first_origin)
            }
        };
        let exact_path =
            !crate::models::is_likelihood(&exp.candidates[cell.candidate].family) || from_scratch;
        for (j, &h) in horizons.iter().enumerate() {
            let Some(own) = self.own(h, origin) else {
                continue;
            };
            out.checks += 1;
            let after = changed_rows.as_ref().map(|rows| &rows[j]);
            if let Ok(Ok(row)) = after {
                if same_bits(row, own) {
                    continue;
                }
            }
            let before = unchanged
                .get_or_insert_with(|| recompute(registry, exp, target, cell, origin, at_origin))
                .as_ref()
                .ok()
                .and_then(|rows| at_origin.iter().position(|&x| x == h).map(|i| &rows[i]));
            match (before, after) {
                (Some(Ok(b)), Ok(Ok(a))) if same_bits(a, b) => {
                    if exact_path {
                        out.moved.push(self.moved(
                            h,
                            origin,
                            format!(
                                "the run's own forecast differs from the same estimation made again: {}",
                                difference(own, b)
                            ),
                        ));
                    } else {
                        out.path_differences += 1;
                    }
                }
                (Some(Ok(b)), Ok(Ok(a))) => out.moved.push(self.moved(h, origin, difference(b, a))),
                (Some(Ok(_)), Ok(Err(e)) | Err(e)) => out.moved.push(self.moved(
                    h,
                    origin,
                    format!("with hidden data changed the forecast fails: {e}"),
                )),
                (Some(Err(_)) | None, Ok(Ok(_))) => out.moved.push(self.moved(
                    h,
                    origin,
                    "with hidden data changed a forecast is made where none is without".into(),
                )),
                (Some(Err(_)) | None, _) => out.unchecked += 1,
            }
        }
    }

    /// Check a combination from `origin`: its members' rows as the run made
    /// them, those from later origins changed, and the target after the
    /// origin changed; the combination formed again and compared with the
    /// run's (the same computation, so bit for bit).
    fn combination(
        &self,
        members: &[usize],
        weights: crate::spec::CombinationWeights,
        origin: usize,
        horizons: &[usize],
        rng: &mut ChaCha20Rng,
        out: &mut AuditOutcome,
    ) {
        let exp = self.exp;
        let cell = self.cell();
        let target = &exp.targets[cell.target];
        let visible = Visible {
            target: origin as i64,
            predictors: vec![i64::MAX; exp.predictors.len()],
        };
        let member_rows: Vec<Vec<ForecastRow>> = members
            .iter()
            .map(|&m| {
                let j = plan::cell_index(exp, cell.target, m, cell.scheme);
                self.outputs[j]
                    .forecasts
                    .iter()
                    .map(|r| {
                        let mut r = *r;
                        if r.origin > origin {
                            r.forecast *= 1.5 + 1.5 * uniform(rng);
                            r.variance = r.variance.map(|v| v * (1.5 + 1.5 * uniform(rng)));
                        }
                        r
                    })
                    .collect()
            })
            .collect();
        let refs: Vec<&[ForecastRow]> = member_rows.iter().map(Vec::as_slice).collect();
        let formed = changed(exp, target, &visible, rng)
            .and_then(|t| combination::backtest(weights, &refs, &t.y, &exp.horizons));
        for &h in horizons {
            let Some(own) = self.own(h, origin) else {
                continue;
            };
            out.checks += 1;
            let again = formed
                .as_ref()
                .map(|rows| rows.iter().find(|r| r.horizon == h && r.origin == origin));
            match again {
                Ok(Some(row)) if same_bits(row, own) => {}
                Ok(Some(row)) => out.moved.push(self.moved(h, origin, difference(own, row))),
                Ok(None) => out.moved.push(self.moved(
                    h,
                    origin,
                    "with hidden data changed the combination has no forecast".into(),
                )),
                Err(e) => out.moved.push(self.moved(
                    h,
                    origin,
                    format!("with hidden data changed the combination fails: {e}"),
                )),
            }
        }
    }
}
