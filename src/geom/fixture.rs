//! Geometry of the test-line fixture: the line (with its constant-impedance tapers into the
//! connectors' centre pads), the connector footprints at both ends, the ground pour on the line's
//! layer (brought beside the pads and tapers at the solved gaps, so that it takes in the ground
//! pads), the planes, the ground vias (along the launch's ground edge, round the ground pads,
//! and a stitching grid), the outline and the silkscreen marks.
//!
//! Coordinates: origin at the centre of the line, line along x (port 1 at −x, port 2 at +x),
//! y across. The board is symmetric about both axes.

use super::font;
use super::{Pad, Via, ViaRole, circle, offsets, polygon, rect};
use crate::model::fixture::Fixture;
use crate::solve::fixture::{SolvedFixture, port_zone_length};
use crate::solve::probe::VIA_WEB;
use geo::{BooleanOps, Contains, MultiPolygon, Polygon};
use kurbo::{Affine, Point, Vec2};

/// The board model of a fixture.
#[derive(Debug, Clone)]
pub struct FixtureBoard {
    /// The line: the constant-impedance tapers and the uniform part, reaching into both centre
    /// pads.
    pub line: Polygon<f64>,
    /// Connector pads: centre pads on the line's side, ground pads on both sides.
    pub pads: Vec<Pad>,
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

/// The half-width profile (x ≥ 0 side) of the line and of its clearance, from the board's
/// centre to the edge: (x, line half-width, clearance half-width) at each vertex.
fn port_profile(f: &Fixture, s: &SolvedFixture) -> Vec<(f64, f64, f64)> {
    let l2 = f.length / 2.0;
    let con = &f.connector;
    let cp_w = con.centre_pad_width;
    let x_pad = l2 - con.centre_pad_length;
    let port = &s.port;
    let w = s.width;
    let line_clear = w / 2.0 + s.keepout;
    let mut v = vec![(0.0, w / 2.0, line_clear)];
    if port.stations.is_empty() {
        // The line is no wider than the pad: it runs on at its own width into the pad's gap.
        v.push((x_pad, w / 2.0, line_clear));
    } else {
        // The uniform line's keepout up to the taper's end, then a step to the taper's gaps.
        v.push((x_pad - s.taper, w / 2.0, line_clear));
        for st in port.stations.iter().rev() {
            v.push((x_pad - st.x, st.width / 2.0, st.width / 2.0 + st.gap));
        }
    }
    v.push((x_pad, cp_w / 2.0, cp_w / 2.0 + port.pad_gap));
    v.push((l2 + 1.0, cp_w / 2.0, cp_w / 2.0 + port.pad_gap));
    v
}

/// A closed polygon symmetric about both axes from a half-width profile along +x.
fn symmetric(profile: &[(f64, f64)]) -> Polygon<f64> {
    let mut ring: Vec<Point> = profile
        .iter()
        .rev()
        .map(|&(x, y)| Point::new(-x, y))
        .collect();
    ring.extend(profile.iter().map(|&(x, y)| Point::new(x, y)));
    let lower: Vec<Point> = ring.iter().rev().map(|p| Point::new(p.x, -p.y)).collect();
    ring.extend(lower);
    ring.dedup();
    polygon(&ring)
}

/// Whether `m` contains the disc polygon `circle(q, r)`, its vertices on the circle: settled by
/// the centre's distance to `m`'s edges where that is clearly more than r (the disc wholly
/// inside or wholly outside) or less than the polygon's inner radius (an edge then runs through
/// it, so it holds points outside `m`); the polygon test itself only in the band between. The
/// same answer as `m.contains(&circle(q, r))`, at a fraction of the work.
fn holds_disc(m: &MultiPolygon<f64>, q: Point, r: f64) -> bool {
    let edge = super::edge_distance(m, q);
    let margin = 1e-9;
    if edge > r + margin {
        m.contains(&geo::Point::new(q.x, q.y))
    } else if edge < r - crate::model::centreline::ARC_TOLERANCE - margin {
        false
    } else {
        m.contains(&circle(q, r))
    }
}

/// Builds the fixture board.
pub fn build(f: &Fixture, s: &SolvedFixture) -> FixtureBoard {
    let (l2, w2) = (f.length / 2.0, f.width / 2.0);
    let cte = f.fab.copper_to_edge;
    let con = &f.connector;
    let x_pad = l2 - con.centre_pad_length;
    let x_uniform = x_pad - s.taper;
    let profile = port_profile(f, s);
    // The line reaches into both centre pads (to their middle); its clearance runs off the
    // board's ends.
    let line_profile: Vec<(f64, f64)> = profile
        .iter()
        .map(|&(x, hw, _)| (x.min(l2 - con.centre_pad_length / 2.0), hw))
        .collect();
    let line = symmetric(&line_profile);
    let clearance = symmetric(&profile.iter().map(|&(x, _, c)| (x, c)).collect::<Vec<_>>());

    let mut pads = Vec::new();
    for side in [-1.0, 1.0] {
        pads.push(Pad {
            at: Point::new(side * (l2 - con.centre_pad_length / 2.0), 0.0),
            w: con.centre_pad_length,
            h: con.centre_pad_width,
            top: f.on_top(),
            centre: true,
        });
        for yside in [-1.0, 1.0] {
            for top in [true, false] {
                pads.push(Pad {
                    at: Point::new(
                        side * (l2 - con.ground_pad_length / 2.0),
                        yside * con.ground_pad_offset,
                    ),
                    w: con.ground_pad_length,
                    h: con.ground_pad_width,
                    top,
                    centre: false,
                });
            }
        }
    }
    let inset = MultiPolygon(vec![rect(-l2 + cte, -w2 + cte, l2 - cte, w2 - cte)]);
    let pour = inset.difference(&MultiPolygon(vec![clearance]));
    let plane = inset;

    // Vias, in this order: along the ground's edge beside the launch (both sides of the line,
    // every half stitching limit: the coplanar ground there must be tied to the plane), round
    // each ground pad (every half limit), then a grid at the largest allowed pitch over the rest
    // of the pour. A via is kept where its pad (plus the web) lies inside the pour, clear of the
    // connector pads and at least the fab's pitch from every other via.
    let r_keep = f.vias.pad / 2.0 + VIA_WEB;
    let step = (0.5 * s.pitch_max).max(s.pitch_min + offsets::PITCH_MARGIN);
    let mut vias: Vec<Via> = Vec::new();
    let holds = |q: Point| holds_disc(&pour, q, r_keep);
    let ok = |q: Point, vias: &[Via]| {
        holds(q)
            && !pads.iter().any(|pd| {
                let dx = ((q.x - pd.at.x).abs() - pd.w / 2.0).max(0.0);
                let dy = ((q.y - pd.at.y).abs() - pd.h / 2.0).max(0.0);
                dx.hypot(dy) < f.vias.pad / 2.0 + f.fab.min_space + f.fab.mask_expansion
            })
            && vias
                .iter()
                .all(|v| (v.at - q).hypot() >= s.pitch_min + 1e-5)
    };
    // Place along a path (right-hand, upper quadrant), with the three mirror images.
    let walk = |path: &[Point], role: ViaRole, vias: &mut Vec<Via>| {
        let lens = super::shape::arclengths(path);
        let total = *lens.last().unwrap();
        let mut last: Option<Point> = None;
        let mut t = 0.0;
        while t <= total {
            let (q, _) = super::shape::point_at(path, &lens, t);
            let images = [
                q,
                Point::new(-q.x, q.y),
                Point::new(q.x, -q.y),
                Point::new(-q.x, -q.y),
            ];
            if last.is_none_or(|l| (q - l).hypot() >= step)
                && images.iter().all(|&p| ok(p, vias))
                && (q.x.abs() > r_keep && q.y.abs() > r_keep)
            {
                for p in images {
                    vias.push(Via {
                        at: p,
                        drill: f.vias.drill,
                        pad: f.vias.pad,
                        role,
                    });
                }
                last = Some(q);
            }
            t += offsets::SEARCH_STEP;
        }
    };
    // The ground edge beside the launch, offset by a via's keep, from the board's end to a
    // millimetre past the taper.
    let off = r_keep + offsets::KEEP_MARGIN;
    let edge: Vec<Point> = profile
        .iter()
        .rev()
        .filter(|&&(x, _, _)| x >= x_uniform - 1.0)
        .map(|&(x, _, c)| Point::new(x.min(l2 - cte), c + off))
        .collect();
    let mut edge_path = edge.clone();
    edge_path.dedup_by(|a, b| (*a - *b).hypot() < offsets::SAME_POINT);
    if edge_path.len() >= 2 {
        walk(&edge_path, ViaRole::Fence, &mut vias);
    }
    // Round each ground pad (the upper right one; its images are the others).
    let gp = pads
        .iter()
        .find(|pd| !pd.centre && pd.at.x > 0.0 && pd.at.y > 0.0)
        .copied()
        .expect("ground pads");
    let grow = f.vias.pad / 2.0 + f.fab.min_space + f.fab.mask_expansion + offsets::KEEP_MARGIN;
    let (hx, hy) = (gp.w / 2.0 + grow, gp.h / 2.0 + grow);
    let around = [
        Point::new(gp.at.x + hx, gp.at.y - hy),
        Point::new(gp.at.x - hx, gp.at.y - hy),
        Point::new(gp.at.x - hx, gp.at.y + hy),
        Point::new(gp.at.x + hx, gp.at.y + hy),
    ];
    walk(&around, ViaRole::PadGround, &mut vias);

    // Stitching: a grid at the largest allowed pitch over the pour, aligned so that one row
    // runs along the pour's edge by the uniform line.
    let p = s.pitch_max.min(offsets::GRID_PITCH_MAX) * offsets::GRID_PITCH_SHARE;
    // (1 µm beyond the exact tangent, which the containment test may refuse by rounding.)
    let y0 = s.width / 2.0 + s.keepout + f.vias.pad / 2.0 + VIA_WEB + offsets::PAST_TANGENT;
    let nx = ((l2 - cte) / p).floor() as i64;
    let ny = ((w2 - y0) / p).floor() as i64 + 1;
    let mut stitch = Vec::new();
    for j in 0..ny {
        for yside in [-1.0, 1.0] {
            let y = yside * (y0 + j as f64 * p);
            for i in -nx..=nx {
                let q = Point::new(i as f64 * p, y);
                let crowded = vias
                    .iter()
                    .chain(stitch.iter())
                    .any(|v: &Via| (v.at - q).hypot() < s.pitch_min + 1e-5);
                if !crowded && ok(q, &[]) {
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
    // Text centred at `at`. On the bottom side (a line on the bottom layer) each text is
    // mirrored about its own centre: seen from the top, as Gerber layers are, bottom legend
    // reads reversed, so that it reads right on the board's underside.
    let bottom = !f.on_top();
    let text = |t: &str, at: Point| -> Vec<Vec<Point>> {
        let tw = font::text_width(t, h);
        let place = if bottom {
            Affine::translate(Vec2::new(at.x + tw / 2.0, at.y)) * Affine::FLIP_X
        } else {
            Affine::translate(Vec2::new(at.x - tw / 2.0, at.y))
        };
        font::text_strokes(t, h, place)
    };
    // Above the line: how to hold the probe; below: what the line is. Each text is shortened
    // to fit between the connectors' tabs.
    let room = 2.0 * (f.length / 2.0 - port_zone_length(f) - 1.0);
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
    let x_port = f.length / 2.0 - port_zone_length(f) - f.fab.silk_to_pad;
    let y_port = con.ground_pad_offset + con.ground_pad_width / 2.0 + f.fab.silk_to_pad + 0.5;
    for (name, side) in [("PORT 1", -1.0), ("PORT 2", 1.0)] {
        let tw = font::text_width(name, h);
        let x = side * (x_port - tw / 2.0);
        out.extend(text(name, Point::new(x, y_port)));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The distance shortcut gives the polygon test's answer at every point of a fine grid over
    /// a pour with a hole and a notch, near its edges and far from them, for discs from smaller
    /// than the flattening's scale to larger than the notch.
    #[test]
    fn the_disc_test_matches_the_polygon_test() {
        let outer = MultiPolygon(vec![rect(-5.0, -3.0, 5.0, 3.0)]);
        let cut = MultiPolygon(vec![rect(-1.0, -0.4, 1.0, 0.4), rect(3.0, -3.5, 3.6, 0.0)]);
        let pour = outer.difference(&cut);
        let mut near = 0;
        for r in [0.01, 0.35, 0.8] {
            for i in -60..=60 {
                for j in -40..=40 {
                    let q = Point::new(i as f64 * 0.0913, j as f64 * 0.0811);
                    let exact = pour.contains(&circle(q, r));
                    assert_eq!(holds_disc(&pour, q, r), exact, "r {r} at {q:?}");
                    near += usize::from(exact);
                }
            }
        }
        // Both answers occur.
        assert!(near > 1000 && near < 3 * 121 * 81 - 1000, "{near}");
    }
}
