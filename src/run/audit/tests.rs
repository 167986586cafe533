//! The audit can fail: a deliberately leaky model, compiled only here, is
//! swapped in for `naive` and reads one value past what its origin may see
//! (the target at T + 1, the release-lagged predictor at T, the known-ahead
//! predictor at T + h + 1); every one of its forecasts the audit checks is
//! listed as moved, and nothing else is. The same model reading exactly the
//! last visible value passes, so the hidden set is neither too small nor
//! too large. Expected outcomes hold by construction of the visibility
//! rules (docs/arithmetic.md); the data are the demo's invented series and
//! supply no expected value.

use super::*;
use crate::backtest::run_cell_in;
use crate::models::{CellModel, Model, Problem, Step, Visitor};
use std::path::PathBuf;

fn experiment() -> Experiment {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/audit/leaky.yaml");
    spec::load(&path).expect("the audit's test experiment loads")
}

/// Which value the leaky model reads: the target, or declared predictor i,
/// at its latest usable position at the origin plus `offset`.
#[derive(Clone, Copy)]
enum Column {
    Target,
    Predictor(usize),
}

#[derive(Clone, Copy)]
struct Leak {
    column: Column,
    offset: i64,
    /// Whether a re-estimation (not a fresh fit) reads one position more:
    /// state carried from one estimation to the next that sees too much.
    in_update: bool,
}

/// A model whose forecast is one value of the data, read at a position
/// relative to the latest usable one (docs/arithmetic.md).
struct Reader<'a> {
    exp: &'a Experiment,
    target: &'a TargetData,
    leak: Leak,
}

impl Reader<'_> {
    fn value(&self, origin: usize, horizon: usize, updated: bool) -> f64 {
        let t = origin as i64;
        let (values, latest): (Vec<Option<f64>>, i64) = match self.leak.column {
            Column::Target => (self.target.y.iter().map(|&v| Some(v)).collect(), t),
            Column::Predictor(i) => {
                let p = &self.exp.predictors[i];
                let latest = if p.known_ahead {
                    t + horizon as i64
                } else {
                    t - p.release_lag as i64
                };
                (self.target.predictors[i].clone(), latest)
            }
        };
        let extra = i64::from(updated && self.leak.in_update);
        let position = latest + self.leak.offset + extra;
        // An empty cell (the ragged edge) reads as 0.
        values
            .get((position - 1) as usize)
            .copied()
            .flatten()
            .unwrap_or(0.0)
    }
}

impl Model for Reader<'_> {
    /// Whether the estimate came from an update.
    type Fit = bool;
    const STRICT: bool = true;

    fn fit(&self, _end: usize, _window: Option<usize>) -> std::result::Result<bool, String> {
        Ok(false)
    }

    fn update(
        &self,
        fit: &mut bool,
        _end: usize,
        _window: Option<usize>,
    ) -> std::result::Result<(), String> {
        *fit = true;
        Ok(())
    }

    fn forecast(
        &self,
        fit: &mut bool,
        origin: usize,
        horizons: &[usize],
    ) -> Vec<std::result::Result<Step, Problem>> {
        horizons
            .iter()
            .map(|&h| {
                Ok(Step {
                    forecast: self.value(origin, h, *fit),
                    variance: Some(1.0),
                    is_mse: None,
                    is_var: None,
                    order: None,
                })
            })
            .collect()
    }

    fn residuals(&self, _fit: &mut bool, _end: usize) -> Vec<f64> {
        Vec::new()
    }

    fn parameters(&self, _fit: &mut bool) -> Vec<crate::models::Parameter> {
        Vec::new()
    }
}

/// The families, with candidate 0 (`naive`) replaced by the reader.
struct WithReader(Leak);

impl Registry for WithReader {
    fn visit<V: Visitor>(
        &self,
        cell: &CellModel,
        visitor: V,
    ) -> std::result::Result<V::Out, String> {
        if std::ptr::eq(cell.family, &cell.exp.candidates[0].family) {
            Ok(visitor.visit(&Reader {
                exp: cell.exp,
                target: cell.target,
                leak: self.0,
            }))
        } else {
            Families.visit(cell, visitor)
        }
    }
}

/// The run's outputs with the reader in place, combinations formed.
fn outputs_with<R: Registry>(registry: &R, exp: &Experiment, cells: &[Cell]) -> Vec<CellOutput> {
    let mut outputs: Vec<CellOutput> = cells
        .iter()
        .map(|cell| {
            if backtest::is_computed(exp, cell) {
                run_cell_in(registry, exp, cell, &crate::progress::Silent).expect("the cell runs")
            } else {
                CellOutput::default()
            }
        })
        .collect();
    backtest::combine(exp, cells, &mut outputs, &crate::progress::Silent);
    outputs
}

