//! The report-data value both templates render, assembled from the
//! targets' parts and what concerns the whole run. A target's part (its
//! entry in the list of targets, its detailed sections and its verdict
//! rows) needs only that target's rows: a run builds it on the worker that
//! scored the target, `render` builds every part from the whole folder.

use super::data::data_for;
use super::format::{best_words, metric_words, slug, transform_words};
use super::outlook::outlook_for;
use super::over_time::over_time_for;
use super::overfitting::overfitting_for;
use super::parameters::parameters_for;
use super::rankings::rankings_for;
use super::record::{self, record};
use super::selection::{self, Chooser, Key, Shown};
use super::significance::tests_for;
use super::verdict::verdict_for;
use super::view::{Folder, Index, Record, Settings};
use super::{CAUTION, CHART_TARGETS};
use crate::results::diagnostics::{self, Row as DiagnosticRow};
use crate::results::{Grid, Rows};
use serde_json::{json, Value};
use std::collections::BTreeMap;

/// One target's part of the report data: its entry in the list of targets,
/// its detailed sections when it may be shown in detail (built with charts
/// when it may be charted, and then also without, for a target that keeps
/// its detail but loses its charts to later targets: see
/// [`super::selection`]) and its verdict rows.
pub struct TargetPart {
    /// Its entry; for a target without detail made again when the list is
    /// read (see [`TargetList`]), so a part of such a target holds nothing
    /// that grows with the grid.
    entry: Value,
    shown: Shown,
    full: Option<minijinja::Value>,
    plain: Option<minijinja::Value>,
    rows: Vec<minijinja::Value>,
    statuses: Tally,
}

/// The verdict's settings of a target counted by status, in the order of
/// the legend, and those of no status last.
type Tally = [usize; super::claims::LEGEND.len() + 1];

fn tally(statuses: impl Iterator<Item = String>) -> Tally {
    let mut tally = [0; super::claims::LEGEND.len() + 1];
    for status in statuses {
        let at = super::claims::LEGEND
            .iter()
            .position(|s| s.key == status)
            .unwrap_or(super::claims::LEGEND.len());
        tally[at] += 1;
    }
    tally
}

/// A target's entry in the list of targets.
fn entry_of(g: &Grid, t: usize, shown: Shown) -> Value {
    let many = g.targets.len() > 3;
    json!({
        "name": g.targets[t],
        "anchor": format!("t-{}", slug(&g.targets[t])),
        "index": t + 1,
        "charts": shown.charts,
        "detail": shown.detail,
        "open": !many || t == 0,
        "panels_open": g.schemes.len() * g.horizons.len() <= 8 && !many,
    })
}

/// The list of targets as the templates read it: the entries of the
/// targets in detail as built, the others made when read.
#[derive(Debug)]
struct TargetList {
    grid: Grid,
    held: Vec<Option<minijinja::Value>>,
    shown: Vec<Shown>,
}

impl minijinja::value::Object for TargetList {
    fn repr(self: &std::sync::Arc<Self>) -> minijinja::value::ObjectRepr {
        minijinja::value::ObjectRepr::Seq
    }

    fn get_value(self: &std::sync::Arc<Self>, key: &minijinja::Value) -> Option<minijinja::Value> {
        let t = key.as_usize()?;
        match self.held.get(t)? {
            Some(entry) => Some(entry.clone()),
            None => Some(minijinja::Value::from_serialize(entry_of(
                &self.grid,
                t,
                self.shown[t],
            ))),
        }
    }

    fn enumerate(self: &std::sync::Arc<Self>) -> minijinja::value::Enumerator {
        minijinja::value::Enumerator::Seq(self.held.len())
    }
}

impl TargetPart {
    /// The part as the final choice shows it.
    pub fn settle(mut self, shown: Shown) -> TargetPart {
        self.shown = shown;
        self = self.settle_detail();
        if shown.detail {
            self.entry["detail"] = json!(shown.detail);
            self.entry["charts"] = json!(shown.charts);
        }
        self.full = match (shown.detail, shown.charts) {
            (false, _) => None,
            (true, true) => self.full,
            (true, false) => self.plain.take().or(self.full),
        };
        self.plain = None;
        self
    }

