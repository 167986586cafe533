//! The CSV tables of the results folder (SPEC §5), written in the order of
//! the experiment so nothing depends on thread scheduling. Numbers are the
//! shortest text that reads back to the same f64; undefined values are empty.

use crate::backtest::CellOutput;
use crate::plan::Cell;
use crate::score::ScoreRow;
use crate::spec::Experiment;

/// Shortest round-trip representation of a float (Ryū: the fewest digits
/// that parse back to the same f64), without a trailing `.0`; exponent form
/// for magnitudes below 1e-5 or from 1e16. Undefined values are empty.
pub fn num(v: f64) -> String {
    let mut out = Vec::new();
    push_num(&mut out, v);
    String::from_utf8(out).unwrap_or_default()
}

/// [`num`] appended to a byte buffer without allocating.
pub fn push_num(out: &mut Vec<u8>, v: f64) {
    if !v.is_finite() {
        return;
    }
    let mut buf = ryu::Buffer::new();
    let s = buf.format_finite(v).as_bytes();
    out.extend_from_slice(s.strip_suffix(b".0").unwrap_or(s));
}

/// A text field, quoted when it holds a comma, quote or newline (the csv
/// crate's "necessary" quoting, so hand-written rows match its output).
pub fn push_field(out: &mut Vec<u8>, s: &str) {
    if s.bytes().any(|b| b == b',' || b == b'"' || b == b'\n') {
        out.push(b'"');
        for b in s.bytes() {
            if b == b'"' {
                out.push(b'"');
            }
            out.push(b);
        }
        out.push(b'"');
    } else {
        out.extend_from_slice(s.as_bytes());
    }
}

fn push_usize(out: &mut Vec<u8>, v: usize) {
    let mut buf = itoa_like(v);
    out.append(&mut buf);
}

fn itoa_like(mut v: usize) -> Vec<u8> {
    let mut digits = Vec::with_capacity(8);
    loop {
        digits.push(b'0' + (v % 10) as u8);
        v /= 10;
        if v == 0 {
            break;
        }
    }
    digits.reverse();
    digits
}

pub fn opt(v: Option<f64>) -> String {
    v.map(num).unwrap_or_default()
}

fn writer() -> csv::Writer<Vec<u8>> {
    csv::WriterBuilder::new()
        .terminator(csv::Terminator::Any(b'\n'))
        .from_writer(Vec::new())
}

fn finish(w: csv::Writer<Vec<u8>>) -> Vec<u8> {
    w.into_inner().unwrap_or_default()
}

/// `lower_<c>,upper_<c>` per interval level, ascending (SPEC §5).
fn interval_headers(exp: &Experiment) -> Vec<String> {
    exp.intervals
        .iter()
        .flat_map(|l| {
            [
                format!("lower_{}", l.percent),
                format!("upper_{}", l.percent),
            ]
        })
        .collect()
}

fn push_intervals(
    rec: &mut Vec<String>,
    exp: &Experiment,
    forecast: Option<f64>,
    variance: Option<f64>,
) {
    for level in &exp.intervals {
        match (forecast, variance) {
            (Some(f), Some(v)) if v >= 0.0 => {
                let (lo, hi) = crate::score::interval(f, v.sqrt(), level.level);
                rec.push(num(lo));
                rec.push(num(hi));
            }
            _ => {
                rec.push(String::new());
                rec.push(String::new());
            }
        }
    }
}

/// The leading columns of forecasts.csv (SPEC §5), which the report reads.
pub const FORECAST_COLUMNS: [&str; 9] = [
    "target",
    "candidate",
    "scheme",
    "horizon",
    "origin",
    "period",
    "forecast",
    "actual",
    "error",
];

