//! Geometry of the test-line fixture: the line (with its neck and tapers into the connectors'
//! centre pads), the connector footprints at both ends, the ground pour on the line's layer, the
//! planes, the stitching vias, the outline and the silkscreen marks.
//!
//! Coordinates: origin at the centre of the line, line along x (port 1 at −x, port 2 at +x),
//! y across. The board is symmetric about both axes.

use super::font;
use super::{Pad, Via, ViaRole, circle, polygon, rect, round_buffer};
use crate::model::fixture::Fixture;
use crate::solve::fixture::{SolvedFixture, neck_length, tab_length};
use crate::solve::probe::VIA_WEB;
use geo::{BooleanOps, Contains, MultiPolygon, Polygon};
use kurbo::{Affine, Point, Vec2};

/// The board model of a fixture.
#[derive(Debug, Clone)]
pub struct FixtureBoard {
    /// The line: neck, tapers and uniform part, reaching into both centre pads.
    pub line: Polygon<f64>,
    /// Connector pads: centre pads on the line's side, ground pads on both sides.
    pub pads: Vec<Pad>,
    /// Ground tabs from each ground pad to its via, on both outer layers.
    pub tabs: MultiPolygon<f64>,
    /// Ground copper on the line's layer (without tabs and pads).
    pub pour: MultiPolygon<f64>,
    /// Ground copper on every other layer.
    pub plane: MultiPolygon<f64>,
    /// Every via (tab vias and stitching).
    pub vias: Vec<Via>,
    /// Board outline.
    pub outline: Polygon<f64>,
    /// Silkscreen strokes on the line's side (seen from the top).
    pub silk: Vec<Vec<Point>>,
    /// x of the uniform line's ends (the tapers start beyond), mm.
    pub uniform_half_length: f64,
    /// Bounding box.
    pub bbox: (Point, Point),
}

/// Builds the fixture board.
pub fn build(f: &Fixture, s: &SolvedFixture) -> FixtureBoard {
    let (l2, w2) = (f.length / 2.0, f.width / 2.0);
    let cte = f.fab.copper_to_edge;
    let con = &f.connector;
    let w = s.width;
    let wn = w.min(con.centre_pad_width);
    let x_pad = l2 - con.centre_pad_length;
    let x_neck = x_pad - neck_length(f);
    let x_uniform = x_neck - s.taper;
    // The line's upper edge from −x to +x, then the lower edge back.
    let right = [
        Point::new(x_uniform, w / 2.0),
        Point::new(x_neck, wn / 2.0),
        Point::new(x_pad + con.centre_pad_length / 2.0, wn / 2.0),
    ];
    let mut ring: Vec<Point> = right.iter().rev().map(|p| Point::new(-p.x, p.y)).collect();
    ring.extend(right);
    let lower: Vec<Point> = ring.iter().rev().map(|p| Point::new(p.x, -p.y)).collect();
    ring.extend(lower);
    ring.dedup();
    let line = polygon(&ring);

    let mut pads = Vec::new();
    let mut tabs = Vec::new();
    let mut vias = Vec::new();
    let tab = tab_length(f);
    for side in [-1.0, 1.0] {
        pads.push(Pad {
            at: Point::new(side * (l2 - con.centre_pad_length / 2.0), 0.0),
            w: con.centre_pad_length,
            h: con.centre_pad_width,
            top: f.on_top(),
            centre: true,
        });
        for yside in [-1.0, 1.0] {
            let y = yside * con.ground_pad_offset;
            let x_in = l2 - con.ground_pad_length;
            for top in [true, false] {
                pads.push(Pad {
                    at: Point::new(side * (l2 - con.ground_pad_length / 2.0), y),
                    w: con.ground_pad_length,
                    h: con.ground_pad_width,
                    top,
                    centre: false,
                });
            }
            // The tab overlaps its pad by a hair so the two are one copper shape.
            let (xa, xb) = (side * (x_in + 0.01), side * (x_in - tab));
            tabs.push(rect(
                xa.min(xb),
                y - con.ground_pad_width / 2.0,
                xa.max(xb),
                y + con.ground_pad_width / 2.0,
            ));
            vias.push(Via {
                at: Point::new(side * (x_in - tab / 2.0), y),
                drill: f.vias.drill,
                pad: f.vias.pad,
                role: ViaRole::SignalGround,
            });
        }
    }
    let tabs = MultiPolygon(tabs);
    let inset = MultiPolygon(vec![rect(-l2 + cte, -w2 + cte, l2 - cte, w2 - cte)]);
    let centre_pads = MultiPolygon(
        pads.iter()
            .filter(|p| p.centre)
            .map(|p| {
                rect(
                    p.at.x - p.w / 2.0,
                    -p.h / 2.0,
                    p.at.x + p.w / 2.0,
                    p.h / 2.0,
                )
            })
            .collect(),
    );
    let signal = MultiPolygon(vec![line.clone()]).union(&centre_pads);
    let keep = round_buffer(&signal, s.keepout);
    let pour = inset.difference(&keep);
    let plane = inset;

    // Stitching: a grid at the largest allowed pitch over the pour, aligned so that one row
    // runs along the pour's edge by the line; a via is kept where its pad (plus the web) lies
    // inside the pour and clear of every connector pad and tab.
    let p = s.pitch_max.min(5.0) * 0.98;
    let y0 = w / 2.0 + s.keepout + f.vias.pad / 2.0 + VIA_WEB;
    let r_keep = f.vias.pad / 2.0 + VIA_WEB;
    let nx = ((l2 - cte) / p).floor() as i64;
    let ny = ((w2 - y0) / p).floor() as i64 + 1;
    let blocked = |q: Point| {
        pads.iter().any(|pd| {
            let dx = ((q.x - pd.at.x).abs() - pd.w / 2.0).max(0.0);
            let dy = ((q.y - pd.at.y).abs() - pd.h / 2.0).max(0.0);
            dx.hypot(dy) < f.vias.pad / 2.0 + f.fab.min_space + f.fab.mask_expansion
        }) || vias
            .iter()
            .any(|v| (v.at - q).hypot() < s.pitch_min.max(p * 0.5))
    };
    let mut stitch = Vec::new();
    for j in 0..ny {
        for yside in [-1.0, 1.0] {
            let y = yside * (y0 + j as f64 * p);
            for i in -nx..=nx {
                let q = Point::new(i as f64 * p, y);
                if pour.contains(&circle(q, r_keep)) && !blocked(q) {
                    stitch.push(Via {
                        at: q,
                        drill: f.vias.drill,
                        pad: f.vias.pad,
                        role: ViaRole::OuterRow,
                    });
                }
            }
        }
    }
    vias.extend(stitch);

    let outline = rect(-l2, -w2, l2, w2);
    let silk = silk(f, s, x_uniform);
    FixtureBoard {
        line,
        pads,
        tabs,
        pour,
        plane,
        vias,
        outline,
        silk,
        uniform_half_length: x_uniform,
        bbox: (Point::new(-l2, -w2), Point::new(l2, w2)),
    }
}