    /// A target without detail keeps its verdict's readings (the overall
    /// count); the verdict itself is left to the tables, so that the report
    /// and its memory do not grow with every target beyond the detailed ones.
    fn settle_detail(mut self) -> TargetPart {
        if !self.shown.detail {
            self.entry = Value::Null;
            self.rows.clear();
        }
        self
    }

    /// A placeholder while a part is being replaced.
    pub fn empty() -> TargetPart {
        TargetPart {
            entry: Value::Null,
            shown: Shown::default(),
            full: None,
            plain: None,
            rows: Vec::new(),
            statuses: Tally::default(),
        }
    }

    /// Whether it holds what showing it as `shown` needs.
    pub fn can_show(&self, shown: Shown) -> bool {
        !shown.detail || self.full.is_some()
    }
}

impl Folder {
    /// The report part of target `t`. The folder must hold every row of
    /// that target (other targets' rows may be absent), and the predictors'
    /// unit-root rows.
    pub fn target_part(&self, t: usize, draw: bool, shown: Shown) -> TargetPart {
        target_part(&Index::new(self), t, draw, shown, false)
    }
}

/// What every target's report part needs besides the target's own rows.
pub struct PartContext {
    grid: Grid,
    settings: Settings,
    /// The predictors' unit-root rows, which only the first target's slice
    /// of diagnostics.csv holds: made when a part first needs them (by a
    /// worker, not before the workers start).
    predictor_rows: std::sync::OnceLock<Result<Vec<DiagnosticRow>, String>>,
    predictor_diagnostics: Box<dyn Fn() -> Vec<u8> + Send + Sync>,
    /// The targets chosen so far, in target order (see [`selection`]).
    chooser: std::sync::Mutex<Chooser>,
}

impl PartContext {
    /// `predictor_diagnostics` makes the predictors' part of diagnostics.csv
    /// (with its header), as the first target's slice holds it.
    pub fn new(
        grid: Grid,
        declared: &crate::spec::Declaration,
        predictor_diagnostics: Box<dyn Fn() -> Vec<u8> + Send + Sync>,
    ) -> PartContext {
        PartContext {
            grid,
            chooser: std::sync::Mutex::new(Chooser::new(declared.report_targets)),
            settings: Settings::of(declared),
            predictor_rows: std::sync::OnceLock::new(),
            predictor_diagnostics,
        }
    }

    fn predictor_rows(&self) -> Result<&[DiagnosticRow], String> {
        self.predictor_rows
            .get_or_init(|| {
                diagnostics::read(&(self.predictor_diagnostics)()).map_err(|e| e.to_string())
            })
            .as_deref()
            .map_err(Clone::clone)
    }

    pub fn grid(&self) -> &Grid {
        &self.grid
    }

    fn chooser(&self) -> std::sync::MutexGuard<'_, Chooser> {
        self.chooser.lock().unwrap_or_else(|e| e.into_inner())
    }

    /// The key of a target from its scores.csv slice.
    pub fn key(&self, t: usize, scores: &[u8]) -> Result<Key, String> {
        let s =
            crate::results::scores::read(scores, &self.grid.lookup()).map_err(|e| e.to_string())?;
        Ok(selection::key(&self.grid, &s.metric_names, &s.rows, t))
    }

    /// How a target might still be shown, given the targets admitted so far.
    pub fn admits(&self, key: &Key) -> Shown {
        self.chooser().admits(key)
    }

    /// The final choice for target `t` (after every target is admitted).
    pub fn shown(&self, t: usize) -> Shown {
        self.chooser().shown(t)
    }

    /// Admit the next target in target order.
    pub fn admit(&self, key: Key) -> selection::Admitted {
        self.chooser().admit(key)
    }

    /// The report part of target `t` from that target's rows, which are
    /// handed back for the whole folder.
    pub fn part(
        &self,
        t: usize,
        mut rows: Rows,
        draw: bool,
        shown: Shown,
    ) -> Result<(TargetPart, Rows), String> {
        // The folder as the report sees it for target t: its rows, and the
        // predictors' rows ahead of them as in the whole table.
        let predictors = if t == 0 {
            &[][..]
        } else {
            self.predictor_rows()?
        };
        let borrowed = predictors.len();
        if borrowed > 0 {
            let own = std::mem::take(&mut rows.diagnostics);
            rows.diagnostics = predictors.to_vec();
            rows.diagnostics.extend(own);
        }
        let folder = Folder::new(
            self.grid.clone(),
            rows,
            self.settings.clone(),
            Record::default(),
        );
        let part = folder.target_part(t, draw, shown);
        let mut rows = folder.rows;
        rows.diagnostics.drain(..borrowed);
        Ok((part, rows))
    }
}

