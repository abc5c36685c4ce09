//! SVG previews: all layers composited with a legend, and one file per layer. Board y is up;
//! the SVG is flipped so the tip points up on screen.

use crate::artwork::{Artwork, CopperLayer, Flash, Shape};
use geo::MultiPolygon;
use kurbo::Point;
use svg::Document;
use svg::node::element::{Circle, Group, Path, Rectangle, Text};

/// Colours of copper layers, top first (our own palette).
const COPPER_COLOURS: [&str; 6] = [
    "#c8553d", "#d9a521", "#3a7ca5", "#4f9d69", "#8e6bbf", "#b5651d",
];

/// `v` to 4 decimals with trailing zeros (and a bare point) trimmed.
fn f(v: f64) -> String {
    let mut s = String::new();
    push_num(&mut s, v);
    s
}

/// Appends [`f`]'s text of `v`: `format!("{v:.4}")`, trimmed, written by integer arithmetic
/// where that is sure to round as the formatter does (the previews' millions of coordinates
/// spent most of their time in the float formatter). The scaled value's own rounding is under
/// 1e-7 for |v| < 1e5, so only a value within 1e-6 of a rounding tie, or a larger one, takes
/// the formatter.
fn push_num(out: &mut String, v: f64) {
    use std::fmt::Write;
    let x = v.abs() * 1e4;
    let tie = (x - x.floor() - 0.5).abs() < 1e-6;
    if !x.is_finite() || x >= 1e9 || tie {
        let s = format!("{v:.4}");
        out.push_str(s.trim_end_matches('0').trim_end_matches('.'));
        return;
    }
    let n = x.round() as u64;
    if v.is_sign_negative() {
        out.push('-');
    }
    let (int, frac) = (n / 10_000, n % 10_000);
    let _ = write!(out, "{int}");
    if frac != 0 {
        let mut digits = [b'0'; 4];
        let mut k = frac;
        for d in digits.iter_mut().rev() {
            *d = b'0' + (k % 10) as u8;
            k /= 10;
        }
        let len = 4 - digits.iter().rev().take_while(|&&d| d == b'0').count();
        out.push('.');
        out.push_str(std::str::from_utf8(&digits[..len]).unwrap_or("0"));
    }
}

/// A path's moves and lines through `pts` (y flipped), never closed.
fn points_d(pts: &[Point]) -> String {
    let mut d = String::with_capacity(16 * pts.len());
    for (i, p) in pts.iter().enumerate() {
        d.push_str(if i == 0 { "M" } else { "L" });
        push_num(&mut d, p.x);
        d.push(' ');
        push_num(&mut d, -p.y);
        d.push(' ');
    }
    d
}

fn ring_d(pts: &[Point]) -> String {
    let mut d = points_d(pts);
    // A closed ring (first point = last) is closed; an open path (a panel's routed edge
    // broken at its tabs) is not.
    if pts.len() > 2 && pts.first() == pts.last() {
        d.push('Z');
    }
    d
}

fn regions_path(m: &MultiPolygon<f64>, colour: &str, opacity: f64) -> Path {
    let mut d = String::new();
    for poly in &m.0 {
        let ring = |ls: &geo::LineString<f64>| -> Vec<Point> {
            ls.coords().map(|c| Point::new(c.x, c.y)).collect()
        };
        d.push_str(&ring_d(&ring(poly.exterior())));
        for h in poly.interiors() {
            d.push_str(&ring_d(&ring(h)));
        }
    }
    Path::new()
        .set("d", d)
        .set("fill", colour)
        .set("fill-opacity", opacity)
        .set("fill-rule", "evenodd")
}

fn flash_node(fl: &Flash, colour: &str, opacity: f64) -> Group {
    let g = Group::new();
    match fl.shape {
        Shape::Circle(d) => g.add(
            Circle::new()
                .set("cx", f(fl.at.x))
                .set("cy", f(-fl.at.y))
                .set("r", f(d / 2.0))
                .set("fill", colour)
                .set("fill-opacity", opacity),
        ),
        Shape::Rect(w, h) => g.add(
            Rectangle::new()
                .set("x", f(fl.at.x - w / 2.0))
                .set("y", f(-fl.at.y - h / 2.0))
                .set("width", f(w))
                .set("height", f(h))
                .set("fill", colour)
                .set("fill-opacity", opacity),
        ),
    }
}

