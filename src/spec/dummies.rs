//! `dummies` (SPEC §7.1): built-in regressors that outturn makes from the
//! periods themselves, so they are known at every position, past and
//! future: pulse, step and ramp at a period, Fourier pairs and season
//! indicators. Each entry gives one or more columns ([`DummyColumn`]); a
//! candidate names an entry and uses all of its columns.
//!
//! The season of a period is its quarter or month (the calendar's first
//! season is season 1), its weekday for daily data (Monday first), and for
//! weekly data its week counted in 52-week cycles from the week of
//! 1970-01-01. Fourier terms take the time index τ of the same calendar
//! (quarters, months or days since year 0 / 1970-01-01, weeks since the
//! week of 1970-01-01, years, or the index itself), so a term's phase
//! does not depend on where the data start.

use super::decode::Ctx;
use super::limits::{MAX_DUMMIES, MAX_DUMMY_PERIOD, MAX_FOURIER_PAIRS};
use super::model::{ColumnShape, Dummy, DummyColumn, DummyKind};
use super::period::{parse_label, Frequency};
use super::yaml::{Kind, Node};

/// The decoded entries and where each is written.
#[derive(Default)]
pub(super) struct Dummies {
    pub list: Vec<Dummy>,
    pub nodes: Vec<Node>,
    /// Entries with an error of their own: candidates naming them are not
    /// reported again.
    pub failed: Vec<String>,
}

const KINDS: [&str; 5] = ["pulse", "step", "ramp", "fourier", "seasonal"];

/// `dummies`: a list of `{name, <kind>: …}` entries.
pub(super) fn decode_dummies(
    ctx: &mut Ctx,
    node: Option<&Node>,
    frequency: Option<Frequency>,
) -> Dummies {
    let mut out = Dummies::default();
    let Some(node) = node.filter(|n| !n.is_null()) else {
        return out;
    };
    let Kind::Seq(items) = &node.kind else {
        ctx.error(
            node,
            "dummies must be a list of entries, each with a 'name' and one of pulse, step, ramp, fourier, seasonal",
        );
        return out;
    };
    if items.len() > MAX_DUMMIES {
        ctx.error(
            node,
            format!("dummies has {} entries; at most {MAX_DUMMIES}", items.len()),
        );
        return out;
    }
    for (i, item) in items.iter().enumerate() {
        let path = format!("dummies[{}]", i + 1);
        let Some(view) = ctx.map(
            item,
            &path,
            &[
                "name", "pulse", "step", "ramp", "fourier", "period", "seasonal",
            ],
            &[],
        ) else {
            continue;
        };
        let Some(name) = decode_name(ctx, item, &view, &path, &mut out) else {
            continue;
        };
        match decode_kind(ctx, item, &view, &path, frequency) {
            Some(kind) => {
                out.list.push(Dummy {
                    name,
                    kind,
                    line: item.line,
                });
                out.nodes.push(item.clone());
            }
            None => out.failed.push(name),
        }
    }
    out
}

/// An entry's `name`: present, made of plain characters and not taken.
/// A malformed name is also recorded as failed, so that candidates naming
/// it are not reported again.
fn decode_name(
    ctx: &mut Ctx,
    item: &Node,
    view: &super::decode::MapView,
    path: &str,
    out: &mut Dummies,
) -> Option<String> {
    let Some(n) = view.get("name") else {
        ctx.error(
            item,
            format!("{path} needs 'name': how candidates refer to it"),
        );
        return None;
    };
    let name = ctx.string(n, &format!("{path}.name"))?;
    if name.is_empty()
        || !name
            .bytes()
            .all(|b| b.is_ascii_alphanumeric() || b == b'_' || b == b'-' || b == b'.')
    {
        ctx.error(
            item,
            format!("{path}.name '{name}' must use only letters, digits, '_', '-' and '.'"),
        );
        out.failed.push(name);
        return None;
    }
    if out.list.iter().any(|d| d.name == name) {
        ctx.error(
            item,
            format!("{path}: the name '{name}' is used by another dummy"),
        );
        return None;
    }
    Some(name)
}

/// The one kind key of an entry, checked against the frequency.
fn decode_kind(
    ctx: &mut Ctx,
    item: &Node,
    view: &super::decode::MapView,
    path: &str,
    frequency: Option<Frequency>,
) -> Option<DummyKind> {
    let given: Vec<&str> = KINDS
        .iter()
        .copied()
        .filter(|k| view.get(k).is_some())
        .collect();
    let [kind] = given.as_slice() else {
        ctx.error(
            item,
            format!(
                "{path} needs exactly one of {}{}",
                KINDS.join(", "),
                if given.is_empty() {
                    String::new()
                } else {
                    format!(" (found {})", given.join(" and "))
                }
            ),
        );
        return None;
    };
    let node = view.get(kind)?;
    if *kind != "fourier" {
        if let Some(p) = view.key_node("period") {
            ctx.error(p, format!("{path}: 'period' goes with 'fourier' only"));
            return None;
        }
    }
    match *kind {
        "pulse" | "step" | "ramp" => decode_date_kind(ctx, node, kind, path, frequency),
        "fourier" => decode_fourier(ctx, node, view, path, frequency),
        _ => decode_seasonal(ctx, node, path, frequency),
    }
}