/// The audit with the reader in place, and the checks of the reader's cells.
fn audit_with(leak: Leak) -> (AuditOutcome, usize) {
    let exp = experiment();
    let cells = plan::cells(&exp);
    let registry = WithReader(leak);
    let outputs = outputs_with(&registry, &exp, &cells);
    let outcome = audit_outputs(&registry, &exp, &cells, &outputs, 3);
    let reader_checks = (0..cells.len())
        .filter(|&i| cells[i].candidate == 0)
        .map(|index| {
            CellAudit {
                exp: &exp,
                cells: &cells,
                outputs: &outputs,
                index,
            }
            .run(&registry, 3)
            .checks
        })
        .sum();
    (outcome, reader_checks)
}

/// A leak is caught at every forecast the audit checks, and only there.
fn assert_caught(leak: Leak) {
    let (outcome, reader_checks) = audit_with(leak);
    assert!(reader_checks >= 3 * 3, "every scheme's origins are checked");
    assert_eq!(outcome.moved.len(), reader_checks, "{:?}", outcome.moved);
    for m in &outcome.moved {
        assert_eq!(m.candidate, "naive");
        assert_eq!(m.target, "demand_ml");
        assert!(m.what.starts_with("forecast "), "{}", m.what);
    }
    for scheme in ["fixed", "expanding", "rolling(48)"] {
        assert!(outcome.moved.iter().any(|m| m.scheme == scheme), "{scheme}");
    }
    // Origins are period labels, horizons those of the experiment.
    assert!(outcome
        .moved
        .iter()
        .all(|m| m.origin.len() == 7 && [1, 3].contains(&m.horizon)));
}

/// Reading the last visible value moves nothing.
fn assert_passes(leak: Leak) {
    let (outcome, reader_checks) = audit_with(leak);
    assert!(reader_checks > 0);
    assert!(outcome.moved.is_empty(), "{:?}", outcome.moved);
}

#[test]
fn a_model_that_reads_the_target_at_t_plus_1_is_caught() {
    assert_caught(Leak {
        column: Column::Target,
        offset: 1,
        in_update: false,
    });
    assert_passes(Leak {
        column: Column::Target,
        offset: 0,
        in_update: false,
    });
}

#[test]
fn a_model_that_reads_a_release_lagged_predictor_too_early_is_caught() {
    // rain_deficit_mm has release_lag 1: at origin T its latest is T − 1;
    // at the last origin the value at T is the ragged edge's empty cell.
    assert_caught(Leak {
        column: Column::Predictor(0),
        offset: 1,
        in_update: false,
    });
    assert_passes(Leak {
        column: Column::Predictor(0),
        offset: 0,
        in_update: false,
    });
}

#[test]
fn a_model_that_reads_a_known_ahead_predictor_beyond_t_plus_h_is_caught() {
    // The reader declares no predictor, so one change per origin serves
    // every horizon (the smallest horizon's hidden set): reading T + h for
    // h = 3 is then caught as well; reading T + 1 (the latest at h = 1)
    // passes.
    assert_caught(Leak {
        column: Column::Predictor(1),
        offset: 1,
        in_update: false,
    });
}

#[test]
fn the_real_families_of_the_test_experiment_pass() {
    let exp = experiment();
    let cells = plan::cells(&exp);
    let outputs = outputs_with(&Families, &exp, &cells);
    let outcome = audit_outputs(&Families, &exp, &cells, &outputs, 4);
    assert_eq!(outcome.cells, cells.len());
    assert!(outcome.moved.is_empty(), "{:?}", outcome.moved);
    assert!(outcome.checks >= cells.len() * 4);
}

#[test]
fn the_changed_data_differ_exactly_where_the_origin_cannot_see() {
    // Position by position, transformed values (a seasonal difference of
    // the raw rows) are unchanged up to the latest usable position and
    // changed after it, for the target, a release-lagged and a known-ahead
    // predictor.
    let exp = experiment();
    let target = &exp.targets[0];
    let (origin, horizon) = (target.n - 10, 3);
    let visible = visible_at(&exp, origin, horizon);
    let mut rng = stream(1, "test", None);
    let after = changed(&exp, target, &visible, &mut rng).expect("changed");
    let bits =
        |v: &[Option<f64>]| -> Vec<Option<u64>> { v.iter().map(|x| x.map(f64::to_bits)).collect() };
    let y = |t: &TargetData| -> Vec<Option<f64>> { t.y.iter().map(|&v| Some(v)).collect() };
    let columns = [
        (y(target), y(&after), origin),
        (
            target.predictors[0].clone(),
            after.predictors[0].clone(),
            origin - 1,
        ),
        (
            target.predictors[1].clone(),
            after.predictors[1].clone(),
            origin + horizon,
        ),
    ];
    for (before, after, latest) in columns {
        assert_eq!(bits(&before[..latest]), bits(&after[..latest]));
        for p in latest..before.len().min(target.n) {
            assert_ne!(
                before[p].map(f64::to_bits),
                after[p].map(f64::to_bits),
                "position {}",
                p + 1
            );
        }
    }
    // Nothing hidden: the same target, bit for bit.
    let all = Visible {
        target: i64::MAX,
        predictors: vec![i64::MAX; 2],
    };
    assert_eq!(
        changed(&exp, target, &all, &mut rng).expect("same"),
        *target
    );
}

