//! The top level of the experiment file (SPEC §2), in two phases:
//! [`decode`] reads every key without touching the data (what `render`
//! needs to describe a stored experiment), and [`with_data`] reads the data
//! file and resolves periods to positions (what a run needs). Problems are
//! collected in the context, so `check` lists those of the file and of its
//! data in one pass.

use super::candidates::{decode_candidate, PendingMembers, PredictorNames};
use super::decode::{Ctx, MapView};
use super::dummies::{decode_dummies, Dummies};
use super::limits;
use super::period::Frequency;
use super::predictors::{decode_predictors, Predictors};
use super::schemes::PendingScheme;
use super::scoring::{decode_scoring, Scoring};
use super::yaml::{Kind, Node};
use super::{
    BackTransform, Candidate, CombinationWeights, Declaration, Family, Layout, MultiStep, Release,
    ReportFormat, Transform, Units, VintageSpec,
};
use crate::error::nearest;
use std::path::Path;

mod data_phase;
mod sections;
pub(super) use data_phase::with_data;
use sections::{decode_audit, decode_backtest, decode_data_keys, decode_report, decode_targets};

const TOP_KEYS: &[&str] = &[
    "version",
    "experiment",
    "notes",
    "data",
    "target",
    "transform",
    "predictors",
    "dummies",
    "candidates",
    "backtest",
    "scoring",
    "report",
    "seed",
    "audit",
];

/// The keys of `data`, as far as they could be read.
#[derive(Default)]
struct DataKeys {
    file: Option<(String, Node)>,
    time: Option<(String, Node)>,
    frequency: Option<Frequency>,
    start: Option<(String, Node)>,
    end: Option<(String, Node)>,
    /// `layout` (None: not given or not valid) and where it is written.
    layout: Option<Layout>,
    layout_node: Option<Node>,
    /// `vintage`: the vintage column (long layout).
    vintage: Option<(String, Node)>,
}

impl DataKeys {
    /// The layout asked for (the ordinary one when none is given).
    fn layout(&self) -> Layout {
        self.layout.unwrap_or(Layout::Periods)
    }
}

/// Everything the experiment file says, as far as it could be read.
pub(super) struct Decoded {
    name: Option<String>,
    notes: Option<String>,
    title: Option<String>,
    formats: Vec<ReportFormat>,
    report_targets: usize,
    seed: u64,
    audit: Option<usize>,
    transform: Option<Transform>,
    data: DataKeys,
    targets: Vec<(String, Node)>,
    predictors: Predictors,
    dummies: Dummies,
    schemes: Vec<PendingScheme>,
    horizons: Vec<usize>,
    multi_step: MultiStep,
    /// The line of `backtest.multi_step`, when it is given.
    multi_step_line: Option<usize>,
    candidates: Vec<Candidate>,
    scoring: Scoring,
    benchmark: usize,
}

