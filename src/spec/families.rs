//! arima, smoothing and combination entries (SPEC §2–§4, §7.2): their grids and ids.

use super::candidates::{
    candidate_label, names, regressor_indices, PendingMembers, PredictorNames,
};
use super::decode::{Ctx, MapView};
use super::limits::{
    MAX_ARIMA_ORDER, MAX_ARIMA_SEARCH, MAX_SEASONAL_DIFFERENCE, MAX_SEASONAL_ORDER,
};
use super::yaml::Node;
use super::{
    ArimaCriterion, Candidate, CombinationWeights, Family, SeasonalGrid, SeasonalOrder,
    SmoothingError, SmoothingSeason, SmoothingTrend,
};

/// `family: arima`: p, d, q grids (and seasonal ones), a drift,
/// regressors, or an order chosen by `select`.
///
/// The keys are decoded one after another, a few lines each, so that every
/// problem is listed with its own line; the length is the key count.
pub(super) fn decode_arima(
    ctx: &mut Ctx,
    item: &Node,
    path: &str,
    names: &PredictorNames,
    out: &mut Vec<Candidate>,
) {
    let line = item.line;
    let Some(view) = ctx.map(
        item,
        path,
        &[
            "family",
            "label",
            "p",
            "d",
            "q",
            "trend",
            "select",
            "seasonal",
            "predictors",
        ],
        &[],
    ) else {
        return;
    };
    let Ok(label) = candidate_label(ctx, &view, path) else {
        return;
    };
    let base = label.unwrap_or_else(|| "arima".into());
    let Some((ps, ds, qs)) = orders_pqd(
        ctx,
        &view,
        item,
        path,
        [MAX_ARIMA_ORDER, 2, MAX_ARIMA_ORDER],
    ) else {
        return;
    };
    let Ok(seasonal) = decode_seasonal(ctx, &view, path, names) else {
        return;
    };
    let regressors = match view.get("predictors") {
        Some(n) => match regressor_indices(ctx, n, &format!("{path}.predictors"), names, true) {
            Some(r) => r,
            None => return,
        },
        None => Vec::new(),
    };
    let seasonal_ds: Vec<usize> = seasonal.as_ref().map_or(vec![0], |s| s.ds.clone());
    let drift = match view.get("trend") {
        Some(n) => match ctx
            .choice(n, &format!("{path}.trend"), &["none", "drift"])
            .as_deref()
        {
            Some("drift") => {
                if seasonal.is_none() && ds.contains(&0) {
                    ctx.error(n, format!("{path}: trend drift needs d ≥ 1 (with d = 0 a constant mean is always estimated); remove 0 from d"));
                    return;
                }
                if ds.contains(&0) && seasonal_ds.contains(&0) {
                    ctx.error(n, format!("{path}: trend drift needs d + D ≥ 1 (undifferenced, a constant mean is always estimated); remove 0 from d or from seasonal.d"));
                    return;
                }
                true
            }
            Some(_) => false,
            None => return,
        },
        None => false,
    };
    let entry = ArimaEntry {
        base,
        suffix: if drift { ",drift" } else { "" },
        line,
        drift,
        regressors,
    };
    match view.get("select") {
        Some(n) => {
            let Some(criterion) = ctx
                .choice(n, &format!("{path}.select"), &ArimaCriterion::NAMES)
                .and_then(|s| ArimaCriterion::parse(&s))
            else {
                return;
            };
            let grid = ps.len()
                * ds.len()
                * qs.len()
                * seasonal
                    .as_ref()
                    .map_or(1, |s| s.ps.len() * s.ds.len() * s.qs.len());
            if grid > MAX_ARIMA_SEARCH {
                ctx.error(
                    n,
                    format!("{path}: the grids hold {grid} orders; an arima that selects its order estimates every one in every window, at most {MAX_ARIMA_SEARCH}"),
                );
                return;
            }
            expand_select(criterion, ps, ds, qs, seasonal, entry, out);
        }
        None => expand_arima(&ps, &ds, &qs, seasonal.as_ref(), &entry, out),
    }
}

