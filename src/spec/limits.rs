//! The sizes outturn accepts, stated once, and the checks that hold an
//! experiment to them before anything is allocated (every limit is also in
//! the refusals page of the docs). Sizes an experiment file can name —
//! orders, windows, horizons, resamples, the grid — are bounded when the
//! file is decoded; the ones that depend on the data (enough rows for the
//! coefficients, observations per ARIMA parameter) right after the data are
//! resolved, before any cell runs.

use super::decode::Ctx;
use super::model::{Family, TargetData};
use super::yaml::{Kind, Node};
use super::{Candidate, Scheme, SchemeKind};

/// The largest lag order (lags, predictor_lags, max_lags).
pub(super) const MAX_ORDER: usize = 1000;
/// The largest `max_lags` of an ar that selects its order (every order up
/// to it is fitted in every training window).
pub(super) const MAX_AR_SEARCH: usize = 100;
/// The largest `max_lags` of an ardl that selects its orders (every (p, q)
/// pair up to it is fitted in every training window).
pub(super) const MAX_ARDL_SEARCH: usize = 24;
/// The largest rolling window, in rows or observations.
pub(super) const MAX_WINDOW: usize = 10_000_000;
/// The largest horizon.
pub(super) const MAX_HORIZON: usize = 100_000;
/// The most bootstrap resamples of a test.
pub(super) const MAX_RESAMPLES: i64 = 1_000_000;
/// The longest experiment name (it names a folder, and its temporary twin).
pub(super) const MAX_NAME: usize = 200;
/// The most origins per cell the look-ahead audit checks (`audit.origins`).
pub const MAX_AUDIT_ORIGINS: usize = 1000;
/// The origins per cell the look-ahead audit checks when none are named.
pub const DEFAULT_AUDIT_ORIGINS: usize = 3;
/// The most cells (targets × candidates × schemes) in one run.
pub(super) const MAX_CELLS: usize = 10_000_000;
/// Observations per estimated parameter an ARIMA needs in its first
/// estimation window (its coefficients, the mean or drift, the variance).
pub(super) const OBSERVATIONS_PER_PARAMETER: usize = 3;

/// The most entries under `dummies`.
pub(super) const MAX_DUMMIES: usize = 100;
/// The most sine/cosine pairs of one Fourier dummy.
pub(super) const MAX_FOURIER_PAIRS: usize = 50;
/// The longest cycle a Fourier dummy's `period` may name.
pub(super) const MAX_DUMMY_PERIOD: f64 = 100_000.0;
/// The largest non-seasonal p or q of arima.
pub(super) const MAX_ARIMA_ORDER: usize = 12;
/// The largest seasonal P or Q, and seasonal D.
pub(super) const MAX_SEASONAL_ORDER: usize = 2;
pub(super) const MAX_SEASONAL_DIFFERENCE: usize = 1;
/// The most orders an arima that selects its order estimates in every
/// training window (the product of its grids).
pub(super) const MAX_ARIMA_SEARCH: usize = 256;

/// A position at the start of a line, for problems of a whole entry.
fn line_node(line: usize) -> Node {
    Node {
        kind: Kind::Scalar(String::new(), false),
        line,
        column: 1,
    }
}

/// The grid is not larger than one run can hold.
pub(super) fn check_grid(
    ctx: &mut Ctx,
    node: &Node,
    targets: usize,
    candidates: usize,
    schemes: usize,
) {
    let cells = targets.saturating_mul(candidates).saturating_mul(schemes);
    if cells > MAX_CELLS {
        ctx.refuse(
            node,
            format!("the grid has {targets} target(s) × {candidates} candidate(s) × {schemes} scheme(s) = {cells} cells; one run takes at most {MAX_CELLS} — split the targets over several experiments or run shards of a smaller grid"),
        );
    }
}

/// Enough data for every ARIMA's first estimation:
/// [`OBSERVATIONS_PER_PARAMETER`] observations per parameter. (Least
/// squares needs k + 1 rows for k coefficients, SPEC §4; `check` finds that
/// by running the cells, which the order limits keep cheap.)
pub(super) fn check_data_sizes(
    ctx: &mut Ctx,
    candidates: &[Candidate],
    schemes: &[(&Scheme, &Node)],
    targets: &[TargetData],
) {
    for c in candidates {
        let node = line_node(c.line);
        'target: for t in targets {
            for (s, (scheme, _)) in schemes.iter().enumerate() {
                // At the first origin T0 every scheme estimates with E = T0 (SPEC §4).
                let end = t.first_origins[s];
                if let Some(problem) = too_little_data(&c.family, scheme, end) {
                    ctx.refuse(
                        &node,
                        format!(
                            "candidate {} on target '{}' under scheme {}: {problem}",
                            c.id, t.name, scheme.id
                        ),
                    );
                    break 'target;
                }
            }
        }
    }
}

