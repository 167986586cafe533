//! A lossless text form of a cell's output, for shard folders (SPEC §6) and
//! the resume cache. Floats are written as the shortest text that reads back
//! to the same f64, so a merged run is byte-identical to a single one.
//!
//! ```text
//! cell <id>
//! fallbacks <n>
//! failure <message>            (only when the cell failed)
//! l <estimations> <first_end> <last_end> <regressor>   (a regressor left out; none without)
//! f <h> <origin> <forecast> <is_mse> <is_var> <variance> <order>
//! o <h> <forecast> <variance>
//! p <end> <h> <estimate> <std_error> <name>   (a parameter of the estimation ending at <end>)
//! pv <vintage> <end> <h> <estimate> <std_error> <name>   (the same, of an estimation on vintage <vintage>)
//! r <residual> <residual> …
//! end
//! ```
//! `-` stands for an undefined value.

use super::{CellOutput, Estimation};
use crate::models::{ForecastRow, Order, OutlookRow, Parameter};
use crate::spec::SmoothingError;

fn num(v: f64) -> String {
    if v.is_nan() {
        return "nan".into();
    }
    format!("{v:e}")
}

fn opt(v: Option<f64>) -> String {
    v.map(num).unwrap_or_else(|| "-".into())
}

fn parse_opt(s: &str) -> Result<Option<f64>, String> {
    if s == "-" {
        return Ok(None);
    }
    parse_num(s).map(Some)
}

fn parse_num(s: &str) -> Result<f64, String> {
    s.parse::<f64>()
        .map_err(|_| format!("'{s}' is not a number"))
}

fn order_text(o: Option<Order>) -> String {
    match o {
        None => "-".into(),
        Some(Order::Ar(p)) => format!("ar:{p}"),
        Some(Order::Ardl(p, q)) => format!("ardl:{p}:{q}"),
        Some(Order::Arima(p, d, q)) => format!("arima:{p}:{d}:{q}"),
        // the error only when multiplicative, so additive cells keep their text
        Some(Order::Smoothing(SmoothingError::Additive, t, s)) => {
            format!("smoothing:{}:{}", t.name(), s.name())
        }
        Some(Order::Smoothing(e, t, s)) => {
            format!("smoothing:{}:{}:{}", e.name(), t.name(), s.name())
        }
        Some(Order::Sarima {
            p,
            d,
            q,
            seasonal_p,
            seasonal_d,
            seasonal_q,
            m,
        }) => format!("sarima:{p}:{d}:{q}:{seasonal_p}:{seasonal_d}:{seasonal_q}:{m}"),
    }
}

