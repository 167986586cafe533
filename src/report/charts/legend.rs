//! The legend: the lines that ask for an entry, in drawing order, then the
//! chart's own entries; each a key (a line with its marker, a marker, or a
//! swatch) and a name.

use super::layout::Layout;
use super::marks::{dash_attr, marker_svg};
use super::{c, esc, Chart, LegendKey};
use std::fmt::Write;

/// A legend entry: its name and its key.
pub type Item<'a> = (&'a str, LegendKey);

/// The legend's entries, in order.
pub fn items(chart: &Chart) -> Vec<Item<'_>> {
    chart
        .lines
        .iter()
        .filter(|l| l.legend)
        .map(|l| (l.name.as_str(), LegendKey::Line(l.look)))
        .chain(chart.legend.iter().map(|i| (i.name.as_str(), i.key)))
        .collect()
}

pub fn draw(out: &mut String, items: &[Item], layout: &Layout) {
    for ((name, key), (x, y)) in items.iter().zip(&layout.legend_at) {
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
                marker_svg(out, look.marker, x + 12.0, y - 4.0, look.colour, false, 3.0);
            }
            LegendKey::Dot(look, hollow) => {
                marker_svg(
                    out,
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
}