/// The p, d, q lists of an arima entry (default [0]) within their bounds.
fn orders_pqd(
    ctx: &mut Ctx,
    view: &MapView,
    item: &Node,
    path: &str,
    maxima: [usize; 3],
) -> Option<(Vec<usize>, Vec<usize>, Vec<usize>)> {
    let mut grid = |key: &str| match view.get(key) {
        Some(n) => ctx.orders(n, &format!("{path}.{key}"), 0),
        None => Some(vec![0]),
    };
    let (Some(ps), Some(ds), Some(qs)) = (grid("p"), grid("d"), grid("q")) else {
        return None;
    };
    for ((key, values), max) in [("p", &ps), ("d", &ds), ("q", &qs)].into_iter().zip(maxima) {
        if let Some(v) = values.iter().find(|v| **v > max) {
            let node = view.get(key).cloned().unwrap_or_else(|| item.clone());
            ctx.error(
                &node,
                format!("{path}.{key} = {v} is larger than outturn estimates (at most {max})"),
            );
            return None;
        }
    }
    Some((ps, ds, qs))
}

/// `seasonal: {p, d, q}` at the data's season length; Err(()) when reported.
fn decode_seasonal(
    ctx: &mut Ctx,
    view: &MapView,
    path: &str,
    names: &PredictorNames,
) -> Result<Option<SeasonalGrid>, ()> {
    let Some(node) = view.get("seasonal") else {
        return Ok(None);
    };
    let spath = format!("{path}.seasonal");
    let Some(sview) = ctx.map(node, &spath, &["p", "d", "q"], &[]) else {
        return Err(());
    };
    let Some((ps, ds, qs)) = orders_pqd(
        ctx,
        &sview,
        node,
        &spath,
        [
            MAX_SEASONAL_ORDER,
            MAX_SEASONAL_DIFFERENCE,
            MAX_SEASONAL_ORDER,
        ],
    ) else {
        return Err(());
    };
    let m = match names.season {
        Some(Some(m)) => m,
        Some(None) => {
            ctx.error(
                node,
                format!("{spath}: seasonal arima needs seasonal data; {} data have no season length — remove 'seasonal'", names.frequency_name),
            );
            return Err(());
        }
        // The frequency could not be read (reported there).
        None => return Err(()),
    };
    Ok(Some(SeasonalGrid { ps, ds, qs, m }))
}

/// What every candidate of one arima entry shares.
struct ArimaEntry {
    base: String,
    suffix: &'static str,
    line: usize,
    drift: bool,
    regressors: Vec<usize>,
}

/// One candidate per grid point: `arima(1,1,0)`, `arima(0,1,1)(0,1,1)12`.
fn expand_arima(
    ps: &[usize],
    ds: &[usize],
    qs: &[usize],
    seasonal: Option<&SeasonalGrid>,
    e: &ArimaEntry,
    out: &mut Vec<Candidate>,
) {
    let seasons: Vec<Option<SeasonalOrder>> = match seasonal {
        None => vec![None],
        Some(g) => {
            g.ps.iter()
                .flat_map(|&p| {
                    g.ds.iter().flat_map(move |&d| {
                        g.qs.iter()
                            .map(move |&q| Some(SeasonalOrder { p, d, q, m: g.m }))
                    })
                })
                .collect()
        }
    };
    for &p in ps {
        for &d in ds {
            for &q in qs {
                for s in &seasons {
                    let season_id = s.map_or(String::new(), |s| {
                        format!("({},{},{}){}", s.p, s.d, s.q, s.m)
                    });
                    out.push(Candidate {
                        id: format!("{}({p},{d},{q}{}){season_id}", e.base, e.suffix),
                        family: Family::Arima {
                            p,
                            d,
                            q,
                            drift: e.drift,
                            seasonal: *s,
                            regressors: e.regressors.clone(),
                        },
                        line: e.line,
                        transform: None,
                    });
                }
            }
        }
    }
}

