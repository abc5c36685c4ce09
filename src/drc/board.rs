//! The rules every board gets (probe or fixture): contours, width and space, copper to edge,
//! drills, mask web and silkscreen.

use super::kernel::{
    Coppers, flash_polygon, layer_copper, near_pairs, ring_ls, rings_of, seg_seg, segments,
};
use super::slack;
use super::{Rule, Violation};
use crate::artwork::Artwork;
use crate::geom::{TOL, stroke_round};
use crate::model::fab::FabProfile;
use geo::{Contains, Distance, Euclidean, MultiPolygon};
use kurbo::Point;

/// Checks that every ring is closed and simple (no self-intersection or self-touch).
fn check_rings(out: &mut Vec<Violation>, layer: &str, m: &MultiPolygon<f64>) {
    let rings = rings_of(m);
    for r in &rings {
        if r.len() < 4 || r.first() != r.last() {
            out.push(Violation {
                rule: Rule::RegionNotClosed,
                layer: layer.into(),
                at: r.first().copied().unwrap_or(Point::ZERO),
                detail: format!("{} points, first ≠ last", r.len()),
            });
        }
    }
    // Each contour is written as its own region (holes as clear regions), so each must be
    // simple on its own.
    let (segs, _) = segments(&rings);
    for (i, j) in near_pairs(&segs, 0.0) {
        let (a, b) = (&segs[i], &segs[j]);
        if a.ring != b.ring {
            continue;
        }
        let dk = a.k.abs_diff(b.k);
        if dk == 1 || dk + 1 == a.nseg {
            continue;
        }
        let (d, t, _) = seg_seg(a.a, a.b, b.a, b.b);
        if d < slack::TOUCH {
            out.push(Violation {
                rule: Rule::RegionNotSimple,
                layer: layer.into(),
                at: a.a + (a.b - a.a) * t,
                detail: "a contour crosses or touches itself".into(),
            });
        }
    }
}

/// Width and spacing on one layer's copper.
fn check_width_space(
    out: &mut Vec<Violation>,
    layer: &str,
    copper: &MultiPolygon<f64>,
    min_w: f64,
    min_s: f64,
) {
    let rings = rings_of(copper);
    let (segs, lens) = segments(&rings);
    let dmax = min_w.max(min_s);
    let mut reported: Vec<Point> = Vec::new();
    let span = slack::SAME_RING_SPANS * dmax;
    for (i, j) in near_pairs(&segs, dmax) {
        let (a, b) = (&segs[i], &segs[j]);
        // Two segments of one ring whose every pair of points is nearer than `span` along it
        // are passed over below whatever their distance: passed over before it is measured
        // (the farthest points along are the ends, and the way round the ring is not longer).
        if a.ring == b.ring {
            let (la, lb) = ((a.b - a.a).hypot(), (b.b - b.a).hypot());
            if (a.s0 + la - b.s0).max(b.s0 + lb - a.s0) < span {
                continue;
            }
        }
        let (d, t, u) = seg_seg(a.a, a.b, b.a, b.b);
        if d >= dmax - slack::GRID || d < slack::NOISE {
            continue;
        }
        if a.ring == b.ring {
            let pa = a.s0 + t * (a.b - a.a).hypot();
            let pb = b.s0 + u * (b.b - b.a).hypot();
            let along = (pa - pb).abs();
            let along = along.min(lens[a.ring] - along);
            if along < span {
                continue;
            }
        }
        let p = a.a + (a.b - a.a) * t;
        let q = b.a + (b.b - b.a) * u;
        let m = p.midpoint(q);
        let inside = copper.contains(&geo::Point::new(m.x, m.y));
        let (rule, limit) = if inside {
            (Rule::MinTraceWidth, min_w)
        } else {
            (Rule::MinSpace, min_s)
        };
        // Within the arc-flattening tolerance of the limit counts as meeting it.
        if d < limit - TOL && !reported.iter().any(|r| (*r - m).hypot() < dmax) {
            reported.push(m);
            out.push(Violation {
                rule,
                layer: layer.into(),
                at: m,
                detail: format!("{d:.4} mm < {limit:.4} mm"),
            });
        }
    }
}

