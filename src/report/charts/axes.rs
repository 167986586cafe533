//! The chart's furniture: horizontal grid lines with the y ticks, the x
//! ticks (period labels or numbers), the zero line, the frame, the 45°
//! line, reference rules, the lanes under the plot and the axis titles.

use super::layout::{Layout, LANE_HEIGHT, LEFT};
use super::marks::dash_attr;
use super::scale::{period_ticks, tick_text, Plot};
use super::{c, esc, Chart, XAxis};
use std::fmt::Write;

/// Grid lines and y tick labels inside the y domain.
pub fn y_grid(out: &mut String, layout: &Layout, plot: &Plot) {
    for &t in &plot.y_ticks {
        if t < plot.y_dom.0 - 1e-12 || t > plot.y_dom.1 + 1e-12 {
            continue;
        }
        let y = plot.sy.at(t);
        let _ = write!(
            out,
            r##"<line x1="{}" x2="{}" y1="{y}" y2="{y}" stroke="#e3e7ec" stroke-width="1"/><text x="{}" y="{}" text-anchor="end" fill="#39424e">{}</text>"##,
            c(LEFT),
            c(layout.right()),
            c(LEFT - 6.0),
            c(plot.sy.at(t) + 3.5),
            tick_text(t, plot.y_dec),
            y = c(y),
        );
    }
}

/// x ticks: period labels spaced by [`period_ticks`] (about one per 78
/// units), or the numeric ticks inside the domain.
pub fn x_ticks(out: &mut String, chart: &Chart, layout: &Layout, plot: &Plot) {
    let bottom = layout.bottom_plot;
    match &chart.x {
        XAxis::Periods(labels) => {
            let max_ticks = ((layout.right() - LEFT) / 78.0).floor().max(2.0) as usize;
            for i in period_ticks(labels, max_ticks) {
                let x = plot.sx.at(i as f64);
                let _ = write!(
                    out,
                    r##"<line x1="{x}" x2="{x}" y1="{}" y2="{}" stroke="#e3e7ec"/><line x1="{x}" x2="{x}" y1="{}" y2="{}" stroke="#39424e"/><text x="{x}" y="{}" text-anchor="middle" fill="#39424e">{}</text>"##,
                    c(layout.top),
                    c(bottom),
                    c(bottom),
                    c(bottom + 4.0),
                    c(bottom + 15.0),
                    esc(&labels[i]),
                    x = c(x),
                );
            }
        }
        XAxis::Numeric { .. } => {
            for &t in &plot.x_ticks {
                if t < plot.x_dom.0 - 1e-12 || t > plot.x_dom.1 + 1e-12 {
                    continue;
                }
                let x = plot.sx.at(t);
                let _ = write!(
                    out,
                    r##"<line x1="{x}" x2="{x}" y1="{}" y2="{}" stroke="#e3e7ec"/><text x="{x}" y="{}" text-anchor="middle" fill="#39424e">{}</text>"##,
                    c(layout.top),
                    c(bottom),
                    c(bottom + 15.0),
                    tick_text(t, plot.x_dec),
                    x = c(x),
                );
            }
        }
    }
}

/// The zero line (when zero is inside the y range), the frame of the two
/// axes, and the 45° line.
pub fn frame(out: &mut String, chart: &Chart, layout: &Layout, plot: &Plot) {
    let (x_dom, y_dom) = (plot.x_dom, plot.y_dom);
    if y_dom.0 < 0.0 && y_dom.1 > 0.0 && !chart.diagonal {
        let y = c(plot.sy.at(0.0));
        let _ = write!(
            out,
            r##"<line x1="{}" x2="{}" y1="{y}" y2="{y}" stroke="#8d96a3" stroke-width="1"/>"##,
            c(LEFT),
            c(layout.right())
        );
    }
    let _ = write!(
        out,
        r##"<path d="M{l} {t} L{l} {b} L{r} {b}" fill="none" stroke="#39424e" stroke-width="1"/>"##,
        l = c(LEFT),
        t = c(layout.top),
        b = c(layout.bottom_plot),
        r = c(layout.right())
    );
    if chart.diagonal {
        let (sx, sy) = (&plot.sx, &plot.sy);
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
}

/// Horizontal reference rules, labelled at the right.
pub fn rules(out: &mut String, chart: &Chart, layout: &Layout, plot: &Plot) {
    for r in &chart.rules {
        let y = plot.sy.at(r.y);
        let _ = write!(
            out,
            r##"<line x1="{}" x2="{}" y1="{y}" y2="{y}" stroke="#5b6575" stroke-width="1.2"{}/><text x="{}" y="{}" text-anchor="end" font-size="10" fill="#4a5566">{}</text>"##,
            c(LEFT),
            c(layout.right()),
            dash_attr(r.dash),
            c(layout.right() - 4.0),
            c(y - 4.0),
            esc(&r.label),
            y = c(y),
        );
    }
}

/// The lanes under the plot: a label left of the axis, then the segments.
pub fn lanes(out: &mut String, chart: &Chart, layout: &Layout, plot: &Plot) {
    for (i, lane) in chart.lanes.iter().enumerate() {
        let y = layout.lanes_top + i as f64 * (LANE_HEIGHT + 4.0);
        let _ = write!(
            out,
            r##"<text x="{}" y="{}" text-anchor="end" font-size="10" fill="#39424e">{}</text>"##,
            c(LEFT - 6.0),
            c(y + LANE_HEIGHT - 3.0),
            esc(&lane.label)
        );
        for (x0, x1, fill, tip) in &lane.segments {
            let a = plot.sx.at(plot.clamp_x(*x0));
            let b = plot.sx.at(plot.clamp_x(*x1));
            let _ = write!(
                out,
                r##"<rect x="{}" y="{}" width="{}" height="{}" fill="{fill}" stroke="#8d96a3" stroke-width="0.6"><title>{}</title></rect>"##,
                c(a),
                c(y),
                c((b - a).max(0.5)),
                c(LANE_HEIGHT),
                esc(tip)
            );
        }
    }
}

/// The axis titles: x under the lanes, y turned along the left edge.
pub fn titles(out: &mut String, chart: &Chart, layout: &Layout) {
    let _ = write!(
        out,
        r##"<text x="{}" y="{}" text-anchor="middle" fill="#1d2430">{}</text>"##,
        c((LEFT + layout.right()) / 2.0),
        c(layout.x_title_y),
        esc(&chart.x_title)
    );
    let _ = write!(
        out,
        r##"<text transform="translate(14 {}) rotate(-90)" text-anchor="middle" fill="#1d2430">{}</text>"##,
        c((layout.top + layout.bottom_plot) / 2.0),
        esc(&chart.y_title)
    );
}