/// Read every key of the experiment file. None only when the file is not a
/// mapping at all; otherwise problems are in `ctx`.
///
/// One call per top-level key, in the file's order of meaning: the length
/// is the key count (each section's rules live in its own function).
pub(super) fn decode(ctx: &mut Ctx, root: &Node) -> Option<Decoded> {
    let top = ctx.map(root, "the experiment", TOP_KEYS, &[])?;
    let anchor = top.anchor();
    let need = |ctx: &mut Ctx, key: &str| -> Option<&Node> {
        let node = top.get(key);
        if node.is_none() {
            ctx.error(&anchor, format!("the experiment needs the key '{key}'"));
        }
        node
    };
    if let Some(v) = need(ctx, "version") {
        if let Some(s) = ctx.string(v, "version") {
            if s != "1" {
                ctx.error(v, format!("version {s} is not known; this outturn reads experiment files of version 1"));
            }
        }
    }
    let name = need(ctx, "experiment").and_then(|n| {
        let s = ctx.string(n, "experiment")?;
        if s.is_empty() || !s.bytes().all(|b| b.is_ascii_lowercase() || b.is_ascii_digit() || b == b'_' || b == b'-') {
            ctx.error(n, format!("experiment '{}' must use only a-z, 0-9, '_' and '-' (it names the results folder)", super::decode::clip(&s)));
            return None;
        }
        if s.len() > limits::MAX_NAME {
            ctx.refuse(n, format!("the experiment name has {} characters; at most {} (it names the results folder)", s.len(), limits::MAX_NAME));
            return None;
        }
        Some(s)
    });
    let notes = top.get("notes").and_then(|n| {
        if n.is_null() {
            None
        } else {
            ctx.string(n, "notes")
        }
    });
    let (title, formats, report_targets) = decode_report(ctx, top.get("report"));
    let seed = match top.get("seed") {
        Some(n) => ctx.unsigned(n, "seed").unwrap_or(0),
        None => 0,
    };
    let audit = top.get("audit").and_then(|n| decode_audit(ctx, n));
    let transform = match top.get("transform") {
        Some(n) => ctx
            .choice(n, "transform", &Transform::NAMES)
            .and_then(|s| Transform::parse(&s)),
        None => Some(Transform::None),
    };
    let data = need(ctx, "data")
        .map(|d| decode_data_keys(ctx, d))
        .unwrap_or_default();
    let targets = need(ctx, "target")
        .map(|t| decode_targets(ctx, t))
        .unwrap_or_default();
    let predictors = decode_predictors(ctx, top.get("predictors"), &targets);
    let dummies = decode_dummies(ctx, top.get("dummies"), data.frequency);
    check_dummy_names(ctx, &dummies, &predictors, &targets);
    // backtest before candidates: multi_step matters there.
    let (schemes, horizons, multi_step) = match need(ctx, "backtest") {
        Some(b) => decode_backtest(ctx, b),
        None => (Vec::new(), Vec::new(), MultiStep::Direct),
    };
    let multi_step_line = top.get("backtest").and_then(|b| match &b.kind {
        Kind::Map(entries) => entries
            .iter()
            .find(|(k, _)| matches!(&k.kind, Kind::Scalar(s, _) if s == "multi_step"))
            .map(|(k, _)| k.line),
        _ => None,
    });
    // Where candidates give their own transform (checked against
    // scoring.units once that is read).
    let mut transform_nodes = Vec::new();
    let candidates = match need(ctx, "candidates") {
        Some(c) => decode_candidates(
            ctx,
            c,
            (&predictors, &dummies),
            data.frequency,
            &mut transform_nodes,
        ),
        None => Vec::new(),
    };
    let mut scoring = match top.get("scoring") {
        Some(node) => decode_scoring(ctx, node, data.frequency),
        None => Scoring::default(),
    };
    let benchmark = resolve_benchmark(ctx, &scoring, &candidates);
    scoring.tests.encompassing = match scoring.encompassing.take() {
        None => None,
        Some(None) => Some(benchmark),
        Some(Some((name, node))) => {
            resolve_candidate(ctx, "encompassing", &name, &node, &candidates)
        }
    };
    if let Some(c) = top.get("candidates") {
        limits::check_grid(ctx, c, targets.len(), candidates.len(), schemes.len());
    }
    let decoded = Decoded {
        name,
        notes,
        title,
        formats,
        report_targets,
        seed,
        audit,
        transform,
        data,
        targets,
        predictors,
        dummies,
        schemes,
        horizons,
        multi_step,
        multi_step_line,
        candidates,
        scoring,
        benchmark,
    };
    check_seasons(ctx, &decoded, &top);
    check_vintage_keys(ctx, &decoded);
    check_units(ctx, &decoded, &transform_nodes);
    Some(decoded)
}

