//! The candidates (SPEC §2, §3): each entry of `candidates` expands into
//! one checked candidate per grid point, with its id. The lag families and
//! the benchmarks are here; arima, smoothing and combinations in `families`.

use super::decode::{Ctx, MapView};
use super::yaml::{Kind, Node};
use super::{Candidate, Criterion, Dummy, DummyColumn, Family, Predictor, Transform, Trend};
use crate::error::nearest;

pub(super) const FAMILIES: &[&str] = &[
    "naive",
    "mean",
    "drift",
    "seasonal_naive",
    "ar",
    "ardl",
    "arima",
    "smoothing",
    "theta",
    "combination",
];

/// Combination members named by id, resolved once every candidate is expanded.
pub(super) type PendingMembers = Vec<(usize, Vec<(String, Node)>)>;

pub(super) fn decode_candidate(
    ctx: &mut Ctx,
    item: &Node,
    index: usize,
    predictors: &PredictorNames,
    out: &mut Vec<Candidate>,
    pending: &mut PendingMembers,
    transforms: &mut Vec<Node>,
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
    let (item, transform) = split_transform(item);
    let item = &item;
    let first = out.len();
    match family.as_str() {
        "arima" => super::families::decode_arima(ctx, item, &path, predictors, out),
        "smoothing" => super::families::decode_smoothing(ctx, item, &path, out),
        "theta" => super::theta::decode_theta(ctx, item, &path, out),
        "combination" => super::families::decode_combination(ctx, item, &path, out, pending),
        _ => decode_lag_family(ctx, item, &path, &family, predictors, out),
    }
    let Some(node) = transform else {
        return;
    };
    if family == "combination" {
        ctx.error(&node, format!("{path}.transform: a combination is formed from its members' forecasts in the data's units; give the members their transforms instead (see docs/experiment-file.md#units)"));
        return;
    }
    let Some(t) = ctx
        .choice(&node, &format!("{path}.transform"), &Transform::NAMES)
        .and_then(|s| Transform::parse(&s))
    else {
        return;
    };
    for c in &mut out[first..] {
        c.transform = Some(t);
    }
    transforms.push(node);
}

/// The entry without its `transform` key (which every family accepts),
/// and that key's value.
fn split_transform(item: &Node) -> (Node, Option<Node>) {
    let mut rest = item.clone();
    let mut found = None;
    if let Kind::Map(entries) = &mut rest.kind {
        entries.retain(|(k, v)| {
            let is = matches!(&k.kind, Kind::Scalar(s, _) if s == "transform");
            if is {
                found = Some(v.clone());
            }
            !is
        });
    }
    (rest, found)
}

/// The benchmarks, ar and ardl: lags or an order chosen by `select`, and a trend.
///
/// The keys shared by the lag families are decoded in turn, then one arm
/// per family expands the grid: the length is the key and family count.
fn decode_lag_family(
    ctx: &mut Ctx,
    item: &Node,
    path: &str,
    family: &str,
    predictors: &PredictorNames,
    out: &mut Vec<Candidate>,
) {
    let allowed: &[&str] = match family {
        "ar" => &["family", "label", "lags", "trend", "select", "max_lags"],
        "ardl" => &[
            "family",
            "label",
            "lags",
            "trend",
            "predictors",
            "predictor_lags",
            "select",
            "max_lags",
        ],
        _ => &["family", "label"],
    };
    let Some(view) = ctx.map(item, path, allowed, &[]) else {
        return;
    };
    let Ok(label) = candidate_label(ctx, &view, path) else {
        return;
    };
    let base = label.unwrap_or_else(|| family.to_string());
    let Some(trend) = decode_trend(ctx, &view, path) else {
        return;
    };
    let trend_suffix = if trend == Trend::Constant {
        String::new()
    } else {
        format!(",{}", trend.name())
    };
    let line = item.line;
    // Order selection: `select` with `max_lags` replaces `lags` (and `predictor_lags`).
    let Ok(select) = decode_select(ctx, item, &view, path, family) else {
        return;
    };
    if let (Some((criterion, max_lags)), "ar") = (select, family) {
        out.push(Candidate {
            id: format!("{base}({},{max_lags}{trend_suffix})", criterion.name()),
            family: Family::ArSelect {
                criterion,
                max_lags,
                trend,
            },
            line,
            transform: None,
        });
        return;
    }
    let benchmark = match family {
        "naive" => Some(Family::Naive),
        "mean" => Some(Family::Mean),
        "drift" => Some(Family::Drift),
        "seasonal_naive" => Some(Family::SeasonalNaive),
        _ => None,
    };
    if let Some(family) = benchmark {
        out.push(Candidate {
            id: base,
            family,
            line,
            transform: None,
        });
        return;
    }
    match family {
        "ar" => expand_ar(
            ctx,
            item,
            &view,
            path,
            Entry {
                base,
                trend_suffix,
                trend,
                line,
            },
            out,
        ),
        "ardl" => {
            let entry = Entry {
                base,
                trend_suffix,
                trend,
                line,
            };
            expand_ardl(ctx, item, &view, path, select, predictors, entry, out)
        }
        _ => {}
    }
}

