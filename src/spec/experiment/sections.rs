//! The small top-level sections of the experiment file: `data`, `target`,
//! `backtest`, `report` and `audit`, each decoded with its own checks.

use super::DataKeys;
use crate::spec::decode::Ctx;
use crate::spec::limits;
use crate::spec::period::Frequency;
use crate::spec::schemes::{decode_schemes, PendingScheme};
use crate::spec::yaml::{Kind, Node};
use crate::spec::{Layout, MultiStep, ReportFormat};

/// `audit`: the look-ahead audit's origins per cell (docs/experiment-file.md#audit).
pub(super) fn decode_audit(ctx: &mut Ctx, node: &Node) -> Option<usize> {
    let view = ctx.map(node, "audit", &["origins"], &[])?;
    let Some(n) = view.get("origins") else {
        return Some(limits::DEFAULT_AUDIT_ORIGINS);
    };
    let k = ctx.integer(n, "audit.origins", 1)? as u64;
    if k > limits::MAX_AUDIT_ORIGINS as u64 {
        ctx.refuse(
            n,
            format!(
                "audit.origins {k}: at most {} origins per cell are audited",
                limits::MAX_AUDIT_ORIGINS
            ),
        );
        return None;
    }
    Some(k as usize)
}

/// `report`: the title, the formats (both when none is named) and the
/// number of targets shown in detail (`targets`, default
/// [`limits::REPORT_TARGETS`]).
pub(super) fn decode_report(
    ctx: &mut Ctx,
    node: Option<&Node>,
) -> (Option<String>, Vec<ReportFormat>, usize) {
    let mut title = None;
    let mut formats = vec![ReportFormat::Html, ReportFormat::Markdown];
    let mut targets = limits::REPORT_TARGETS;
    let Some(view) = node.and_then(|r| ctx.map(r, "report", &["formats", "targets", "title"], &[]))
    else {
        return (title, formats, targets);
    };
    if let Some(n) = view.get("targets") {
        targets = match ctx.integer(n, "report.targets", 1) {
            Some(k) if k as usize <= limits::MAX_REPORT_TARGETS => k as usize,
            Some(k) => {
                ctx.refuse(
                    n,
                    format!(
                        "report.targets is {k}; at most {} targets can be shown in detail",
                        limits::MAX_REPORT_TARGETS
                    ),
                );
                targets
            }
            None => targets,
        };
    }
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
                Some("html") if !out.contains(&ReportFormat::Html) => out.push(ReportFormat::Html),
                Some("markdown") if !out.contains(&ReportFormat::Markdown) => {
                    out.push(ReportFormat::Markdown)
                }
                _ => {}
            }
        }
        formats = out;
    }
    (title, formats, targets)
}

/// `data`: the file, the time column, the frequency and an optional span.
pub(super) fn decode_data_keys(ctx: &mut Ctx, d: &Node) -> DataKeys {
    let mut keys = DataKeys::default();
    let Some(view) = ctx.map(
        d,
        "data",
        &[
            "file",
            "time",
            "frequency",
            "start",
            "end",
            "layout",
            "vintage",
        ],
        &[],
    ) else {
        return keys;
    };
    let a = view.anchor();
    match view.get("file") {
        Some(n) => keys.file = ctx.string(n, "data.file").map(|s| (s, n.clone())),
        None => ctx.error(
            &a,
            "data needs 'file': the path of the CSV, relative to the experiment file",
        ),
    }
    match view.get("time") {
        Some(n) => keys.time = ctx.string(n, "data.time").map(|s| (s, n.clone())),
        None => ctx.error(
            &a,
            "data needs 'time': the column holding the period labels",
        ),
    }
    match view.get("frequency") {
        Some(n) => {
            keys.frequency = ctx
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
    keys.start = view
        .get("start")
        .and_then(|n| ctx.string(n, "data.start").map(|s| (s, n.clone())));
    keys.end = view
        .get("end")
        .and_then(|n| ctx.string(n, "data.end").map(|s| (s, n.clone())));
    if let Some(n) = view.get("layout") {
        keys.layout = ctx
            .choice(n, "data.layout", &Layout::NAMES)
            .and_then(|s| Layout::parse(&s));
        keys.layout_node = Some(n.clone());
    }
    if let Some(n) = view.get("vintage") {
        keys.vintage = ctx.string(n, "data.vintage").map(|s| (s, n.clone()));
        if keys.layout != Some(Layout::Vintages) {
            ctx.error(
                n,
                "data.vintage names the vintage column of 'layout: vintages'; set that layout, or remove the key (layout vintage_columns names each vintage in its column header, see docs/experiment-file.md#vintages)",
            );
        }
    }
    keys
}

/// `target`: one column or a list of distinct columns.
pub(super) fn decode_targets(ctx: &mut Ctx, t: &Node) -> Vec<(String, Node)> {
    let mut targets: Vec<(String, Node)> = Vec::new();
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
    targets
}

/// `backtest`: the schemes, the horizons (ascending) and the multi-step rule.
pub(super) fn decode_backtest(
    ctx: &mut Ctx,
    b: &Node,
) -> (Vec<PendingScheme>, Vec<usize>, MultiStep) {
    let mut schemes: Vec<PendingScheme> = Vec::new();
    let mut horizons: Vec<usize> = Vec::new();
    let mut multi_step = MultiStep::Direct;
    let Some(view) = ctx.map(b, "backtest", &["schemes", "horizons", "multi_step"], &[]) else {
        return (schemes, horizons, multi_step);
    };
    let a = view.anchor();
    match view.get("horizons") {
        Some(h) if matches!(&h.kind, Kind::Scalar(t, _) if t.contains(',')) => ctx.error(
            h,
            "backtest.horizons must be a list of whole numbers, e.g. [1, 3] (this is one quoted text)",
        ),
        Some(h) => {
            for item in ctx.list(h) {
                if let Some(v) = ctx.integer(item, "backtest.horizons", 1) {
                    if horizons.contains(&(v as usize)) {
                        ctx.error(item, format!("horizon {v} is listed twice"));
                    } else if v as usize > limits::MAX_HORIZON {
                        ctx.refuse(
                            item,
                            format!("horizon {v} is larger than any data set could support"),
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
    (schemes, horizons, multi_step)
}