/// `candidates`: every entry expanded, ids checked for duplicates, and
/// combination members resolved (no combinations of combinations).
fn decode_candidates(
    ctx: &mut Ctx,
    c: &Node,
    (predictors, dummies): (&Predictors, &Dummies),
    frequency: Option<Frequency>,
    transforms: &mut Vec<Node>,
) -> Vec<Candidate> {
    let mut candidates: Vec<Candidate> = Vec::new();
    let mut pending: PendingMembers = Vec::new();
    match &c.kind {
        Kind::Seq(items) if !items.is_empty() => {
            let dummy_columns = super::dummies::columns(&dummies.list);
            let names = PredictorNames {
                list: &predictors.list,
                failed: &predictors.failed,
                unreadable: predictors.unreadable,
                dummies: &dummies.list,
                dummy_columns: &dummy_columns,
                dummies_failed: &dummies.failed,
                season: frequency.map(Frequency::season_length),
                frequency_name: frequency.map_or("", Frequency::name),
            };
            for (i, item) in items.iter().enumerate() {
                decode_candidate(
                    ctx,
                    item,
                    i + 1,
                    &names,
                    &mut candidates,
                    &mut pending,
                    transforms,
                );
            }
        }
        _ => ctx.error(
            c,
            "candidates must be a non-empty list of model entries, each with a 'family'",
        ),
    }
    for (i, c) in candidates.iter().enumerate() {
        if let Some(first) = candidates[..i].iter().find(|o| o.id == c.id) {
            ctx.error(
                &line_node(c.line),
                format!("candidate id '{}' is produced twice (also by the entry on line {}); give one entry a 'label'", c.id, first.line),
            );
        }
    }
    for (index, members) in pending {
        let mut resolved = Vec::new();
        for (id, node) in members {
            match candidates.iter().position(|c| c.id == id) {
                Some(i) if matches!(candidates[i].family, Family::Combination { .. }) => {
                    ctx.error(&node, format!("member '{id}' is itself a combination; combine the underlying candidates instead"));
                }
                Some(i) => resolved.push(i),
                None => ctx.error(
                    &node,
                    format!(
                        "member '{id}' names no candidate; {}",
                        ids_hint(&id, &candidates)
                    ),
                ),
            }
        }
        if let Family::Combination { members, .. } = &mut candidates[index].family {
            *members = resolved;
        }
    }
    candidates
}

/// A dummy's name must not be a predictor's column or a target: candidates
/// name both the same way.
fn check_dummy_names(
    ctx: &mut Ctx,
    dummies: &Dummies,
    predictors: &Predictors,
    targets: &[(String, Node)],
) {
    for (d, node) in dummies.list.iter().zip(&dummies.nodes) {
        if predictors.list.iter().any(|p| p.column == d.name) {
            ctx.error(
                node,
                format!("dummy '{}' has the name of a declared predictor; candidates name both alike — rename the dummy", d.name),
            );
        } else if targets.iter().any(|(t, _)| *t == d.name) {
            ctx.error(
                node,
                format!(
                    "dummy '{}' has the name of a target; rename the dummy",
                    d.name
                ),
            );
        }
    }
}

/// "did you mean …? candidate ids are: …" for a name that matches no candidate.
fn ids_hint(name: &str, candidates: &[Candidate]) -> String {
    let ids: Vec<&str> = candidates.iter().map(|c| c.id.as_str()).collect();
    let hint = nearest(name, &ids)
        .map(|n| format!("did you mean '{n}'? "))
        .unwrap_or_default();
    format!("{hint}candidate ids are: {}", ids.join(", "))
}

/// A position at the start of a line, for problems of a whole entry.
fn line_node(line: usize) -> Node {
    Node {
        kind: Kind::Scalar(String::new(), false),
        line,
        column: 1,
    }
}

/// `multi_step: iterated` changes ar candidates only (SPEC §4): say so when
/// the grid holds others that forecast each horizon directly.
fn iterated_warning(
    path: &Path,
    multi_step: MultiStep,
    line: Option<usize>,
    candidates: &[Candidate],
) -> Option<String> {
    if multi_step != MultiStep::Iterated {
        return None;
    }
    let direct: Vec<&str> = candidates
        .iter()
        .filter(|c| matches!(c.family, Family::Ardl { .. } | Family::ArdlSelect { .. }))
        .map(|c| c.id.as_str())
        .collect();
    if direct.is_empty() {
        return None;
    }
    let shown = direct
        .iter()
        .take(5)
        .copied()
        .collect::<Vec<_>>()
        .join(", ");
    Some(format!(
        "{}:{}: backtest.multi_step: iterated applies to ar candidates only; {}{} forecast each horizon directly (their predictors' future values are not forecast) — docs/experiment-file.md",
        path.display(),
        line.unwrap_or(1),
        shown,
        if direct.len() > 5 { ", …" } else { "" }
    ))
}

