//! Inline SVG charts for the HTML report, built by hand: line charts over
//! periods, scatters with a 45° line, interval whiskers, shaded spans and
//! timeline lanes. No scripts, fonts or external images; every mark has a
//! colour from the Okabe & Ito (2008) colour-blind-safe palette *and* a dash
//! pattern or marker shape, so a chart still reads in greyscale print.
//! Output is deterministic: coordinates are printed with one decimal.

use std::fmt::Write;

/// The shape drawn at data points.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Marker {
    None,
    Circle,
    Square,
    Triangle,
    Diamond,
    Cross,
}

/// How one series is drawn: colour, dash pattern, stroke width, marker.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Look {
    pub colour: &'static str,
    pub dash: &'static str,
    pub width: f64,
    pub marker: Marker,
}

/// The outturns: solid near-black.
pub const OUTTURN: Look = Look {
    colour: "#1a1a1a",
    dash: "",
    width: 2.4,
    marker: Marker::None,
};
/// The benchmark: vermillion, dash-dot, crosses.
pub const BENCHMARK: Look = Look {
    colour: "#D55E00",
    dash: "9 3 2 3",
    width: 1.8,
    marker: Marker::Cross,
};
/// The leading candidates, in rank order: blue solid with circles, orange
/// dashed with squares, bluish green dotted with triangles.
pub const LEADERS: [Look; 3] = [
    Look {
        colour: "#0072B2",
        dash: "",
        width: 1.9,
        marker: Marker::Circle,
    },
    Look {
        colour: "#E69F00",
        dash: "7 3",
        width: 1.9,
        marker: Marker::Square,
    },
    Look {
        colour: "#009E73",
        dash: "2 2.5",
        width: 2.1,
        marker: Marker::Triangle,
    },
];
/// Every other candidate: thin grey, drawn underneath.
pub const FAINT: Look = Look {
    colour: "#b4bac3",
    dash: "",
    width: 0.9,
    marker: Marker::None,
};

/// Colours and shapes for groups (model families) in scatters.
const GROUP_COLOURS: [&str; 7] = [
    "#0072B2", "#E69F00", "#009E73", "#CC79A7", "#56B4E9", "#D55E00", "#000000",
];
const GROUP_MARKERS: [Marker; 5] = [
    Marker::Circle,
    Marker::Square,
    Marker::Triangle,
    Marker::Diamond,
    Marker::Cross,
];

/// The look of the i-th group: colours and shapes cycle independently, so
/// the first 35 groups all differ.
pub fn group_look(i: usize) -> Look {
    Look {
        colour: GROUP_COLOURS[i % GROUP_COLOURS.len()],
        dash: "",
        width: 1.5,
        marker: GROUP_MARKERS[i % GROUP_MARKERS.len()],
    }
}

/// Fills of shaded spans and lanes.
pub const FILL_ESTIMATION: &str = "#dbe7f3";
pub const FILL_EVALUATION: &str = "#f6dfc8";
/// A lighter evaluation fill for spans behind data.
pub const FILL_EVALUATION_LIGHT: &str = "#fbeee2";
pub const FILL_FUTURE: &str = "#ece8f4";

pub enum XAxis {
    /// x is an index into these period labels; empty labels get no tick.
    Periods(Vec<String>),
    /// A numeric axis; `integer` keeps ticks on whole numbers.
    Numeric { integer: bool },
}

pub struct Line {
    pub name: String,
    pub look: Look,
    /// (x, y); a non-finite y breaks the line.
    pub points: Vec<(f64, f64)>,
    pub legend: bool,
    /// Draw the marker at every n-th point (0: none).
    pub marker_every: usize,
}

pub struct Dot {
    pub x: f64,
    pub y: f64,
    pub look: Look,
    pub hollow: bool,
    pub label: Option<String>,
    /// Hover text (an SVG `<title>`).
    pub tip: String,
}