/// `fin`: the choice of detailed targets is final (no chart-less copy is
/// kept for a target that may lose its charts later).
fn target_part(ix: &Index, t: usize, draw: bool, shown: Shown, fin: bool) -> TargetPart {
    let f = ix.f;
    let g = &f.grid;
    let target = &g.targets[t];
    let charts = draw && shown.charts;
    let verdict = verdict_for(ix, t);
    let rows: Vec<Value> = verdict["rows"]
        .as_array()
        .into_iter()
        .flatten()
        .map(|v| {
            let mut v = v.clone();
            v["target"] = json!(target);
            v
        })
        .collect();
    let series = f
        .rows
        .series
        .iter()
        .find(|s| s.role == "target" && s.name == *target);
    let mut entry = entry_of(g, t, Shown { charts, ..shown });
    entry["verdict"] = verdict;
    // Every target gets its verdict; the sections after it go into detail
    // for the targets chosen (the tables hold the rest).
    let full_with = |charts: bool| {
        let mut full = entry.clone();
        full["charts"] = json!(charts);
        full["outlook"] = outlook_for(ix, t, series, charts);
        full["rankings"] = rankings_for(ix, t);
        full["overfitting"] = overfitting_for(ix, t, charts);
        full["parameters"] = parameters_for(ix, t, charts);
        full["tests"] = tests_for(ix, t, charts);
        full["over_time"] = over_time_for(ix, t, series, charts);
        full["data"] = data_for(ix, t, series, charts);
        minijinja::Value::from_serialize(&full)
    };
    let full = shown.detail.then(|| full_with(charts));
    let plain = (shown.detail && charts && !fin).then(|| full_with(false));
    let statuses = tally(
        rows.iter()
            .map(|v| v["status"].as_str().unwrap_or("").to_string()),
    );
    let rows = rows.iter().map(minijinja::Value::from_serialize).collect();
    TargetPart {
        entry,
        shown,
        full,
        plain,
        statuses,
        rows,
    }
    .settle_detail()
}

/// The data the report templates read, as template values (see
/// templates/README.md), from a folder's rows and the manifest's
/// deterministic part (no `run`). `parts` are the targets' parts when
/// already built (see [`Folder::target_part`]); else they are built here,
/// in parallel. `draw`: whether charts are wanted (only the HTML report
/// shows them).
pub fn report_data(
    f: &Folder,
    manifest: &Value,
    draw: bool,
    parts: Option<Vec<TargetPart>>,
) -> minijinja::Value {
    let ix = Index::new(f);
    let g = &f.grid;
    // Targets are independent: build them in parallel, assemble in order.
    use rayon::prelude::*;
    let quota = f.settings.report_targets;
    let parts = parts.unwrap_or_else(|| {
        let chosen = selection::choose(&f.grid, &f.rows.metric_names, &f.rows.scores, quota);
        (0..g.targets.len())
            .into_par_iter()
            .map(|t| target_part(&ix, t, draw, chosen.shown(t), true))
            .collect()
    });
    let mut targets = TargetList {
        grid: g.clone(),
        held: Vec::with_capacity(parts.len()),
        shown: Vec::with_capacity(parts.len()),
    };
    let mut detailed = Vec::new();
    let mut verdict_rows = Vec::new();
    let mut statuses = Tally::default();
    for part in parts {
        targets
            .held
            .push((!part.entry.is_null()).then(|| minijinja::Value::from_serialize(&part.entry)));
        targets.shown.push(part.shown);
        detailed.extend(part.full);
        verdict_rows.extend(part.rows);
        for (total, n) in statuses.iter_mut().zip(part.statuses) {
            *total += n;
        }
    }
    let mut data = run_data(&ix, manifest, &statuses);
    data["summary"] = super::summary::summary_for(&ix, draw);
    // To template values: the targets' parts are converted already.
    let Value::Object(map) = data else {
        unreachable!("the report data is an object")
    };
    let mut values: BTreeMap<String, minijinja::Value> = map
        .into_iter()
        .map(|(k, v)| (k, minijinja::Value::from_serialize(&v)))
        .collect();
    values.insert("verdict_rows".into(), minijinja::Value::from(verdict_rows));
    values.insert("targets".into(), minijinja::Value::from_object(targets));
    values.insert("detailed_targets".into(), minijinja::Value::from(detailed));
    values.into_iter().collect()
}