/// SPEC §4: the id named, else naive when it is a candidate, else the first candidate.
/// The candidate a key names (`what` for messages), or an error naming it.
fn resolve_candidate(
    ctx: &mut Ctx,
    what: &str,
    name: &str,
    node: &Node,
    candidates: &[Candidate],
) -> Option<usize> {
    let found = candidates.iter().position(|c| c.id == name);
    if found.is_none() {
        ctx.error(
            node,
            format!(
                "{what} '{name}' names no candidate; {}",
                ids_hint(name, candidates)
            ),
        );
    }
    found
}

fn resolve_benchmark(ctx: &mut Ctx, scoring: &Scoring, candidates: &[Candidate]) -> usize {
    match &scoring.benchmark {
        Some((name, node)) => {
            resolve_candidate(ctx, "benchmark", name, node, candidates).unwrap_or(0)
        }
        None => candidates.iter().position(|c| c.id == "naive").unwrap_or(0),
    }
}

/// Seasonal models and transforms need data with a season length.
fn check_seasons(ctx: &mut Ctx, d: &Decoded, top: &MapView) {
    let Some(frequency) = d.data.frequency.filter(|f| f.season_length().is_none()) else {
        return;
    };
    for c in &d.candidates {
        if c.family == Family::SeasonalNaive {
            ctx.error(
                &line_node(c.line),
                format!(
                    "seasonal_naive needs seasonal data; {} data have no season length — remove this candidate or use naive",
                    frequency.name()
                ),
            );
        }
    }
    if d.transform == Some(Transform::SeasonalDiff) {
        if let Some(n) = top.get("transform") {
            ctx.error(
                n,
                format!(
                    "seasonal_diff needs seasonal data; {} data have no season length — use diff",
                    frequency.name()
                ),
            );
        }
    }
    for (p, node) in d.predictors.list.iter().zip(&d.predictors.nodes) {
        if p.transform == Transform::SeasonalDiff {
            ctx.error(
                node,
                format!(
                    "predictor '{}': seasonal_diff needs seasonal data; {} data have no season length — use diff",
                    p.column,
                    frequency.name()
                ),
            );
        }
    }
}

/// What the vintage layouts exclude, and `scoring.actual` without one.
fn check_vintage_keys(ctx: &mut Ctx, d: &Decoded) {
    let layout = d.data.layout();
    if let (Layout::Periods, Some((_, node))) = (layout, &d.scoring.actual) {
        ctx.error(node, "scoring.actual picks which release of real-time data is the outturn; it needs data.layout vintages or vintage_columns (see docs/experiment-file.md#vintages)");
    }
    if layout == Layout::Periods {
        return;
    }
    let Some(at) = d.data.layout_node.clone() else {
        return;
    };
    if let Some(c) = d.candidates.iter().find(|c| {
        matches!(
            c.family,
            Family::Combination {
                weights: CombinationWeights::InverseMse,
                ..
            }
        )
    }) {
        ctx.error(&at, format!("candidate {}: inverse_mse weights come from past errors, and under data.layout {} the outturns known at an origin differ from vintage to vintage; this version does not form them — use weights equal or trimmed (see docs/experiment-file.md#vintages)", c.id, layout.name()));
    }
}

/// `scoring.units: original` is what lets candidates differ in transform
/// (forecasts of different transforms are not comparable in transformed
/// units), and this version does not back-transform real-time data.
fn check_units(ctx: &mut Ctx, d: &Decoded, transforms: &[Node]) {
    let original = matches!(d.scoring.units, Some((Units::Original, _)));
    if !original {
        for node in transforms {
            ctx.error(node, "a candidate's own transform needs scoring.units: original: forecasts of differently transformed targets are in different units (a level, a change, a growth rate) and cannot be scored against each other; add units: original under scoring, or drop this transform (see docs/experiment-file.md#units)");
        }
    }
    if original && d.scoring.back_transform == BackTransform::Mean {
        check_mean_centre(ctx, d);
    }
    if let (true, Some((_, node)), true) = (
        original,
        &d.scoring.units,
        d.data.layout() != Layout::Periods,
    ) {
        ctx.error(node, format!("scoring.units: original is not available with data.layout {}: this version does not back-transform forecasts made on real-time vintages; use units: transformed (see docs/experiment-file.md#units)", d.data.layout().name()));
    }
}