fn parse_order(s: &str) -> Result<Option<Order>, String> {
    if s == "-" {
        return Ok(None);
    }
    let parts: Vec<&str> = s.split(':').collect();
    let n = |i: usize| -> Result<usize, String> {
        parts
            .get(i)
            .and_then(|v| v.parse().ok())
            .ok_or_else(|| format!("bad order '{s}'"))
    };
    match parts[0] {
        "ar" => Ok(Some(Order::Ar(n(1)?))),
        "ardl" => Ok(Some(Order::Ardl(n(1)?, n(2)?))),
        "arima" => Ok(Some(Order::Arima(n(1)?, n(2)?, n(3)?))),
        "smoothing" => {
            use crate::spec::{SmoothingSeason, SmoothingTrend};
            let bad = || format!("bad order '{s}'");
            let pick = |i: usize, names: &[&str]| {
                parts
                    .get(i)
                    .and_then(|v| names.iter().position(|n| n == v))
                    .ok_or_else(bad)
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
            const ERRORS: [SmoothingError; 2] =
                [SmoothingError::Additive, SmoothingError::Multiplicative];
            let (error, at) = if parts.len() == 4 {
                (ERRORS[pick(1, &SmoothingError::NAMES)?], 2)
            } else {
                (SmoothingError::Additive, 1)
            };
            Ok(Some(Order::Smoothing(
                error,
                TRENDS[pick(at, &SmoothingTrend::NAMES)?],
                SEASONS[pick(at + 1, &SmoothingSeason::NAMES)?],
            )))
        }
        "sarima" => Ok(Some(Order::Sarima {
            p: n(1)?,
            d: n(2)?,
            q: n(3)?,
            seasonal_p: n(4)?,
            seasonal_d: n(5)?,
            seasonal_q: n(6)?,
            m: n(7)?,
        })),
        _ => Err(format!("bad order '{s}'")),
    }
}

/// Write one cell's output.
pub fn write_cell(id: &str, out: &CellOutput, buf: &mut String) {
    use std::fmt::Write;
    let _ = writeln!(buf, "cell {id}");
    let _ = writeln!(buf, "fallbacks {}", out.fallbacks);
    if let Some(f) = &out.failure {
        let _ = writeln!(buf, "failure {}", f.replace('\n', " "));
    }
    for l in &out.left_out {
        let _ = writeln!(
            buf,
            "l {} {} {} {}",
            l.estimations,
            l.first_end,
            l.last_end,
            l.regressor.replace('\n', " ")
        );
    }
    for r in &out.forecasts {
        let _ = writeln!(
            buf,
            "f {} {} {} {} {} {} {}",
            r.horizon,
            r.origin,
            num(r.forecast),
            opt(r.is_mse),
            opt(r.is_var),
            opt(r.variance),
            order_text(r.order)
        );
    }
    for r in &out.outlook {
        let _ = writeln!(
            buf,
            "o {} {} {}",
            r.horizon,
            opt(r.forecast),
            opt(r.variance)
        );
    }
    for e in &out.parameters {
        let tag = match e.vintage {
            Some(v) => format!("pv {v}"),
            None => "p".to_string(),
        };
        for p in &e.parameters {
            let h = p.horizon.map_or_else(|| "-".to_string(), |h| h.to_string());
            let _ = writeln!(
                buf,
                "{tag} {} {h} {} {} {}",
                e.end,
                num(p.estimate),
                opt(p.std_error),
                p.name.replace('\n', " ")
            );
        }
    }
    if !out.residuals.is_empty() {
        let parts: Vec<String> = out.residuals.iter().map(|v| num(*v)).collect();
        let _ = writeln!(buf, "r {}", parts.join(" "));
    }
    buf.push_str("end\n");
}

/// Read every cell of a text written by [`write_cell`]: (id, output).
pub fn read_cells(text: &str) -> Result<Vec<(String, CellOutput)>, String> {
    let mut reader = CellReader::new(text.as_bytes());
    let mut cells = Vec::new();
    while let Some(cell) = reader.next_cell()? {
        cells.push(cell);
    }
    Ok(cells)
}

/// Cells read one at a time from a stream written by [`write_cell`], with
/// the SHA-256 of every byte read.
pub struct CellReader<R> {
    input: R,
    line_no: usize,
    line: Vec<u8>,
    hash: sha2::Sha256,
}

impl<R: std::io::BufRead> CellReader<R> {
    pub fn new(input: R) -> CellReader<R> {
        use sha2::Digest;
        CellReader {
            input,
            line_no: 0,
            line: Vec::new(),
            hash: sha2::Sha256::new(),
        }
    }

    /// The next cell, or None at the end of the stream.
    pub fn next_cell(&mut self) -> Result<Option<(String, CellOutput)>, String> {
        use sha2::Digest;
        let mut current: Option<(String, CellOutput)> = None;
        loop {
            self.line.clear();
            let n = self
                .input
                .read_until(b'\n', &mut self.line)
                .map_err(|e| format!("cannot read: {e}"))?;
            if n == 0 {
                return match current {
                    Some(_) => Err("the text ends inside a cell".into()),
                    None => Ok(None),
                };
            }
            self.hash.update(&self.line);
            self.line_no += 1;
            let at = |e: String| format!("line {}: {e}", self.line_no);
            let text = std::str::from_utf8(&self.line).map_err(|_| at("not UTF-8 text".into()))?;
            // As str::lines: "\n" or "\r\n" ends a line.
            let line = match text.strip_suffix('\n') {
                Some(l) => l.strip_suffix('\r').unwrap_or(l),
                None => text,
            };
            let (tag, rest) = line.split_once(' ').unwrap_or((line, ""));
            match tag {
                "cell" => {
                    if current.is_some() {
                        return Err(at("a cell starts before the previous one ended".into()));
                    }
                    current = Some((rest.to_string(), CellOutput::default()));
                }
                "end" => {
                    return match current.take() {
                        Some(c) => Ok(Some(c)),
                        None => Err(at("'end' without a cell".into())),
                    }
                }
                _ => {
                    let Some((_, out)) = current.as_mut() else {
                        return Err(at(format!("'{tag}' outside a cell")));
                    };
                    read_line(out, tag, rest, line).map_err(at)?;
                }
            }
        }
    }

    /// The SHA-256 (hex) of everything read so far.
    pub fn digest(&self) -> String {
        use sha2::Digest;
        self.hash
            .clone()
            .finalize()
            .iter()
            .map(|b| format!("{b:02x}"))
            .collect()
    }
}

/// Apply one line of a cell (after its tag) to the output.
fn read_line(out: &mut CellOutput, tag: &str, rest: &str, line: &str) -> Result<(), String> {
    let f: Vec<&str> = rest.split(' ').collect();
    match tag {
        "fallbacks" => out.fallbacks = rest.parse().map_err(|_| "bad fallbacks".to_string())?,
        "failure" => out.failure = Some(rest.to_string()),
        "l" => {
            let parts: Vec<&str> = rest.splitn(4, ' ').collect();
            let n = |i: usize| -> Result<usize, String> {
                parts
                    .get(i)
                    .and_then(|v| v.parse().ok())
                    .ok_or_else(|| format!("bad left-out line '{line}'"))
            };
            out.left_out.push(super::LeftOut {
                estimations: n(0)?,
                first_end: n(1)?,
                last_end: n(2)?,
                regressor: parts
                    .get(3)
                    .ok_or_else(|| format!("bad left-out line '{line}'"))?
                    .to_string(),
            });
        }
        "f" if f.len() == 7 => out.forecasts.push(ForecastRow {
            horizon: f[0].parse().map_err(|_| "bad horizon".to_string())?,
            origin: f[1].parse().map_err(|_| "bad origin".to_string())?,
            forecast: parse_num(f[2])?,
            is_mse: parse_opt(f[3])?,
            is_var: parse_opt(f[4])?,
            variance: parse_opt(f[5])?,
            order: parse_order(f[6])?,
        }),
        "o" if f.len() == 3 => out.outlook.push(OutlookRow {
            horizon: f[0].parse().map_err(|_| "bad horizon".to_string())?,
            forecast: parse_opt(f[1])?,
            variance: parse_opt(f[2])?,
        }),
        "p" | "pv" => {
            let bad = || format!("bad parameter line '{line}'");
            let (vintage, rest) = match tag {
                "pv" => {
                    let (v, rest) = rest.split_once(' ').ok_or_else(bad)?;
                    (Some(v.parse::<usize>().map_err(|_| bad())?), rest)
                }
                _ => (None, rest),
            };
            let parts: Vec<&str> = rest.splitn(5, ' ').collect();
            let [end, h, estimate, std_error, name] = parts[..] else {
                return Err(bad());
            };
            let end: usize = end.parse().map_err(|_| bad())?;
            let parameter = Parameter {
                horizon: match h {
                    "-" => None,
                    h => Some(h.parse().map_err(|_| bad())?),
                },
                name: name.into(),
                estimate: parse_num(estimate)?,
                std_error: parse_opt(std_error)?,
            };
            match out.parameters.last_mut() {
                Some(e) if e.end == end && e.vintage == vintage => e.parameters.push(parameter),
                _ => out.parameters.push(Estimation {
                    end,
                    vintage,
                    parameters: vec![parameter],
                }),
            }
        }
        "r" => {
            out.residuals = f.iter().map(|v| parse_num(v)).collect::<Result<_, _>>()?;
        }
        _ => return Err(format!("unreadable line '{line}'")),
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_trips_bit_for_bit() {
        // Property by construction: every f64 written reads back to the same bits.
        let out = CellOutput {
            forecasts: vec![ForecastRow {
                horizon: 4,
                origin: 17,
                forecast: 0.1 + 0.2,
                is_mse: Some(1.0 / 3.0),
                is_var: None,
                variance: Some(5e-324),
                order: Some(Order::Ardl(2, 1)),
            }],
            outlook: vec![OutlookRow {
                horizon: 4,
                forecast: None,
                variance: Some(-0.0),
            }],
            residuals: vec![1e300, -2.5, f64::MIN_POSITIVE],
            fallbacks: 2,
            left_out: vec![super::super::LeftOut {
                regressor: "tariff step".into(),
                estimations: 3,
                first_end: 10,
                last_end: 12,
            }],
            failure: Some("did not converge".into()),
            parameters: vec![
                Estimation {
                    end: 12,
                    vintage: None,
                    parameters: vec![
                        Parameter::new("rain fall_1", 0.1 + 0.7, Some(1.0 / 3.0)),
                        Parameter {
                            horizon: Some(4),
                            ..Parameter::new("sigma2", 5e-324, None)
                        },
                    ],
                },
                Estimation {
                    end: 13,
                    vintage: None,
                    parameters: vec![Parameter::new("ar1", -0.0, None)],
                },
                // Two estimations over the same end on two vintages.
                Estimation {
                    end: 13,
                    vintage: Some(0),
                    parameters: vec![Parameter::new("ar1", 0.25, None)],
                },
                Estimation {
                    end: 13,
                    vintage: Some(1),
                    parameters: vec![Parameter::new("ar1", 0.5, Some(0.125))],
                },
            ],
            seconds: 0.0,
            cached: false,
        };
        let mut text = String::new();
        write_cell("y/ardl(2,1)/expanding", &out, &mut text);
        let back = read_cells(&text).unwrap();
        assert_eq!(back.len(), 1);
        assert_eq!(back[0].0, "y/ardl(2,1)/expanding");
        let b = &back[0].1;
        assert_eq!(b.forecasts, out.forecasts);
        assert_eq!(
            b.forecasts[0].forecast.to_bits(),
            out.forecasts[0].forecast.to_bits()
        );
        assert_eq!(
            b.outlook[0].variance.unwrap().to_bits(),
            (-0.0f64).to_bits()
        );
        assert_eq!(b.residuals, out.residuals);
        assert_eq!(b.left_out, out.left_out);
        assert_eq!(b.parameters, out.parameters);
        assert_eq!(
            b.parameters[1].parameters[0].estimate.to_bits(),
            (-0.0f64).to_bits()
        );
        assert_eq!(
            (b.fallbacks, b.failure.as_deref()),
            (2, Some("did not converge"))
        );
    }

    /// Smoothing orders: an additive error keeps the text it had before the
    /// error was a choice (`smoothing:trend:season`), a multiplicative one
    /// names it; both read back to the same order.
    #[test]
    fn smoothing_orders_round_trip() {
        use crate::spec::{SmoothingSeason, SmoothingTrend};
        let add = Order::Smoothing(
            SmoothingError::Additive,
            SmoothingTrend::Damped,
            SmoothingSeason::Additive,
        );
        let mult = Order::Smoothing(
            SmoothingError::Multiplicative,
            SmoothingTrend::None,
            SmoothingSeason::Multiplicative,
        );
        assert_eq!(order_text(Some(add)), "smoothing:damped:additive");
        assert_eq!(
            order_text(Some(mult)),
            "smoothing:multiplicative:none:multiplicative"
        );
        for o in [add, mult] {
            assert_eq!(parse_order(&order_text(Some(o))).unwrap(), Some(o));
        }
        assert_eq!(mult.to_string(), "mult,none,multiplicative");
        assert_eq!(add.to_string(), "damped,additive");
    }

    #[test]
    fn damaged_text_is_refused() {
        assert!(read_cells("cell a\nf 1 2 x - - - -\nend\n").is_err());
        assert!(read_cells("cell a\n").is_err());
        assert!(read_cells("f 1 2 3 - - - -\n").is_err());
        assert!(read_cells("cell a\np 3 - 1\nend\n").is_err());
        assert!(read_cells("cell a\np 3 x 1 - ar1\nend\n").is_err());
    }
}