/// Across targets: how many settings fall in each reading.
fn overall(g: &Grid, statuses: &Tally) -> String {
    let bench_id = g.candidates.get(g.benchmark).cloned().unwrap_or_default();
    let tally = |key: &str| {
        super::claims::LEGEND
            .iter()
            .position(|s| s.key == key)
            .map_or(0, |at| statuses[at])
    };
    let extra = |key: &str, words: &str| match tally(key) {
        0 => String::new(),
        n => format!(", {n} {words}"),
    };
    format!(
        "Over {} targets × {} scheme × horizon settings ({} in all): in {} the snooping test rejects and the leader drives it (holds after the search), {} are significant alone, {} are ahead but not significant, {} leave {} unbeaten{}{}.",
        g.targets.len(),
        g.schemes.len() * g.horizons.len(),
        statuses.iter().sum::<usize>(),
        tally("holds"),
        tally("alone"),
        tally("ahead"),
        tally("unbeaten"),
        bench_id,
        extra("untested", "are ahead but untested"),
        extra("one_origin", "are not testable with one origin"),
    )
}

/// Everything in the report data but the targets' parts.
fn run_data(ix: &Index, manifest: &Value, statuses: &Tally) -> Value {
    let f = ix.f;
    let g = &f.grid;
    let rows = &f.rows;
    let settings = &f.settings;
    let rank_by = ix
        .rank_by
        .map(|i| rows.metric_names[i].clone())
        .unwrap_or_else(|| "rmse".into());
    let experiment_name = manifest
        .pointer("/experiment/name")
        .and_then(Value::as_str)
        .unwrap_or("")
        .to_string();
    let cells = record::cells(manifest);
    let known_ahead: Vec<String> = settings
        .predictors
        .iter()
        .filter(|p| p.known_ahead)
        .map(|p| p.column.clone())
        .collect();
    json!({
        "title": settings.title,
        "experiment": experiment_name,
        "notes": settings.notes,
        "caution": CAUTION,
        "level": "5%",
        "benchmark": g.candidates.get(g.benchmark).cloned().unwrap_or_default(),
        "rank_by_is_rmse": rank_by == "rmse",
        "rank_by_words": metric_words(&rank_by),
        "best_by": best_words(&rank_by),
        "legend": super::claims::LEGEND.iter().map(|s| json!({"key": s.key, "symbol": s.symbol, "label": s.label})).collect::<Vec<_>>(),
        "rank_by": rank_by,
        "metrics": rows.metric_names,
        "alpha": settings.alpha.map(|a| format!("{}%", a * 100.0)),
        "facts": {
            "targets": g.targets.len(),
            "candidates": g.candidates.len(),
            "schemes": g.schemes,
            "horizons": g.horizons,
            "forecasts": f.forecast_count,
            "cells": record::cell_count(manifest),
            "failed": record::failures(&cells).len(),
            "frequency": settings.frequency,
            "transform": settings.transform,
            "transform_words": format!(
                "{}{}",
                transform_words(&settings.transform),
                settings.units_words.as_deref().unwrap_or("")
            ),
            "multi_step": settings.multi_step,
            "vintages": settings.vintages,
        },
        "many_targets": g.targets.len() > 3,
        "overall": overall(g, statuses),
        "has_pairwise": rows.tests.iter().any(|r| r.test == "diebold_mariano" || r.test == "clark_west"),
        "has_snooping": rows.tests.iter().any(|r| r.test == "snooping"),
        "chart_targets": CHART_TARGETS,
        "known_ahead": known_ahead,
        "detail_targets": f.settings.report_targets.min(g.targets.len()),
        "omitted_detail": g.targets.len().saturating_sub(f.settings.report_targets),
        "predictors": settings.predictors.iter().map(|p| json!({
            "column": p.column, "transform": p.transform, "transform_words": transform_words(&p.transform), "release_lag": p.release_lag, "known_ahead": p.known_ahead,
        })).collect::<Vec<_>>(),
        "period_sets": settings.periods.iter().map(|(n, a, b)| json!({"name": n, "from": a, "to": b})).collect::<Vec<_>>(),
        "record": record(f, manifest),
    })
}