/// Why a family cannot be estimated with estimation end `end` under a
/// scheme, if it cannot.
fn too_little_data(family: &Family, scheme: &Scheme, end: usize) -> Option<String> {
    let window = match scheme.kind {
        SchemeKind::Rolling => scheme.window,
        _ => None,
    };
    let max = |v: &[usize]| v.iter().copied().max().unwrap_or(0);
    match family {
        Family::Arima {
            p,
            d,
            q,
            drift,
            seasonal,
            regressors,
        } => {
            let s = seasonal.map_or((0, 0, 0, 0), |s| (s.p, s.d, s.q, s.m));
            arima_short(
                ArimaSize {
                    coefficients: p + q + s.0 + s.2,
                    mean: d + s.1 == 0 || *drift,
                    regressors: regressors.len(),
                    differences: d + s.3 * s.1,
                },
                end,
                window,
            )
        }
        Family::ArimaSelect {
            ps,
            ds,
            qs,
            drift,
            seasonal,
            regressors,
            ..
        } => {
            // The largest orders with the least differencing: the most
            // parameters on the most observations a window can have;
            // the largest differencing is checked too.
            let (sp, sq, sds, m) = seasonal.as_ref().map_or((0, 0, vec![0], 0), |s| {
                (max(&s.ps), max(&s.qs), s.ds.clone(), s.m)
            });
            let worst = ds
                .iter()
                .flat_map(|&d| sds.iter().map(move |&sd| (d, sd)))
                .filter_map(|(d, sd)| {
                    arima_short(
                        ArimaSize {
                            coefficients: max(ps) + max(qs) + sp + sq,
                            mean: d + sd == 0 || *drift,
                            regressors: regressors.len(),
                            differences: d + m * sd,
                        },
                        end,
                        window,
                    )
                })
                .next();
            worst
        }
        _ => None,
    }
}

/// What an ARIMA estimates and what its differencing uses up.
struct ArimaSize {
    coefficients: usize,
    mean: bool,
    regressors: usize,
    differences: usize,
}

fn arima_short(size: ArimaSize, end: usize, window: Option<usize>) -> Option<String> {
    let parameters = size.coefficients + usize::from(size.mean) + size.regressors + 1;
    let observations = window
        .map_or(end, |w| w.min(end))
        .saturating_sub(size.differences);
    let needed = OBSERVATIONS_PER_PARAMETER * parameters;
    (observations < needed).then(|| {
        format!(
            "its {parameters} parameters need at least {needed} observations ({OBSERVATIONS_PER_PARAMETER} per parameter) in the first estimation window, which has {observations}{}; use a smaller order, start the scheme later or widen the window",
            if size.differences > 0 { " after differencing" } else { "" }
        )
    })
}

/// Targets shown in detail by default (`report.targets`).
pub(crate) const REPORT_TARGETS: usize = 50;
/// The most `report.targets` may ask for: each detailed target adds its
/// sections to one report file.
pub(crate) const MAX_REPORT_TARGETS: usize = 1000;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_grid_beyond_the_cell_limit_is_refused() {
        // By construction: targets × candidates × schemes against MAX_CELLS.
        let node = line_node(3);
        let mut ctx = Ctx::new(std::path::Path::new("e.yaml"));
        check_grid(&mut ctx, &node, 1000, 100, 100);
        assert!(ctx.diags.is_empty());
        check_grid(&mut ctx, &node, 100_000, 100, 2);
        assert_eq!(ctx.diags.len(), 1);
        assert!(ctx.diags[0].message.contains("20000000 cells"));
        check_grid(&mut ctx, &node, usize::MAX, 2, 2);
        assert_eq!(ctx.diags.len(), 2);
    }

    #[test]
    fn an_arima_needs_three_observations_per_parameter() {
        let size = |coefficients, mean, regressors, differences| ArimaSize {
            coefficients,
            mean,
            regressors,
            differences,
        };
        // arima(12,2,12) has 12 + 12 + 1 (variance) = 25 parameters: 75 observations.
        assert!(arima_short(size(24, false, 0, 2), 76, None).is_some());
        assert!(arima_short(size(24, false, 0, 2), 77, None).is_none());
        // d = 0 adds the mean: arima(1,0,1) has 4 parameters; a window of 11 is short.
        assert!(arima_short(size(2, true, 0, 0), 100, Some(11)).is_some());
        assert!(arima_short(size(2, true, 0, 0), 100, Some(12)).is_none());
        // The airline model (0,1,1)(0,1,1)12 with two regressors: 2 + 2 + 1 = 5
        // parameters need 15 observations after its 1 + 12 differences.
        assert!(arima_short(size(2, false, 2, 13), 27, None).is_some());
        assert!(arima_short(size(2, false, 2, 13), 28, None).is_none());
    }
}
