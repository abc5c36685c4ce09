//! Design-rule check on the artwork as emitted (nm-snapped regions, flashes, strokes, drills and
//! outline), against the fab profile and the probe's own rules.
//!
//! Width and spacing use one boundary test: for every pair of copper boundary segments closer
//! than the larger of the two limits (pairs on the same ring that are close *along* the ring are
//! corners, not features, and are skipped), the midpoint between their closest points is tested:
//! inside copper means a neck narrower than the minimum trace, outside means a space narrower
//! than the minimum space.

use crate::artwork::{Artwork, Flash, PadFunction, Shape};
use crate::geom::TOL;
use crate::geom::{Board, circle, rect, stroke_round};
use crate::model::fab::FabProfile;
use crate::model::probe::Probe;
use crate::solve::probe::SolvedProbe;
use geo::{Area, BooleanOps, Contains, Coord, Distance, Euclidean, LineString, MultiPolygon};
use kurbo::Point;
use std::fmt;

/// One rule violation.
#[derive(Debug, Clone, PartialEq)]
pub struct Violation {
    /// The rule broken.
    pub rule: &'static str,
    /// The layer (file) where it is.
    pub layer: String,
    /// Where, mm.
    pub at: Point,
    /// What was measured against what was required.
    pub detail: String,
}

impl fmt::Display for Violation {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "{} on {} at ({:.3}, {:.3}) mm: {}",
            self.rule, self.layer, self.at.x, self.at.y, self.detail
        )
    }
}

/// A flash as a polygon.
pub fn flash_polygon(fl: &Flash) -> geo::Polygon<f64> {
    match fl.shape {
        Shape::Circle(d) => circle(fl.at, d / 2.0),
        Shape::Rect(w, h) => rect(
            fl.at.x - w / 2.0,
            fl.at.y - h / 2.0,
            fl.at.x + w / 2.0,
            fl.at.y + h / 2.0,
        ),
    }
}

/// A layer's copper without its connector pads (which may reach the board edge).
fn body_copper(l: &crate::artwork::CopperLayer) -> MultiPolygon<f64> {
    let others: Vec<Flash> = l
        .flashes
        .iter()
        .filter(|f| f.function != PadFunction::Connector)
        .copied()
        .collect();
    layer_copper(&l.regions, &others)
}

/// A layer's copper: regions ∪ flashes.
pub fn layer_copper(regions: &MultiPolygon<f64>, flashes: &[Flash]) -> MultiPolygon<f64> {
    let pads = MultiPolygon(flashes.iter().map(flash_polygon).collect());
    if pads.0.is_empty() {
        return regions.clone();
    }
    // Union pads one by one with the regions: pads may overlap each other.
    let mut u = regions.clone();
    for p in pads.0 {
        u = u.union(&MultiPolygon(vec![p]));
    }
    u
}

struct Seg {
    a: Point,
    b: Point,
    ring: usize,
    s0: f64,
    k: usize,
    nseg: usize,
}

fn rings_of(m: &MultiPolygon<f64>) -> Vec<Vec<Point>> {
    let mut out = Vec::new();
    for p in &m.0 {
        for r in std::iter::once(p.exterior()).chain(p.interiors()) {
            out.push(r.coords().map(|c| Point::new(c.x, c.y)).collect());
        }
    }
    out
}

fn segments(rings: &[Vec<Point>]) -> (Vec<Seg>, Vec<f64>) {
    let mut segs = Vec::new();
    let mut lens = Vec::new();
    for (ri, r) in rings.iter().enumerate() {
        let mut s = 0.0;
        let nseg = r.len().saturating_sub(1);
        for (k, w) in r.windows(2).enumerate() {
            segs.push(Seg {
                a: w[0],
                b: w[1],
                ring: ri,
                s0: s,
                k,
                nseg,
            });
            s += (w[1] - w[0]).hypot();
        }
        lens.push(s);
    }
    (segs, lens)
}

