//! `scoring` (SPEC §2, §4): metrics, the ranking metric, the benchmark,
//! interval levels, the tests and named sub-periods.

use super::decode::Ctx;
use super::period::{self, Frequency};
use super::yaml::{Kind, Node};
use super::{
    percent_text, BackTransform, ConfidenceSetSpec, IntervalLevel, IntervalsFrom, Metric,
    PeriodSet, Release, SnoopingSpec, TestsSpec, Units,
};

pub(super) struct Scoring {
    pub metrics: Vec<Metric>,
    pub rank_by: Metric,
    pub benchmark: Option<(String, Node)>,
    pub intervals: Vec<IntervalLevel>,
    pub quantiles: Vec<f64>,
    pub intervals_from: IntervalsFrom,
    /// `units` and where it is written (None: not given, transformed).
    pub units: Option<(Units, Node)>,
    pub back_transform: BackTransform,
    pub tests: TestsSpec,
    /// `scoring.tests.encompassing`: on, and the rival it names (none:
    /// the benchmark), resolved to an index with the benchmark.
    pub encompassing: Option<Option<(String, Node)>>,
    pub periods: Vec<PeriodSet>,
    /// Where each period set is written, for messages.
    pub period_nodes: Vec<Node>,
    pub rolling_window: Option<usize>,
    /// `actual`: which release of vintage data is the outturn, and where it is written.
    pub actual: Option<(Release, Node)>,
}

impl Default for Scoring {
    fn default() -> Self {
        Scoring {
            metrics: Metric::ALL[..7].to_vec(),
            rank_by: Metric::Rmse,
            benchmark: None,
            intervals: Vec::new(),
            quantiles: Vec::new(),
            intervals_from: IntervalsFrom::Model,
            units: None,
            back_transform: BackTransform::Median,
            tests: TestsSpec::default(),
            encompassing: None,
            periods: Vec::new(),
            rolling_window: None,
            period_nodes: Vec::new(),
            actual: None,
        }
    }
}

