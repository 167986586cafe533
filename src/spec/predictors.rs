//! `predictors` (SPEC §2): the declared predictor columns, each with its
//! transform and release lag, or known ahead.

use super::decode::{Ctx, MapView};
use super::yaml::{Kind, Node};
use super::{Predictor, Transform};

/// The declared predictors and where each is written.
#[derive(Default)]
pub(super) struct Predictors {
    pub list: Vec<Predictor>,
    pub nodes: Vec<Node>,
    /// Predictors declared with an error of their own: candidates that name
    /// them are not reported again.
    pub failed: Vec<String>,
    pub unreadable: bool,
}

/// `predictors`: the declared predictor columns with their transforms and
/// release lags, or known ahead.
pub(super) fn decode_predictors(
    ctx: &mut Ctx,
    p: Option<&Node>,
    targets: &[(String, Node)],
) -> Predictors {
    let mut out = Predictors::default();
    let Some(p) = p.filter(|p| !p.is_null()) else {
        return out;
    };
    let items = match &p.kind {
        Kind::Seq(items) => items.iter().collect::<Vec<_>>(),
        _ => {
            out.unreadable = true;
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
            out.unreadable = true;
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
            out.unreadable = true;
            continue;
        };
        match decode_predictor(ctx, item, &view, &path, column, &out.list, targets) {
            Ok(Some(predictor)) => {
                out.list.push(predictor);
                out.nodes.push(item.clone());
            }
            Ok(None) => {}
            Err(column) => out.failed.push(column),
        }
    }
    out
}

/// One predictor entry: Ok(None) when it repeats a column (reported), Err
/// with its column when a setting of its own is wrong (reported).
fn decode_predictor(
    ctx: &mut Ctx,
    item: &Node,
    view: &MapView,
    path: &str,
    column: String,
    declared: &[Predictor],
    targets: &[(String, Node)],
) -> Result<Option<Predictor>, String> {
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
        return Err(column);
    };
    if known_ahead && release_lag > 0 {
        ctx.error(item, format!("{path}: known_ahead cannot be combined with release_lag (a value known in advance is not published late)"));
    }
    if declared.iter().any(|p| p.column == column) {
        ctx.error(
            item,
            format!("{path}: column '{column}' is declared as a predictor twice"),
        );
        return Ok(None);
    }
    if targets.iter().any(|(t, _)| *t == column) {
        ctx.error(
            item,
            format!(
                "{path}: '{column}' is a target; its own lags enter through ar and ardl 'lags'"
            ),
        );
    }
    Ok(Some(Predictor {
        column,
        transform,
        release_lag,
        known_ahead,
        line: item.line,
    }))
}