/// Every backtest forecast (`forecasts.csv`). The largest table by far:
/// rows are written straight into one buffer, numbers without allocation.
pub fn forecasts_csv(exp: &Experiment, cells: &[Cell], outputs: &[CellOutput]) -> Vec<u8> {
    let mut header: Vec<String> = FORECAST_COLUMNS
        .iter()
        .chain(&["is_mse"])
        .map(|c| c.to_string())
        .collect();
    header.extend(interval_headers(exp));
    let with_order = exp.candidates.iter().any(|c| c.family.selects());
    if with_order {
        header.push("order".into());
    }
    let rows: usize = outputs.iter().map(|o| o.forecasts.len()).sum();
    let mut out = Vec::with_capacity(64 + rows * (96 + 40 * exp.intervals.len()));
    for (i, h) in header.iter().enumerate() {
        if i > 0 {
            out.push(b',');
        }
        push_field(&mut out, h);
    }
    out.push(b'\n');
    let zs: Vec<f64> = exp
        .intervals
        .iter()
        .map(|l| crate::numerics::dist::normal_quantile((1.0 + l.level) / 2.0))
        .collect();
    for (cell, o) in cells.iter().zip(outputs) {
        let target = &exp.targets[cell.target];
        // The row's fixed part: target, candidate, scheme.
        let mut lead = Vec::new();
        push_field(&mut lead, &target.name);
        lead.push(b',');
        push_field(&mut lead, &exp.candidates[cell.candidate].id);
        lead.push(b',');
        push_field(&mut lead, &exp.schemes[cell.scheme].id);
        lead.push(b',');
        for r in &o.forecasts {
            let pos = r.origin + r.horizon;
            let actual = target.y[pos - 1];
            out.extend_from_slice(&lead);
            push_usize(&mut out, r.horizon);
            out.push(b',');
            push_field(&mut out, &target.labels[r.origin - 1]);
            out.push(b',');
            push_field(&mut out, &target.labels[pos - 1]);
            out.push(b',');
            push_num(&mut out, r.forecast);
            out.push(b',');
            push_num(&mut out, actual);
            out.push(b',');
            push_num(&mut out, actual - r.forecast);
            out.push(b',');
            if let Some(m) = r.is_mse {
                push_num(&mut out, m);
            }
            for &z in &zs {
                out.push(b',');
                match r.variance {
                    Some(v) if v >= 0.0 => {
                        let sd = v.sqrt();
                        push_num(&mut out, r.forecast - z * sd);
                        out.push(b',');
                        push_num(&mut out, r.forecast + z * sd);
                    }
                    _ => out.push(b','),
                }
            }
            if with_order {
                out.push(b',');
                if let Some(order) = r.order {
                    push_field(&mut out, &order.to_string());
                }
            }
            out.push(b'\n');
        }
    }
    out
}

pub fn outlook_csv(exp: &Experiment, cells: &[Cell], outputs: &[CellOutput]) -> Vec<u8> {
    let mut w = writer();
    let mut header: Vec<String> = [
        "target",
        "candidate",
        "horizon",
        "origin",
        "period",
        "forecast",
    ]
    .map(String::from)
    .to_vec();
    header.extend(interval_headers(exp));
    let _ = w.write_record(&header);
    for (cell, out) in cells.iter().zip(outputs) {
        let target = &exp.targets[cell.target];
        for r in &out.outlook {
            let mut rec = vec![
                target.name.clone(),
                exp.candidates[cell.candidate].id.clone(),
                r.horizon.to_string(),
                target.labels[target.n - 1].clone(),
                exp.period_label(target, target.n + r.horizon),
                opt(r.forecast),
            ];
            push_intervals(&mut rec, exp, r.forecast, r.variance);
            let _ = w.write_record(&rec);
        }
    }
    finish(w)
}

pub fn scores_csv(exp: &Experiment, rows: &[ScoreRow]) -> Vec<u8> {
    let mut w = writer();
    let mut header: Vec<&str> = vec![
        "target",
        "candidate",
        "scheme",
        "horizon",
        "period_set",
        "n",
    ];
    let names: Vec<String> = exp
        .metric_columns()
        .iter()
        .map(|c| exp.metric_column_name(c))
        .collect();
    header.extend(names.iter().map(String::as_str));
    header.extend(["is_rmse", "gap", "rank", "parameters", "is_r2"]);
    let _ = w.write_record(&header);
    for r in rows {
        let mut rec: Vec<String> = vec![
            exp.targets[r.target].name.clone(),
            exp.candidates[r.candidate].id.clone(),
            exp.schemes[r.scheme].id.clone(),
            r.horizon
                .map(|h| h.to_string())
                .unwrap_or_else(|| "all".into()),
            r.period_set
                .map(|p| exp.periods[p].name.clone())
                .unwrap_or_else(|| "all".into()),
            r.n.to_string(),
        ];
        rec.extend(r.metrics.iter().map(|v| opt(*v)));
        rec.extend([
            opt(r.is_rmse),
            opt(r.gap),
            r.rank.to_string(),
            exp.candidates[r.candidate].family.parameters().to_string(),
            opt(r.is_r2),
        ]);
        let _ = w.write_record(&rec);
    }
    finish(w)
}

/// The columns of tests.csv (SPEC §5 plus `in_set` and `critical_value`).
pub const TESTS_COLUMNS: [&str; 10] = [
    "target",
    "scheme",
    "horizon",
    "test",
    "candidate",
    "versus",
    "statistic",
    "p_value",
    "in_set",
    "critical_value",
];

