//! Stability over time and model/data diagnostics (the tables behind the
//! report's "over time" and "data" sections):
//! - rolling-window RMSE of every candidate along the evaluation sample, and
//!   the Giacomini & Rossi (2010) fluctuation test against the benchmark;
//! - Ljung & Box (1978) on each cell's in-sample residuals at its last
//!   estimation;
//! - the augmented Dickey-Fuller test (AIC lag length, MacKinnon p-values)
//!   on every target and predictor after transformation.

use super::comparison::TestRow;
use super::diagnostics::{adf, fluctuation_test, ljung_box};
use super::{group_errors, Errors};
use crate::backtest::CellOutput;
use crate::plan::Cell;
use crate::spec::{Experiment, Family};

/// One row of `stability.csv`: rolling accuracy at the end of a window.
#[derive(Debug, Clone, PartialEq)]
pub struct StabilityRow {
    pub target: usize,
    pub candidate: usize,
    pub scheme: usize,
    pub horizon: usize,
    /// Position of the last target period in the window.
    pub position: usize,
    pub rolling_rmse: f64,
    /// The fluctuation statistic F_t against the benchmark (empty for the benchmark).
    pub fluctuation: Option<f64>,
}

/// One row of `diagnostics.csv`.
#[derive(Debug, Clone, PartialEq)]
pub struct DiagnosticRow {
    /// A series name (data diagnostics) or a cell id `target/candidate/scheme`.
    pub subject: String,
    /// `target`, `predictor` or `residuals`.
    pub kind: &'static str,
    pub test: &'static str,
    pub lags: Option<usize>,
    pub statistic: Option<f64>,
    pub p_value: Option<f64>,
    /// 5 % critical value where the test has one (ADF).
    pub critical_5: Option<f64>,
}

/// The rolling window m for P forecasts: `scoring.rolling_window` if set,
/// else ⌈0.3·P⌉ (μ = m/P = 0.3, inside the tabulated 0.1..0.9 of Giacomini
/// & Rossi's critical values).
pub fn window_for(exp: &Experiment, forecasts: usize) -> usize {
    exp.rolling_window
        .unwrap_or_else(|| (3 * forecasts).div_ceil(10))
        .max(1)
}

pub fn rolling(exp: &Experiment, errors: &[Vec<Errors>]) -> (Vec<StabilityRow>, Vec<TestRow>) {
    let mut rows = Vec::new();
    let mut tests = Vec::new();
    let bench = exp.benchmark;
    for (t, target) in exp.targets.iter().enumerate() {
        for s in 0..exp.schemes.len() {
            for (hi, &h) in exp.horizons.iter().enumerate() {
                let be = group_errors(exp, errors, t, bench, s, Some(hi), None);
                let p = be.len();
                let m = window_for(exp, p);
                if p == 0 || m > p {
                    continue;
                }
                let origins_first = target.first_origins[s];
                for c in 0..exp.candidates.len() {
                    let e = group_errors(exp, errors, t, c, s, Some(hi), None);
                    if e.len() != p {
                        continue;
                    }
                    let sq: Vec<f64> = (0..p).map(|i| e.error(i).powi(2)).collect();
                    let fl = if c == bench {
                        None
                    } else {
                        let d: Vec<f64> = (0..p).map(|i| be.error(i).powi(2) - sq[i]).collect();
                        fluctuation_test(&d, m)
                    };
                    let mut window_sum: f64 = sq[..m].iter().sum();
                    for end in m..=p {
                        if end > m {
                            window_sum += sq[end - 1] - sq[end - 1 - m];
                        }
                        rows.push(StabilityRow {
                            target: t,
                            candidate: c,
                            scheme: s,
                            horizon: h,
                            // forecasts are in origin order: the i-th targets T0 + i + h
                            position: origins_first + (end - 1) + h,
                            rolling_rmse: (window_sum.max(0.0) / m as f64).sqrt(),
                            fluctuation: fl.as_ref().map(|f| f.path[end - m]),
                        });
                    }
                    if c != bench {
                        tests.push(TestRow {
                            target: t,
                            scheme: s,
                            horizon: h,
                            test: "fluctuation".into(),
                            candidate: Some(c),
                            versus: Some(bench),
                            statistic: fl.as_ref().map(|f| f.max_abs),
                            p_value: None,
                            in_set: None,
                            critical_value: fl.as_ref().map(|f| f.critical_5),
                            p_lower: None,
                            p_upper: None,
                        });
                    }
                }
            }
        }
    }
    (rows, tests)
}

/// Ljung-Box lags: min(10, n/5), or min(2m, n/5) for seasonal data
/// (Hyndman & Athanasopoulos's rule of thumb).
fn ljung_box_lags(n: usize, season: Option<usize>) -> usize {
    let cap = n / 5;
    match season {
        Some(m) => (2 * m).min(cap),
        None => 10.min(cap),
    }
}

/// Parameters of the model's own dynamics, the degrees of freedom Ljung-Box loses.
fn dynamic_parameters(family: &Family) -> usize {
    match family {
        Family::Ar { lags, .. } | Family::Ardl { lags, .. } => *lags,
        Family::Arima { p, q, .. } => p + q,
        _ => 0,
    }
}

/// Diagnostics of the experiment's targets and cells; the predictors' unit-root
/// tests are included when `with_predictors` (once per results folder).
/// ADF with a constant on a series after its transformation.
fn adf_row(subject: &str, kind: &'static str, values: &[f64]) -> DiagnosticRow {
    let r = adf(values, None);
    DiagnosticRow {
        subject: subject.to_string(),
        kind,
        test: "adf",
        lags: r.as_ref().map(|r| r.used_lag),
        statistic: r.as_ref().map(|r| r.statistic),
        p_value: r.as_ref().map(|r| r.p_value),
        critical_5: r.as_ref().map(|r| r.critical_values[1]),
    }
}

/// Unit-root rows of the predictors, measured over the first target's span.
pub fn predictor_diagnostics(exp: &Experiment) -> Vec<DiagnosticRow> {
    let mut rows = Vec::new();
    if let Some(first) = exp.targets.first() {
        for (i, p) in exp.predictors.iter().enumerate() {
            // the longest unbroken run of values up to the target's end
            let values: Vec<f64> = first.predictors[i][..first.n]
                .iter()
                .skip_while(|v| v.is_none())
                .map_while(|v| *v)
                .collect();
            rows.push(adf_row(&p.column, "predictor", &values));
        }
    }
    rows
}

pub fn diagnostics(
    exp: &Experiment,
    cells: &[Cell],
    outputs: &[CellOutput],
    with_predictors: bool,
) -> Vec<DiagnosticRow> {
    let mut rows = Vec::new();
    // Data: ADF with a constant on each series after transformation.
    for target in &exp.targets {
        rows.push(adf_row(&target.name, "target", &target.y));
    }
    if with_predictors {
        rows.extend(predictor_diagnostics(exp));
    }
    // Models: Ljung-Box on each cell's last in-sample residuals.
    for (cell, out) in cells.iter().zip(outputs) {
        if out.residuals.is_empty() {
            continue;
        }
        let n = out.residuals.len();
        let lags = ljung_box_lags(n, exp.season_length());
        let df = dynamic_parameters(&exp.candidates[cell.candidate].family);
        let r = ljung_box(&out.residuals, lags, df);
        rows.push(DiagnosticRow {
            subject: cell.id.clone(),
            kind: "residuals",
            test: "ljung_box",
            lags: Some(lags),
            statistic: r.map(|r| r.0),
            p_value: r.map(|r| r.1),
            critical_5: None,
        });
    }
    rows
}