/// Closest points between two segments: (distance, t on first, u on second).
fn seg_seg(a: Point, b: Point, c: Point, d: Point) -> (f64, f64, f64) {
    let mut best = (f64::INFINITY, 0.0, 0.0);
    let proj = |p: Point, a: Point, b: Point| -> f64 {
        let ab = b - a;
        let l2 = ab.hypot2();
        if l2 == 0.0 {
            0.0
        } else {
            ((p - a).dot(ab) / l2).clamp(0.0, 1.0)
        }
    };
    for (t, u) in [
        (0.0, proj(a, c, d)),
        (1.0, proj(b, c, d)),
        (proj(c, a, b), 0.0),
        (proj(d, a, b), 1.0),
    ] {
        let p = a + (b - a) * t;
        let q = c + (d - c) * u;
        let dist = (p - q).hypot();
        if dist < best.0 {
            best = (dist, t, u);
        }
    }
    // Proper crossing.
    let cross = |o: Point, p: Point, q: Point| (p - o).cross(q - o);
    let (d1, d2) = (cross(a, b, c), cross(a, b, d));
    let (d3, d4) = (cross(c, d, a), cross(c, d, b));
    if d1 * d2 < 0.0 && d3 * d4 < 0.0 {
        let t = d3 / (d3 - d4);
        let u = d1 / (d1 - d2);
        return (0.0, t, u);
    }
    best
}

/// Pairs of segments whose bounding boxes, grown by `grow`, overlap (sweep over x).
fn near_pairs(segs: &[Seg], grow: f64) -> Vec<(usize, usize)> {
    let mut idx: Vec<usize> = (0..segs.len()).collect();
    let xmin = |s: &Seg| s.a.x.min(s.b.x);
    let xmax = |s: &Seg| s.a.x.max(s.b.x);
    idx.sort_by(|&i, &j| xmin(&segs[i]).partial_cmp(&xmin(&segs[j])).unwrap());
    let mut out = Vec::new();
    for (k, &i) in idx.iter().enumerate() {
        let si = &segs[i];
        let (ylo, yhi) = (si.a.y.min(si.b.y) - grow, si.a.y.max(si.b.y) + grow);
        for &j in &idx[k + 1..] {
            let sj = &segs[j];
            if xmin(sj) > xmax(si) + grow {
                break;
            }
            if sj.a.y.max(sj.b.y) < ylo || sj.a.y.min(sj.b.y) > yhi {
                continue;
            }
            out.push((i.min(j), i.max(j)));
        }
    }
    out
}