/// `pulse`, `step` or `ramp`: a period label of the data's frequency.
fn decode_date_kind(
    ctx: &mut Ctx,
    node: &Node,
    kind: &str,
    path: &str,
    frequency: Option<Frequency>,
) -> Option<DummyKind> {
    let label = ctx.string(node, &format!("{path}.{kind}"))?;
    let ordinal = match parse_label(frequency?, &label) {
        Ok((o, _)) => o,
        Err(e) => {
            ctx.error(node, format!("{path}.{kind}: {e}"));
            return None;
        }
    };
    Some(match kind {
        "pulse" => DummyKind::Pulse { label, ordinal },
        "step" => DummyKind::Step { label, ordinal },
        _ => DummyKind::Ramp { label, ordinal },
    })
}

/// `fourier: K` with an optional `period` (else the season length).
fn decode_fourier(
    ctx: &mut Ctx,
    node: &Node,
    view: &super::decode::MapView,
    path: &str,
    frequency: Option<Frequency>,
) -> Option<DummyKind> {
    let pairs = ctx.integer(node, &format!("{path}.fourier"), 1)?;
    let period = match view.get("period") {
        Some(p) => {
            let text = ctx.string(p, &format!("{path}.period"))?;
            match text.trim().parse::<f64>() {
                Ok(v) if v.is_finite() && (2.0..=MAX_DUMMY_PERIOD).contains(&v) => v,
                _ => {
                    ctx.error(
                        p,
                        format!("{path}.period must be a number from 2 to {MAX_DUMMY_PERIOD} (periods per cycle), found '{}'", text.trim()),
                    );
                    return None;
                }
            }
        }
        None => match frequency?.season_length() {
            Some(m) => m as f64,
            None => {
                ctx.error(
                    node,
                    format!("{path}: {} data have no season length; give the cycle as 'period' (periods per cycle)", frequency?.name()),
                );
                return None;
            }
        },
    };
    let most = ((period / 2.0).floor() as usize).min(MAX_FOURIER_PAIRS);
    if pairs as usize > most {
        ctx.error(
            node,
            format!("{path}.fourier = {pairs}: a cycle of {period} periods carries at most {most} sine/cosine pairs"),
        );
        return None;
    }
    Some(DummyKind::Fourier {
        pairs: pairs as usize,
        period,
    })
}

/// `seasonal: true`: m − 1 season indicators.
fn decode_seasonal(
    ctx: &mut Ctx,
    node: &Node,
    path: &str,
    frequency: Option<Frequency>,
) -> Option<DummyKind> {
    let on = ctx.boolean(node, &format!("{path}.seasonal"))?;
    if !on {
        ctx.error(
            node,
            format!("{path}: 'seasonal: false' adds nothing; remove the entry"),
        );
        return None;
    }
    let f = frequency?;
    match f.season_length() {
        Some(m) => Some(DummyKind::Seasonal { m }),
        None => {
            ctx.error(
                node,
                format!(
                    "{path}: season indicators need seasonal data; {} data have no season length",
                    f.name()
                ),
            );
            None
        }
    }
}

/// The columns of every dummy, in order.
pub(super) fn columns(dummies: &[Dummy]) -> Vec<DummyColumn> {
    let mut out = Vec::new();
    for (i, d) in dummies.iter().enumerate() {
        let mut push = |name: String, shape: ColumnShape| {
            out.push(DummyColumn {
                name,
                dummy: i,
                shape,
            })
        };
        match &d.kind {
            DummyKind::Pulse { ordinal, .. } => push(d.name.clone(), ColumnShape::Pulse(*ordinal)),
            DummyKind::Step { ordinal, .. } => push(d.name.clone(), ColumnShape::Step(*ordinal)),
            DummyKind::Ramp { ordinal, .. } => push(d.name.clone(), ColumnShape::Ramp(*ordinal)),
            DummyKind::Fourier { pairs, period } => {
                for k in 1..=*pairs {
                    // sin(πτ) is 0 at every whole τ: the last pair of an
                    // even cycle has no sine.
                    if (2 * k) as f64 != *period {
                        push(
                            format!("{}_sin{k}", d.name),
                            ColumnShape::Sin { k, period: *period },
                        );
                    }
                    push(
                        format!("{}_cos{k}", d.name),
                        ColumnShape::Cos { k, period: *period },
                    );
                }
            }
            DummyKind::Seasonal { m } => {
                for s in 2..=*m {
                    push(format!("{}_{s}", d.name), ColumnShape::Season { s, m: *m });
                }
            }
        }
    }
    out
}

