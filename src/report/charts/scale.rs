//! From data to SVG units: the ranges the chart's marks cover, the round
//! ticks that cover them, and the linear scales of the two axes.

use super::layout::{Layout, LEFT, RIGHT};
use super::{Chart, XAxis};

/// Round steps of 1, 2, 2.5 or 5 × 10^k: ticks covering [lo, hi] with about `target` steps.
pub fn nice_ticks(lo: f64, hi: f64, target: usize) -> (Vec<f64>, usize) {
    let (lo, hi) = if hi > lo {
        (lo, hi)
    } else if lo == 0.0 {
        (-1.0, 1.0)
    } else {
        (lo - lo.abs() * 0.1, hi + hi.abs() * 0.1)
    };
    let raw = (hi - lo) / target.max(1) as f64;
    let mag = 10f64.powf(raw.log10().floor());
    let mut step = mag;
    for m in [1.0, 2.0, 2.5, 5.0, 10.0] {
        if m * mag >= raw {
            step = m * mag;
            break;
        }
    }
    if !(step.is_finite() && step > 0.0) {
        // A range too narrow or too wide for f64 steps (only edited data
        // get here): its ends are the ticks.
        return (vec![lo, hi], 0);
    }
    let mut decimals = (-(step.log10().floor())).max(0.0) as usize;
    if (step / 10f64.powi(-(decimals as i32)) - (step / 10f64.powi(-(decimals as i32))).round())
        .abs()
        > 1e-9
    {
        decimals += 1;
    }
    let first = (lo / step).floor();
    let last = (hi / step).ceil();
    let mut ticks = Vec::new();
    let mut k = first;
    while k <= last + 1e-9 && ticks.len() < 50 {
        let v = k * step;
        ticks.push(if v.abs() < step * 1e-9 { 0.0 } else { v });
        k += 1.0;
    }
    (ticks, decimals)
}

/// A tick's text with `decimals` decimals, a typographic minus, and no
/// "−0".
pub fn tick_text(v: f64, decimals: usize) -> String {
    let s = format!("{v:.decimals$}");
    if s.starts_with('-') && s.trim_start_matches(['-', '0', '.']).is_empty() {
        s[1..].to_string()
    } else {
        s.replace('-', "−")
    }
}

/// Whether a period label opens a year (monthly `YYYY-01`, quarterly `…Q1`).
fn opens_year(label: &str) -> bool {
    (label.len() == 7 && label.ends_with("-01")) || label.ends_with("Q1")
}

/// Indices of the period labels that get a tick: evenly spaced by a round
/// step, aligned to the start of a year where the labels show one.
pub fn period_ticks(labels: &[String], max_ticks: usize) -> Vec<usize> {
    let n = labels.len();
    if n == 0 {
        return Vec::new();
    }
    const STEPS: [usize; 20] = [
        1, 2, 3, 4, 5, 6, 10, 12, 20, 24, 36, 48, 52, 60, 104, 120, 240, 260, 520, 1200,
    ];
    let step = STEPS
        .iter()
        .copied()
        .find(|s| n.div_ceil(*s) <= max_ticks.max(1))
        .unwrap_or(n.div_ceil(max_ticks.max(1)).max(1));
    // Put a tick on the first year start, and every `step` from there.
    let offset = labels
        .iter()
        .position(|l| opens_year(l))
        .map_or(0, |i| i % step);
    (offset..n)
        .step_by(step)
        .filter(|&i| !labels[i].is_empty())
        .collect()
}

pub struct Scale {
    d0: f64,
    d1: f64,
    p0: f64,
    p1: f64,
}

impl Scale {
    pub fn at(&self, v: f64) -> f64 {
        if self.d1 == self.d0 {
            return (self.p0 + self.p1) / 2.0;
        }
        self.p0 + (v - self.d0) / (self.d1 - self.d0) * (self.p1 - self.p0)
    }
}

/// The smallest and largest finite value seen, if any.
type Range = Option<(f64, f64)>;

fn extend(range: &mut Range, v: f64) {
    if !v.is_finite() {
        return;
    }
    *range = Some(match *range {
        None => (v, v),
        Some((a, b)) => (a.min(v), b.max(v)),
    });
}

/// The axes of one chart: their domains, ticks and scales.
pub struct Plot {
    /// Numeric x ticks (none on a period axis) and their decimals.
    pub x_ticks: Vec<f64>,
    pub x_dec: usize,
    pub x_dom: (f64, f64),
    pub y_ticks: Vec<f64>,
    pub y_dec: usize,
    pub y_dom: (f64, f64),
    pub sx: Scale,
    pub sy: Scale,
}