/// `select`: with aic, bic or hqic one candidate per d (and D),
/// `arima(bic,2,1,2)` or `arima(bic,2,1,2)(1,1,1)12`; with aicc one
/// candidate, `arima(aicc)`, whose d (KPSS) and D (Canova–Hansen) are
/// chosen by a test in every window.
fn expand_select(
    criterion: ArimaCriterion,
    ps: Vec<usize>,
    ds: Vec<usize>,
    qs: Vec<usize>,
    seasonal: Option<SeasonalGrid>,
    e: ArimaEntry,
    out: &mut Vec<Candidate>,
) {
    if criterion == ArimaCriterion::Aicc {
        out.push(Candidate {
            id: format!("{}(aicc{})", e.base, e.suffix),
            family: Family::ArimaSelect {
                criterion,
                ps,
                ds,
                qs,
                drift: e.drift,
                seasonal,
                regressors: e.regressors,
            },
            line: e.line,
            transform: None,
        });
        return;
    }
    let max = |v: &[usize]| v.iter().copied().max().unwrap_or(0);
    let (max_p, max_q) = (max(&ps), max(&qs));
    let seasonal_ds: Vec<Option<usize>> = match &seasonal {
        None => vec![None],
        Some(g) => g.ds.iter().map(|&d| Some(d)).collect(),
    };
    for &d in &ds {
        for sd in &seasonal_ds {
            let (grid, season_id) = match (&seasonal, sd) {
                (Some(g), Some(sd)) => (
                    Some(SeasonalGrid {
                        ps: g.ps.clone(),
                        ds: vec![*sd],
                        qs: g.qs.clone(),
                        m: g.m,
                    }),
                    format!("({},{sd},{}){}", max(&g.ps), max(&g.qs), g.m),
                ),
                _ => (None, String::new()),
            };
            out.push(Candidate {
                id: format!(
                    "{}({},{max_p},{d},{max_q}{}){season_id}",
                    e.base,
                    criterion.name(),
                    e.suffix
                ),
                family: Family::ArimaSelect {
                    criterion,
                    ps: ps.clone(),
                    ds: vec![d],
                    qs: qs.clone(),
                    drift: e.drift,
                    seasonal: grid,
                    regressors: e.regressors.clone(),
                },
                line: e.line,
                transform: None,
            });
        }
    }
}

/// `family: smoothing`: error × trend × season grids. Ids name the error
/// only when it is multiplicative (`smoothing(mult,damped,additive)`), so
/// additive-error ids are those of the additive-only family.
///
/// The three grids and `select` are decoded in turn, then expanded: the
/// length is the key count.
pub(super) fn decode_smoothing(ctx: &mut Ctx, item: &Node, path: &str, out: &mut Vec<Candidate>) {
    let line = item.line;
    let Some(view) = ctx.map(
        item,
        path,
        &["family", "label", "error", "trend", "season", "select"],
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
    let mut grid = |key: &str, options: &[&'static str]| match view.get(key) {
        Some(n) => names(ctx, n, &format!("{path}.{key}"), options),
        None => Some(vec![0]),
    };
    let errors = grid("error", &SmoothingError::NAMES);
    let trends = grid("trend", &SmoothingTrend::NAMES);
    let seasons = grid("season", &SmoothingSeason::NAMES);
    let (Some(errors), Some(trends), Some(seasons)) = (errors, trends, seasons) else {
        return;
    };
    const ERRORS: [SmoothingError; 2] = [SmoothingError::Additive, SmoothingError::Multiplicative];
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
    let mut forms = Vec::new();
    for &e in &errors {
        for &t in &trends {
            for &s in &seasons {
                forms.push((ERRORS[e], TRENDS[t], SEASONS[s]));
            }
        }
    }
    if select {
        // a multiplicative error with an additive season is left out of the
        // search: its likelihood is unstable (docs/candidates.md)
        forms.retain(|&(e, _, s)| {
            !(e == SmoothingError::Multiplicative && s == SmoothingSeason::Additive)
        });
        if forms.is_empty() {
            ctx.error(
                item,
                format!("{path}: select: aicc leaves out a multiplicative error with an additive season, so this grid has no form to choose from; add season none or multiplicative (see docs/candidates.md)"),
            );
            return;
        }
        out.push(Candidate {
            id: format!("{base}(aicc)"),
            family: Family::SmoothingSelect { forms },
            line,
            transform: None,
        });
        return;
    }
    for (error, trend, season) in forms {
        let mult = if error == SmoothingError::Multiplicative {
            "mult,"
        } else {
            ""
        };
        out.push(Candidate {
            id: format!("{base}({mult}{},{})", trend.name(), season.name()),
            family: Family::Smoothing {
                error,
                trend,
                season,
            },
            line,
            transform: None,
        });
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
        transform: None,
    });
}