/// Silkscreen: the probe-position mark at the line's centre (arrows across the line), a
/// 5 mm ruler along the uniform part, the port names and two lines of text.
fn silk(f: &Fixture, s: &SolvedFixture, x_uniform: f64) -> Vec<Vec<Point>> {
    let h = f.fab.silk_text_height;
    let w = s.width;
    let y_in = w / 2.0 + 0.5;
    let mut out = Vec::new();
    for ys in [-1.0, 1.0] {
        // Centre mark: a stroke towards the line with an arrowhead at its inner end.
        out.push(vec![
            Point::new(0.0, ys * y_in),
            Point::new(0.0, ys * (y_in + 3.0)),
        ]);
        out.push(vec![
            Point::new(-0.6, ys * (y_in + 0.8)),
            Point::new(0.0, ys * y_in),
            Point::new(0.6, ys * (y_in + 0.8)),
        ]);
        // Ruler ticks every 5 mm (2 mm long at 10 mm multiples) on the uniform part.
        let n = (x_uniform / 5.0).floor() as i64;
        for k in -n..=n {
            if k == 0 {
                continue;
            }
            let len = if k % 2 == 0 { 2.0 } else { 1.0 };
            let x = k as f64 * 5.0;
            out.push(vec![
                Point::new(x, ys * y_in),
                Point::new(x, ys * (y_in + len)),
            ]);
        }
    }
    let text = |t: &str, at: Point| -> Vec<Vec<Point>> {
        let tw = font::text_width(t, h);
        font::text_strokes(t, h, Affine::translate(Vec2::new(at.x - tw / 2.0, at.y)))
    };
    // Above the line: how to hold the probe; below: what the line is. Each text is shortened
    // to fit between the connectors' tabs.
    let room = 2.0 * (f.length / 2.0 - f.connector.ground_pad_length - tab_length(f) - 1.0);
    let fit = |choices: &[String]| -> String {
        let mut t = choices
            .iter()
            .find(|c| font::text_width(c, h) <= room)
            .cloned()
            .unwrap_or_else(|| choices[choices.len() - 1].clone());
        while !t.is_empty() && font::text_width(&t, h) > room {
            t.pop();
        }
        t.trim_end().to_string()
    };
    let how = fit(&[
        "PROBE HERE: LOOP PLANE ALONG THE LINE".into(),
        "PROBE HERE".into(),
    ]);
    out.extend(text(&how, Point::new(0.0, y_in + 3.6)));
    let mut what = format!(
        "{} {:.0} OHM {} W {:.2} {}",
        f.name.to_uppercase(),
        f.target_z0,
        f.line.name().to_uppercase(),
        s.width,
        f.stackup.name().to_uppercase()
    );
    if !f.silk_text.is_empty() {
        what = format!("{what} {}", f.silk_text.to_uppercase());
    }
    let what = fit(&[what, format!("{:.0} OHM W {:.2}", f.target_z0, s.width)]);
    out.extend(text(&what, Point::new(0.0, -(y_in + 3.6 + h))));
    // Port names beside the connectors, clear of their pads and tabs.
    let con = &f.connector;
    let x_port = f.length / 2.0 - con.ground_pad_length - tab_length(f) - f.fab.silk_to_pad;
    let y_port = con.ground_pad_offset + con.ground_pad_width / 2.0 + f.fab.silk_to_pad + 0.5;
    for (name, side) in [("PORT 1", -1.0), ("PORT 2", 1.0)] {
        let tw = font::text_width(name, h);
        let x = side * (x_port - tw / 2.0);
        out.extend(text(name, Point::new(x, y_port)));
    }
    out
}
