//! plan: the grid expanded into cells (target × candidate × scheme, all
//! horizons; SPEC §6) with stable ids and shards, and each scheme's
//! schedule (SPEC §4): its origins, estimation ends and estimation windows.
//! Every stage asks here where a cell sits and which rows an estimation may
//! use; nothing else restates those rules.

use crate::spec::{Experiment, Scheme, SchemeKind};

#[derive(Debug, Clone, PartialEq, Eq)]
pub(crate) struct Cell {
    pub target: usize,
    pub candidate: usize,
    pub scheme: usize,
    /// `target/candidate/scheme`, stable across runs and shards.
    pub id: String,
}

/// Cells in output order: targets as listed, candidates as expanded, schemes as listed.
pub(crate) fn cells(exp: &Experiment) -> Vec<Cell> {
    let mut out = Vec::with_capacity(exp.targets.len() * exp.candidates.len() * exp.schemes.len());
    for (t, target) in exp.targets.iter().enumerate() {
        for (c, cand) in exp.candidates.iter().enumerate() {
            for (s, scheme) in exp.schemes.iter().enumerate() {
                out.push(Cell {
                    target: t,
                    candidate: c,
                    scheme: s,
                    id: format!("{}/{}/{}", target.name, cand.id, scheme.id),
                });
            }
        }
    }
    out
}

/// The position of a cell in [`cells`]' order.
pub(crate) fn cell_index(
    exp: &Experiment,
    target: usize,
    candidate: usize,
    scheme: usize,
) -> usize {
    (target * exp.candidates.len() + candidate) * exp.schemes.len() + scheme
}

/// The cells of target `t` in plan order (candidates × schemes).
pub(crate) fn target_range(exp: &Experiment, t: usize) -> std::ops::Range<usize> {
    let per = exp.candidates.len() * exp.schemes.len();
    t * per..(t + 1) * per
}

/// The shard (1-based, of `count`) a cell belongs to: a stable hash of its id
/// (the first eight bytes of its SHA-256), so shards do not depend on order.
pub(crate) fn shard_of(cell: &Cell, count: usize) -> usize {
    let hex = crate::digest::sha256_hex(cell.id.as_bytes());
    let h = u64::from_str_radix(&hex[..16], 16).unwrap_or(0);
    (h % count.max(1) as u64) as usize + 1
}

/// Origins of a scheme at horizon h: T0..=N−h, or T0 alone with `origins: first`.
pub(crate) fn origins(
    scheme: &Scheme,
    first_origin: usize,
    n: usize,
    horizon: usize,
) -> std::ops::RangeInclusive<usize> {
    let last = n.saturating_sub(horizon);
    if scheme.origins_first {
        first_origin..=first_origin.min(last)
    } else {
        first_origin..=last
    }
}

/// Estimation end E at origin T (SPEC §4): T0 for fixed, else
/// T0 + k·⌊(T − T0)/k⌋ with k = refit_every (k = 1 gives E = T).
pub(crate) fn estimation_end(scheme: &Scheme, first_origin: usize, origin: usize) -> usize {
    match scheme.kind {
        SchemeKind::Fixed => first_origin,
        SchemeKind::Expanding | SchemeKind::Rolling => {
            let k = scheme.refit_every.max(1);
            first_origin + k * ((origin - first_origin) / k)
        }
    }
}

/// The rolling window of a scheme (None: the estimation sample starts at the first position).
fn rolling_window(scheme: &Scheme) -> Option<usize> {
    match scheme.kind {
        SchemeKind::Rolling => scheme.window,
        _ => None,
    }
}

/// First position of an estimation sample of observations ending at `end`:
/// 1, or the first of the last `window` observations (SPEC §4: mean, drift,
/// arima and smoothing keep the last `window` observations).
pub(crate) fn window_start(end: usize, window: Option<usize>) -> usize {
    match window {
        Some(w) if end > w => end - w + 1,
        _ => 1,
    }
}

/// First position of the estimation sample of observation-based models
/// (mean, drift, arima, smoothing) under a scheme.
pub(crate) fn sample_start(scheme: &Scheme, estimation_end: usize) -> usize {
    window_start(estimation_end, rolling_window(scheme))
}

/// The regression rows of a window (SPEC §4: least squares keeps the last
/// `window` rows, all of them while fewer exist): of the origins
/// `last, last − 1, …, 1` whose row exists, the latest `window`, in time order.
pub(crate) fn last_rows(last: usize, window: usize, exists: impl Fn(usize) -> bool) -> Vec<usize> {
    let mut chosen = Vec::with_capacity(window.min(last));
    let mut s = last;
    while s >= 1 && chosen.len() < window {
        if exists(s) {
            chosen.push(s);
        }
        s -= 1;
    }
    chosen.reverse();
    chosen
}

