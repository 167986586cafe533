//! The marks: shaded spans under everything, bands under the lines, the
//! lines (clipped at the frame, with markers every so many points),
//! interval whiskers, and dots
//! with labels placed where they do not overlap an earlier one.

use super::layout::{Layout, RIGHT};
use super::scale::Plot;
use super::{c, esc, Chart, Marker};
use std::fmt::Write;

/// The marker `m` centred at (x, y), `size` its radius.
pub fn marker_svg(
    out: &mut String,
    m: Marker,
    x: f64,
    y: f64,
    colour: &str,
    hollow: bool,
    size: f64,
) {
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

pub fn dash_attr(dash: &str) -> String {
    if dash.is_empty() {
        String::new()
    } else {
        format!(r#" stroke-dasharray="{dash}""#)
    }
}

/// Approximate width of text at 11 px in a system sans-serif font.
pub fn text_width(s: &str, size: f64) -> f64 {
    s.chars().count() as f64 * size * 0.56
}

/// Shaded spans of the plot area, labelled inside when the label fits.
pub fn spans(out: &mut String, chart: &Chart, layout: &Layout, plot: &Plot) {
    for s in &chart.spans {
        let x0 = plot.sx.at(plot.clamp_x(s.x0));
        let x1 = plot.sx.at(plot.clamp_x(s.x1));
        let _ = write!(
            out,
            r#"<rect x="{}" y="{}" width="{}" height="{}" fill="{}"><title>{}</title></rect>"#,
            c(x0),
            c(layout.top),
            c((x1 - x0).max(0.5)),
            c(layout.plot_h),
            s.fill,
            esc(&s.label)
        );
        if !s.label.is_empty() && x1 - x0 > text_width(&s.label, 10.0) + 8.0 {
            let _ = write!(
                out,
                r##"<text x="{}" y="{}" font-size="10" fill="#4a5566">{}</text>"##,
                c(x0 + 4.0),
                c(layout.top + 12.0),
                esc(&s.label)
            );
        }
    }
}

/// The lines, clipped at the frame; a non-finite y lifts the pen.
pub fn lines(out: &mut String, chart: &Chart, plot: &Plot) {
    let (sx, sy) = (&plot.sx, &plot.sy);
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
                    let (px, py) = (sx.at(x), sy.at(y));
                    marker_svg(out, l.look.marker, px, py, l.look.colour, false, 3.0);
                }
            }
        }
    }
    out.push_str("</g>");
}

/// Bands as filled polygons (upper edge forward, lower edge back), one
/// per run of finite edges, clipped at the frame.
pub fn bands(out: &mut String, chart: &Chart, plot: &Plot) {
    if chart.bands.is_empty() {
        return;
    }
    let (sx, sy) = (&plot.sx, &plot.sy);
    let _ = write!(out, r#"<g clip-path="url(#{}-clip)">"#, esc(&chart.id));
    for b in &chart.bands {
        let broken = |p: &(f64, f64, f64)| !(p.1.is_finite() && p.2.is_finite());
        for run in b.points.split(broken).filter(|r| r.len() > 1) {
            let mut d = String::new();
            for (i, &(x, _, hi)) in run.iter().enumerate() {
                let _ = write!(
                    d,
                    "{}{} {} ",
                    if i == 0 { "M" } else { "L" },
                    c(sx.at(x)),
                    c(sy.at(hi))
                );
            }
            for &(x, lo, _) in run.iter().rev() {
                let _ = write!(d, "L{} {} ", c(sx.at(x)), c(sy.at(lo)));
            }
            let _ = write!(
                out,
                r#"<path d="{}Z" fill="{}" fill-opacity="{}" stroke="none"><title>{}</title></path>"#,
                d,
                b.colour,
                b.opacity,
                esc(&b.label)
            );
        }
    }
    out.push_str("</g>");
}

/// Vertical interval bars with caps.
pub fn whiskers(out: &mut String, chart: &Chart, plot: &Plot) {
    for w in &chart.whiskers {
        let x = plot.sx.at(w.x);
        let (y0, y1) = (plot.sy.at(w.lo), plot.sy.at(w.hi));
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
}

/// Dots with their hover text; a label goes beside its dot at the first
/// of a few heights where it overlaps no earlier label and stays inside
/// the plot, or is left out.
pub fn dots(out: &mut String, chart: &Chart, layout: &Layout, plot: &Plot) {
    let mut placed: Vec<(f64, f64, f64, f64)> = Vec::new();
    for d in &chart.dots {
        let (x, y) = (plot.sx.at(d.x), plot.sy.at(d.y));
        out.push_str("<g>");
        let _ = write!(out, "<title>{}</title>", esc(&d.tip));
        marker_svg(out, d.look.marker, x, y, d.look.colour, d.hollow, 4.0);
        out.push_str("</g>");
        let Some(label) = &d.label else {
            continue;
        };
        let w = text_width(label, 10.0);
        let anchor_right = x + 8.0 + w > layout.width - RIGHT;
        let x0 = if anchor_right { x - 7.0 - w } else { x + 7.0 };
        let spot = [-5.0, 9.0, -16.0, 20.0, -27.0].iter().find_map(|dy| {
            let y0 = y + dy - 9.0;
            let free = placed
                .iter()
                .all(|(a, b, cw, ch)| x0 + w < *a || x0 > a + cw || y0 + 10.0 < *b || y0 > b + ch);
            (free && y0 > layout.top - 4.0 && y0 + 10.0 < layout.bottom_plot)
                .then_some((y0, y + dy))
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