fn copper_group(l: &CopperLayer, opacity: f64) -> Group {
    let colour = COPPER_COLOURS[(l.n - 1) % COPPER_COLOURS.len()];
    let mut g = Group::new()
        .set("id", format!("copper-L{}", l.n))
        .add(regions_path(&l.regions, colour, opacity));
    for fl in &l.flashes {
        g = g.add(flash_node(fl, colour, opacity));
    }
    g
}

fn strokes_group(strokes: &[Vec<Point>], width: f64, colour: &str, id: &str) -> Group {
    let mut g = Group::new().set("id", id);
    for s in strokes {
        let d = points_d(s);
        g = g.add(
            Path::new()
                .set("d", d)
                .set("fill", "none")
                .set("stroke", colour)
                .set("stroke-width", f(width))
                .set("stroke-linecap", "round")
                .set("stroke-linejoin", "round"),
        );
    }
    g
}

fn frame(art: &Artwork, extra_bottom: f64) -> (Document, f64, f64, f64, f64) {
    let (mut x0, mut y0, mut x1, mut y1) = (f64::MAX, f64::MAX, f64::MIN, f64::MIN);
    for p in art.profile.iter().flatten() {
        x0 = x0.min(p.x);
        x1 = x1.max(p.x);
        y0 = y0.min(-p.y);
        y1 = y1.max(-p.y);
    }
    let m = 1.0;
    // Room for the legend's text when there is one.
    let w = if extra_bottom > 0.0 {
        (x1 - x0 + 2.0 * m).max(32.0)
    } else {
        x1 - x0 + 2.0 * m
    };
    let cx = 0.5 * (x0 + x1);
    let (vx, vy, vw, vh) = (cx - w / 2.0, y0 - m, w, y1 - y0 + 2.0 * m + extra_bottom);
    let doc = Document::new()
        .set(
            "viewBox",
            format!("{} {} {} {}", f(vx), f(vy), f(vw), f(vh)),
        )
        .set("width", format!("{}mm", f(vw)))
        .set("height", format!("{}mm", f(vh)))
        .add(
            Rectangle::new()
                .set("x", f(vx))
                .set("y", f(vy))
                .set("width", f(vw))
                .set("height", f(vh))
                .set("fill", "#1d2b24"),
        );
    (doc, vx, vy, vw, vh)
}

fn outline_group(art: &Artwork) -> Group {
    let mut g = Group::new().set("id", "profile");
    for r in &art.profile {
        g = g.add(
            Path::new()
                .set("d", ring_d(r))
                .set("fill", "none")
                .set("stroke", "#f2f2f2")
                .set("stroke-width", 0.1),
        );
    }
    g
}

fn drills_group(art: &Artwork) -> Group {
    let mut g = Group::new().set("id", "drills");
    for d in &art.drills {
        g = g.add(
            Circle::new()
                .set("cx", f(d.at.x))
                .set("cy", f(-d.at.y))
                .set("r", f(d.d / 2.0))
                .set("fill", "#101010"),
        );
    }
    g
}

