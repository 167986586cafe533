//! The CSV tables of the results folder (SPEC §5), written in the order of
//! the experiment so nothing depends on thread scheduling. Numbers are the
//! shortest text that reads back to the same f64; undefined values are empty.

use crate::backtest::CellOutput;
use crate::plan::Cell;
use crate::score::ScoreRow;
use crate::spec::Experiment;

/// Shortest round-trip representation of a float (Rust's `Display` and
/// `LowerExp` print the shortest digits that parse back to the same value);
/// exponent form for very large or small magnitudes.
pub fn num(v: f64) -> String {
    if !v.is_finite() {
        return String::new();
    }
    let a = v.abs();
    if a != 0.0 && !(1e-5..1e16).contains(&a) {
        format!("{v:e}")
    } else {
        format!("{v}")
    }
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

pub fn forecasts_csv(exp: &Experiment, cells: &[Cell], outputs: &[CellOutput]) -> Vec<u8> {
    let mut w = writer();
    let _ = w.write_record([
        "target",
        "candidate",
        "scheme",
        "horizon",
        "origin",
        "period",
        "forecast",
        "actual",
        "error",
        "is_mse",
    ]);
    for (cell, out) in cells.iter().zip(outputs) {
        let target = &exp.targets[cell.target];
        let cand = &exp.candidates[cell.candidate].id;
        let scheme = &exp.schemes[cell.scheme].id;
        for r in &out.forecasts {
            let pos = r.origin + r.horizon;
            let actual = target.y[pos - 1];
            let _ = w.write_record([
                target.name.as_str(),
                cand,
                scheme,
                &r.horizon.to_string(),
                &target.labels[r.origin - 1],
                &target.labels[pos - 1],
                &num(r.forecast),
                &num(actual),
                &num(actual - r.forecast),
                &opt(r.is_mse),
            ]);
        }
    }
    finish(w)
}

pub fn outlook_csv(exp: &Experiment, cells: &[Cell], outputs: &[CellOutput]) -> Vec<u8> {
    let mut w = writer();
    let _ = w.write_record([
        "target",
        "candidate",
        "horizon",
        "origin",
        "period",
        "forecast",
    ]);
    for (cell, out) in cells.iter().zip(outputs) {
        let target = &exp.targets[cell.target];
        for r in &out.outlook {
            let _ = w.write_record([
                target.name.as_str(),
                &exp.candidates[cell.candidate].id,
                &r.horizon.to_string(),
                &target.labels[target.n - 1],
                &exp.period_label(target, target.n + r.horizon),
                &opt(r.forecast),
            ]);
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
    header.extend(exp.metrics.iter().map(|m| m.name()));
    header.extend(["is_rmse", "gap", "rank"]);
    let _ = w.write_record(&header);
    for r in rows {
        let mut rec: Vec<String> = vec![
            exp.targets[r.target].name.clone(),
            exp.candidates[r.candidate].id.clone(),
            exp.schemes[r.scheme].id.clone(),
            r.horizon
                .map(|h| h.to_string())
                .unwrap_or_else(|| "all".into()),
            r.period_set.clone(),
            r.n.to_string(),
        ];
        rec.extend(r.metrics.iter().map(|v| opt(*v)));
        rec.extend([opt(r.is_rmse), opt(r.gap), r.rank.to_string()]);
        let _ = w.write_record(&rec);
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
