//! Inline SVG charts for the HTML report, built by hand: line charts over
//! periods, scatters with a 45° line, interval whiskers, shaded spans and
//! timeline lanes. No scripts, fonts or external images; every mark has a
//! colour from the Okabe & Ito (2008) colour-blind-safe palette *and* a dash
//! pattern or marker shape, so a chart still reads in greyscale print.
//! Output is deterministic: coordinates are printed with one decimal.
//!
//! A [`Chart`] describes what to draw; [`svg`] lays it out (`layout.rs`:
//! the legend and the plot's geometry; `scale.rs`: domains, ticks and
//! scales) and draws it in layers, bottom to top (`axes.rs`: grid, ticks,
//! frame and reference lines; `marks.rs`: spans, lines, whiskers, dots and
//! their markers; `legend.rs`: the legend).

mod axes;
mod layout;
mod legend;
mod marks;
mod scale;

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
/// A shaded band between a lower and an upper edge, drawn under the lines:
/// (x, lower, upper) in x order; a non-finite edge breaks the band.
pub struct Band {
    pub points: Vec<(f64, f64, f64)>,
    pub colour: &'static str,
    /// Fill opacity, 0..1 (bands of several series overlap).
    pub opacity: f64,
    /// Hover text.
    pub label: String,
}

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

#[derive(Clone, Copy)]
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
    pub bands: Vec<Band>,
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
            bands: Vec::new(),
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

/// Render the chart as an inline `<svg>` element, layer by layer.
pub fn svg(chart: &Chart) -> String {
    let legend = legend::items(chart);
    let layout = layout::Layout::of(chart, &legend);
    let plot = scale::Plot::of(chart, &layout);
    let mut out = String::new();
    let _ = write!(
        out,
        r#"<svg class="chart" viewBox="0 0 {} {}" width="100%" role="img" aria-labelledby="{id}-t" font-family="system-ui, -apple-system, 'Segoe UI', Roboto, sans-serif" font-size="{}"><title id="{id}-t">{}</title>"#,
        c(layout.width),
        c(layout.height),
        layout::FONT,
        esc(&chart.title),
        id = esc(&chart.id),
    );
    let _ = write!(
        out,
        r#"<clipPath id="{}-clip"><rect x="{}" y="{}" width="{}" height="{}"/></clipPath>"#,
        esc(&chart.id),
        c(layout::LEFT),
        c(layout.top),
        c(layout.width - layout::LEFT - layout::RIGHT),
        c(layout.plot_h)
    );
    marks::spans(&mut out, chart, &layout, &plot);
    axes::y_grid(&mut out, &layout, &plot);
    axes::x_ticks(&mut out, chart, &layout, &plot);
    axes::frame(&mut out, chart, &layout, &plot);
    axes::rules(&mut out, chart, &layout, &plot);
    marks::bands(&mut out, chart, &plot);
    marks::lines(&mut out, chart, &plot);
    marks::whiskers(&mut out, chart, &plot);
    marks::dots(&mut out, chart, &layout, &plot);
    axes::lanes(&mut out, chart, &layout, &plot);
    axes::titles(&mut out, chart, &layout);
    legend::draw(&mut out, &legend, &layout);
    out.push_str("</svg>");
    out
}

#[cfg(test)]
mod tests {
    use super::scale::{nice_ticks, period_ticks};
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

    #[test]
    fn a_band_is_a_closed_polygon_broken_where_an_edge_is_missing() {
        let mut ch = Chart::new("b", "band", XAxis::Numeric { integer: true });
        let nan = f64::NAN;
        ch.bands.push(Band {
            points: vec![
                (0.0, 1.0, 1.0),
                (1.0, 0.0, 2.0),
                (2.0, nan, nan),
                (3.0, -1.0, 4.0),
                (4.0, -2.0, 5.0),
            ],
            colour: "#123456",
            opacity: 0.2,
            label: "fan".into(),
        });
        let s = svg(&ch);
        // Two runs of finite edges: two polygons, each closed.
        assert_eq!(
            s.matches(r##"fill="#123456" fill-opacity="0.2""##).count(),
            2
        );
        assert_eq!(s.matches("Z\" fill=").count(), 2, "{s}");
        assert!(!s.contains("NaN"));
        // The band's edges widen the y axis: 5 is inside it.
        assert!(s.contains(">5<") || s.contains(">6<"), "{s}");
    }
}