/// The composited preview with a legend.
pub fn composite(art: &Artwork, title: &str) -> String {
    let rows = art.copper.len() + 3;
    let legend_h = 1.2 * rows as f64 + 2.0;
    let (mut doc, vx, vy, _vw, vh) = frame(art, legend_h);
    doc = doc.add(outline_group(art));
    for l in art.copper.iter().rev() {
        doc = doc.add(copper_group(l, 0.55));
    }
    doc = doc.add(drills_group(art));
    // The top legend, or the bottom one (as seen from the top) on a board that has only that.
    let (silk, legend_id, legend_label) = if art.silk_top.is_empty() && !art.silk_bottom.is_empty()
    {
        (
            &art.silk_bottom,
            "legend-bottom",
            "bottom legend (seen from the top)",
        )
    } else {
        (&art.silk_top, "legend-top", "top legend")
    };
    doc = doc.add(strokes_group(silk, art.silk_width, "#f5f5dc", legend_id));
    // Legend.
    let mut y = vy + vh - legend_h + 1.2;
    let x = vx + 0.8;
    let text = |s: &str, y: f64| {
        Text::new(s)
            .set("x", f(x + 1.4))
            .set("y", f(y + 0.35))
            .set("font-size", 0.9)
            .set("font-family", "sans-serif")
            .set("fill", "#f2f2f2")
    };
    let swatch = |y: f64, colour: &str| {
        Rectangle::new()
            .set("x", f(x))
            .set("y", f(y - 0.4))
            .set("width", 1.0)
            .set("height", 0.8)
            .set("fill", colour)
    };
    doc = doc.add(text(title, y));
    y += 1.2;
    for l in &art.copper {
        let colour = COPPER_COLOURS[(l.n - 1) % COPPER_COLOURS.len()];
        let label = format!(
            "L{} copper ({})",
            l.n,
            if l.signal {
                art.layer_roles.0
            } else {
                art.layer_roles.1
            }
        );
        doc = doc.add(swatch(y, colour)).add(text(&label, y));
        y += 1.2;
    }
    doc = doc.add(swatch(y, "#f5f5dc")).add(text(legend_label, y));
    y += 1.2;
    doc = doc
        .add(
            Circle::new()
                .set("cx", f(x + 0.5))
                .set("cy", f(y))
                .set("r", 0.35)
                .set("fill", "#101010")
                .set("stroke", "#f2f2f2")
                .set("stroke-width", 0.05),
        )
        .add(text("drilled holes; white line: board outline", y));
    doc.to_string()
}

/// One copper layer alone, with the outline and the holes.
pub fn copper_layer(art: &Artwork, l: &CopperLayer) -> String {
    let (doc, ..) = frame(art, 0.0);
    doc.add(outline_group(art))
        .add(copper_group(l, 1.0))
        .add(drills_group(art))
        .to_string()
}

/// A mask layer (openings), legend or outline alone.
pub fn openings_layer(art: &Artwork, openings: &[Flash], id: &str) -> String {
    let (doc, ..) = frame(art, 0.0);
    let mut g = Group::new().set("id", id.to_string());
    for fl in openings {
        g = g.add(flash_node(fl, "#e0e0e0", 1.0));
    }
    doc.add(outline_group(art)).add(g).to_string()
}

/// A legend layer alone.
pub fn legend_layer(art: &Artwork, strokes: &[Vec<Point>], id: &str) -> String {
    let (doc, ..) = frame(art, 0.0);
    doc.add(outline_group(art))
        .add(strokes_group(strokes, art.silk_width, "#f5f5dc", id))
        .to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The formatter's own text, trimmed: what `push_num` must write.
    fn by_formatter(v: f64) -> String {
        let s = format!("{v:.4}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    }

    // The integer path writes exactly what Rust's float formatter writes (rounding of the exact
    // binary value, sign of zero), on values of every size the previews draw, on ties and near
    // ties, and on whole numbers.
    #[test]
    fn numbers_match_the_float_formatter() {
        let mut vals = vec![
            0.0,
            -0.0,
            1e-5,
            -1e-5,
            0.00005,
            -0.00005,
            0.00015,
            0.12345,
            2.5,
            10.0,
            100.0,
            -3.17159,
            0.99995,
            9.99995,
            123.45675,
            1e5,
            1e6,
            -2.7e7,
            f64::MIN_POSITIVE,
        ];
        // A fixed pseudo-random sweep (xorshift) over 1e-6 .. 1e4 mm, both signs.
        let mut s = 0x9e37_79b9_7f4a_7c15_u64;
        for _ in 0..200_000 {
            s ^= s << 13;
            s ^= s >> 7;
            s ^= s << 17;
            let mant = (s >> 11) as f64 / (1u64 << 53) as f64;
            let exp = ((s & 0xff) % 11) as i32 - 6;
            let sign = if s & 0x100 == 0 { 1.0 } else { -1.0 };
            vals.push(sign * mant * 10f64.powi(exp + 1));
            // Values on the 4-decimal grid and half-way between its points.
            let k = (s >> 20) % 10_000_000;
            vals.push(k as f64 / 1e4);
            vals.push((k as f64 + 0.5) / 1e4);
        }
        for v in vals {
            assert_eq!(f(v), by_formatter(v), "{v:e}");
        }
    }
}
