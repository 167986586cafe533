//! `backtest.schemes` (SPEC §2, §4): fixed, expanding and rolling entries
//! with their first origin, window, refits and origins. Labels are kept as
//! written; they are placed on the data's positions in `resolve`.

use super::decode::Ctx;
use super::yaml::{Kind, Node};
use super::{Scheme, SchemeKind, SchemeStart};

/// A scheme and where it is written, until its first origin is resolved.
pub(super) struct PendingScheme {
    pub scheme: Scheme,
    pub node: Node,
}

pub(super) fn decode_schemes(ctx: &mut Ctx, node: &Node) -> Vec<PendingScheme> {
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
        let Some(scheme) = decode_scheme(ctx, item, &path) else {
            continue;
        };
        if let Some(prev) = out.iter().find(|p| p.scheme.id == scheme.id) {
            ctx.error(item, format!("{path}: a second scheme with the id '{}' (the first is on line {}); scheme ids must differ", scheme.id, prev.node.line));
            continue;
        }
        out.push(PendingScheme {
            scheme,
            node: item.clone(),
        });
    }
    out
}

/// One entry of `backtest.schemes`: `{kind: {settings}}` or a bare kind.
///
/// The keys of a scheme are decoded one after another, a few lines each, so
/// that every problem is listed with its own line; the length is the key count.
fn decode_scheme(ctx: &mut Ctx, item: &Node, path: &str) -> Option<Scheme> {
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
        return None;
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
        _ => return None,
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
    let view = ctx.map(settings, &format!("{path}.{kind_name}"), allowed, &[])?;
    let start = decode_start(ctx, &view, settings, &format!("{path}.{kind_name}"), path);
    let window = match view.get("window") {
        Some(n) => ctx
            .integer(n, &format!("{path}.rolling.window"), 1)
            .and_then(|v| {
                if v as usize > super::limits::MAX_WINDOW {
                    ctx.refuse(n, format!("{path}.rolling.window {v} is larger than any data set could hold (at most {})", super::limits::MAX_WINDOW));
                    return None;
                }
                Some(v as usize)
            }),
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
        SchemeKind::Rolling => format!("rolling({})", window?),
    };
    Some(Scheme {
        id,
        kind,
        start,
        window,
        refit_every,
        origins_first,
        line: item.line,
    })
}

/// At most one of test_start, first_origin and train_share (SPEC §4).
fn decode_start(
    ctx: &mut Ctx,
    view: &super::decode::MapView,
    settings: &Node,
    prefix: &str,
    path: &str,
) -> SchemeStart {
    let mut start = SchemeStart::Half;
    let mut count = 0;
    for key in ["test_start", "first_origin", "train_share"] {
        let Some(n) = view.get(key) else { continue };
        count += 1;
        let Some(text) = ctx.string(n, &format!("{prefix}.{key}")) else {
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
                    ctx.error(n, format!("{prefix}.train_share must be a decimal strictly between 0 and 1, e.g. 0.5; found '{text}'"));
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
    start
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
