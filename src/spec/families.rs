//! arima, smoothing and combination entries (SPEC §2–§4): their grids and ids.

use super::candidates::{candidate_label, names, PendingMembers};
use super::decode::Ctx;
use super::yaml::Node;
use super::{Candidate, CombinationWeights, Criterion, Family, SmoothingSeason, SmoothingTrend};

/// `family: arima`: p, d, q grids, a drift, or an order chosen by `select`.
pub(super) fn decode_arima(ctx: &mut Ctx, item: &Node, path: &str, out: &mut Vec<Candidate>) {
    let line = item.line;
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
                format!("{path}.{key} = {v} is larger than outturn estimates (at most {max})"),
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

/// `family: smoothing`: trend × season grids.
pub(super) fn decode_smoothing(ctx: &mut Ctx, item: &Node, path: &str, out: &mut Vec<Candidate>) {
    let line = item.line;
    let Some(view) = ctx.map(
        item,
        path,
        &["family", "label", "trend", "season", "select"],
        &[],
    ) else {
        return;
    };
    let Ok(label) = candidate_label(ctx, &view, path) else {
        return;
    };
    let base = label.unwrap_or_else(|| "smoothing".into());
    let select = match view.get("select") {
        Some(n) => match ctx.choice(n, &format!("{path}.select"), &["aicc"]) {
            Some(_) => true,
            None => return,
        },
        None => false,
    };
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
    if select {
        let forms = trends
            .iter()
            .flat_map(|&t| seasons.iter().map(move |&s| (TRENDS[t], SEASONS[s])))
            .collect();
        out.push(Candidate {
            id: format!("{base}(aicc)"),
            family: Family::SmoothingSelect { forms },
            line,
        });
        return;
    }
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

/// `family: combination`: members named by id (resolved once every
/// candidate is expanded) and the weights.
pub(super) fn decode_combination(
    ctx: &mut Ctx,
    item: &Node,
    path: &str,
    out: &mut Vec<Candidate>,
    pending: &mut PendingMembers,
) {
    let line = item.line;
    let Some(view) = ctx.map(item, path, &["family", "label", "members", "weights"], &[]) else {
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