/// The time index τ of a period's ordinal (module docs).
fn time_index(frequency: Frequency, ordinal: i64) -> i64 {
    match frequency {
        Frequency::Weekly => ordinal.div_euclid(7),
        _ => ordinal,
    }
}

/// The season (1..=m) of a period's ordinal (module docs).
fn season_of(frequency: Frequency, ordinal: i64, m: usize) -> usize {
    let m = m as i64;
    let zero_based = match frequency {
        // 1970-01-01 (day 0) was a Thursday: Monday is day 4 − 7·k.
        Frequency::Daily => (ordinal + 3).rem_euclid(7),
        Frequency::Weekly => ordinal.div_euclid(7).rem_euclid(m),
        _ => ordinal.rem_euclid(m),
    };
    zero_based as usize + 1
}

/// A dummy column's value in the period with this ordinal.
pub fn value(shape: &ColumnShape, frequency: Frequency, ordinal: i64) -> f64 {
    let step = frequency.step();
    match *shape {
        ColumnShape::Pulse(at) => f64::from(u8::from(ordinal == at)),
        ColumnShape::Step(at) => f64::from(u8::from(ordinal >= at)),
        ColumnShape::Ramp(at) if ordinal >= at => ((ordinal - at) / step + 1) as f64,
        ColumnShape::Ramp(_) => 0.0,
        ColumnShape::Sin { k, period } => {
            let tau = time_index(frequency, ordinal) as f64;
            (std::f64::consts::TAU * k as f64 * tau / period).sin()
        }
        ColumnShape::Cos { k, period } => {
            let tau = time_index(frequency, ordinal) as f64;
            (std::f64::consts::TAU * k as f64 * tau / period).cos()
        }
        ColumnShape::Season { s, m } => f64::from(u8::from(season_of(frequency, ordinal, m) == s)),
    }
}

/// Dummy column `column`'s values at positions 1..=len of a target.
pub fn column_values(
    exp: &super::Experiment,
    target: &super::TargetData,
    column: usize,
    len: usize,
) -> Vec<Option<f64>> {
    let Some(c) = exp.dummy_columns.get(column) else {
        return vec![None; len];
    };
    let first = target.ordinals.first().copied().unwrap_or(0);
    let step = exp.frequency.step();
    (0..len)
        .map(|i| Some(value(&c.shape, exp.frequency, first + i as i64 * step)))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shapes_follow_their_definitions() {
        // SPEC §7.1's definitions, evaluated by hand (property by construction).
        let q = Frequency::Quarterly;
        let at = 2015 * 4; // 2015Q1
        assert_eq!(value(&ColumnShape::Pulse(at), q, at), 1.0);
        assert_eq!(value(&ColumnShape::Pulse(at), q, at + 1), 0.0);
        assert_eq!(value(&ColumnShape::Step(at), q, at - 1), 0.0);
        assert_eq!(value(&ColumnShape::Step(at), q, at + 7), 1.0);
        assert_eq!(value(&ColumnShape::Ramp(at), q, at - 1), 0.0);
        assert_eq!(value(&ColumnShape::Ramp(at), q, at), 1.0);
        assert_eq!(value(&ColumnShape::Ramp(at), q, at + 2), 3.0);
        // Weekly ordinals are days: a ramp counts weeks.
        let w = Frequency::Weekly;
        assert_eq!(value(&ColumnShape::Ramp(4), w, 4 + 14), 3.0);
        // Season indicators: 2015Q3 is season 3.
        assert_eq!(value(&ColumnShape::Season { s: 3, m: 4 }, q, at + 2), 1.0);
        assert_eq!(value(&ColumnShape::Season { s: 2, m: 4 }, q, at + 2), 0.0);
        // 2024-01-01 was a Monday (season 1 of a daily week).
        let monday = super::super::period::days_from_civil(2024, 1, 1);
        assert_eq!(season_of(Frequency::Daily, monday, 7), 1);
        assert_eq!(season_of(Frequency::Daily, monday + 6, 7), 7);
        // Fourier terms repeat every cycle.
        let s1 = value(
            &ColumnShape::Sin { k: 1, period: 12.0 },
            Frequency::Monthly,
            5,
        );
        let s2 = value(
            &ColumnShape::Sin { k: 1, period: 12.0 },
            Frequency::Monthly,
            17,
        );
        assert!((s1 - s2).abs() < 1e-12);
    }

    #[test]
    fn an_even_cycle_drops_its_last_sine() {
        let d = Dummy {
            name: "season".into(),
            kind: DummyKind::Fourier {
                pairs: 2,
                period: 4.0,
            },
            line: 1,
        };
        let names: Vec<String> = columns(&[d]).into_iter().map(|c| c.name).collect();
        assert_eq!(names, ["season_sin1", "season_cos1", "season_cos2"]);
    }
}
