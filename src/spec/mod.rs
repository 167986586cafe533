//! spec: the experiment file (SPEC §2) and its data, parsed and checked into
//! a typed [`Experiment`]. Raw strings and options never leave this module:
//! periods are resolved to positions, candidate ids are built, and every
//! problem points at a key, line or row.

pub mod data;
pub mod decode;
pub mod model;
pub mod period;
pub mod yaml;

#[cfg(test)]
mod property_tests;

pub use model::*;

use crate::error::{nearest, Diagnostic, Error, Location, Result};
use decode::Ctx;
use period::Frequency;
use sha2::{Digest, Sha256};
use std::path::{Path, PathBuf};
use yaml::{Kind, Node};

const TOP_KEYS: &[&str] = &[
    "version",
    "experiment",
    "notes",
    "data",
    "target",
    "transform",
    "predictors",
    "candidates",
    "backtest",
    "scoring",
    "report",
    "seed",
];
const FAMILIES: &[&str] = &[
    "naive",
    "mean",
    "drift",
    "seasonal_naive",
    "ar",
    "ardl",
    "arima",
    "smoothing",
    "combination",
];

pub fn sha256_hex(bytes: &[u8]) -> String {
    let digest = Sha256::digest(bytes);
    digest.iter().map(|b| format!("{b:02x}")).collect()
}

/// Read, parse and check an experiment file and its data.
pub fn load(path: &Path) -> Result<Experiment> {
    let file_loc = || {
        Some(Location {
            file: path.to_path_buf(),
            line: None,
            column: None,
        })
    };
    let bytes = std::fs::read(path)
        .map_err(|e| Error::invalid(file_loc(), format!("cannot read the experiment file: {e}")))?;
    let text = String::from_utf8(bytes)
        .map_err(|_| Error::invalid(file_loc(), "the experiment file is not UTF-8 text"))?;
    let root = yaml::parse(&text).map_err(|e| {
        Error::invalid(
            Some(Location {
                file: path.to_path_buf(),
                line: Some(e.line),
                column: Some(e.column),
            }),
            format!("the file is not valid YAML: {}", e.message),
        )
    })?;
    let mut ctx = Ctx::new(path);
    let exp = decode_experiment(&mut ctx, &root, path, &text);
    match exp {
        Some(exp) if ctx.diags.is_empty() => Ok(exp),
        _ => {
            if ctx.diags.is_empty() {
                ctx.diags
                    .push(Diagnostic::new(file_loc(), "the experiment is invalid"));
            }
            Err(Error::Invalid(ctx.diags))
        }
    }
}

struct PendingScheme {
    scheme: Scheme,
    node: Node,
}