/// A vertical interval bar with caps.
pub struct Whisker {
    pub x: f64,
    pub lo: f64,
    pub hi: f64,
    pub colour: &'static str,
    pub width: f64,
}

/// A shaded vertical span of the plot area.
pub struct Span {
    pub x0: f64,
    pub x1: f64,
    pub fill: &'static str,
    pub label: String,
}

/// A horizontal reference line.
pub struct Rule {
    pub y: f64,
    pub label: String,
    pub dash: &'static str,
}

/// A labelled lane under the plot, aligned with the x axis.
pub struct Lane {
    pub label: String,
    /// (x0, x1, fill, hover text)
    pub segments: Vec<(f64, f64, &'static str, String)>,
}

pub enum LegendKey {
    Line(Look),
    Dot(Look, bool),
    Swatch(&'static str),
}

pub struct LegendItem {
    pub name: String,
    pub key: LegendKey,
}

pub struct Chart {
    /// Unique within the page (used for aria ids).
    pub id: String,
    /// Accessible title.
    pub title: String,
    pub x_title: String,
    pub y_title: String,
    pub x: XAxis,
    pub lines: Vec<Line>,
    pub dots: Vec<Dot>,
    pub whiskers: Vec<Whisker>,
    pub spans: Vec<Span>,
    pub rules: Vec<Rule>,
    pub lanes: Vec<Lane>,
    /// Draw y = x and give both axes the same range.
    pub diagonal: bool,
    pub include_zero: bool,
    /// Legend entries after those of the lines.
    pub legend: Vec<LegendItem>,
    /// Fit the y range to the lines shown in the legend (and dots, whiskers,
    /// rules); other lines are clipped at the frame.
    pub fit_to_legend: bool,
    /// Height of the plot area in SVG units.
    pub plot_height: f64,
    /// Total width in SVG units (880 for a full-width chart).
    pub width: f64,
}

impl Chart {
    pub fn new(id: &str, title: &str, x: XAxis) -> Chart {
        Chart {
            id: id.to_string(),
            title: title.to_string(),
            x_title: String::new(),
            y_title: String::new(),
            x,
            lines: Vec::new(),
            dots: Vec::new(),
            whiskers: Vec::new(),
            spans: Vec::new(),
            rules: Vec::new(),
            lanes: Vec::new(),
            diagonal: false,
            include_zero: false,
            fit_to_legend: false,
            legend: Vec::new(),
            plot_height: 220.0,
            width: 880.0,
        }
    }
}

/// Escape text for SVG/XML content and attributes.
pub fn esc(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for ch in s.chars() {
        match ch {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
    out
}

/// A coordinate with one decimal, never "-0.0".
fn c(v: f64) -> String {
    let s = format!("{v:.1}");
    if s == "-0.0" {
        "0.0".into()
    } else {
        s
    }
}

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

fn tick_text(v: f64, decimals: usize) -> String {
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

fn marker_svg(out: &mut String, m: Marker, x: f64, y: f64, colour: &str, hollow: bool, size: f64) {
    let fill = if hollow { "#ffffff" } else { colour };
    let (x, y) = (c(x), c(y));
    let r = size;
    match m {
        Marker::None => {}
        Marker::Circle => {
            let _ = write!(
                out,
                r#"<circle cx="{x}" cy="{y}" r="{}" fill="{fill}" stroke="{colour}" stroke-width="1.3"/>"#,
                c(r)
            );
        }
        Marker::Square => {
            let _ = write!(
                out,
                r#"<rect x="{}" y="{}" width="{}" height="{}" fill="{fill}" stroke="{colour}" stroke-width="1.3" transform="translate({x} {y})"/>"#,
                c(-r * 0.9),
                c(-r * 0.9),
                c(r * 1.8),
                c(r * 1.8)
            );
        }
        Marker::Triangle => {
            let _ = write!(
                out,
                r#"<path d="M0 {} L{} {} L{} {} Z" fill="{fill}" stroke="{colour}" stroke-width="1.3" transform="translate({x} {y})"/>"#,
                c(-r * 1.15),
                c(r * 1.05),
                c(r * 0.8),
                c(-r * 1.05),
                c(r * 0.8)
            );
        }
        Marker::Diamond => {
            let _ = write!(
                out,
                r#"<path d="M0 {} L{} 0 L0 {} L{} 0 Z" fill="{fill}" stroke="{colour}" stroke-width="1.3" transform="translate({x} {y})"/>"#,
                c(-r * 1.2),
                c(r * 1.2),
                c(r * 1.2),
                c(-r * 1.2)
            );
        }
        Marker::Cross => {
            let _ = write!(
                out,
                r#"<path d="M{a} {a} L{b} {b} M{a} {b} L{b} {a}" stroke="{colour}" stroke-width="1.8" fill="none" transform="translate({x} {y})"/>"#,
                a = c(-r),
                b = c(r)
            );
        }
    }
}

fn dash_attr(dash: &str) -> String {
    if dash.is_empty() {
        String::new()
    } else {
        format!(r#" stroke-dasharray="{dash}""#)
    }
}

/// Approximate width of text at 11 px in a system sans-serif font.
fn text_width(s: &str, size: f64) -> f64 {
    s.chars().count() as f64 * size * 0.56
}

struct Scale {
    d0: f64,
    d1: f64,
    p0: f64,
    p1: f64,
}

impl Scale {
    fn at(&self, v: f64) -> f64 {
        if self.d1 == self.d0 {
            return (self.p0 + self.p1) / 2.0;
        }
        self.p0 + (v - self.d0) / (self.d1 - self.d0) * (self.p1 - self.p0)
    }
}

fn extend(range: &mut Option<(f64, f64)>, v: f64) {
    if !v.is_finite() {
        return;
    }
    *range = Some(match *range {
        None => (v, v),
        Some((a, b)) => (a.min(v), b.max(v)),
    });
}

/// Render the chart as an inline `<svg>` element.
pub fn svg(chart: &Chart) -> String {
    let width = chart.width;
    let left = 72.0;
    let right = 18.0;
    let font = 11.0;

    // Legend layout: items flow left to right, wrapping.
    let mut items: Vec<(&str, &LegendKey)> = Vec::new();
    let line_keys: Vec<LegendKey> = chart
        .lines
        .iter()
        .filter(|l| l.legend)
        .map(|l| LegendKey::Line(l.look))
        .collect();
    let line_names: Vec<&str> = chart
        .lines
        .iter()
        .filter(|l| l.legend)
        .map(|l| l.name.as_str())
        .collect();
    for (name, key) in line_names.iter().zip(&line_keys) {
        items.push((name, key));
    }
    for item in &chart.legend {
        items.push((item.name.as_str(), &item.key));
    }
    let mut legend_pos = Vec::new();
    let (mut lx, mut ly) = (left, 14.0);
    for (name, _) in &items {
        let w = 30.0 + text_width(name, font) + 16.0;
        if lx + w > width - right && lx > left {
            lx = left;
            ly += 17.0;
        }
        legend_pos.push((lx, ly));
        lx += w;
    }
    let top = if items.is_empty() { 12.0 } else { ly + 14.0 };
    // A 45° line needs equal scales: a square plot.
    let plot_h = if chart.diagonal {
        width - left - right
    } else {
        chart.plot_height
    };
    let bottom_plot = top + plot_h;
    let lanes_top = bottom_plot + 20.0;
    let lane_h = 13.0;
    let lanes_h = if chart.lanes.is_empty() {
        0.0
    } else {
        chart.lanes.len() as f64 * (lane_h + 4.0) + 4.0
    };
    let x_title_y = lanes_top + lanes_h + 14.0;
    let height = x_title_y + 8.0;

    // Domains.
    let mut xr: Option<(f64, f64)> = None;
    let mut yr: Option<(f64, f64)> = None;
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
    for r in &chart.rules {
        extend(&mut yr, r.y);
    }
    if chart.include_zero {
        extend(&mut yr, 0.0);
    }
    let (x_ticks, x_dec, x_dom) = match &chart.x {
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
    };
    let (ya, yb) = if chart.diagonal {
        (x_dom.0, x_dom.1)
    } else {
        let (a, b) = yr.unwrap_or((0.0, 1.0));
        let pad = ((b - a) * 0.05).max(if a == b { a.abs() * 0.1 + 1.0 } else { 0.0 });
        let lo = if a >= 0.0 && a - pad < 0.0 {
            0.0
        } else {
            a - pad
        };
        (lo, b + pad)
    };
    let (y_ticks, y_dec) = if chart.diagonal {
        (x_ticks.clone(), x_dec)
    } else {
        nice_ticks(ya, yb, 5)
    };
    let y_dom = if chart.diagonal {
        (ya, yb)
    } else {
        (
            y_ticks.first().copied().unwrap_or(ya).min(ya),
            y_ticks.last().copied().unwrap_or(yb).max(yb),
        )
    };
    let sx = Scale {
        d0: x_dom.0,
        d1: x_dom.1,
        p0: left,
        p1: width - right,
    };
    let sy = Scale {
        d0: y_dom.0,
        d1: y_dom.1,
        p0: bottom_plot,
        p1: top,
    };
    let clamp_x = |v: f64| v.clamp(x_dom.0, x_dom.1);

    let mut out = String::new();
    let _ = write!(
        out,
        r#"<svg class="chart" viewBox="0 0 {} {}" width="100%" role="img" aria-labelledby="{id}-t" font-family="system-ui, -apple-system, 'Segoe UI', Roboto, sans-serif" font-size="{font}"><title id="{id}-t">{}</title>"#,
        c(width),
        c(height),
        esc(&chart.title),
        id = esc(&chart.id),
    );
    let _ = write!(
        out,
        r#"<clipPath id="{}-clip"><rect x="{}" y="{}" width="{}" height="{}"/></clipPath>"#,
        esc(&chart.id),
        c(left),
        c(top),
        c(width - left - right),
        c(plot_h)
    );
    // Spans (under everything).
    for s in &chart.spans {
        let x0 = sx.at(clamp_x(s.x0));
        let x1 = sx.at(clamp_x(s.x1));
        let _ = write!(
            out,
            r#"<rect x="{}" y="{}" width="{}" height="{}" fill="{}"><title>{}</title></rect>"#,
            c(x0),
            c(top),
            c((x1 - x0).max(0.5)),
            c(plot_h),
            s.fill,
            esc(&s.label)
        );
        if !s.label.is_empty() && x1 - x0 > text_width(&s.label, 10.0) + 8.0 {
            let _ = write!(
                out,
                r##"<text x="{}" y="{}" font-size="10" fill="#4a5566">{}</text>"##,
                c(x0 + 4.0),
                c(top + 12.0),
                esc(&s.label)
            );
        }
    }
    // Grid and y ticks.
    for &t in &y_ticks {
        if t < y_dom.0 - 1e-12 || t > y_dom.1 + 1e-12 {
            continue;
        }
        let y = sy.at(t);
        let _ = write!(
            out,
            r##"<line x1="{}" x2="{}" y1="{y}" y2="{y}" stroke="#e3e7ec" stroke-width="1"/><text x="{}" y="{}" text-anchor="end" fill="#39424e">{}</text>"##,
            c(left),
            c(width - right),
            c(left - 6.0),
            c(sy.at(t) + 3.5),
            tick_text(t, y_dec),
            y = c(y),
        );
    }
    // x ticks.
    match &chart.x {
        XAxis::Periods(labels) => {
            let max_ticks = ((width - left - right) / 78.0).floor().max(2.0) as usize;
            for i in period_ticks(labels, max_ticks) {
                let x = sx.at(i as f64);
                let _ = write!(
                    out,
                    r##"<line x1="{x}" x2="{x}" y1="{}" y2="{}" stroke="#e3e7ec"/><line x1="{x}" x2="{x}" y1="{}" y2="{}" stroke="#39424e"/><text x="{x}" y="{}" text-anchor="middle" fill="#39424e">{}</text>"##,
                    c(top),
                    c(bottom_plot),
                    c(bottom_plot),
                    c(bottom_plot + 4.0),
                    c(bottom_plot + 15.0),
                    esc(&labels[i]),
                    x = c(x),
                );
            }
        }
        XAxis::Numeric { .. } => {
            for &t in &x_ticks {
                if t < x_dom.0 - 1e-12 || t > x_dom.1 + 1e-12 {
                    continue;
                }
                let x = sx.at(t);
                let _ = write!(
                    out,
                    r##"<line x1="{x}" x2="{x}" y1="{}" y2="{}" stroke="#e3e7ec"/><text x="{x}" y="{}" text-anchor="middle" fill="#39424e">{}</text>"##,
                    c(top),
                    c(bottom_plot),
                    c(bottom_plot + 15.0),
                    tick_text(t, x_dec),
                    x = c(x),
                );
            }
        }
    }
    // Zero line when zero is inside the range.
    if y_dom.0 < 0.0 && y_dom.1 > 0.0 && !chart.diagonal {
        let y = c(sy.at(0.0));
        let _ = write!(
            out,
            r##"<line x1="{}" x2="{}" y1="{y}" y2="{y}" stroke="#8d96a3" stroke-width="1"/>"##,
            c(left),
            c(width - right)
        );
    }
    // Axes frame.
    let _ = write!(
        out,
        r##"<path d="M{l} {t} L{l} {b} L{r} {b}" fill="none" stroke="#39424e" stroke-width="1"/>"##,
        l = c(left),
        t = c(top),
        b = c(bottom_plot),
        r = c(width - right)
    );
    if chart.diagonal {
        let lo = x_dom.0.max(y_dom.0);
        let hi = x_dom.1.min(y_dom.1);
        let _ = write!(
            out,
            r##"<line x1="{}" y1="{}" x2="{}" y2="{}" stroke="#5b6575" stroke-width="1.2" stroke-dasharray="4 4"><title>45° line: out-of-sample error equal to in-sample error</title></line><text x="{}" y="{}" text-anchor="end" font-size="10" fill="#5b6575">out = in</text>"##,
            c(sx.at(lo)),
            c(sy.at(lo)),
            c(sx.at(hi)),
            c(sy.at(hi)),
            c(sx.at(hi) - 4.0),
            c(sy.at(hi) + 14.0)
        );
    }
    // Reference rules.
    for r in &chart.rules {
        let y = sy.at(r.y);
        let _ = write!(
            out,
            r##"<line x1="{}" x2="{}" y1="{y}" y2="{y}" stroke="#5b6575" stroke-width="1.2"{}/><text x="{}" y="{}" text-anchor="end" font-size="10" fill="#4a5566">{}</text>"##,
            c(left),
            c(width - right),
            dash_attr(r.dash),
            c(width - right - 4.0),
            c(y - 4.0),
            esc(&r.label),
            y = c(y),
        );
    }
    // Lines, clipped at the frame.
    let _ = write!(out, r#"<g clip-path="url(#{}-clip)">"#, esc(&chart.id));
    for l in &chart.lines {
        let mut d = String::new();
        let mut pen_down = false;
        for &(x, y) in &l.points {
            if !y.is_finite() {
                pen_down = false;
                continue;
            }
            let _ = write!(
                d,
                "{}{} {}",
                if pen_down { " L" } else { " M" },
                c(sx.at(x)),
                c(sy.at(y))
            );
            pen_down = true;
        }
        if d.is_empty() {
            continue;
        }
        let _ = write!(
            out,
            r#"<path d="{}" fill="none" stroke="{}" stroke-width="{}" stroke-linejoin="round"{}><title>{}</title></path>"#,
            d.trim_start(),
            l.look.colour,
            c(l.look.width),
            dash_attr(l.look.dash),
            esc(&l.name)
        );
        if l.marker_every > 0 && l.look.marker != Marker::None {
            for (i, &(x, y)) in l.points.iter().enumerate() {
                if y.is_finite() && i % l.marker_every == 0 {
                    marker_svg(
                        &mut out,
                        l.look.marker,
                        sx.at(x),
                        sy.at(y),
                        l.look.colour,
                        false,
                        3.0,
                    );
                }
            }
        }
    }
    out.push_str("</g>");
    // Whiskers.
    for w in &chart.whiskers {
        let x = sx.at(w.x);
        let (y0, y1) = (sy.at(w.lo), sy.at(w.hi));
        let _ = write!(
            out,
            r#"<path d="M{x} {a} L{x} {b} M{l} {a} L{r} {a} M{l} {b} L{r} {b}" stroke="{}" stroke-width="{}" fill="none"/>"#,
            w.colour,
            c(w.width),
            x = c(x),
            a = c(y0),
            b = c(y1),
            l = c(x - 3.5),
            r = c(x + 3.5),
        );
    }
    // Dots; labels go where they do not overlap an earlier label.
    let mut placed: Vec<(f64, f64, f64, f64)> = Vec::new();
    for d in &chart.dots {
        let (x, y) = (sx.at(d.x), sy.at(d.y));
        out.push_str("<g>");
        let _ = write!(out, "<title>{}</title>", esc(&d.tip));
        marker_svg(&mut out, d.look.marker, x, y, d.look.colour, d.hollow, 4.0);
        out.push_str("</g>");
        if let Some(label) = &d.label {
            let w = text_width(label, 10.0);
            let anchor_right = x + 8.0 + w > width - right;
            let x0 = if anchor_right { x - 7.0 - w } else { x + 7.0 };
            let spot = [-5.0, 9.0, -16.0, 20.0, -27.0].iter().find_map(|dy| {
                let y0 = y + dy - 9.0;
                let free = placed.iter().all(|(a, b, cw, ch)| {
                    x0 + w < *a || x0 > a + cw || y0 + 10.0 < *b || y0 > b + ch
                });
                (free && y0 > top - 4.0 && y0 + 10.0 < bottom_plot).then_some((y0, y + dy))
            });
            if let Some((y0, baseline)) = spot {
                placed.push((x0, y0, w, 10.0));
                let _ = write!(
                    out,
                    r##"<text x="{}" y="{}" font-size="10" fill="#1d2430">{}</text>"##,
                    c(x0),
                    c(baseline),
                    esc(label)
                );
            }
        }
    }
    // Lanes.
    for (i, lane) in chart.lanes.iter().enumerate() {
        let y = lanes_top + i as f64 * (lane_h + 4.0);
        let _ = write!(
            out,
            r##"<text x="{}" y="{}" text-anchor="end" font-size="10" fill="#39424e">{}</text>"##,
            c(left - 6.0),
            c(y + lane_h - 3.0),
            esc(&lane.label)
        );
        for (x0, x1, fill, tip) in &lane.segments {
            let a = sx.at(clamp_x(*x0));
            let b = sx.at(clamp_x(*x1));
            let _ = write!(
                out,
                r##"<rect x="{}" y="{}" width="{}" height="{}" fill="{fill}" stroke="#8d96a3" stroke-width="0.6"><title>{}</title></rect>"##,
                c(a),
                c(y),
                c((b - a).max(0.5)),
                c(lane_h),
                esc(tip)
            );
        }
    }
    // Axis titles.
    let _ = write!(
        out,
        r##"<text x="{}" y="{}" text-anchor="middle" fill="#1d2430">{}</text>"##,
        c((left + width - right) / 2.0),
        c(x_title_y),
        esc(&chart.x_title)
    );
    let _ = write!(
        out,
        r##"<text transform="translate(14 {}) rotate(-90)" text-anchor="middle" fill="#1d2430">{}</text>"##,
        c((top + bottom_plot) / 2.0),
        esc(&chart.y_title)
    );
    // Legend.
    for ((name, key), (x, y)) in items.iter().zip(&legend_pos) {
        match key {
            LegendKey::Line(look) => {
                let _ = write!(
                    out,
                    r#"<line x1="{}" x2="{}" y1="{yy}" y2="{yy}" stroke="{}" stroke-width="{}"{}/>"#,
                    c(*x),
                    c(x + 24.0),
                    look.colour,
                    c(look.width),
                    dash_attr(look.dash),
                    yy = c(y - 4.0),
                );
                marker_svg(
                    &mut out,
                    look.marker,
                    x + 12.0,
                    y - 4.0,
                    look.colour,
                    false,
                    3.0,
                );
            }
            LegendKey::Dot(look, hollow) => {
                marker_svg(
                    &mut out,
                    look.marker,
                    x + 12.0,
                    y - 4.0,
                    look.colour,
                    *hollow,
                    4.0,
                );
            }
            LegendKey::Swatch(fill) => {
                let _ = write!(
                    out,
                    r##"<rect x="{}" y="{}" width="24" height="10" fill="{fill}" stroke="#8d96a3" stroke-width="0.6"/>"##,
                    c(*x),
                    c(y - 9.0)
                );
            }
        }
        let _ = write!(
            out,
            r##"<text x="{}" y="{}" fill="#1d2430">{}</text>"##,
            c(x + 30.0),
            c(*y),
            esc(name)
        );
    }
    out.push_str("</svg>");
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ticks_are_round_and_cover_the_range() {
        // Property by construction: ticks are multiples of a 1/2/2.5/5 step
        // and span the range.
        let (t, d) = nice_ticks(0.13, 0.97, 5);
        assert_eq!(t.first().copied(), Some(0.0));
        assert!(*t.last().unwrap() >= 0.97);
        assert_eq!(d, 1);
        let (t, _) = nice_ticks(-23.0, 41.0, 5);
        assert!(t.contains(&0.0));
    }

    #[test]
    fn period_ticks_align_to_years() {
        let labels: Vec<String> = (0..48)
            .map(|i| format!("{}-{:02}", 2010 + (i + 5) / 12, (i + 5) % 12 + 1))
            .collect();
        // 48 months from 2010-06: steps of 6 starting from a January.
        let t = period_ticks(&labels, 8);
        assert!(t.len() <= 8);
        assert!(t.windows(2).all(|w| w[1] - w[0] == 6), "{t:?}");
        assert!(t.iter().any(|&i| labels[i] == "2011-01"), "{t:?}");
        // With room for fewer ticks the step is a whole year, on Januaries.
        let t = period_ticks(&labels, 4);
        assert!(t.iter().all(|&i| labels[i].ends_with("-01")), "{t:?}");
    }

    #[test]
    fn svg_has_no_script_and_escapes_text() {
        let mut ch = Chart::new("c1", "a <b> & c", XAxis::Numeric { integer: false });
        ch.lines.push(Line {
            name: "x<y".into(),
            look: LEADERS[0],
            points: vec![(0.0, 1.0), (1.0, f64::NAN), (2.0, 3.0)],
            legend: true,
            marker_every: 1,
        });
        let s = svg(&ch);
        assert!(s.contains("a &lt;b&gt; &amp; c"));
        assert!(!s.contains("<script"));
        assert!(!s.contains("NaN"));
    }
}
