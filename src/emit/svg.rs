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

fn f(v: f64) -> String {
    let s = format!("{v:.4}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

fn ring_d(pts: &[Point]) -> String {
    let mut d = String::new();
    for (i, p) in pts.iter().enumerate() {
        d.push_str(if i == 0 { "M" } else { "L" });
        d.push_str(&format!("{} {} ", f(p.x), f(-p.y)));
    }
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
        let d: String = s
            .iter()
            .enumerate()
            .map(|(i, p)| format!("{}{} {} ", if i == 0 { "M" } else { "L" }, f(p.x), f(-p.y)))
            .collect();
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