/// `trend` of a lag family (default: a constant). None after an error.
fn decode_trend(ctx: &mut Ctx, view: &MapView, path: &str) -> Option<Trend> {
    match view.get("trend") {
        Some(n) => ctx
            .choice(n, &format!("{path}.trend"), &Trend::NAMES)
            .and_then(|s| Trend::parse(&s)),
        None => Some(Trend::Constant),
    }
}

/// What every candidate of one entry shares: the id's base (family or
/// label), the trend and its id suffix, and the entry's line.
struct Entry {
    base: String,
    trend_suffix: String,
    trend: Trend,
    line: usize,
}

/// `family: ar` with `lags`: one candidate per order.
fn expand_ar(
    ctx: &mut Ctx,
    item: &Node,
    view: &MapView,
    path: &str,
    e: Entry,
    out: &mut Vec<Candidate>,
) {
    let Some(lags_node) = view.get("lags") else {
        ctx.error(
            item,
            format!(
                "{path}: ar needs 'lags': a list of orders like [1, 2, 4] or {{from: 1, to: 8}}"
            ),
        );
        return;
    };
    let Some(orders) = ctx.orders(lags_node, &format!("{path}.lags"), 1) else {
        return;
    };
    for p in orders {
        out.push(Candidate {
            id: format!("{}({p}{})", e.base, e.trend_suffix),
            family: Family::Ar {
                lags: p,
                trend: e.trend,
            },
            line: e.line,
            transform: None,
        });
    }
}

/// `family: ardl`: one candidate per (lags, predictor_lags) pair, or one
/// that selects its orders.
#[allow(clippy::too_many_arguments)]
fn expand_ardl(
    ctx: &mut Ctx,
    item: &Node,
    view: &MapView,
    path: &str,
    select: Option<(Criterion, usize)>,
    predictors: &PredictorNames,
    e: Entry,
    out: &mut Vec<Candidate>,
) {
    if let Some((criterion, max_lags)) = select {
        let Some(chosen) = ardl_predictors(ctx, item, view, path, predictors) else {
            return;
        };
        out.push(Candidate {
            id: format!(
                "{}({},{max_lags}{})",
                e.base,
                criterion.name(),
                e.trend_suffix
            ),
            family: Family::ArdlSelect {
                criterion,
                max_lags,
                predictors: chosen,
                trend: e.trend,
            },
            line: e.line,
            transform: None,
        });
        return;
    }
    let lags = match view.get("lags") {
        Some(n) => ctx.orders(n, &format!("{path}.lags"), 0),
        None => {
            ctx.error(
                item,
                format!(
                    "{path}: ardl needs 'lags': the orders p of the target's own lags (0 allowed)"
                ),
            );
            None
        }
    };
    let qs = match view.get("predictor_lags") {
        Some(n) => ctx.orders(n, &format!("{path}.predictor_lags"), 1),
        None => {
            ctx.error(
                item,
                format!(
                    "{path}: ardl needs 'predictor_lags': the orders q of each predictor's lags"
                ),
            );
            None
        }
    };
    let chosen = ardl_predictors(ctx, item, view, path, predictors);
    let (Some(lags), Some(qs), Some(chosen)) = (lags, qs, chosen) else {
        return;
    };
    for &p in &lags {
        for &q in &qs {
            out.push(Candidate {
                id: format!("{}({p},{q}{})", e.base, e.trend_suffix),
                family: Family::Ardl {
                    lags: p,
                    predictor_lags: q,
                    predictors: chosen.clone(),
                    trend: e.trend,
                },
                line: e.line,
                transform: None,
            });
        }
    }
}