/// The nearest approach of `body` (one layer's copper) to the board's edge, as a violation when
/// it is under `cte` (or the copper touches or crosses the edge, whatever `cte`): every pair of a
/// copper edge and an outline edge whose boxes come within `cte` of each other (a sweep over x,
/// so the work grows with the pairs of nearby edges, not with the product of the edge counts)
/// measured exactly, and copper wholly outside the board or wholly round a cut-out (no edge
/// near the outline) found by one point of each. Only the artwork grid's snapping is slack.
fn copper_to_edge(
    outline_rings: &[Vec<Point>],
    outline: &geo::Polygon<f64>,
    body: &MultiPolygon<f64>,
    cte: f64,
) -> Option<Violation> {
    let limit = cte - slack::GRID;
    let violation = |at: Point, detail: String| Violation {
        rule: Rule::CopperToEdge,
        layer: String::new(),
        at,
        detail,
    };
    let copper_rings = rings_of(body);
    let n_edge = outline_rings.len();
    let mut rings = outline_rings.to_vec();
    rings.extend(copper_rings.iter().cloned());
    let (segs, _) = segments(&rings);
    let mut nearest: Option<(f64, Point)> = None;
    for (i, j) in near_pairs(&segs, limit.max(0.0)) {
        let (a, b) = (&segs[i], &segs[j]);
        // One edge of the outline, one of the copper.
        let (e, c) = match (a.ring < n_edge, b.ring < n_edge) {
            (true, false) => (a, b),
            (false, true) => (b, a),
            _ => continue,
        };
        let (d, _, u) = seg_seg(e.a, e.b, c.a, c.b);
        // Copper on or across the edge fails whatever the rule (a rule of 0 leaves the limit
        // below zero, where no distance falls).
        if (d < limit || d <= 0.0) && nearest.is_none_or(|(n, _)| d < n) {
            nearest = Some((d, c.a + (c.b - c.a) * u));
        }
    }
    if let Some((d, at)) = nearest {
        return Some(violation(at, format!("{d:.4} mm < {cte:.4} mm")));
    }
    // No edge within reach: each copper ring lies wholly inside or wholly outside the board,
    // and each cut-out wholly inside or outside the copper.
    for r in &copper_rings {
        if let Some(&q) = r.first()
            && !outline.contains(&geo::Point::new(q.x, q.y))
        {
            return Some(violation(q, "copper outside the board".into()));
        }
    }
    for r in &outline_rings[1..] {
        if let Some(&q) = r.first()
            && body.contains(&geo::Point::new(q.x, q.y))
        {
            return Some(violation(q, "a cut-out inside the copper".into()));
        }
    }
    None
}

/// copper to edge, drills (size, annular ring, pads, hole gap, inside the outline), mask web and
/// silkscreen. Returns the violations (empty: clean).
pub fn check_board(fab: &FabProfile, art: &Artwork) -> Vec<Violation> {
    check_board_with(fab, art, &Coppers::new(art))
}