/// The x and y ranges the marks cover. With `fit_to_legend`, lines
/// without a legend entry do not widen the y range.
fn ranges(chart: &Chart) -> (Range, Range) {
    let mut xr: Range = None;
    let mut yr: Range = None;
    for l in &chart.lines {
        for &(x, y) in &l.points {
            if y.is_finite() {
                extend(&mut xr, x);
                if l.legend || !chart.fit_to_legend {
                    extend(&mut yr, y);
                }
            }
        }
    }
    for d in &chart.dots {
        extend(&mut xr, d.x);
        extend(&mut yr, d.y);
    }
    for w in &chart.whiskers {
        extend(&mut xr, w.x);
        extend(&mut yr, w.lo);
        extend(&mut yr, w.hi);
    }
    for b in &chart.bands {
        for &(x, lo, hi) in &b.points {
            if lo.is_finite() && hi.is_finite() {
                extend(&mut xr, x);
                extend(&mut yr, lo);
                extend(&mut yr, hi);
            }
        }
    }
    for r in &chart.rules {
        extend(&mut yr, r.y);
    }
    if chart.include_zero {
        extend(&mut yr, 0.0);
    }
    (xr, yr)
}

/// The x axis: ticks, their decimals and the domain. A period axis spans
/// its labels' slots; a numeric one is padded by 6 % (half a unit for
/// whole numbers), and shares the y range when the chart has a 45° line.
fn x_axis(chart: &Chart, xr: Range, yr: Range) -> (Vec<f64>, usize, (f64, f64)) {
    match &chart.x {
        XAxis::Periods(labels) => {
            let n = labels.len().max(1) as f64;
            (Vec::new(), 0, (-0.5, n - 0.5))
        }
        XAxis::Numeric { integer } => {
            let (mut a, mut b) = xr.unwrap_or((0.0, 1.0));
            if chart.diagonal {
                let (ya, yb) = yr.unwrap_or((a, b));
                a = a.min(ya);
                b = b.max(yb);
            }
            let pad = ((b - a) * 0.06).max(if *integer {
                0.5
            } else if a == b {
                a.abs() * 0.1 + 1e-9
            } else {
                0.0
            });
            let dom = (a - pad, b + pad);
            let (t, d) = nice_ticks(dom.0, dom.1, 6);
            let t: Vec<f64> = t
                .into_iter()
                .filter(|v| *v >= dom.0 - 1e-12 && *v <= dom.1 + 1e-12)
                .filter(|v| !*integer || v.fract() == 0.0)
                .collect();
            (t, if *integer { 0 } else { d }, dom)
        }
    }
}

impl Plot {
    pub fn of(chart: &Chart, layout: &Layout) -> Plot {
        let (xr, yr) = ranges(chart);
        let (x_ticks, x_dec, x_dom) = x_axis(chart, xr, yr);
        // The y axis: the x axis's own under a 45° line; else padded by 5 %
        // (not below zero for data that are not) and widened to its ticks.
        let (y_ticks, y_dec, y_dom) = if chart.diagonal {
            (x_ticks.clone(), x_dec, x_dom)
        } else {
            let (a, b) = yr.unwrap_or((0.0, 1.0));
            let pad = ((b - a) * 0.05).max(if a == b { a.abs() * 0.1 + 1.0 } else { 0.0 });
            let lo = if a >= 0.0 && a - pad < 0.0 {
                0.0
            } else {
                a - pad
            };
            let (ya, yb) = (lo, b + pad);
            let (ticks, dec) = nice_ticks(ya, yb, 5);
            let dom = (
                ticks.first().copied().unwrap_or(ya).min(ya),
                ticks.last().copied().unwrap_or(yb).max(yb),
            );
            (ticks, dec, dom)
        };
        Plot {
            sx: Scale {
                d0: x_dom.0,
                d1: x_dom.1,
                p0: LEFT,
                p1: layout.width - RIGHT,
            },
            sy: Scale {
                d0: y_dom.0,
                d1: y_dom.1,
                p0: layout.bottom_plot,
                p1: layout.top,
            },
            x_ticks,
            x_dec,
            x_dom,
            y_ticks,
            y_dec,
            y_dom,
        }
    }

    /// An x value held inside the x domain.
    pub fn clamp_x(&self, v: f64) -> f64 {
        v.clamp(self.x_dom.0, self.x_dom.1)
    }
}