pub fn tests_csv(exp: &Experiment, rows: &[crate::score::comparison::TestRow]) -> Vec<u8> {
    let mut w = writer();
    let _ = w.write_record(TESTS_COLUMNS);
    let id = |c: Option<usize>| c.map(|c| exp.candidates[c].id.clone()).unwrap_or_default();
    for r in rows {
        let _ = w.write_record([
            exp.targets[r.target].name.clone(),
            exp.schemes[r.scheme].id.clone(),
            r.horizon.to_string(),
            r.test.to_string(),
            id(r.candidate),
            id(r.versus),
            opt(r.statistic),
            opt(r.p_value),
            r.in_set.map(|b| b.to_string()).unwrap_or_default(),
            opt(r.critical_value),
        ]);
    }
    finish(w)
}

/// Rolling accuracy over time (`stability.csv`).
pub fn stability_csv(exp: &Experiment, rows: &[crate::score::stability::StabilityRow]) -> Vec<u8> {
    let mut out = Vec::with_capacity(64 + rows.len() * 64);
    out.extend_from_slice(b"target,candidate,scheme,horizon,period,rolling_rmse,fluctuation\n");
    for r in rows {
        let target = &exp.targets[r.target];
        push_field(&mut out, &target.name);
        out.push(b',');
        push_field(&mut out, &exp.candidates[r.candidate].id);
        out.push(b',');
        push_field(&mut out, &exp.schemes[r.scheme].id);
        out.push(b',');
        push_usize(&mut out, r.horizon);
        out.push(b',');
        push_field(&mut out, &target.labels[r.position - 1]);
        out.push(b',');
        push_num(&mut out, r.rolling_rmse);
        out.push(b',');
        if let Some(f) = r.fluctuation {
            push_num(&mut out, f);
        }
        out.push(b'\n');
    }
    out
}

/// The columns of diagnostics.csv, in order.
pub const DIAGNOSTICS_COLUMNS: [&str; 7] = [
    "subject",
    "kind",
    "test",
    "lags",
    "statistic",
    "p_value",
    "critical_5",
];

/// Unit-root and residual diagnostics (`diagnostics.csv`).
pub fn diagnostics_csv(rows: &[crate::score::stability::DiagnosticRow]) -> Vec<u8> {
    let mut w = writer();
    let _ = w.write_record(DIAGNOSTICS_COLUMNS);
    for r in rows {
        let _ = w.write_record([
            r.subject.clone(),
            r.kind.to_string(),
            r.test.to_string(),
            r.lags.map(|l| l.to_string()).unwrap_or_default(),
            opt(r.statistic),
            opt(r.p_value),
            opt(r.critical_5),
        ]);
    }
    finish(w)
}

/// The series as used (`series.csv`): each target and predictor by period,
/// raw and after its transform, so reports can be re-rendered from the folder.
pub fn series_csv(exp: &Experiment, with_predictors: bool) -> Vec<u8> {
    let mut w = writer();
    let _ = w.write_record(["series", "role", "transform", "period", "raw", "value"]);
    for target in &exp.targets {
        for pos in 1..=target.n {
            let _ = w.write_record([
                target.name.clone(),
                "target".into(),
                exp.transform.name().into(),
                target.labels[pos - 1].clone(),
                num(target.raw[pos - 1]),
                num(target.y[pos - 1]),
            ]);
        }
    }
    if let Some(first) = exp.targets.first().filter(|_| with_predictors) {
        for (i, p) in exp.predictors.iter().enumerate() {
            for (pos, v) in first.predictors[i].iter().enumerate() {
                if let Some(v) = v {
                    let _ = w.write_record([
                        p.column.clone(),
                        "predictor".into(),
                        p.transform.name().into(),
                        first.labels[pos].clone(),
                        String::new(),
                        num(*v),
                    ]);
                }
            }
        }
    }
    finish(w)
}

#[cfg(test)]
mod tests {
    use super::*;
    #[test]
    fn numbers_round_trip() {
        // Property by construction: the text parses back to the same f64.
        for v in [
            0.1,
            1.0 / 3.0,
            -2.5e-9,
            1e300,
            123456789.125,
            0.0,
            -0.0,
            5e-324,
        ] {
            let s = num(v);
            assert_eq!(s.parse::<f64>().unwrap().to_bits(), v.to_bits(), "{s}");
        }
        assert_eq!(num(1.0), "1");
        assert_eq!(num(f64::NAN), "");
    }
}