/// `back_transform: mean` needs the variance of every log level: under
/// `log_diff` beyond one step only models with a joint error model have
/// it (arima, iterated ar, additive-error smoothing without a
/// multiplicative season).
fn check_mean_centre(ctx: &mut Ctx, d: &Decoded) {
    use super::{SmoothingError as E, SmoothingSeason as S};
    if d.horizons.iter().all(|&h| h <= 1) {
        return;
    }
    let linear = |e: E, s: S| e == E::Additive && s != S::Multiplicative;
    for c in &d.candidates {
        if c.transform
            .unwrap_or(d.transform.unwrap_or(Transform::None))
            != Transform::LogDiff
        {
            continue;
        }
        let has = match &c.family {
            Family::Arima { .. } | Family::ArimaSelect { .. } => true,
            Family::Ar { .. } | Family::ArSelect { .. } => d.multi_step == MultiStep::Iterated,
            Family::Smoothing { error, season, .. } => linear(*error, *season),
            Family::SmoothingSelect { forms } => forms.iter().all(|f| linear(f.0, f.2)),
            _ => false,
        };
        if !has {
            ctx.error(&line_node(c.line), format!("candidate {}: back_transform: mean needs the variance of each log level, and under log_diff beyond one step this model has none (only arima, iterated ar and additive-error smoothing do); use back_transform: median, or another transform for this candidate (see docs/experiment-file.md#units)", c.id));
        }
    }
}

impl Decoded {
    /// Real-time data as declared, None for the ordinary layout.
    fn vintage_spec(&self) -> Option<VintageSpec> {
        let layout = self.data.layout();
        (layout != Layout::Periods).then(|| VintageSpec {
            layout,
            column: self
                .data
                .vintage
                .as_ref()
                .map_or_else(|| "vintage".to_string(), |(s, _)| s.clone()),
            actual: self
                .scoring
                .actual
                .as_ref()
                .map_or(Release::Latest, |(r, _)| *r),
        })
    }

    /// The checked declaration, when the file has no problem of its own.
    pub(super) fn declaration(self, ctx: &Ctx, path: &Path, text: &str) -> Option<Declaration> {
        if !ctx.diags.is_empty()
            || self.candidates.is_empty()
            || self.schemes.is_empty()
            || self.horizons.is_empty()
        {
            return None;
        }
        let vintages = self.vintage_spec();
        let (Some(name), Some((data_file, _)), Some(_), Some(frequency), Some(transform)) = (
            self.name,
            self.data.file,
            self.data.time,
            self.data.frequency,
            self.transform,
        ) else {
            return None;
        };
        let warnings = iterated_warning(
            path,
            self.multi_step,
            self.multi_step_line,
            &self.candidates,
        )
        .into_iter()
        .collect();
        let Scoring {
            metrics,
            rank_by,
            intervals,
            quantiles,
            intervals_from,
            units,
            back_transform,
            tests,
            periods,
            rolling_window,
            ..
        } = self.scoring;
        Some(Declaration {
            title: self.title.unwrap_or_else(|| name.clone()),
            name,
            notes: self.notes,
            source_path: path.to_path_buf(),
            source_text: text.to_string(),
            data_file,
            frequency,
            transform,
            predictors: self.predictors.list,
            dummy_columns: super::dummies::columns(&self.dummies.list),
            candidates: self.candidates,
            schemes: self.schemes.into_iter().map(|p| p.scheme).collect(),
            horizons: self.horizons,
            multi_step: self.multi_step,
            metrics,
            intervals,
            quantiles,
            intervals_from,
            units: units.map_or(Units::Transformed, |(u, _)| u),
            back_transform,
            tests,
            periods,
            rolling_window,
            rank_by,
            benchmark: self.benchmark,
            warnings,
            formats: self.formats,
            report_targets: self.report_targets,
            seed: self.seed,
            audit: self.audit,
            vintages,
        })
    }
}