#[test]
fn origins_are_drawn_reproducibly_with_the_first_and_last() {
    let all: Vec<usize> = (10..60).collect();
    let a = chosen_origins(&all, 5, &mut stream(3, "t/c/s", None));
    let b = chosen_origins(&all, 5, &mut stream(3, "t/c/s", None));
    assert_eq!(a, b);
    assert_eq!(a.len(), 5);
    assert_eq!((a[0], a[4]), (10, 59));
    assert!(a.windows(2).all(|w| w[0] < w[1]));
    assert_eq!(
        chosen_origins(&all[..4], 5, &mut stream(3, "x", None)),
        all[..4]
    );
    assert_eq!(chosen_origins(&all, 1, &mut stream(3, "x", None)), vec![59]);
}

#[test]
fn a_re_estimation_that_carries_a_later_value_is_caught() {
    // Fresh fits read the target at T, re-estimations at T + 1: the
    // changed and unchanged data agree from scratch, the run's own forecast
    // does not, and for a family whose incremental path must give a fresh
    // fit's bits that is a moved forecast. A fixed scheme never
    // re-estimates, and each scheme's first origin is a fresh fit.
    let (outcome, _) = audit_with(Leak {
        column: Column::Target,
        offset: 0,
        in_update: true,
    });
    assert!(!outcome.moved.is_empty());
    for m in &outcome.moved {
        assert_eq!(m.candidate, "naive");
        assert_ne!(m.scheme, "fixed");
        assert!(
            m.what.starts_with("the run's own forecast differs"),
            "{}",
            m.what
        );
        assert_ne!(m.origin, "2018-12", "the first origin is a fresh fit");
    }
    for scheme in ["expanding", "rolling(48)"] {
        assert!(outcome.moved.iter().any(|m| m.scheme == scheme), "{scheme}");
    }
}

/// The second demo: invented revisions, a release lag of one quarter.
fn vintage_experiment() -> Experiment {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("experiments/regional_output.yaml");
    spec::load(&path).expect("the vintage demo loads")
}

/// The audit's outcome and its checks outside combinations (which are
/// formed from their members' rows as the run made them).
fn vintage_audit(exp: &Experiment) -> (AuditOutcome, usize) {
    let cells = plan::cells(exp);
    let outputs = outputs_with(&Families, exp, &cells);
    let outcome = audit_outputs(&Families, exp, &cells, &outputs, 3);
    let model_checks = (0..cells.len())
        .filter(|&i| backtest::is_computed(exp, &cells[i]))
        .map(|index| {
            CellAudit {
                exp,
                cells: &cells,
                outputs: &outputs,
                index,
            }
            .run(&Families, 3)
            .checks
        })
        .sum();
    (outcome, model_checks)
}

#[test]
fn on_vintages_the_families_pass_and_a_run_that_reads_the_next_vintage_is_caught() {
    // By construction: origin T may see vintage T only. The run as it is
    // moves nothing; a run whose vintage lookup is one off (origin T reads
    // the vintage published a period later, whose data reach T) is caught
    // at every model forecast checked, because the audit changes every
    // vintage labelled after the origin's period, whichever one the run
    // picks.
    let exp = vintage_experiment();
    let (outcome, checks) = vintage_audit(&exp);
    assert!(checks >= 20, "{checks}");
    assert!(outcome.moved.is_empty(), "{:?}", outcome.moved);
    // arima and smoothing are warm-started after a cell's first origin (or
    // use the previous estimate again), so their last bits may differ from
    // an estimation from scratch (path differences); least squares and the
    // benchmarks may not (they would be moved forecasts).
    let mut leaky = exp.clone();
    let target = &mut leaky.targets[0];
    let v = std::sync::Arc::make_mut(target.vintages.as_mut().expect("vintages"));
    v.at_origin = (0..v.at_origin.len())
        .map(|i| v.at_origin.get(i + 1).copied().flatten().or(v.at_origin[i]))
        .collect();
    let (outcome, checks) = vintage_audit(&leaky);
    assert_eq!(outcome.moved.len(), checks, "{:?}", &outcome.moved[..3]);
    assert!(outcome
        .moved
        .iter()
        .all(|m| !m.candidate.starts_with("combination")));
}
