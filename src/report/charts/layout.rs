//! Where things go: the legend flows left to right above the plot,
//! wrapping at the chart's width; the plot area follows, then the lanes
//! under it and the x-axis title.

use super::legend::Item;
use super::marks::text_width;
use super::Chart;

/// Room left of the plot (y ticks and title) and right of it.
pub const LEFT: f64 = 72.0;
pub const RIGHT: f64 = 18.0;
/// Text size in SVG units.
pub const FONT: f64 = 11.0;
/// Height of one lane under the plot.
pub const LANE_HEIGHT: f64 = 13.0;

/// The geometry of one chart, in SVG units from its top left corner.
pub struct Layout {
    pub width: f64,
    /// Top and height of the plot area.
    pub top: f64,
    pub plot_h: f64,
    pub bottom_plot: f64,
    pub lanes_top: f64,
    pub x_title_y: f64,
    pub height: f64,
    /// Where each legend item starts (its text's baseline).
    pub legend_at: Vec<(f64, f64)>,
}

impl Layout {
    pub fn of(chart: &Chart, legend: &[Item]) -> Layout {
        let width = chart.width;
        let mut legend_at = Vec::new();
        let (mut lx, mut ly) = (LEFT, 14.0);
        for (name, _) in legend {
            let w = 30.0 + text_width(name, FONT) + 16.0;
            if lx + w > width - RIGHT && lx > LEFT {
                lx = LEFT;
                ly += 17.0;
            }
            legend_at.push((lx, ly));
            lx += w;
        }
        let top = if legend.is_empty() { 12.0 } else { ly + 14.0 };
        // A 45° line needs equal scales: a square plot.
        let plot_h = if chart.diagonal {
            width - LEFT - RIGHT
        } else {
            chart.plot_height
        };
        let bottom_plot = top + plot_h;
        let lanes_top = bottom_plot + 20.0;
        let lanes_h = if chart.lanes.is_empty() {
            0.0
        } else {
            chart.lanes.len() as f64 * (LANE_HEIGHT + 4.0) + 4.0
        };
        let x_title_y = lanes_top + lanes_h + 14.0;
        Layout {
            width,
            top,
            plot_h,
            bottom_plot,
            lanes_top,
            x_title_y,
            height: x_title_y + 8.0,
            legend_at,
        }
    }

    /// The right edge of the plot area.
    pub fn right(&self) -> f64 {
        self.width - RIGHT
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::charts::{Chart, Line, XAxis, LEADERS};

    #[test]
    fn the_legend_wraps_at_the_chart_width() {
        // By the layout's definition: an item is 30 + 0.56·11 per character
        // + 16 wide (four characters: 70.64), items start at x = 72 on the
        // baseline y = 14, and an item that would pass width − 18 goes to
        // the next row, 17 lower; the plot starts 14 under the last row.
        let mut ch = Chart::new("c", "t", XAxis::Numeric { integer: false });
        ch.width = 200.0;
        for name in ["aaaa", "bbbb"] {
            ch.lines.push(Line {
                name: name.into(),
                look: LEADERS[0],
                points: Vec::new(),
                legend: true,
                marker_every: 0,
            });
        }
        let items = crate::report::charts::legend::items(&ch);
        let layout = Layout::of(&ch, &items);
        // 72 + 70.64 + 70.64 = 213.28 > 182: the second item wraps.
        assert_eq!(layout.legend_at, [(72.0, 14.0), (72.0, 31.0)]);
        assert_eq!(layout.top, 45.0);
        assert_eq!(layout.bottom_plot, 45.0 + 220.0);
        // No lanes: the x title sits 20 + 14 under the plot, 8 above the end.
        assert_eq!(layout.x_title_y, 265.0 + 34.0);
        assert_eq!(layout.height, 307.0);
    }
}