fn decode_experiment(ctx: &mut Ctx, root: &Node, path: &Path, text: &str) -> Option<Experiment> {
    let top = ctx.map(root, "the experiment", TOP_KEYS, &[])?;
    let anchor = top.anchor();
    let need = |ctx: &mut Ctx, key: &str| -> Option<&Node> {
        let node = top.get(key);
        if node.is_none() {
            ctx.error(&anchor, format!("the experiment needs the key '{key}'"));
        }
        node
    };

    // version
    if let Some(v) = need(ctx, "version") {
        if let Some(s) = ctx.string(v, "version") {
            if s != "1" {
                ctx.error(v, format!("version {s} is not known; this outturn reads experiment files of version 1"));
            }
        }
    }
    // experiment name
    let name = need(ctx, "experiment").and_then(|n| {
        let s = ctx.string(n, "experiment")?;
        if s.is_empty() || !s.bytes().all(|b| b.is_ascii_lowercase() || b.is_ascii_digit() || b == b'_' || b == b'-') {
            ctx.error(n, format!("experiment '{s}' must use only a-z, 0-9, '_' and '-' (it names the results folder)"));
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

    // report
    let mut title = None;
    let mut formats = vec![ReportFormat::Html, ReportFormat::Markdown];
    if let Some(r) = top.get("report") {
        if let Some(view) = ctx.map(r, "report", &["formats", "title"], &[]) {
            if let Some(t) = view.get("title") {
                title = ctx.string(t, "report.title");
            }
            if let Some(f) = view.get("formats") {
                let mut out = Vec::new();
                for item in ctx.list(f) {
                    match ctx
                        .choice(item, "report format", &["html", "markdown"])
                        .as_deref()
                    {
                        Some("html") if !out.contains(&ReportFormat::Html) => {
                            out.push(ReportFormat::Html)
                        }
                        Some("markdown") if !out.contains(&ReportFormat::Markdown) => {
                            out.push(ReportFormat::Markdown)
                        }
                        _ => {}
                    }
                }
                formats = out;
            }
        }
    }

    let seed = match top.get("seed") {
        Some(n) => ctx.unsigned(n, "seed").unwrap_or(0),
        None => 0,
    };

    let transform = match top.get("transform") {
        Some(n) => ctx
            .choice(n, "transform", &Transform::NAMES)
            .and_then(|s| Transform::parse(&s)),
        None => Some(Transform::None),
    };

    // data
    let data_node = need(ctx, "data");
    let mut data_file = None;
    let mut time_col = None;
    let mut frequency = None;
    let mut start = None;
    let mut end = None;
    if let Some(d) = data_node {
        if let Some(view) = ctx.map(
            d,
            "data",
            &["file", "time", "frequency", "start", "end"],
            &[],
        ) {
            let a = view.anchor();
            match view.get("file") {
                Some(n) => data_file = ctx.string(n, "data.file").map(|s| (s, n.clone())),
                None => ctx.error(
                    &a,
                    "data needs 'file': the path of the CSV, relative to the experiment file",
                ),
            }
            match view.get("time") {
                Some(n) => time_col = ctx.string(n, "data.time").map(|s| (s, n.clone())),
                None => ctx.error(
                    &a,
                    "data needs 'time': the column holding the period labels",
                ),
            }
            match view.get("frequency") {
                Some(n) => {
                    frequency = ctx
                        .choice(n, "data.frequency", &Frequency::NAMES)
                        .and_then(|s| Frequency::parse(&s))
                }
                None => ctx.error(
                    &a,
                    format!(
                        "data needs 'frequency': one of {}",
                        Frequency::NAMES.join(", ")
                    ),
                ),
            }
            start = view
                .get("start")
                .and_then(|n| ctx.string(n, "data.start").map(|s| (s, n.clone())));
            end = view
                .get("end")
                .and_then(|n| ctx.string(n, "data.end").map(|s| (s, n.clone())));
        }
    }

    // targets
    let mut targets: Vec<(String, Node)> = Vec::new();
    if let Some(t) = need(ctx, "target") {
        let items = ctx.list(t);
        if items.is_empty() {
            ctx.error(t, "target is an empty list; name at least one column");
        }
        for item in items {
            if let Some(s) = ctx.string(item, "target") {
                if targets.iter().any(|(n, _)| *n == s) {
                    ctx.error(item, format!("target '{s}' is listed twice"));
                } else {
                    targets.push((s, item.clone()));
                }
            }
        }
    }

    // predictors
    let mut predictors: Vec<Predictor> = Vec::new();
    let mut predictor_nodes: Vec<Node> = Vec::new();
    // Predictors declared with an error of their own: candidates that name
    // them are not reported again.
    let mut failed_predictors: Vec<String> = Vec::new();
    let mut predictors_unreadable = false;
    if let Some(p) = top.get("predictors") {
        if !p.is_null() {
            let items = match &p.kind {
                Kind::Seq(items) => items.iter().collect::<Vec<_>>(),
                _ => {
                    predictors_unreadable = true;
                    ctx.error(
                        p,
                        "predictors must be a list of entries, each with a 'column'",
                    );
                    Vec::new()
                }
            };
            for (i, item) in items.into_iter().enumerate() {
                let path = format!("predictors[{}]", i + 1);
                let Some(view) = ctx.map(
                    item,
                    &path,
                    &["column", "transform", "release_lag", "known_ahead"],
                    &[],
                ) else {
                    predictors_unreadable = true;
                    continue;
                };
                let Some(column) = view
                    .get("column")
                    .and_then(|n| ctx.string(n, &format!("{path}.column")))
                else {
                    if view.get("column").is_none() {
                        ctx.error(
                            item,
                            format!("{path} needs 'column': the data column to use"),
                        );
                    }
                    predictors_unreadable = true;
                    continue;
                };
                let transform = match view.get("transform") {
                    Some(n) => ctx
                        .choice(n, &format!("{path}.transform"), &Transform::NAMES)
                        .and_then(|s| Transform::parse(&s)),
                    None => Some(Transform::None),
                };
                let release_lag = match view.get("release_lag") {
                    Some(n) => ctx
                        .integer(n, &format!("{path}.release_lag"), 0)
                        .map(|v| v as usize),
                    None => Some(0),
                };
                let known_ahead = match view.get("known_ahead") {
                    Some(n) => ctx.boolean(n, &format!("{path}.known_ahead")),
                    None => Some(false),
                };
                let (Some(transform), Some(release_lag), Some(known_ahead)) =
                    (transform, release_lag, known_ahead)
                else {
                    failed_predictors.push(column);
                    continue;
                };
                if known_ahead && release_lag > 0 {
                    ctx.error(item, format!("{path}: known_ahead cannot be combined with release_lag (a value known in advance is not published late)"));
                }
                if predictors.iter().any(|p| p.column == column) {
                    ctx.error(
                        item,
                        format!("{path}: column '{column}' is declared as a predictor twice"),
                    );
                    continue;
                }
                if targets.iter().any(|(t, _)| *t == column) {
                    ctx.error(item, format!("{path}: '{column}' is a target; its own lags enter through ar and ardl 'lags'"));
                }
                predictors.push(Predictor {
                    column,
                    transform,
                    release_lag,
                    known_ahead,
                    line: item.line,
                });
                predictor_nodes.push(item.clone());
            }
        }
    }

    // backtest (before candidates: multi_step matters there)
    let mut schemes: Vec<PendingScheme> = Vec::new();
    let mut horizons: Vec<usize> = Vec::new();
    let mut multi_step = MultiStep::Direct;
    if let Some(b) = need(ctx, "backtest") {
        if let Some(view) = ctx.map(b, "backtest", &["schemes", "horizons", "multi_step"], &[]) {
            let a = view.anchor();
            match view.get("horizons") {
                Some(h) => {
                    for item in ctx.list(h) {
                        if let Some(v) = ctx.integer(item, "backtest.horizons", 1) {
                            if horizons.contains(&(v as usize)) {
                                ctx.error(item, format!("horizon {v} is listed twice"));
                            } else if v > 100_000 {
                                ctx.error(
                                    item,
                                    format!(
                                        "horizon {v} is larger than any data set could support"
                                    ),
                                );
                            } else {
                                horizons.push(v as usize);
                            }
                        }
                    }
                    if horizons.is_empty() && !matches!(&h.kind, Kind::Seq(v) if !v.is_empty()) {
                        ctx.error(
                            h,
                            "backtest.horizons is empty; list at least one horizon, e.g. [1, 4]",
                        );
                    }
                }
                None => ctx.error(
                    &a,
                    "backtest needs 'horizons': the steps ahead to forecast, e.g. [1, 4]",
                ),
            }
            horizons.sort_unstable();
            if let Some(m) = view.get("multi_step") {
                if let Some(s) = ctx.choice(m, "backtest.multi_step", &["direct", "iterated"]) {
                    multi_step = if s == "iterated" {
                        MultiStep::Iterated
                    } else {
                        MultiStep::Direct
                    };
                }
            }
            match view.get("schemes") {
                Some(s) => schemes = decode_schemes(ctx, s),
                None => ctx.error(
                    &a,
                    "backtest needs 'schemes': a list of fixed, expanding or rolling entries",
                ),
            }
        }
    }

    // candidates
    let mut candidates: Vec<Candidate> = Vec::new();
    let mut pending: PendingMembers = Vec::new();
    if let Some(c) = need(ctx, "candidates") {
        match &c.kind {
            Kind::Seq(items) if !items.is_empty() => {
                for (i, item) in items.iter().enumerate() {
                    let declared = Declared {
                        list: &predictors,
                        failed: &failed_predictors,
                        unreadable: predictors_unreadable,
                    };
                    decode_candidate(ctx, item, i + 1, &declared, &mut candidates, &mut pending);
                }
            }
            _ => ctx.error(
                c,
                "candidates must be a non-empty list of model entries, each with a 'family'",
            ),
        }
    }
    for (i, c) in candidates.iter().enumerate() {
        if let Some(first) = candidates[..i].iter().find(|o| o.id == c.id) {
            let node = Node {
                kind: Kind::Scalar(String::new(), false),
                line: c.line,
                column: 1,
            };
            ctx.error(
                &node,
                format!("candidate id '{}' is produced twice (also by the entry on line {}); give one entry a 'label'", c.id, first.line),
            );
        }
    }

    // Combination members name candidates by id; combinations of combinations are not allowed.
    for (index, members) in pending {
        let mut resolved = Vec::new();
        for (id, node) in members {
            match candidates.iter().position(|c| c.id == id) {
                Some(i) if matches!(candidates[i].family, Family::Combination { .. }) => {
                    ctx.error(&node, format!("member '{id}' is itself a combination; combine the underlying candidates instead"));
                }
                Some(i) => resolved.push(i),
                None => {
                    let ids: Vec<&str> = candidates.iter().map(|c| c.id.as_str()).collect();
                    let hint = nearest(&id, &ids)
                        .map(|n| format!("did you mean '{n}'? "))
                        .unwrap_or_default();
                    ctx.error(
                        &node,
                        format!(
                            "member '{id}' names no candidate; {hint}candidate ids are: {}",
                            ids.join(", ")
                        ),
                    );
                }
            }
        }
        if let Family::Combination { members, .. } = &mut candidates[index].family {
            *members = resolved;
        }
    }

    // scoring
    let scoring = match top.get("scoring") {
        Some(node) => decode_scoring(ctx, node, frequency),
        None => Scoring::default(),
    };
    let Scoring {
        metrics,
        rank_by,
        benchmark: benchmark_name,
        intervals,
        tests,
        periods,
        period_nodes,
        rolling_window,
    } = scoring;
    // SPEC §4: the id named, else naive when it is a candidate, else the first candidate.
    let benchmark = match &benchmark_name {
        Some((name, node)) => match candidates.iter().position(|c| c.id == *name) {
            Some(i) => i,
            None => {
                let ids: Vec<&str> = candidates.iter().map(|c| c.id.as_str()).collect();
                let hint = nearest(name, &ids)
                    .map(|n| format!("did you mean '{n}'? "))
                    .unwrap_or_default();
                ctx.error(
                    node,
                    format!(
                        "benchmark '{name}' names no candidate; {hint}candidate ids are: {}",
                        ids.join(", ")
                    ),
                );
                0
            }
        },
        None => candidates.iter().position(|c| c.id == "naive").unwrap_or(0),
    };

    if let Some(frequency) = frequency.filter(|f| f.season_length().is_none()) {
        for c in &candidates {
            if c.family == Family::SeasonalNaive {
                let node = Node {
                    kind: Kind::Scalar(String::new(), false),
                    line: c.line,
                    column: 1,
                };
                ctx.error(
                    &node,
                    format!(
                        "seasonal_naive needs seasonal data; {} data have no season length — remove this candidate or use naive",
                        frequency.name()
                    ),
                );
            }
        }
        if transform == Some(Transform::SeasonalDiff) {
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
        for (p, node) in predictors.iter().zip(&predictor_nodes) {
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

    // Everything below needs the data. The data are checked even when the
    // experiment file has problems of its own, so that `check` lists both.
    let (
        Some((data_file, data_file_node)),
        Some((time_col, time_node)),
        Some(frequency),
        Some(transform),
    ) = (data_file, time_col, frequency, transform)
    else {
        return None;
    };
    let base = path.parent().map(Path::to_path_buf).unwrap_or_default();
    let data_path: PathBuf = base.join(&data_file);
    let bytes = match std::fs::read(&data_path) {
        Ok(b) => b,
        Err(e) => {
            ctx.error(
                &data_file_node,
                format!("cannot read the data file {}: {e}", data_path.display()),
            );
            return None;
        }
    };
    let table = match data::read_table(&data_path, &bytes) {
        Ok(t) => t,
        Err(d) => {
            ctx.diags.push(d);
            return None;
        }
    };
    let resolved = resolve::resolve_data(
        ctx,
        &table,
        resolve::DataRequest {
            time: (&time_col, &time_node),
            frequency,
            start: start.as_ref().map(|(s, n)| (s.as_str(), n)),
            end: end.as_ref().map(|(s, n)| (s.as_str(), n)),
            targets: &targets,
            transform,
            predictors: &predictors,
            predictor_nodes: &predictor_nodes,
            schemes: &schemes
                .iter()
                .map(|p| (&p.scheme, &p.node))
                .collect::<Vec<_>>(),
            horizons: &horizons,
        },
    );
    if !ctx.diags.is_empty() || candidates.is_empty() || schemes.is_empty() || horizons.is_empty() {
        return None;
    }
    let (Some(name), Some(resolved)) = (name, resolved) else {
        return None;
    };
    // A period set must hold some scored period: target periods after a
    // scheme's first origin.
    for (set, node) in periods.iter().zip(&period_nodes) {
        let scored = resolved.targets.iter().any(|t| {
            let first = t.first_origins.iter().copied().min().unwrap_or(0);
            t.ordinals[first.min(t.n)..t.n]
                .iter()
                .any(|&o| o >= set.from_ordinal && o <= set.to_ordinal)
        });
        if !scored {
            let t = &resolved.targets[0];
            let first = t.first_origins.iter().copied().min().unwrap_or(0);
            let range = if first < t.n {
                format!("{} to {}", t.labels[first], t.labels[t.n - 1])
            } else {
                "none".to_string()
            };
            ctx.error(
                node,
                format!(
                    "scoring.periods.{}: {} to {} holds no forecast to score (the scored periods run from {range}); move it into that range or remove it",
                    set.name, set.from, set.to
                ),
            );
        }
    }
    if !ctx.diags.is_empty() {
        return None;
    }
    let title = title.unwrap_or_else(|| name.clone());
    Some(Experiment {
        name,
        notes,
        title,
        source_path: path.to_path_buf(),
        source_text: text.to_string(),
        data_path,
        data_bytes_sha256: sha256_hex(&bytes),
        time_column: time_col,
        frequency,
        label_style: resolved.label_style,
        transform,
        predictors,
        targets: resolved.targets,
        candidates,
        schemes: schemes.into_iter().map(|p| p.scheme).collect(),
        horizons,
        multi_step,
        metrics,
        rank_by,
        benchmark,
        intervals,
        tests,
        periods,
        rolling_window,
        formats,
        seed,
    })
}

fn decode_schemes(ctx: &mut Ctx, node: &Node) -> Vec<PendingScheme> {
    let Kind::Seq(items) = &node.kind else {
        ctx.error(
            node,
            "backtest.schemes must be a list, e.g. [{expanding: {first_origin: 1995Q4}}]",
        );
        return Vec::new();
    };
    if items.is_empty() {
        ctx.error(
            node,
            "backtest.schemes is empty; list at least one of fixed, expanding, rolling",
        );
    }
    let mut out: Vec<PendingScheme> = Vec::new();
    for (i, item) in items.iter().enumerate() {
        let path = format!("backtest.schemes[{}]", i + 1);
        let kind_name = match &item.kind {
            Kind::Scalar(s, _) if !item.is_null() => Some((s.clone(), None)),
            Kind::Map(entries) if entries.len() == 1 => match &entries[0].0.kind {
                Kind::Scalar(s, _) => Some((s.clone(), Some(&entries[0].1))),
                _ => None,
            },
            _ => None,
        };
        let Some((kind_name, settings)) = kind_name else {
            ctx.error(item, format!("{path} must be one of fixed, expanding or rolling with its settings, e.g. {{expanding: {{first_origin: 1995Q4}}}}"));
            continue;
        };
        let kind = match ctx
            .choice(
                &entry_key(item),
                &format!("{path}: scheme"),
                &["fixed", "expanding", "rolling"],
            )
            .as_deref()
        {
            Some("fixed") => SchemeKind::Fixed,
            Some("expanding") => SchemeKind::Expanding,
            Some("rolling") => SchemeKind::Rolling,
            _ => continue,
        };
        let allowed: &[&str] = match kind {
            SchemeKind::Fixed => &["test_start", "first_origin", "train_share", "origins"],
            SchemeKind::Expanding => &["test_start", "first_origin", "train_share", "refit_every"],
            SchemeKind::Rolling => &[
                "test_start",
                "first_origin",
                "train_share",
                "window",
                "refit_every",
            ],
        };
        let empty = Node {
            kind: Kind::Map(Vec::new()),
            line: item.line,
            column: item.column,
        };
        let settings = settings.unwrap_or(&empty);
        let Some(view) = ctx.map(settings, &format!("{path}.{kind_name}"), allowed, &[]) else {
            continue;
        };
        let mut start = SchemeStart::Half;
        let mut count = 0;
        for key in ["test_start", "first_origin", "train_share"] {
            let Some(n) = view.get(key) else { continue };
            count += 1;
            let Some(text) = ctx.string(n, &format!("{path}.{kind_name}.{key}")) else {
                continue;
            };
            start = match key {
                "test_start" => SchemeStart::TestStart {
                    label: text,
                    ordinal: 0,
                },
                "first_origin" => SchemeStart::FirstOrigin {
                    label: text,
                    ordinal: 0,
                },
                _ => match parse_share(&text) {
                    Some((numerator, denominator)) => SchemeStart::TrainShare {
                        text,
                        numerator,
                        denominator,
                    },
                    None => {
                        ctx.error(n, format!("{path}.{kind_name}.train_share must be a decimal strictly between 0 and 1, e.g. 0.5; found '{text}'"));
                        continue;
                    }
                },
            };
        }
        if count > 1 {
            ctx.error(
                settings,
                format!("{path}: give at most one of test_start, first_origin and train_share"),
            );
        }
        let window = match view.get("window") {
            Some(n) => ctx
                .integer(n, &format!("{path}.rolling.window"), 1)
                .map(|v| v as usize),
            None => {
                if kind == SchemeKind::Rolling {
                    ctx.error(settings, format!("{path}: rolling needs 'window': the number of most recent regression rows to keep"));
                }
                None
            }
        };
        let refit_every = match view.get("refit_every") {
            Some(n) => ctx
                .integer(n, &format!("{path}.{kind_name}.refit_every"), 1)
                .unwrap_or(1) as usize,
            None => 1,
        };
        let origins_first = match view.get("origins") {
            Some(n) => {
                ctx.choice(n, &format!("{path}.fixed.origins"), &["all", "first"])
                    .as_deref()
                    == Some("first")
            }
            None => false,
        };
        let id = match kind {
            SchemeKind::Fixed => "fixed".to_string(),
            SchemeKind::Expanding => "expanding".to_string(),
            SchemeKind::Rolling => format!("rolling({})", window.unwrap_or(0)),
        };
        if kind == SchemeKind::Rolling && window.is_none() {
            continue;
        }
        if let Some(prev) = out.iter().find(|p| p.scheme.id == id) {
            ctx.error(item, format!("{path}: a second scheme with the id '{id}' (the first is on line {}); scheme ids must differ", prev.node.line));
            continue;
        }
        out.push(PendingScheme {
            scheme: Scheme {
                id,
                kind,
                start,
                window,
                refit_every,
                origins_first,
                line: item.line,
            },
            node: item.clone(),
        });
    }
    out
}

fn entry_key(item: &Node) -> Node {
    match &item.kind {
        Kind::Map(entries) if !entries.is_empty() => entries[0].0.clone(),
        _ => item.clone(),
    }
}

/// Parse a decimal share like `0.5` or `.75` exactly as a fraction.
fn parse_share(text: &str) -> Option<(u128, u128)> {
    let t = text.trim();
    let (int, frac) = t.split_once('.').unwrap_or((t, ""));
    if frac.len() > 30
        || !int.bytes().all(|b| b.is_ascii_digit())
        || !frac.bytes().all(|b| b.is_ascii_digit())
    {
        return None;
    }
    if int.is_empty() && frac.is_empty() {
        return None;
    }
    let int_v: u128 = if int.is_empty() { 0 } else { int.parse().ok()? };
    let frac_v: u128 = if frac.is_empty() {
        0
    } else {
        frac.parse().ok()?
    };
    let den = 10u128.checked_pow(frac.len() as u32)?;
    let num = int_v.checked_mul(den)?.checked_add(frac_v)?;
    if num == 0 || num >= den {
        return None;
    }
    Some((num, den))
}

/// Combination members named by id, resolved once every candidate is expanded.
type PendingMembers = Vec<(usize, Vec<(String, Node)>)>;

fn decode_candidate(
    ctx: &mut Ctx,
    item: &Node,
    index: usize,
    predictors: &Declared,
    out: &mut Vec<Candidate>,
    pending: &mut PendingMembers,
) {
    let path = format!("candidates[{index}]");
    let family_name = match &item.kind {
        Kind::Map(_) => None,
        _ => {
            ctx.error(
                item,
                format!(
                    "{path} must be a mapping with a 'family', e.g. {{family: ar, lags: [1, 2]}}"
                ),
            );
            return;
        }
    }
    .or_else(|| {
        if let Kind::Map(entries) = &item.kind {
            entries
                .iter()
                .find(|(k, _)| matches!(&k.kind, Kind::Scalar(s, _) if s == "family"))
                .map(|(_, v)| v.clone())
        } else {
            None
        }
    });
    let Some(family_node) = family_name else {
        ctx.error(
            item,
            format!("{path} needs 'family': one of {}", FAMILIES.join(", ")),
        );
        return;
    };
    let Some(family) = ctx.choice(&family_node, &format!("{path}.family"), FAMILIES) else {
        return;
    };
    if ["arima", "smoothing", "combination"].contains(&family.as_str()) {
        decode_other_family(ctx, item, &path, &family, out, pending);
        return;
    }
    let (allowed, later): (&[&str], &[&str]) = match family.as_str() {
        "ar" => (
            &["family", "label", "lags", "trend", "select", "max_lags"],
            &[],
        ),
        "ardl" => (
            &[
                "family",
                "label",
                "lags",
                "trend",
                "predictors",
                "predictor_lags",
                "select",
                "max_lags",
            ],
            &[],
        ),
        _ => (&["family", "label"], &[]),
    };
    let Some(view) = ctx.map(item, &path, allowed, later) else {
        return;
    };
    if later.iter().any(|k| view.get(k).is_some()) {
        return;
    }
    let Ok(label) = candidate_label(ctx, &view, &path) else {
        return;
    };
    let base = label.unwrap_or_else(|| family.clone());
    let trend = match view.get("trend") {
        Some(n) => match ctx
            .choice(n, &format!("{path}.trend"), &Trend::NAMES)
            .and_then(|s| Trend::parse(&s))
        {
            Some(t) => t,
            None => return,
        },
        None => Trend::Constant,
    };
    let trend_suffix = if trend == Trend::Constant {
        String::new()
    } else {
        format!(",{}", trend.name())
    };
    let line = item.line;
    // Order selection: `select` with `max_lags` replaces `lags` (and `predictor_lags`).
    let select = match view.get("select") {
        Some(n) => {
            let Some(criterion) = ctx
                .choice(n, &format!("{path}.select"), &Criterion::NAMES)
                .and_then(|s| Criterion::parse(&s))
            else {
                return;
            };
            for key in ["lags", "predictor_lags"] {
                if let Some(k) = view.key_node(key) {
                    ctx.error(k, format!("{path}: '{key}' cannot be combined with 'select'; the order is chosen up to 'max_lags'"));
                }
            }
            let Some(max) = (match view.get("max_lags") {
                Some(m) => ctx.integer(m, &format!("{path}.max_lags"), 1),
                None => {
                    ctx.error(
                        item,
                        format!("{path}: 'select' needs 'max_lags': the largest order to consider"),
                    );
                    None
                }
            }) else {
                return;
            };
            if max > 1000 {
                ctx.error(
                    item,
                    format!("{path}.max_lags {max} is larger than any data set could support"),
                );
                return;
            }
            Some((criterion, max as usize))
        }
        None => {
            if let Some(k) = view.key_node("max_lags") {
                ctx.error(k, format!("{path}: 'max_lags' goes with 'select: aic|bic|hqic'; without select, list the orders under 'lags'"));
                return;
            }
            None
        }
    };
    if let (Some((criterion, max_lags)), "ar") = (select, family.as_str()) {
        out.push(Candidate {
            id: format!("{base}({},{max_lags}{trend_suffix})", criterion.name()),
            family: Family::ArSelect {
                criterion,
                max_lags,
                trend,
            },
            line,
        });
        return;
    }
    match family.as_str() {
        "naive" => out.push(Candidate {
            id: base,
            family: Family::Naive,
            line,
        }),
        "mean" => out.push(Candidate {
            id: base,
            family: Family::Mean,
            line,
        }),
        "drift" => out.push(Candidate {
            id: base,
            family: Family::Drift,
            line,
        }),
        "seasonal_naive" => out.push(Candidate {
            id: base,
            family: Family::SeasonalNaive,
            line,
        }),
        "ar" => {
            let Some(lags_node) = view.get("lags") else {
                ctx.error(item, format!("{path}: ar needs 'lags': a list of orders like [1, 2, 4] or {{from: 1, to: 8}}"));
                return;
            };
            let Some(orders) = ctx.orders(lags_node, &format!("{path}.lags"), 1) else {
                return;
            };
            for p in orders {
                out.push(Candidate {
                    id: format!("{base}({p}{trend_suffix})"),
                    family: Family::Ar { lags: p, trend },
                    line,
                });
            }
        }
        "ardl" if select.is_some() => {
            let Some((criterion, max_lags)) = select else {
                return;
            };
            let Some(chosen) = ardl_predictors(ctx, item, &view, &path, predictors) else {
                return;
            };
            out.push(Candidate {
                id: format!("{base}({},{max_lags}{trend_suffix})", criterion.name()),
                family: Family::ArdlSelect {
                    criterion,
                    max_lags,
                    predictors: chosen,
                    trend,
                },
                line,
            });
        }
        "ardl" => {
            let lags = match view.get("lags") {
                Some(n) => ctx.orders(n, &format!("{path}.lags"), 0),
                None => {
                    ctx.error(item, format!("{path}: ardl needs 'lags': the orders p of the target's own lags (0 allowed)"));
                    None
                }
            };
            let qs = match view.get("predictor_lags") {
                Some(n) => ctx.orders(n, &format!("{path}.predictor_lags"), 1),
                None => {
                    ctx.error(item, format!("{path}: ardl needs 'predictor_lags': the orders q of each predictor's lags"));
                    None
                }
            };
            let chosen = ardl_predictors(ctx, item, &view, &path, predictors);
            let (Some(lags), Some(qs), Some(chosen)) = (lags, qs, chosen) else {
                return;
            };
            for &p in &lags {
                for &q in &qs {
                    out.push(Candidate {
                        id: format!("{base}({p},{q}{trend_suffix})"),
                        family: Family::Ardl {
                            lags: p,
                            predictor_lags: q,
                            predictors: chosen.clone(),
                            trend,
                        },
                        line,
                    });
                }
            }
        }
        _ => {}
    }
}

fn candidate_label(
    ctx: &mut Ctx,
    view: &decode::MapView,
    path: &str,
) -> std::result::Result<Option<String>, ()> {
    match view.get("label") {
        Some(n) => match ctx.string(n, &format!("{path}.label")) {
            Some(s)
                if !s.is_empty()
                    && s.bytes().all(|b| {
                        b.is_ascii_alphanumeric() || b == b'_' || b == b'-' || b == b'.'
                    }) =>
            {
                Ok(Some(s))
            }
            Some(s) => {
                ctx.error(
                    n,
                    format!("{path}.label '{s}' must use only letters, digits, '_', '-' and '.'"),
                );
                Err(())
            }
            None => Err(()),
        },
        None => Ok(None),
    }
}

/// A list of names from a closed set, e.g. smoothing trends.
fn names(ctx: &mut Ctx, node: &Node, what: &str, options: &[&str]) -> Option<Vec<usize>> {
    let mut out = Vec::new();
    let items = ctx.list(node);
    if items.is_empty() {
        ctx.error(node, format!("{what} is an empty list"));
        return None;
    }
    for item in items {
        let s = ctx.choice(item, what, options)?;
        let i = options.iter().position(|o| *o == s)?;
        if out.contains(&i) {
            ctx.error(item, format!("{what} lists '{s}' twice"));
            return None;
        }
        out.push(i);
    }
    Some(out)
}

/// arima, smoothing and combination entries (SPEC §2–§4).
fn decode_other_family(
    ctx: &mut Ctx,
    item: &Node,
    path: &str,
    family: &str,
    out: &mut Vec<Candidate>,
    pending: &mut PendingMembers,
) {
    let line = item.line;
    match family {
        "arima" => {
            let Some(view) = ctx.map(
                item,
                path,
                &["family", "label", "p", "d", "q", "trend", "select"],
                &[],
            ) else {
                return;
            };
            let Ok(label) = candidate_label(ctx, &view, path) else {
                return;
            };
            let base = label.unwrap_or_else(|| "arima".into());
            let mut grid = |key: &str| match view.get(key) {
                Some(n) => ctx.orders(n, &format!("{path}.{key}"), 0),
                None => Some(vec![0]),
            };
            let (Some(ps), Some(ds), Some(qs)) = (grid("p"), grid("d"), grid("q")) else {
                return;
            };
            for (key, values, max) in [("p", &ps, 12), ("d", &ds, 2), ("q", &qs, 12)] {
                if let Some(v) = values.iter().find(|v| **v > max) {
                    let node = view.get(key).cloned().unwrap_or_else(|| item.clone());
                    ctx.error(
                        &node,
                        format!(
                            "{path}.{key} = {v} is larger than outturn estimates (at most {max})"
                        ),
                    );
                    return;
                }
            }
            let drift = match view.get("trend") {
                Some(n) => match ctx
                    .choice(n, &format!("{path}.trend"), &["none", "drift"])
                    .as_deref()
                {
                    Some("drift") => {
                        if ds.contains(&0) {
                            ctx.error(n, format!("{path}: trend drift needs d ≥ 1 (with d = 0 a constant mean is always estimated); remove 0 from d"));
                            return;
                        }
                        true
                    }
                    Some(_) => false,
                    None => return,
                },
                None => false,
            };
            let suffix = if drift { ",drift" } else { "" };
            match view.get("select") {
                Some(n) => {
                    let Some(criterion) = ctx
                        .choice(n, &format!("{path}.select"), &Criterion::NAMES)
                        .and_then(|s| Criterion::parse(&s))
                    else {
                        return;
                    };
                    let max_p = ps.iter().copied().max().unwrap_or(0);
                    let max_q = qs.iter().copied().max().unwrap_or(0);
                    for &d in &ds {
                        out.push(Candidate {
                            id: format!("{base}({},{max_p},{d},{max_q}{suffix})", criterion.name()),
                            family: Family::ArimaSelect {
                                criterion,
                                ps: ps.clone(),
                                d,
                                qs: qs.clone(),
                                drift,
                            },
                            line,
                        });
                    }
                }
                None => {
                    for &p in &ps {
                        for &d in &ds {
                            for &q in &qs {
                                out.push(Candidate {
                                    id: format!("{base}({p},{d},{q}{suffix})"),
                                    family: Family::Arima { p, d, q, drift },
                                    line,
                                });
                            }
                        }
                    }
                }
            }
        }
        "smoothing" => {
            let Some(view) = ctx.map(item, path, &["family", "label", "trend", "season"], &[])
            else {
                return;
            };
            let Ok(label) = candidate_label(ctx, &view, path) else {
                return;
            };
            let base = label.unwrap_or_else(|| "smoothing".into());
            let trends = match view.get("trend") {
                Some(n) => names(ctx, n, &format!("{path}.trend"), &SmoothingTrend::NAMES),
                None => Some(vec![0]),
            };
            let seasons = match view.get("season") {
                Some(n) => names(ctx, n, &format!("{path}.season"), &SmoothingSeason::NAMES),
                None => Some(vec![0]),
            };
            let (Some(trends), Some(seasons)) = (trends, seasons) else {
                return;
            };
            const TRENDS: [SmoothingTrend; 3] = [
                SmoothingTrend::None,
                SmoothingTrend::Additive,
                SmoothingTrend::Damped,
            ];
            const SEASONS: [SmoothingSeason; 3] = [
                SmoothingSeason::None,
                SmoothingSeason::Additive,
                SmoothingSeason::Multiplicative,
            ];
            for &t in &trends {
                for &s in &seasons {
                    let (trend, season) = (TRENDS[t], SEASONS[s]);
                    out.push(Candidate {
                        id: format!("{base}({},{})", trend.name(), season.name()),
                        family: Family::Smoothing { trend, season },
                        line,
                    });
                }
            }
        }
        _ => {
            let Some(view) = ctx.map(item, path, &["family", "label", "members", "weights"], &[])
            else {
                return;
            };
            let Ok(label) = candidate_label(ctx, &view, path) else {
                return;
            };
            let base = label.unwrap_or_else(|| "combination".into());
            let weights = match view.get("weights") {
                Some(n) => match ctx
                    .choice(n, &format!("{path}.weights"), &CombinationWeights::NAMES)
                    .as_deref()
                {
                    Some("inverse_mse") => CombinationWeights::InverseMse,
                    Some("trimmed") => CombinationWeights::Trimmed,
                    Some(_) => CombinationWeights::Equal,
                    None => return,
                },
                None => CombinationWeights::Equal,
            };
            let Some(members_node) = view.get("members") else {
                ctx.error(item, format!("{path}: combination needs 'members': the candidate ids to combine, e.g. [\"ar(1)\", \"ardl(1,1)\"]"));
                return;
            };
            let mut members = Vec::new();
            for m in ctx.list(members_node) {
                if let Some(id) = ctx.string(m, &format!("{path}.members")) {
                    if members.iter().any(|(x, _): &(String, Node)| *x == id) {
                        ctx.error(m, format!("{path}.members names '{id}' twice"));
                        return;
                    }
                    members.push((id, m.clone()));
                }
            }
            let min = if weights == CombinationWeights::Trimmed {
                3
            } else {
                2
            };
            if members.len() < min {
                ctx.error(
                    members_node,
                    format!(
                        "{path}: a {} combination needs at least {min} members",
                        weights.name()
                    ),
                );
                return;
            }
            pending.push((out.len(), members));
            out.push(Candidate {
                id: format!("{base}({})", weights.name()),
                family: Family::Combination {
                    members: Vec::new(),
                    weights,
                },
                line,
            });
        }
    }
}

/// The top-level predictors as far as they could be read.
struct Declared<'a> {
    list: &'a [Predictor],
    /// Columns whose declaration has an error of its own.
    failed: &'a [String],
    /// Some declaration could not be read at all (no column name).
    unreadable: bool,
}

/// The declared predictors an ardl entry names, as indices; None when
/// missing, empty or unknown (each reported, unless the declaration itself
/// was already reported).
fn ardl_predictors(
    ctx: &mut Ctx,
    item: &Node,
    view: &decode::MapView,
    path: &str,
    declared: &Declared,
) -> Option<Vec<usize>> {
    let predictors = declared.list;
    let mut chosen = Vec::new();
    match view.get("predictors") {
        Some(n) => {
            let items = ctx.list(n);
            if items.is_empty() {
                ctx.error(
                    n,
                    format!("{path}.predictors is empty; name at least one declared predictor"),
                );
            }
            for p in items {
                let Some(col) = ctx.string(p, &format!("{path}.predictors")) else {
                    continue;
                };
                match predictors.iter().position(|d| d.column == col) {
                    Some(i) if chosen.contains(&i) => {
                        ctx.error(p, format!("{path}.predictors names '{col}' twice"))
                    }
                    Some(i) => chosen.push(i),
                    None if declared.unreadable || declared.failed.contains(&col) => {}
                    None => {
                        let names: Vec<&str> =
                            predictors.iter().map(|d| d.column.as_str()).collect();
                        let hint = nearest(&col, &names)
                            .map(|n| format!(" did you mean '{n}'?"))
                            .unwrap_or_default();
                        ctx.error(
                                    p,
                                    format!("{path}.predictors: '{col}' is not declared under the top-level 'predictors' key.{hint} Declared: {}",
                                        if names.is_empty() { "none".to_string() } else { names.join(", ") }),
                                );
                    }
                }
            }
        }
        None => ctx.error(
            item,
            format!("{path}: ardl needs 'predictors': the declared predictor columns it uses"),
        ),
    }
    if chosen.is_empty() {
        None
    } else {
        Some(chosen)
    }
}

struct Scoring {
    metrics: Vec<Metric>,
    rank_by: Metric,
    benchmark: Option<(String, Node)>,
    intervals: Vec<IntervalLevel>,
    tests: TestsSpec,
    periods: Vec<PeriodSet>,
    /// Where each period set is written, for messages.
    period_nodes: Vec<Node>,
    rolling_window: Option<usize>,
}

impl Default for Scoring {
    fn default() -> Self {
        Scoring {
            metrics: Metric::ALL[..7].to_vec(),
            rank_by: Metric::Rmse,
            benchmark: None,
            intervals: Vec::new(),
            tests: TestsSpec::default(),
            periods: Vec::new(),
            rolling_window: None,
            period_nodes: Vec::new(),
        }
    }
}

/// A positive count such as a number of bootstrap resamples.
fn count(ctx: &mut Ctx, node: &Node, what: &str, min: i64, max: i64) -> Option<usize> {
    let v = ctx.integer(node, what, min)?;
    if v > max {
        ctx.error(node, format!("{what} must be at most {max}, found {v}"));
        return None;
    }
    Some(v as usize)
}

/// A probability strictly between 0 and 1.
fn share(ctx: &mut Ctx, node: &Node, what: &str) -> Option<f64> {
    let text = ctx.string(node, what)?;
    match text.trim().parse::<f64>() {
        Ok(v) if v > 0.0 && v < 1.0 => Some(v),
        _ => {
            ctx.error(
                node,
                format!("{what} must be a number strictly between 0 and 1, found '{text}'"),
            );
            None
        }
    }
}

/// `80` for 0.8, `97.5` for 0.975: the level in percent without trailing zeros.
fn percent_text(level: f64) -> String {
    let p = format!("{:.6}", level * 100.0);
    p.trim_end_matches('0').trim_end_matches('.').to_string()
}

fn decode_scoring(ctx: &mut Ctx, node: &Node, frequency: Option<Frequency>) -> Scoring {
    let mut out = Scoring::default();
    let Some(view) = ctx.map(
        node,
        "scoring",
        &[
            "metrics",
            "rank_by",
            "benchmark",
            "intervals",
            "tests",
            "periods",
            "rolling_window",
        ],
        &[],
    ) else {
        return out;
    };
    if let Some(i) = view.get("intervals") {
        for item in ctx.list(i) {
            let percent_given = match &item.kind {
                Kind::Scalar(t, _) => t
                    .trim()
                    .trim_end_matches('%')
                    .parse::<f64>()
                    .ok()
                    .filter(|v| *v >= 10.0 && *v < 100.0),
                _ => None,
            };
            if let Some(p) = percent_given {
                ctx.error(
                    item,
                    format!(
                        "scoring.intervals lists levels as fractions: write {} for {p}%",
                        p / 100.0
                    ),
                );
                continue;
            }
            if let Some(level) = share(ctx, item, "scoring.intervals") {
                let percent = percent_text(level);
                if out.intervals.iter().any(|l| l.percent == percent) {
                    ctx.error(item, format!("interval level {level} is listed twice"));
                } else {
                    out.intervals.push(IntervalLevel { level, percent });
                }
            }
        }
        out.intervals.sort_by(|a, b| a.level.total_cmp(&b.level));
    }
    if let Some(m) = view.get("metrics") {
        let mut metrics = Vec::new();
        for item in ctx.list(m) {
            let Some(name) = ctx.string(item, "scoring.metrics") else {
                continue;
            };
            if let Some(metric) = ctx
                .choice(item, "metric", &Metric::NAMES)
                .and_then(|s| Metric::parse(&s))
            {
                if metrics.contains(&metric) {
                    ctx.error(item, format!("metric '{name}' is listed twice"));
                } else if metric.per_level() && out.intervals.is_empty() {
                    ctx.error(item, format!("metric '{name}' is scored per interval level; list the levels under scoring.intervals, e.g. [0.8, 0.95]"));
                } else {
                    metrics.push(metric);
                }
            }
        }
        if metrics.is_empty() && !matches!(&m.kind, Kind::Seq(v) if !v.is_empty()) {
            ctx.error(
                m,
                "scoring.metrics is empty; list at least one metric, e.g. [rmse, mae]",
            );
        }
        out.metrics = metrics;
    }
    match view.get("rank_by") {
        Some(r) => {
            if let Some(metric) = ctx
                .choice(r, "scoring.rank_by", &Metric::NAMES)
                .and_then(|s| Metric::parse(&s))
            {
                if metric.per_level() {
                    ctx.error(r, format!("rank_by '{}' has one value per interval level; rank by rmse, mae, crps or another single-valued metric", metric.name()));
                } else if !out.metrics.contains(&metric) {
                    ctx.error(
                        r,
                        format!(
                            "rank_by '{}' must also be listed in scoring.metrics",
                            metric.name()
                        ),
                    );
                }
                out.rank_by = metric;
            }
        }
        None => {
            if !out.metrics.contains(&Metric::Rmse) {
                if let Some(m) = out.metrics.iter().find(|m| !m.per_level()) {
                    out.rank_by = *m;
                }
            }
        }
    }
    if let Some(b) = view.get("benchmark") {
        out.benchmark = ctx.string(b, "scoring.benchmark").map(|s| (s, b.clone()));
    }
    if let Some(w) = view.get("rolling_window") {
        out.rolling_window = count(ctx, w, "scoring.rolling_window", 2, 1_000_000);
    }
    if let Some(t) = view.get("tests") {
        if let Some(tv) = ctx.map(
            t,
            "scoring.tests",
            &[
                "diebold_mariano",
                "clark_west",
                "confidence_set",
                "snooping",
            ],
            &[],
        ) {
            if let Some(n) = tv.get("diebold_mariano") {
                out.tests.diebold_mariano = ctx
                    .boolean(n, "scoring.tests.diebold_mariano")
                    .unwrap_or(false);
            }
            if let Some(n) = tv.get("clark_west") {
                // true: pairs with the benchmark; all_pairs: every nested pair.
                match ctx.string(n, "scoring.tests.clark_west").as_deref() {
                    Some("true") => out.tests.clark_west = true,
                    Some("false") => {}
                    Some("all_pairs") => {
                        out.tests.clark_west = true;
                        out.tests.clark_west_all_pairs = true;
                    }
                    Some(other) => ctx.error(n, format!("scoring.tests.clark_west must be true, false or all_pairs, found '{other}'")),
                    None => {}
                }
            }
            if let Some(n) = tv.get("confidence_set") {
                if let Some(cv) = ctx.map(
                    n,
                    "scoring.tests.confidence_set",
                    &["alpha", "resamples"],
                    &[],
                ) {
                    let alpha = match cv.get("alpha") {
                        Some(a) => share(ctx, a, "scoring.tests.confidence_set.alpha"),
                        None => Some(0.10),
                    };
                    let resamples = match cv.get("resamples") {
                        Some(r) => count(
                            ctx,
                            r,
                            "scoring.tests.confidence_set.resamples",
                            1,
                            1_000_000,
                        ),
                        None => Some(2000),
                    };
                    if let (Some(alpha), Some(resamples)) = (alpha, resamples) {
                        out.tests.confidence_set = Some(ConfidenceSetSpec { alpha, resamples });
                    }
                }
            }
            if let Some(n) = tv.get("snooping") {
                if let Some(sv) = ctx.map(n, "scoring.tests.snooping", &["resamples"], &[]) {
                    let resamples = match sv.get("resamples") {
                        Some(r) => count(ctx, r, "scoring.tests.snooping.resamples", 1, 1_000_000),
                        None => Some(2000),
                    };
                    if let Some(resamples) = resamples {
                        out.tests.snooping = Some(SnoopingSpec { resamples });
                    }
                }
            }
        }
    }
    if let Some(p) = view.get("periods") {
        match &p.kind {
            Kind::Map(entries) => {
                for (key, value) in entries {
                    let Some(name) = ctx.string(key, "scoring.periods name") else {
                        continue;
                    };
                    if name == "all" || name.is_empty() || !name.bytes().all(|b| b.is_ascii_alphanumeric() || b == b'_' || b == b'-') {
                        ctx.error(key, format!("scoring.periods: '{name}' cannot name a period set (use letters, digits, '_' or '-', and not 'all')"));
                        continue;
                    }
                    if out.periods.iter().any(|p| p.name == name) {
                        ctx.error(key, format!("scoring.periods: '{name}' is given twice"));
                        continue;
                    }
                    let bounds: Vec<&Node> = match &value.kind {
                        Kind::Seq(items) => items.iter().collect(),
                        _ => Vec::new(),
                    };
                    if bounds.len() != 2 {
                        ctx.error(value, format!("scoring.periods.{name} must be [first, last] target periods, e.g. [1996Q1, 2003Q4]"));
                        continue;
                    }
                    let (Some(from), Some(to)) = (
                        ctx.string(bounds[0], &format!("scoring.periods.{name}")),
                        ctx.string(bounds[1], &format!("scoring.periods.{name}")),
                    ) else {
                        continue;
                    };
                    let Some(freq) = frequency else { continue };
                    let parse = |ctx: &mut Ctx, text: &str, node: &Node| match period::parse_label(freq, text) {
                        Ok((o, _)) => Some(o),
                        Err(e) => {
                            ctx.error(node, format!("scoring.periods.{name}: {e}"));
                            None
                        }
                    };
                    let (Some(from_ordinal), Some(to_ordinal)) = (parse(ctx, &from, bounds[0]), parse(ctx, &to, bounds[1])) else {
                        continue;
                    };
                    if to_ordinal < from_ordinal {
                        ctx.error(value, format!("scoring.periods.{name}: '{to}' comes before '{from}'"));
                        continue;
                    }
                    out.periods.push(PeriodSet { name, from, to, from_ordinal, to_ordinal });
                    out.period_nodes.push(key.clone());
                }
            }
            _ if p.is_null() => {}
            _ => ctx.error(p, "scoring.periods must map names to [first, last] periods, e.g. calm: [1996Q1, 2003Q4]"),
        }
    }
    out
}

pub mod resolve;

#[cfg(test)]
mod tests {
    use super::*;
    #[test]
    fn train_share_is_read_exactly() {
        assert_eq!(parse_share("0.5"), Some((5, 10)));
        assert_eq!(parse_share(".75"), Some((75, 100)));
        assert_eq!(parse_share("1"), None);
        assert_eq!(parse_share("0"), None);
        assert_eq!(parse_share("1e-1"), None);
    }
}