/// A positive count such as a number of bootstrap resamples.
fn count(ctx: &mut Ctx, node: &Node, what: &str, min: i64, max: i64) -> Option<usize> {
    let v = ctx.integer(node, what, min)?;
    if v > max {
        ctx.refuse(node, format!("{what} must be at most {max}, found {v}"));
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

pub(super) fn decode_scoring(ctx: &mut Ctx, node: &Node, frequency: Option<Frequency>) -> Scoring {
    let mut out = Scoring::default();
    let Some(view) = ctx.map(
        node,
        "scoring",
        &[
            "metrics",
            "rank_by",
            "benchmark",
            "intervals",
            "quantiles",
            "intervals_from",
            "tests",
            "periods",
            "rolling_window",
            "actual",
            "units",
            "back_transform",
        ],
        &[],
    ) else {
        return out;
    };
    if let Some(i) = view.get("intervals") {
        decode_intervals(ctx, i, &mut out);
    }
    if let Some(q) = view.get("quantiles") {
        decode_quantiles(ctx, q, &mut out);
    }
    if let Some(m) = view.get("metrics") {
        decode_metrics(ctx, m, &mut out);
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
        decode_tests(ctx, t, &mut out);
    }
    if let Some(p) = view.get("periods") {
        decode_periods(ctx, p, &mut out, frequency);
    }
    if let Some(a) = view.get("actual") {
        out.actual = decode_actual(ctx, a).map(|r| (r, a.clone()));
    }
    if let Some(u) = view.get("units") {
        out.units = ctx
            .choice(u, "scoring.units", &Units::NAMES)
            .and_then(|s| Units::parse(&s))
            .map(|units| (units, u.clone()));
    }
    if let Some(b) = view.get("back_transform") {
        if let Some(c) = ctx
            .choice(b, "scoring.back_transform", &BackTransform::NAMES)
            .and_then(|s| BackTransform::parse(&s))
        {
            out.back_transform = c;
        }
    }
    if let Some(n) = view.get("intervals_from") {
        decode_intervals_from(ctx, n, &mut out);
    }
    out
}

/// `scoring.actual`: `latest`, `first` or `{release: k}` (docs/experiment-file.md#scoring).
fn decode_actual(ctx: &mut Ctx, a: &Node) -> Option<Release> {
    if let Kind::Map(_) = &a.kind {
        let view = ctx.map(a, "scoring.actual", &["release"], &[])?;
        let Some(k) = view.get("release") else {
            ctx.error(a, "scoring.actual as a mapping needs 'release': the count of the release that is the outturn, e.g. {release: 2} (1 is the first)");
            return None;
        };
        let k = ctx.integer(k, "scoring.actual.release", 1)?;
        return Some(Release::Nth(k as usize));
    }
    match ctx
        .choice(a, "scoring.actual", &["latest", "first"])?
        .as_str()
    {
        "first" => Some(Release::Nth(1)),
        _ => Some(Release::Latest),
    }
}

/// `scoring.intervals_from`: model (default) or past_errors, which needs
/// quantile columns and gives no density for crps and log_score.
fn decode_intervals_from(ctx: &mut Ctx, n: &Node, out: &mut Scoring) {
    let Some(choice) = ctx.choice(n, "scoring.intervals_from", &["model", "past_errors"]) else {
        return;
    };
    if choice != "past_errors" {
        return;
    }
    out.intervals_from = IntervalsFrom::PastErrors;
    if out.intervals.is_empty() && out.quantiles.is_empty() {
        ctx.error(n, "intervals_from: past_errors makes interval bounds and quantiles; list scoring.intervals or scoring.quantiles");
    }
    for m in [Metric::Crps, Metric::LogScore] {
        if out.metrics.contains(&m) {
            ctx.error(n, format!("intervals_from: past_errors gives quantiles, not the Gaussian density that '{}' scores; leave '{}' out of scoring.metrics or use intervals_from: model", m.name(), m.name()));
        }
    }
}

/// `scoring.intervals`: levels as fractions, ascending.
fn decode_intervals(ctx: &mut Ctx, i: &Node, out: &mut Scoring) {
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

/// `scoring.quantiles`: probabilities strictly between 0 and 1, each once
/// (by its column name, six decimals in percent), ascending.
fn decode_quantiles(ctx: &mut Ctx, q: &Node, out: &mut Scoring) {
    let mut names: Vec<String> = Vec::new();
    for item in ctx.list(q) {
        let Some(prob) = share(ctx, item, "scoring.quantiles") else {
            continue;
        };
        let percent = percent_text(prob);
        if percent == "0" || percent == "100" {
            ctx.error(
                item,
                format!("quantile {prob} is too close to 0 or 1 to name a column (q{percent}); quantiles are named in percent with at most six decimals"),
            );
        } else if names.contains(&percent) {
            ctx.error(
                item,
                format!("quantile {prob} is listed twice (column q{percent})"),
            );
        } else {
            names.push(percent);
            out.quantiles.push(prob);
        }
    }
    out.quantiles.sort_by(f64::total_cmp);
}

/// `scoring.metrics`: each metric once; per-level ones need interval levels.
fn decode_metrics(ctx: &mut Ctx, m: &Node, out: &mut Scoring) {
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
            } else if metric == Metric::QuantileScore
                && out.intervals.is_empty()
                && out.quantiles.is_empty()
            {
                ctx.error(item, format!("metric '{name}' scores the quantile columns; list scoring.intervals (each level gives two) or scoring.quantiles, e.g. [0.1, 0.5, 0.9]"));
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

/// `scoring.tests`: Diebold-Mariano, Clark-West, the confidence set and the snooping check.
fn decode_tests(ctx: &mut Ctx, t: &Node, out: &mut Scoring) {
    if let Some(tv) = ctx.map(
        t,
        "scoring.tests",
        &[
            "diebold_mariano",
            "clark_west",
            "confidence_set",
            "snooping",
            "calibration",
            "efficiency",
            "encompassing",
        ],
        &[],
    ) {
        if let Some(n) = tv.get("diebold_mariano") {
            // true: each candidate against the benchmark; pairs: every pair.
            match ctx.string(n, "scoring.tests.diebold_mariano").as_deref() {
                Some("true") => out.tests.diebold_mariano = true,
                Some("false") | None => {}
                Some("pairs") => {
                    out.tests.diebold_mariano = true;
                    out.tests.diebold_mariano_pairs = true;
                }
                Some(other) => ctx.error(n, format!("scoring.tests.diebold_mariano must be true, false or pairs, found '{other}'")),
            }
        }
        if let Some(n) = tv.get("calibration") {
            out.tests.calibration = ctx.boolean(n, "scoring.tests.calibration").unwrap_or(false);
        }
        if let Some(n) = tv.get("efficiency") {
            out.tests.efficiency = ctx.boolean(n, "scoring.tests.efficiency").unwrap_or(false);
        }
        if let Some(n) = tv.get("encompassing") {
            // true: against the benchmark; a candidate id: against that rival.
            match ctx.string(n, "scoring.tests.encompassing") {
                Some(t) if t == "true" => out.encompassing = Some(None),
                Some(t) if t == "false" => {}
                Some(id) => out.encompassing = Some(Some((id, n.clone()))),
                None => {}
            }
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
                        super::limits::MAX_RESAMPLES,
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
                    Some(r) => count(
                        ctx,
                        r,
                        "scoring.tests.snooping.resamples",
                        1,
                        super::limits::MAX_RESAMPLES,
                    ),
                    None => Some(2000),
                };
                if let Some(resamples) = resamples {
                    out.tests.snooping = Some(SnoopingSpec { resamples });
                }
            }
        }
    }
}

/// `scoring.periods`: named [first, last] target periods.
fn decode_periods(ctx: &mut Ctx, p: &Node, out: &mut Scoring, frequency: Option<Frequency>) {
    match &p.kind {
        Kind::Map(entries) => {
            for (key, value) in entries {
                let Some(name) = ctx.string(key, "scoring.periods name") else {
                    continue;
                };
                if name == "all"
                    || name.is_empty()
                    || !name
                        .bytes()
                        .all(|b| b.is_ascii_alphanumeric() || b == b'_' || b == b'-')
                {
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
                let parse = |ctx: &mut Ctx, text: &str, node: &Node| match period::parse_label(
                    freq, text,
                ) {
                    Ok((o, _)) => Some(o),
                    Err(e) => {
                        ctx.error(node, format!("scoring.periods.{name}: {e}"));
                        None
                    }
                };
                let (Some(from_ordinal), Some(to_ordinal)) =
                    (parse(ctx, &from, bounds[0]), parse(ctx, &to, bounds[1]))
                else {
                    continue;
                };
                if to_ordinal < from_ordinal {
                    ctx.error(
                        value,
                        format!("scoring.periods.{name}: '{to}' comes before '{from}'"),
                    );
                    continue;
                }
                out.periods.push(PeriodSet {
                    name,
                    from,
                    to,
                    from_ordinal,
                    to_ordinal,
                });
                out.period_nodes.push(key.clone());
            }
        }
        _ if p.is_null() => {}
        _ => ctx.error(
            p,
            "scoring.periods must map names to [first, last] periods, e.g. calm: [1996Q1, 2003Q4]",
        ),
    }
}