/// [`check_board`] reading each layer's copper from `cu` (shared with the board's own rules).
pub(super) fn check_board_with(fab: &FabProfile, art: &Artwork, cu: &Coppers) -> Vec<Violation> {
    let mut out = Vec::new();
    let outline = {
        let mut poly = geo::Polygon::new(ring_ls(&art.profile[0]), vec![]);
        for r in &art.profile[1..] {
            poly.interiors_push(ring_ls(r));
        }
        poly
    };
    let outline_rings: Vec<Vec<Point>> = std::iter::once(outline.exterior())
        .chain(outline.interiors())
        .map(|r| r.coords().map(|c| Point::new(c.x, c.y)).collect())
        .collect();
    // The outline's edges bucketed: a hole's distance to the edge reads only the edges near it.
    let edges = crate::geom::SegmentGrid::new(
        std::iter::once(outline.exterior()).chain(outline.interiors()),
    );
    for (i, l) in art.copper.iter().enumerate() {
        let name = format!("L{}", l.n);
        check_rings(&mut out, &name, &l.regions);
        check_width_space(&mut out, &name, cu.copper(i), fab.min_trace, fab.min_space);
        // Copper to edge: regions and non-connector pads, measured exactly (the nearest
        // approach of every copper edge to every outline edge), with only the artwork grid's
        // snapping as slack.
        // Copper inside a connector pad (a trace that starts under it) is the pad's: exempt.
        let pads: Vec<crate::artwork::Flash> = l
            .flashes
            .iter()
            .filter(|f| f.function == crate::artwork::PadFunction::Connector)
            .copied()
            .collect();
        let trimmed;
        let body = if pads.is_empty() {
            cu.body(i)
        } else {
            use geo::BooleanOps;
            trimmed = cu
                .body(i)
                .difference(&layer_copper(&MultiPolygon(vec![]), &pads));
            &trimmed
        };
        if let Some(v) = copper_to_edge(&outline_rings, &outline, body, fab.copper_to_edge) {
            out.push(Violation {
                rule: Rule::CopperToEdge,
                layer: name.clone(),
                ..v
            });
        }
    }
    // Drills: size, annular ring, hole gap, inside the board.
    for (i, d) in art.drills.iter().enumerate() {
        if d.d < fab.min_drill - slack::NOISE {
            out.push(Violation {
                rule: Rule::MinDrill,
                layer: "drill".into(),
                at: d.at,
                detail: format!("{:.3} mm < {:.3} mm", d.d, fab.min_drill),
            });
        }
        let mut pads = 0;
        for (n, f) in art.pads_round(d) {
            pads += 1;
            let ring = (f.shape.least_width() - fab.ring_hole(d.d, d.plated)) / 2.0;
            if ring < fab.min_annular_ring - slack::NOISE {
                out.push(Violation {
                    rule: Rule::AnnularRing,
                    layer: format!("L{n}"),
                    at: d.at,
                    detail: format!(
                        "{ring:.4} mm < {:.4} mm (from the {} hole)",
                        fab.min_annular_ring,
                        fab.ring_basis.name()
                    ),
                });
            }
        }
        if d.plated && pads < 2 {
            out.push(Violation {
                rule: Rule::PlatedHoleWithoutPads,
                layer: "drill".into(),
                at: d.at,
                detail: format!("pads on {pads} layer(s); a plated hole joins at least 2"),
            });
        }
        for e in &art.drills[i + 1..] {
            let gap_mm = (e.at - d.at).hypot() - (d.d + e.d) / 2.0;
            if gap_mm < fab.min_hole_gap - slack::NOISE {
                out.push(Violation {
                    rule: Rule::HoleToHole,
                    layer: "drill".into(),
                    at: d.at,
                    detail: format!("{gap_mm:.4} mm < {:.4} mm", fab.min_hole_gap),
                });
            }
        }
        let pt = geo::Point::new(d.at.x, d.at.y);
        let keep = d.d / 2.0 + fab.copper_to_edge - slack::GRID;
        if !outline.contains(&pt) || edges.distance_within(d.at, keep) < keep {
            out.push(Violation {
                rule: Rule::HoleInsideOutline,
                layer: "drill".into(),
                at: d.at,
                detail: "hole outside the board or too near its edge".into(),
            });
        }
    }
    // Mask web between openings.
    for (openings, name) in [
        (&art.mask_top, "mask-top"),
        (&art.mask_bottom, "mask-bottom"),
    ] {
        for (i, a) in openings.iter().enumerate() {
            for bb in &openings[i + 1..] {
                let d = Euclidean.distance(&flash_polygon(a), &flash_polygon(bb));
                if d < fab.mask_web - slack::GRID {
                    out.push(Violation {
                        rule: Rule::MaskWeb,
                        layer: name.into(),
                        at: a.at,
                        detail: format!("{d:.4} mm < {:.4} mm", fab.mask_web),
                    });
                }
            }
        }
    }
    // Silkscreen off the pads.
    for (strokes, openings, name) in [
        (&art.silk_top, &art.mask_top, "legend-top"),
        (&art.silk_bottom, &art.mask_bottom, "legend-bottom"),
    ] {
        for st in strokes.iter() {
            // Boxes round the ink and each opening, grown past their polygons' flattened arcs
            // (by a whole silk width and 0.1 mm): an opening whose box is as far from the ink's
            // as the rule asks is farther from the ink itself, and is passed over unmeasured.
            let grow = art.silk_width + 0.1;
            let (mut x0, mut y0, mut x1, mut y1) = (f64::MAX, f64::MAX, f64::MIN, f64::MIN);
            for q in st {
                (x0, y0, x1, y1) = (x0.min(q.x), y0.min(q.y), x1.max(q.x), y1.max(q.y));
            }
            let mut ink = None;
            for o in openings.iter() {
                let (hw, hh) = match o.shape {
                    crate::artwork::Shape::Circle(d) => (d.abs() / 2.0, d.abs() / 2.0),
                    crate::artwork::Shape::Rect(w, h) => (w.abs() / 2.0, h.abs() / 2.0),
                };
                let gap_x = (o.at.x - hw - x1).max(x0 - o.at.x - hw) - 2.0 * grow;
                let gap_y = (o.at.y - hh - y1).max(y0 - o.at.y - hh) - 2.0 * grow;
                if gap_x.max(gap_y) >= fab.silk_to_pad {
                    continue;
                }
                let ink = ink.get_or_insert_with(|| stroke_round(st, art.silk_width / 2.0));
                let d = Euclidean.distance(&*ink, &MultiPolygon(vec![flash_polygon(o)]));
                if d < fab.silk_to_pad - slack::GRID {
                    out.push(Violation {
                        rule: Rule::SilkOnPad,
                        layer: name.into(),
                        at: st[0],
                        detail: format!("{d:.4} mm from a pad opening < {:.4} mm", fab.silk_to_pad),
                    });
                }
            }
            for q in st {
                let pt = geo::Point::new(q.x, q.y);
                if !outline.contains(&pt) {
                    out.push(Violation {
                        rule: Rule::SilkOffBoard,
                        layer: name.into(),
                        at: *q,
                        detail: "stroke outside the outline".into(),
                    });
                    break;
                }
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::geom::rect;

    fn rings(p: &geo::Polygon<f64>) -> Vec<Vec<Point>> {
        rings_of(&MultiPolygon(vec![p.clone()]))
    }

    // A 20 × 10 mm board with a 4 × 4 mm cut-out at (12..16, 3..7), copper to edge 0.3 mm.
    fn board() -> geo::Polygon<f64> {
        let mut b = rect(0.0, 0.0, 20.0, 10.0);
        b.interiors_push(rect(12.0, 3.0, 16.0, 7.0).exterior().clone());
        b
    }

    fn check(copper: geo::Polygon<f64>) -> Option<Violation> {
        check_at(copper, 0.3)
    }

    fn check_at(copper: geo::Polygon<f64>, cte: f64) -> Option<Violation> {
        let b = board();
        copper_to_edge(&rings(&b), &b, &MultiPolygon(vec![copper]), cte)
    }

    // A rule of 0 mm still refuses copper that crosses or touches the edge (the limit, 0 less
    // the grid's slack, is below any distance), and passes copper clear of it.
    #[test]
    fn copper_across_the_edge_fails_a_rule_of_zero() {
        let v = check_at(rect(0.5, 0.5, 25.0, 9.5), 0.0).expect("across the right edge");
        assert!(v.detail.starts_with("0.0000 mm"), "{}", v.detail);
        assert!(
            check_at(rect(-1.0, 0.5, 11.5, 9.5), 0.0).is_some(),
            "across the left"
        );
        assert!(
            check_at(rect(0.0, 0.5, 11.5, 9.5), 0.0).is_some(),
            "on the edge"
        );
        assert!(check_at(rect(0.01, 0.5, 11.5, 9.5), 0.0).is_none());
    }

    #[test]
    fn copper_to_edge_measures_the_nearest_approach_and_finds_whole_rings() {
        // Clear of every edge by 0.5 mm: clean.
        assert!(check(rect(0.5, 0.5, 11.5, 9.5)).is_none());
        // 0.2 mm from the left edge, along a whole side (no vertex of either ring is nearer
        // than another: the edges' approach is what counts).
        let v = check(rect(0.2, 0.5, 11.5, 9.5)).expect("0.2 mm from the left edge");
        assert!(
            v.detail.starts_with("0.2000 mm < 0.3000 mm"),
            "{}",
            v.detail
        );
        assert!((v.at.x - 0.2).abs() < 1e-12);
        // 0.1 mm from the cut-out's left side.
        let v = check(rect(0.5, 0.5, 11.9, 9.5)).expect("0.1 mm from the cut-out");
        assert!(v.detail.starts_with("0.1000 mm"), "{}", v.detail);
        // Wholly outside the board, far from it.
        let v = check(rect(30.0, 0.0, 40.0, 10.0)).expect("outside the board");
        assert_eq!(v.detail, "copper outside the board");
        // A copper plane round the cut-out, clear of the outline by 0.5 mm but not of the
        // cut-out, which lies inside it.
        let v = check(rect(0.5, 0.5, 19.5, 9.5)).expect("round the cut-out");
        assert_eq!(v.detail, "a cut-out inside the copper");
    }
}
