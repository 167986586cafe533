//! `family: theta` entries: whether the data are seasonally adjusted first,
//! and the ids `theta` and `theta(mult)`.

use super::candidates::{candidate_label, names};
use super::decode::Ctx;
use super::yaml::Node;
use super::{Candidate, Family};

/// The values of `deseasonalise`, in the order of their index.
pub(super) const DESEASONALISE: [&str; 2] = ["none", "multiplicative"];

/// `family: theta` with `deseasonalise: none | multiplicative` (or a list of both).
pub(super) fn decode_theta(ctx: &mut Ctx, item: &Node, path: &str, out: &mut Vec<Candidate>) {
    let line = item.line;
    let Some(view) = ctx.map(item, path, &["family", "label", "deseasonalise"], &[]) else {
        return;
    };
    let Ok(label) = candidate_label(ctx, &view, path) else {
        return;
    };
    let base = label.unwrap_or_else(|| "theta".into());
    let choices = match view.get("deseasonalise") {
        Some(n) => names(ctx, n, &format!("{path}.deseasonalise"), &DESEASONALISE),
        None => Some(vec![0]),
    };
    let Some(choices) = choices else {
        return;
    };
    for c in choices {
        let multiplicative = c == 1;
        out.push(Candidate {
            id: if multiplicative {
                format!("{base}(mult)")
            } else {
                base.clone()
            },
            family: Family::Theta { multiplicative },
            line,
            transform: None,
        });
    }
}