/// Checks that every ring is closed and simple (no self-intersection or self-touch).
fn check_rings(out: &mut Vec<Violation>, layer: &str, m: &MultiPolygon<f64>) {
    let rings = rings_of(m);
    for r in &rings {
        if r.len() < 4 || r.first() != r.last() {
            out.push(Violation {
                rule: "region not closed",
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
        if d < 1e-7 {
            out.push(Violation {
                rule: "region not simple",
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
    for (i, j) in near_pairs(&segs, dmax) {
        let (a, b) = (&segs[i], &segs[j]);
        let (d, t, u) = seg_seg(a.a, a.b, b.a, b.b);
        if d >= dmax - 1e-6 || d < 1e-9 {
            continue;
        }
        if a.ring == b.ring {
            let pa = a.s0 + t * (a.b - a.a).hypot();
            let pb = b.s0 + u * (b.b - b.a).hypot();
            let along = (pa - pb).abs();
            let along = along.min(lens[a.ring] - along);
            if along < 2.5 * dmax {
                continue;
            }
        }
        let p = a.a + (a.b - a.a) * t;
        let q = b.a + (b.b - b.a) * u;
        let m = p.midpoint(q);
        let inside = copper.contains(&geo::Point::new(m.x, m.y));
        let (rule, limit) = if inside {
            ("minimum trace width", min_w)
        } else {
            ("minimum space", min_s)
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

fn ring_ls(pts: &[Point]) -> LineString<f64> {
    LineString::from(
        pts.iter()
            .map(|p| Coord { x: p.x, y: p.y })
            .collect::<Vec<_>>(),
    )
}

/// The checks every board gets (probe or fixture): closed simple contours, width and space,
/// copper to edge, drills (size, annular ring, pads, hole gap, inside the outline), mask web and
/// silkscreen. Returns the violations (empty: clean).
pub fn check_board(fab: &FabProfile, art: &Artwork) -> Vec<Violation> {
    let mut out = Vec::new();
    let outline = {
        let mut poly = geo::Polygon::new(ring_ls(&art.profile[0]), vec![]);
        for r in &art.profile[1..] {
            poly.interiors_push(ring_ls(r));
        }
        poly
    };
    let edge = |pt: &geo::Point<f64>| -> f64 {
        std::iter::once(outline.exterior())
            .chain(outline.interiors())
            .map(|r| Euclidean.distance(pt, r))
            .fold(f64::INFINITY, f64::min)
    };
    for l in &art.copper {
        let name = format!("L{}", l.n);
        check_rings(&mut out, &name, &l.regions);
        let copper = layer_copper(&l.regions, &l.flashes);
        check_width_space(&mut out, &name, &copper, fab.min_trace, fab.min_space);
        // Copper to edge: regions and non-connector pads.
        let body = body_copper(l);
        for poly in &body.0 {
            for c in poly.exterior().coords() {
                let pt = geo::Point::new(c.x, c.y);
                let inside = outline.contains(&pt);
                let d = edge(&pt);
                if !inside || d < fab.copper_to_edge - TOL {
                    out.push(Violation {
                        rule: "copper to edge",
                        layer: name.clone(),
                        at: Point::new(c.x, c.y),
                        detail: format!("{d:.4} mm < {:.4} mm", fab.copper_to_edge),
                    });
                    break;
                }
            }
        }
    }
    // Drills: size, annular ring, hole gap, inside the board.
    for (i, d) in art.drills.iter().enumerate() {
        if d.d < fab.min_drill - 1e-9 {
            out.push(Violation {
                rule: "minimum drill",
                layer: "drill".into(),
                at: d.at,
                detail: format!("{:.3} mm < {:.3} mm", d.d, fab.min_drill),
            });
        }
        let mut pads = 0;
        for l in &art.copper {
            for f in l.flashes.iter().filter(|f| (f.at - d.at).hypot() < 1e-6) {
                pads += 1;
                let dia = match f.shape {
                    Shape::Circle(x) => x,
                    Shape::Rect(w, h) => w.min(h),
                };
                let ring = (dia - d.d) / 2.0;
                if ring < fab.min_annular_ring - 1e-9 {
                    out.push(Violation {
                        rule: "annular ring",
                        layer: format!("L{}", l.n),
                        at: d.at,
                        detail: format!("{ring:.4} mm < {:.4} mm", fab.min_annular_ring),
                    });
                }
            }
        }
        if d.plated && pads < 2 {
            out.push(Violation {
                rule: "plated hole without pads",
                layer: "drill".into(),
                at: d.at,
                detail: format!("pads on {pads} layer(s); a plated hole joins at least 2"),
            });
        }
        for e in &art.drills[i + 1..] {
            let gap_mm = (e.at - d.at).hypot() - (d.d + e.d) / 2.0;
            if gap_mm < fab.min_hole_gap - 1e-9 {
                out.push(Violation {
                    rule: "hole to hole",
                    layer: "drill".into(),
                    at: d.at,
                    detail: format!("{gap_mm:.4} mm < {:.4} mm", fab.min_hole_gap),
                });
            }
        }
        let pt = geo::Point::new(d.at.x, d.at.y);
        if !outline.contains(&pt) || edge(&pt) < d.d / 2.0 + fab.copper_to_edge - 1e-6 {
            out.push(Violation {
                rule: "hole inside the outline",
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
                if d < fab.mask_web - 1e-6 {
                    out.push(Violation {
                        rule: "mask web",
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
            let ink = stroke_round(st, art.silk_width / 2.0);
            for o in openings.iter() {
                let d = Euclidean.distance(&ink, &MultiPolygon(vec![flash_polygon(o)]));
                if d < fab.silk_to_pad - 1e-6 {
                    out.push(Violation {
                        rule: "silkscreen on a pad",
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
                        rule: "silkscreen off the board",
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

/// Runs every check of a probe board: [`check_board`] and the probe's own rules (no copper
/// inside the loop, the shield gap, via pitch and stitching rows). Returns the violations.
pub fn check(p: &Probe, s: &SolvedProbe, b: &Board, art: &Artwork) -> Vec<Violation> {
    let mut out = check_board(&p.fab, art);
    let Some((gx0, gy0, gx1, gy1)) = art.gap_rect else {
        return out;
    };
    let gap = MultiPolygon(vec![rect(gx0, gy0, gx1, gy1)]);
    let interior = MultiPolygon(vec![b.interior.clone()]);
    for l in &art.copper {
        let name = format!("L{}", l.n);
        let copper = layer_copper(&l.regions, &l.flashes);
        let body = body_copper(l);
        // No copper inside the loop.
        let inside = body.intersection(&interior).unsigned_area();
        if inside > 1e-4 {
            out.push(Violation {
                rule: "copper inside the loop",
                layer: name.clone(),
                at: Point::ZERO,
                detail: format!("{inside:.4} mm² of copper where flux must pass"),
            });
        }
        // The gap.
        let in_gap = copper.intersection(&gap).unsigned_area();
        if l.signal {
            // The trace's own area in the gap: its width times the length of its centreline
            // between the gap's edges (a curved loop crosses on a slant).
            let half = (gx1 - gx0) / 2.0;
            let mut len = 0.0;
            for w in b.trace_path.windows(2) {
                let (a, c) = (w[0], w[1]);
                if a.y < gy0 || c.y < gy0 {
                    continue;
                }
                let (lo, hi) = (a.x.min(c.x), a.x.max(c.x));
                let inside = (hi.min(half) - lo.max(-half)).max(0.0);
                if hi > lo {
                    len += (c - a).hypot() * inside / (hi - lo);
                }
            }
            let allowed = b.trace_width * len * 1.01 + 1e-4;
            if in_gap > allowed || in_gap < 0.5 * allowed {
                out.push(Violation {
                    rule: "gap must hold only the trace",
                    layer: name.clone(),
                    at: Point::new(0.0, 0.5 * (gy0 + gy1)),
                    detail: format!(
                        "{in_gap:.5} mm² of copper in the gap; the trace alone is {:.5} mm²",
                        b.trace_width * len
                    ),
                });
            }
        } else if in_gap > 1e-6 {
            out.push(Violation {
                rule: "gap free of copper",
                layer: name.clone(),
                at: Point::new(0.0, 0.5 * (gy0 + gy1)),
                detail: format!("{in_gap:.6} mm² of copper in the shield gap"),
            });
        }
    }
    for d in &art.drills {
        if d.via {
            let dx = (d.at.x.abs() - gx1).max(0.0);
            let dy = (gy0 - d.at.y).max(d.at.y - gy1).max(0.0);
            if dx.hypot(dy) < p.vias.pad / 2.0 + 1e-6 {
                out.push(Violation {
                    rule: "via in the gap",
                    layer: "drill".into(),
                    at: d.at,
                    detail: "a via stands in or touches the shield gap".into(),
                });
            }
        }
    }
    // Via pitch: every via has a neighbour within the pitch limit, none closer than the fab's.
    let vias: Vec<Point> = art.drills.iter().filter(|d| d.via).map(|d| d.at).collect();
    for (v, nn) in nearest_neighbours(&vias, s.pitch_max, &mut out) {
        // 10 nm: what snapping both vias to the 1 nm grid can take off their distance.
        if nn < s.pitch_min - 1e-5 {
            out.push(Violation {
                rule: "via pitch below the fab minimum",
                layer: "drill".into(),
                at: v,
                detail: format!("nearest via {nn:.3} mm < {:.3} mm", s.pitch_min),
            });
        }
    }
    out.extend(row_coverage(p, s, b, &vias));
    out
}

/// A required row of vias: the path it follows and the stretches it may leave bare.
struct Row {
    name: String,
    path: Vec<Point>,
    /// Arc positions where the row's coverage starts and ends.
    from: f64,
    to: f64,
    /// Points near which a gap is allowed (within the given radius): where the feed and the
    /// short cross the outer row, where the signal via's ring takes over from a fence.
    exempt: Vec<(Point, f64)>,
}

/// Via coverage of every required row from end to end: the loop's inner and outer stitching
/// rows on both halves (from the gap's keep-out to the axis) and the fences on both sides of
/// the feed (from the signal via to where the feed joins the loop). The vias standing on a row
/// (within 0.01 mm of its path) are taken in order along it, with the row's two ends, and no
/// step between consecutive ones may exceed the pitch limit (straight-line distance), outside
/// the row's stated exemptions. A row with missing vias, or none, fails: the nearest-neighbour
/// rule alone cannot see them.
fn row_coverage(p: &Probe, s: &SolvedProbe, b: &Board, vias: &[Point]) -> Vec<Violation> {
    use crate::geom::shape::{arclengths, gap_keep, left_half, point_at, row_start};
    let mut rows = Vec::new();
    let keep = gap_keep(p.gap, p.vias.pad);
    let feed_zone = s.feed_offset + 2.0 * s.fence_offset + s.pitch_max;
    for (off, label) in [(-s.fence_offset, "inner"), (s.fence_offset, "outer")] {
        let half = left_half(&p.shape, off);
        let sl = arclengths(&half);
        let from = row_start(&half, &sl, keep);
        let to = *sl.last().unwrap();
        let bottom = *half.last().unwrap();
        for (side, sign) in [("left", 1.0), ("right", -1.0)] {
            let path: Vec<Point> = half.iter().map(|q| Point::new(sign * q.x, q.y)).collect();
            // The outer row is crossed by the feed and the short at the bottom of the loop.
            let exempt = if off > 0.0 {
                vec![(bottom, feed_zone)]
            } else {
                Vec::new()
            };
            rows.push(Row {
                name: format!("{label} stitching row, {side} half"),
                path,
                from,
                to,
                exempt,
            });
        }
    }
    let feed = &b.trace_path[..=b.entry_index.min(b.trace_path.len() - 1)];
    if feed.len() >= 2 {
        let sv = feed[0];
        let ring =
            s.launch.antipad_d.max(s.launch.barrel_antipad_d) / 2.0 + p.vias.pad + s.pitch_max;
        // Left and right as seen from the connector looking towards the loop (−x and +x).
        for (side, sign) in [("right", -1.0), ("left", 1.0)] {
            let path = crate::geom::offset_round(feed, sign * s.fence_offset, 0.05);
            let to = *arclengths(&path).last().unwrap();
            // Where the feed joins the loop, the outer row's exemption zone continues.
            let join = *feed.last().unwrap();
            rows.push(Row {
                name: format!("feed fence, {side} side"),
                path,
                from: 0.0,
                to,
                exempt: vec![(sv, ring), (join, feed_zone)],
            });
        }
    }
    let mut out = Vec::new();
    for row in &rows {
        let sl = arclengths(&row.path);
        let at: Vec<f64> = vias
            .iter()
            .filter_map(|v| {
                let mut best = (f64::INFINITY, 0.0);
                for (k, w) in row.path.windows(2).enumerate() {
                    let ab = w[1] - w[0];
                    let len2 = ab.hypot2().max(1e-30);
                    let t = ((*v - w[0]).dot(ab) / len2).clamp(0.0, 1.0);
                    let dd = (*v - (w[0] + ab * t)).hypot();
                    if dd < best.0 {
                        best = (dd, sl[k] + t * ab.hypot());
                    }
                }
                (best.0 < 0.01 && best.1 >= row.from - 1e-9 && best.1 <= row.to + 1e-9)
                    .then_some(best.1)
            })
            .collect();
        // The row's stretches outside its exemption zones, each checked from end to end.
        let exempt = |x: f64| {
            let q = point_at(&row.path, &sl, x).0;
            row.exempt.iter().any(|(c, r)| (q - *c).hypot() < *r)
        };
        let h = 0.02;
        let n = ((row.to - row.from) / h).ceil().max(1.0) as usize;
        let mut stretches: Vec<(f64, f64)> = Vec::new();
        let mut open: Option<f64> = None;
        for k in 0..=n {
            let x = row.from + (row.to - row.from) * k as f64 / n as f64;
            match (exempt(x), open) {
                (false, None) => open = Some(x),
                (true, Some(u)) => {
                    stretches.push((u, x));
                    open = None;
                }
                _ => {}
            }
        }
        if let Some(u) = open {
            stretches.push((u, row.to));
        }
        for (u, v) in stretches {
            let mut pos: Vec<f64> = at.iter().copied().filter(|x| *x > u && *x < v).collect();
            pos.push(u);
            pos.push(v);
            pos.sort_by(f64::total_cmp);
            for w in pos.windows(2) {
                let (p0, _) = point_at(&row.path, &sl, w[0]);
                let (q, _) = point_at(&row.path, &sl, w[1]);
                let step = (q - p0).hypot();
                if step > s.pitch_max + 1e-6 {
                    out.push(Violation {
                        rule: "stitching row pitch above the limit",
                        layer: "drill".into(),
                        at: q,
                        detail: format!(
                            "{}: {step:.3} mm without a via (limit {:.3} mm), from ({:.2}, {:.2})",
                            row.name, s.pitch_max, p0.x, p0.y
                        ),
                    });
                }
            }
        }
    }
    out
}

/// Runs every check of a fixture board: [`check_board`], the line's continuity from port to
/// port without touching ground, the keepout (or coplanar gap) along the uniform line, and the
/// stitching pitch. Returns the violations.
pub fn check_fixture(
    f: &crate::model::fixture::Fixture,
    s: &crate::solve::fixture::SolvedFixture,
    b: &crate::geom::fixture::FixtureBoard,
    art: &Artwork,
) -> Vec<Violation> {
    use geo::Intersects;
    let mut out = check_board(&f.fab, art);
    let Some(l) = art.copper.iter().find(|l| l.n == f.line_layer) else {
        return out;
    };
    let name = format!("L{}", l.n);
    let copper = layer_copper(&l.regions, &l.flashes);
    let centres: Vec<Point> = b.pads.iter().filter(|p| p.centre).map(|p| p.at).collect();
    let at = |q: Point| geo::Point::new(q.x, q.y);
    let line_part = copper
        .0
        .iter()
        .find(|poly| poly.intersects(&at(centres[0])));
    match line_part {
        None => out.push(Violation {
            rule: "line continuity",
            layer: name.clone(),
            at: centres[0],
            detail: "no copper at port 1's centre pad".into(),
        }),
        Some(part) => {
            if !part.intersects(&at(centres[1])) {
                out.push(Violation {
                    rule: "line continuity",
                    layer: name.clone(),
                    at: centres[1],
                    detail: "the line from port 1 does not reach port 2".into(),
                });
            }
            let ground_hit = b
                .vias
                .iter()
                .map(|v| v.at)
                .chain(b.pads.iter().filter(|p| !p.centre).map(|p| p.at))
                .find(|q| part.intersects(&at(*q)));
            if let Some(q) = ground_hit {
                out.push(Violation {
                    rule: "line shorted to ground",
                    layer: name.clone(),
                    at: q,
                    detail: "the line's copper reaches a ground pad or via".into(),
                });
            }
            // Keepout along the uniform line.
            let xu = b.uniform_half_length;
            // Strictly inside the uniform part: its ends meet the tapers' own gaps.
            let band = MultiPolygon(vec![rect(-xu + 1e-3, -f.width, xu - 1e-3, f.width)]);
            let ground = MultiPolygon(
                copper
                    .0
                    .iter()
                    .filter(|poly| !std::ptr::eq(*poly, part))
                    .cloned()
                    .collect(),
            )
            .intersection(&band);
            let uniform = rect(-xu, -s.width / 2.0, xu, s.width / 2.0);
            let d = Euclidean.distance(&MultiPolygon(vec![uniform]), &ground);
            if !ground.0.is_empty() && d < s.keepout - 1e-3 {
                out.push(Violation {
                    rule: "ground too near the line",
                    layer: name.clone(),
                    at: Point::ZERO,
                    detail: format!("{d:.4} mm < {:.4} mm", s.keepout),
                });
            }
        }
    }
    // Stitching pitch: every stitching via has a neighbour within the limit.
    let stitch: Vec<Point> = b
        .vias
        .iter()
        .filter(|v| v.role == crate::geom::ViaRole::OuterRow)
        .map(|v| v.at)
        .collect();
    nearest_neighbours(&stitch, s.pitch_max, &mut out);
    out
}

/// Each via with its nearest neighbour's distance; a via whose nearest neighbour is farther than
/// `pitch_max` is reported as a violation.
fn nearest_neighbours(
    vias: &[Point],
    pitch_max: f64,
    out: &mut Vec<Violation>,
) -> Vec<(Point, f64)> {
    let mut all = Vec::with_capacity(vias.len());
    for (i, v) in vias.iter().enumerate() {
        let nn = vias
            .iter()
            .enumerate()
            .filter(|(j, _)| *j != i)
            .map(|(_, w)| (*w - *v).hypot())
            .fold(f64::INFINITY, f64::min);
        if nn > pitch_max + 1e-6 {
            out.push(Violation {
                rule: "via pitch above the limit",
                layer: "drill".into(),
                at: *v,
                detail: format!("nearest via {nn:.3} mm > {pitch_max:.3} mm (λ/N)"),
            });
        }
        all.push((*v, nn));
    }
    all
}