/// The most forecasts one run makes (a larger grid is refused before it runs).
pub(crate) const MAX_FORECASTS: usize = 1_000_000_000;

/// How many forecasts the experiment makes: every candidate at every origin
/// of every scheme and horizon of every target.
pub(crate) fn forecast_count(exp: &Experiment) -> usize {
    let mut total: usize = 0;
    for t in &exp.targets {
        for (s, scheme) in exp.schemes.iter().enumerate() {
            for &h in &exp.horizons {
                total = total.saturating_add(origins(scheme, t.first_origins[s], t.n, h).count());
            }
        }
    }
    total.saturating_mul(exp.candidates.len())
}

/// Refuse an experiment that asks for more forecasts than one run makes.
pub(crate) fn check_size(exp: &Experiment) -> crate::error::Result<()> {
    let count = forecast_count(exp);
    if count <= MAX_FORECASTS {
        return Ok(());
    }
    Err(crate::error::Error::invalid(
        Some(crate::error::Location {
            file: exp.source_path.clone(),
            line: exp.schemes.first().map(|s| s.line),
            column: None,
        }),
        format!("the experiment asks for {count} forecasts; one run makes at most {MAX_FORECASTS} — use fewer targets, candidates, horizons or origins (a later first origin)"),
    ))
}

/// The outlook's horizons: every horizon 1..max(horizons), not only the
/// listed ones (the path between them is forecast too).
pub(crate) fn outlook_horizons(exp: &Experiment) -> Vec<usize> {
    (1..=exp.horizons.iter().copied().max().unwrap_or(1)).collect()
}

/// The window of the outlook estimation (E = N): the last `window` rows when
/// every scheme is rolling (the first scheme's window), else everything.
pub(crate) fn outlook_window(exp: &Experiment) -> Option<usize> {
    if exp.schemes.iter().all(|s| s.kind == SchemeKind::Rolling) {
        exp.schemes[0].window
    } else {
        None
    }
}

/// Where a cell's estimation sample ends at each origin and how it is cut.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Schedule<'a> {
    pub scheme: &'a Scheme,
    pub first_origin: usize,
    pub n: usize,
}

impl Schedule<'_> {
    pub fn origins(&self, horizon: usize) -> std::ops::RangeInclusive<usize> {
        origins(self.scheme, self.first_origin, self.n, horizon)
    }
    pub fn estimation_end(&self, origin: usize) -> usize {
        estimation_end(self.scheme, self.first_origin, origin)
    }
    /// The rolling window (rows or observations), if the scheme rolls.
    pub fn window(&self) -> Option<usize> {
        rolling_window(self.scheme)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::spec::SchemeStart;

    fn scheme(
        kind: SchemeKind,
        window: Option<usize>,
        refit_every: usize,
        origins_first: bool,
    ) -> Scheme {
        Scheme {
            id: "s".into(),
            kind,
            start: SchemeStart::Half,
            window,
            refit_every,
            origins_first,
            line: 1,
        }
    }

    #[test]
    fn origins_run_from_t0_to_n_minus_h() {
        // Hand-worked from SPEC §4: N = 20, T0 = 10, h = 4 gives origins 10..=16 (7 origins),
        // the first forecasting position 14 and the last 20.
        let s = scheme(SchemeKind::Expanding, None, 1, false);
        let o = origins(&s, 10, 20, 4);
        assert_eq!(o.clone().count(), 7);
        assert_eq!((o.start() + 4, o.end() + 4), (14, 20));
        let first = scheme(SchemeKind::Fixed, None, 1, true);
        assert_eq!(origins(&first, 10, 20, 4).count(), 1);
    }

    #[test]
    fn estimation_ends_per_scheme() {
        // SPEC §4: fixed E = T0; expanding E = T; refit_every k: E = T0 + k⌊(T−T0)/k⌋.
        let fixed = scheme(SchemeKind::Fixed, None, 1, false);
        assert_eq!(estimation_end(&fixed, 10, 15), 10);
        let exp = scheme(SchemeKind::Expanding, None, 1, false);
        assert_eq!(estimation_end(&exp, 10, 15), 15);
        let every4 = scheme(SchemeKind::Expanding, None, 4, false);
        assert_eq!(
            [10, 13, 14, 17, 18].map(|t| estimation_end(&every4, 10, t)),
            [10, 10, 14, 14, 18]
        );
        let rolling = scheme(SchemeKind::Rolling, Some(6), 1, false);
        assert_eq!(sample_start(&rolling, 15), 10);
        assert_eq!(sample_start(&rolling, 4), 1);
    }
}