pub(super) fn candidate_label(
    ctx: &mut Ctx,
    view: &MapView,
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
pub(super) fn names(
    ctx: &mut Ctx,
    node: &Node,
    what: &str,
    options: &[&str],
) -> Option<Vec<usize>> {
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

/// `select` with `max_lags`: Ok(None) without select, Err(()) when reported.
fn decode_select(
    ctx: &mut Ctx,
    item: &Node,
    view: &MapView,
    path: &str,
    family: &str,
) -> Result<Option<(Criterion, usize)>, ()> {
    Ok(match view.get("select") {
        Some(n) => {
            let Some(criterion) = ctx
                .choice(n, &format!("{path}.select"), &Criterion::NAMES)
                .and_then(|s| Criterion::parse(&s))
            else {
                return Err(());
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
                return Err(());
            };
            // Every order up to max_lags is fitted in every window (for ardl
            // every (p, q) pair): the search is bounded, not only the order.
            let cap = if family == "ardl" {
                super::limits::MAX_ARDL_SEARCH
            } else {
                super::limits::MAX_AR_SEARCH
            };
            if max > cap as i64 {
                ctx.refuse(
                    item,
                    format!("{path}.max_lags {max} is more than outturn searches for {family} (at most {cap}: every order up to it is fitted in every window)"),
                );
                return Err(());
            }
            Some((criterion, max as usize))
        }
        None => {
            if let Some(k) = view.key_node("max_lags") {
                ctx.error(k, format!("{path}: 'max_lags' goes with 'select: aic|bic|hqic'; without select, list the orders under 'lags'"));
                return Err(());
            }
            None
        }
    })
}

/// The top-level predictors and dummies as far as they could be read, and
/// the season length (None: the frequency could not be read).
pub(super) struct PredictorNames<'a> {
    pub list: &'a [Predictor],
    /// Columns whose declaration has an error of its own.
    pub failed: &'a [String],
    /// Some declaration could not be read at all (no column name).
    pub unreadable: bool,
    pub dummies: &'a [Dummy],
    pub dummy_columns: &'a [DummyColumn],
    /// Dummies whose entry has an error of its own.
    pub dummies_failed: &'a [String],
    pub season: Option<Option<usize>>,
    pub frequency_name: &'static str,
}

/// The regressors a candidate names under `predictors`: declared
/// predictors and dummies, as indices into the predictors followed by the
/// dummy columns (a dummy gives all of its columns). On arima
/// (`known_ahead_only`) a predictor must be known ahead: the regression's
/// x_{T+h} must be known at the origin. None when empty or wrong (each
/// problem reported, unless its declaration was already).
pub(super) fn regressor_indices(
    ctx: &mut Ctx,
    n: &Node,
    what: &str,
    declared: &PredictorNames,
    known_ahead_only: bool,
) -> Option<Vec<usize>> {
    let predictors = declared.list;
    let mut chosen: Vec<usize> = Vec::new();
    let items = ctx.list(n);
    if items.is_empty() {
        ctx.error(
            n,
            format!("{what} is empty; name at least one declared predictor or dummy"),
        );
        return None;
    }
    let mut ok = true;
    for p in items {
        let Some(col) = ctx.string(p, what) else {
            ok = false;
            continue;
        };
        let found: Vec<usize> = match predictors.iter().position(|d| d.column == col) {
            Some(i) => {
                if known_ahead_only && !predictors[i].known_ahead {
                    ctx.error_see(
                        p,
                        format!("{what}: '{col}' is not known ahead; a regression with ARIMA errors needs the predictor's value in the forecast period (declare it known_ahead: true, use a dummy, or use family: ardl, which takes its lags)"),
                        crate::error::pages::ARIMA,
                    );
                    ok = false;
                    continue;
                }
                vec![i]
            }
            None => match declared.dummies.iter().position(|d| d.name == col) {
                Some(k) => declared
                    .dummy_columns
                    .iter()
                    .enumerate()
                    .filter(|(_, c)| c.dummy == k)
                    .map(|(j, _)| predictors.len() + j)
                    .collect(),
                None => {
                    ok = false;
                    if declared.unreadable
                        || declared.failed.contains(&col)
                        || declared.dummies_failed.contains(&col)
                    {
                        continue;
                    }
                    let names: Vec<&str> = predictors
                        .iter()
                        .map(|d| d.column.as_str())
                        .chain(declared.dummies.iter().map(|d| d.name.as_str()))
                        .collect();
                    let hint = nearest(&col, &names)
                        .map(|n| format!(" did you mean '{n}'?"))
                        .unwrap_or_default();
                    ctx.error(
                        p,
                        format!("{what}: '{col}' is not declared under the top-level 'predictors' or 'dummies' key.{hint} Declared: {}",
                            if names.is_empty() { "none".to_string() } else { names.join(", ") }),
                    );
                    continue;
                }
            },
        };
        if found.iter().any(|i| chosen.contains(i)) {
            ctx.error(p, format!("{what} names '{col}' twice"));
            ok = false;
            continue;
        }
        chosen.extend(found);
    }
    (ok && !chosen.is_empty()).then_some(chosen)
}

/// The declared predictors and dummies an ardl entry names, as indices;
/// None when missing, empty or unknown (each reported, unless the
/// declaration itself was already reported).
fn ardl_predictors(
    ctx: &mut Ctx,
    item: &Node,
    view: &MapView,
    path: &str,
    declared: &PredictorNames,
) -> Option<Vec<usize>> {
    match view.get("predictors") {
        Some(n) => {
            let chosen = regressor_indices(ctx, n, &format!("{path}.predictors"), declared, false)?;
            if chosen.iter().any(|&i| i >= declared.list.len()) {
                // The lag design has no way yet to leave out a column that is
                // constant in a window (SPEC §7.1), so a step before its date
                // would make every early window singular: refused, not half-done.
                ctx.error_see(
                    n,
                    format!("{path}.predictors: dummies are not supported by ardl yet (a dummy constant in a window cannot be left out of a lag regression); use them with family: arima, or declare the column as a known_ahead predictor"),
                    crate::error::pages::ARIMA,
                );
                return None;
            }
            Some(chosen)
        }
        None => {
            ctx.error(
                item,
                format!("{path}: ardl needs 'predictors': the declared predictor columns it uses"),
            );
            None
        }
    }
}
