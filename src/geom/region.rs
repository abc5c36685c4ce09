//! Region helpers: polygons from points, circles, rectangles, stroked paths, round buffers,
//! mirror symmetrisation.

use super::shape::arc_points;
use super::*;
use geo::{BooleanOps, Coord, LineString, MultiPolygon, Polygon};
use kurbo::Point;

/// A closed polygon from points (the ring is closed by geo).
pub fn polygon(pts: &[Point]) -> Polygon<f64> {
    Polygon::new(
        LineString::from(
            pts.iter()
                .map(|p| Coord { x: p.x, y: p.y })
                .collect::<Vec<_>>(),
        ),
        vec![],
    )
}

/// A circle polygon.
///
/// The vertices start at the top, so a circle on the axis is exactly its own mirror image.
pub fn circle(c: Point, r: f64) -> Polygon<f64> {
    let a0 = std::f64::consts::FRAC_PI_2;
    let mut pts = arc_points(c, r, a0, a0 + std::f64::consts::TAU);
    pts.pop();
    polygon(&pts)
}

/// Distance from `q` to the nearest edge of `m` (its outer rings and holes alike), mm; infinite
/// for an empty region.
pub fn edge_distance(m: &MultiPolygon<f64>, q: Point) -> f64 {
    use geo::{Distance, Euclidean};
    let pt = geo::Point::new(q.x, q.y);
    m.0.iter()
        .flat_map(|p| std::iter::once(p.exterior()).chain(p.interiors()))
        .map(|r| Euclidean.distance(&pt, r))
        .fold(f64::INFINITY, f64::min)
}

/// An axis-aligned rectangle polygon.
pub fn rect(x0: f64, y0: f64, x1: f64, y1: f64) -> Polygon<f64> {
    polygon(&[
        Point::new(x0, y0),
        Point::new(x1, y0),
        Point::new(x1, y1),
        Point::new(x0, y1),
    ])
}

/// The region within `r` of a polyline, with flat (butt) ends and round joins.
pub fn stroke_butt(path: &[Point], r: f64) -> MultiPolygon<f64> {
    use geo::algorithm::buffer::{Buffer, BufferStyle, LineCap, LineJoin};
    let ls = LineString::from(
        path.iter()
            .map(|p| Coord { x: p.x, y: p.y })
            .collect::<Vec<_>>(),
    );
    let step = 2.0 * (1.0 - shape::ARC_TOLERANCE / r).clamp(-1.0, 1.0).acos();
    ls.buffer_with_style(
        BufferStyle::new(r)
            .line_cap(LineCap::Butt)
            .line_join(LineJoin::Round(step.max(0.01))),
    )
}

/// The region within `r` of a polyline, with round ends (a silkscreen stroke).
pub fn stroke_round(path: &[Point], r: f64) -> MultiPolygon<f64> {
    use geo::algorithm::buffer::{Buffer, BufferStyle, LineCap, LineJoin};
    if path.len() == 1 {
        return MultiPolygon(vec![circle(path[0], r)]);
    }
    let ls = LineString::from(
        path.iter()
            .map(|p| Coord { x: p.x, y: p.y })
            .collect::<Vec<_>>(),
    );
    let step = 2.0 * (1.0 - shape::ARC_TOLERANCE / r).clamp(-1.0, 1.0).acos();
    let a = step.max(0.01);
    ls.buffer_with_style(
        BufferStyle::new(r)
            .line_cap(LineCap::Round(a))
            .line_join(LineJoin::Round(a)),
    )
}

/// Grows (d > 0) or shrinks (d < 0) a region with round corners.
pub fn round_buffer(m: &MultiPolygon<f64>, d: f64) -> MultiPolygon<f64> {
    use geo::algorithm::buffer::{Buffer, BufferStyle, LineCap, LineJoin};
    let step = 2.0 * (1.0 - shape::ARC_TOLERANCE / d.abs().max(0.01)).acos();
    m.buffer_with_style(
        BufferStyle::new(d)
            .line_cap(LineCap::Round(step))
            .line_join(LineJoin::Round(step)),
    )
}

/// The left half of a region and its mirror image: offsetting re-flattens curves with vertices
/// that are not mirror images of each other, and this restores exact symmetry about x = 0.
pub fn symmetrise(m: &MultiPolygon<f64>) -> MultiPolygon<f64> {
    let (lo, hi) = match geo::BoundingRect::bounding_rect(m) {
        Some(r) => (r.min(), r.max()),
        None => return m.clone(),
    };
    let big = lo.x.abs().max(hi.x.abs()) + 1.0;
    let left = m.intersection(&MultiPolygon(vec![rect(-big, lo.y - 1.0, 0.0, hi.y + 1.0)]));
    let flip = |ls: &LineString<f64>| -> LineString<f64> {
        LineString::from(
            ls.coords()
                .rev()
                .map(|c| Coord { x: -c.x, y: c.y })
                .collect::<Vec<_>>(),
        )
    };
    let right = MultiPolygon(
        left.0
            .iter()
            .map(|p| Polygon::new(flip(p.exterior()), p.interiors().iter().map(flip).collect()))
            .collect(),
    );
    left.union(&right)
}

/// The outline `exterior` with every internal corner filleted to at least the router bit's
/// radius `r` (a [`closing`]: grown, then shrunk, by `r`), never inside the original and mirror
/// symmetric; convex corners and straight edges are kept.
///
/// The closing is computed in a window round each cluster of reflex corners
/// ([`local_fillets`]), not on the whole outline, whose flattened arcs made it the dearest step
/// of a build; where a corner is too sharp or a fillet reaches its window's edge, on the whole
/// outline as before.
///
/// The result is the left half mirrored (as [`symmetrise`] makes it), so everything is decided
/// on that half: windows wholly right of x = 0, whose fillets would be cut away, are not
/// computed, and do not ask for the whole outline's closing (on a probe's outline, symmetric
/// to about 15 nm, the overlay's grid after `geom::probe`'s clip by a 2·10⁴ mm rectangle, each
/// is the mirror image of a window on the left).
pub fn fillet_internal(exterior: &Polygon<f64>, r: f64) -> Polygon<f64> {
    let p = Polygon::new(exterior.exterior().clone(), vec![]);
    let fillets = local_fillets(&p, r, true).unwrap_or_else(|| closing_fillets(&p, r));
    largest(&symmetrise(&MultiPolygon(vec![p]).union(&fillets)))
}

/// A piece a closing by r adds is a fillet when its area passes this many r² (smaller ones are
/// the slivers where the closing merely re-flattens the outline's own arcs; their union would
/// notch it).
const FILLET_MIN_AREA: f64 = 1e-4;

/// What a closing by `r` adds to `p`: the fillets, without the slivers
/// ([`FILLET_MIN_AREA`]).
fn closing_fillets(p: &Polygon<f64>, r: f64) -> MultiPolygon<f64> {
    use geo::Area;
    let m = MultiPolygon(vec![p.clone()]);
    let closed = closing(&m, r);
    MultiPolygon(
        closed
            .difference(&m)
            .0
            .into_iter()
            .filter(|q| q.unsigned_area() > FILLET_MIN_AREA * r * r)
            .collect(),
    )
}

/// [`closing_fillets`] computed in windows: a closing by `r` at a point depends only on the
/// region within 2r of it, so in a box W it is the closing of `p` clipped to W grown by 2r,
/// clipped back to W. The outline of a union of convex parts grown by a distance (every
/// probe's: a convex head and a handle, closed and grown by the copper-to-edge rule) gains
/// from a closing only at its reflex corners, where the parts meet. (In general a closing also
/// fills a neck narrower than 2r between convex stretches, a C's mouth, with no reflex corner
/// near: such an outline is outside this function's use.) Each reflex corner gets a box
/// reaching r·(1.2 + 1.1·tan(δ/2)) from it (δ its turn; a fillet touches the edges of a
/// straight corner r·tan(δ/2) from it), overlapping boxes are merged, and every
/// piece the closing adds must lie strictly inside its box: a piece that reaches the box's edge
/// may go on beyond it (a notch narrower than 2r), and then `None` asks for the closing of the
/// whole. `None` too for a corner sharper than tan(δ/2) = 8. With `left_only`, windows wholly
/// right of x = 0 are skipped (for a mirror-symmetric outline whose right half is discarded).
/// Each window's outline is simplified to the arc tolerance before its closing (see the body):
/// the fillets may come out up to that tolerance (0.5 µm) tighter than the whole closing's,
/// for a tenth of the work on the demo's probes.
fn local_fillets(p: &Polygon<f64>, r: f64, left_only: bool) -> Option<MultiPolygon<f64>> {
    use geo::{Area, BoundingRect, Simplify};
    let ring = &p.exterior().0;
    let pts = &ring[..ring.len().saturating_sub(1)];
    let n = pts.len();
    if n < 3 || r <= 0.0 {
        return None;
    }
    let ccw = p.signed_area() > 0.0;
    // Every arc here is flattened to `ARC_TOLERANCE`, so a concave arc of radius ρ turns by
    // 2·acos(1 − tol/ρ) ≈ 2·√(2·tol/ρ) at each vertex (more where its sweep is split into
    // whole steps): one of radius up to 4r (a closing by r fills only those up to r) by at
    // least twice this much. A lone smaller turn (where two arcs meet
    // nearly tangent, or the rounding of a mirror image) would add at most r²·δ³/24, far below
    // the sliver filter.
    let min_turn = 0.5 * (2.0 * shape::ARC_TOLERANCE / r).sqrt();
    let mut boxes: Vec<[f64; 4]> = Vec::new();
    for i in 0..n {
        let (a, b, c) = (pts[(i + n - 1) % n], pts[i], pts[(i + 1) % n]);
        let (u, v) = (b - a, c - b);
        let turn = (u.x * v.y - u.y * v.x).atan2(u.x * v.x + u.y * v.y);
        let reflex = if ccw { -turn } else { turn };
        if reflex < min_turn {
            continue;
        }
        let t = (reflex / 2.0).tan();
        if !(0.0..=8.0).contains(&t) {
            return None;
        }
        let h = r * (1.2 + 1.1 * t);
        boxes.push([b.x - h, b.y - h, b.x + h, b.y + h]);
    }
    // Merge overlapping boxes until none overlap.
    let overlap =
        |a: &[f64; 4], b: &[f64; 4]| a[0] <= b[2] && b[0] <= a[2] && a[1] <= b[3] && b[1] <= a[3];
    let mut merged = true;
    while merged {
        merged = false;
        'pairs: for i in 0..boxes.len() {
            for j in i + 1..boxes.len() {
                if overlap(&boxes[i], &boxes[j]) {
                    let b = boxes.swap_remove(j);
                    let a = &mut boxes[i];
                    *a = [
                        a[0].min(b[0]),
                        a[1].min(b[1]),
                        a[2].max(b[2]),
                        a[3].max(b[3]),
                    ];
                    merged = true;
                    break 'pairs;
                }
            }
        }
    }
    if left_only {
        boxes.retain(|w| w[0] < 0.0);
    }
    let m = MultiPolygon(vec![p.clone()]);
    let mut pieces = Vec::new();
    for w in boxes {
        let g = 2.1 * r;
        let local = m.intersection(&MultiPolygon(vec![rect(
            w[0] - g,
            w[1] - g,
            w[2] + g,
            w[3] + g,
        )]));
        // The closing of the window's outline simplified first (Ramer–Douglas–Peucker to the
        // arc tolerance, the outline's own flattening): its convex arcs, flattened finely,
        // come in as runs of chords far shorter than r, where the shrink's offset bands
        // overlap by the dozen and cost the overlay ten times the work. The simplified outline
        // lies within that tolerance of the window's (inside it along convex runs, the probes'
        // outlines' arcs; the reflex corners stay), so a fillet's edge moves by at most the
        // tolerance: what lies between the chords and a convex run is in the window's own
        // outline, taken off below, and a chord outside a concave run adds at most a sliver
        // that joins a fillet or falls under the area filter.
        let closed = closing(&local.simplify(shape::ARC_TOLERANCE), r);
        let added = closed
            .difference(&local)
            .intersection(&MultiPolygon(vec![rect(w[0], w[1], w[2], w[3])]));
        let edge = 1e-3 * r;
        for q in added.0 {
            let area = q.unsigned_area();
            let bb = q.bounding_rect()?;
            let at_edge = bb.min().x <= w[0] + edge
                || bb.min().y <= w[1] + edge
                || bb.max().x >= w[2] - edge
                || bb.max().y >= w[3] - edge;
            // What reaches the box's edge may go on beyond it, however small its part inside:
            // unless it is a sliver where the closing re-flattens an arc (thinner on average
            // than 1e-3·r, 1 µm for a 2 mm bit; the flattening's own tolerance is 0.5 µm).
            let thickness = area / bb.width().max(bb.height()).max(f64::MIN_POSITIVE);
            if at_edge && (area > FILLET_MIN_AREA * r * r || thickness > 1e-3 * r) {
                return None;
            }
            if area > FILLET_MIN_AREA * r * r {
                pieces.push(q);
            }
        }
    }
    Some(MultiPolygon(pieces))
}

/// A cut-out `hole` with every corner rounded to at least the router bit's radius `r` (an
/// opening: shrunk, then grown, by `r`), never outside the original; `None` when the bit does
/// not fit in it.
pub fn router_cut(hole: &Polygon<f64>, r: f64) -> Option<Polygon<f64>> {
    let m = MultiPolygon(vec![hole.clone()]);
    let opened = round_buffer(&round_buffer(&m, -r), r).intersection(&m);
    if opened.0.is_empty() {
        return None;
    }
    Some(largest(&symmetrise(&opened)))
}

/// The closing of a region by `r` (grown, then shrunk): every notch and internal corner
/// narrower than the disc of radius `r` filled, the fillets' arcs at the reflex corners.
///
/// Grown with sharp (mitred) corners, not round ones: the shrink that follows takes sharp
/// convex corners back to the original's, where a round grow's arcs (of the very radius the
/// shrink takes off) collapse to points, the dearest case of the offset's overlay (a hundred
/// times the work). Between a flattened arc's chords the mitred grow stands out beyond the
/// round one by at most r·δ²/8 = r·tol/ρ (δ the chord's turn, ρ the arc's radius, tol the
/// flattening's): about 1.7 µm for the fillets of a 2 mm bit on an outline's 0.3 mm corner
/// arcs. The closing can only come out that much larger, which keeps the board further from
/// its copper and the fillet no tighter than the bit.
pub fn closing(m: &MultiPolygon<f64>, r: f64) -> MultiPolygon<f64> {
    round_buffer(&miter_buffer(m, r), -r)
}

/// Grows a region by `d` with sharp (mitred) corners, cut where a corner is sharper than 0.3 rad.
fn miter_buffer(m: &MultiPolygon<f64>, d: f64) -> MultiPolygon<f64> {
    use geo::algorithm::buffer::{Buffer, BufferStyle, LineCap, LineJoin};
    m.buffer_with_style(
        BufferStyle::new(d)
            .line_cap(LineCap::Butt)
            .line_join(LineJoin::Miter(0.3)),
    )
}

/// The largest polygon of a set.
pub(super) fn largest(m: &MultiPolygon<f64>) -> Polygon<f64> {
    use geo::Area;
    m.0.iter()
        .max_by(|a, b| a.unsigned_area().total_cmp(&b.unsigned_area()))
        .cloned()
        .expect("a non-empty region")
}

pub(super) fn dedup(v: &mut Vec<Point>) {
    v.dedup_by(|a, b| (*a - *b).hypot() < 1e-9);
}

#[cfg(test)]
mod fillet_tests {
    use super::*;
    use geo::Area;

    /// The windowed closing against the closing of the whole outline (the construction it
    /// replaces) on a ring-and-handle outline, a T and a slot narrower than the bit (which
    /// must fall back to the whole): the same fillets, to a few µm² of area.
    #[test]
    fn windowed_fillets_match_the_whole_closing() {
        let r = 0.5;
        let ring = circle(Point::new(0.0, 10.0), 6.0);
        let handle = rect(-2.0, -20.0, 2.0, 5.0);
        let outlines = [
            largest(&MultiPolygon(vec![ring]).union(&MultiPolygon(vec![handle]))),
            // A T: the stem meets the bar in two right-angled internal corners.
            polygon(&[
                Point::new(-2.0, -10.0),
                Point::new(2.0, -10.0),
                Point::new(2.0, 5.0),
                Point::new(8.0, 5.0),
                Point::new(8.0, 8.0),
                Point::new(-8.0, 8.0),
                Point::new(-8.0, 5.0),
                Point::new(-2.0, 5.0),
            ]),
            // A slot 0.6 mm wide and 8 mm deep: the closing fills all of it.
            polygon(&[
                Point::new(-5.0, 0.0),
                Point::new(5.0, 0.0),
                Point::new(5.0, 10.0),
                Point::new(0.3, 10.0),
                Point::new(0.3, 2.0),
                Point::new(-0.3, 2.0),
                Point::new(-0.3, 10.0),
                Point::new(-5.0, 10.0),
            ]),
        ];
        for (k, o) in outlines.iter().enumerate() {
            let whole = closing_fillets(o, r).unsigned_area();
            let local = local_fillets(o, r, false).map(|f| f.unsigned_area());
            assert!(whole > 1e-3, "outline {k}: the closing adds fillets");
            if k == 2 {
                assert_eq!(local, None, "the slot reaches beyond its window");
            } else {
                let local = local.expect("windowed");
                assert!(
                    (local - whole).abs() < 1e-5,
                    "outline {k}: {local} vs {whole} mm²"
                );
            }
            let a = fillet_internal(o, r).unsigned_area();
            assert!((a - o.unsigned_area() - whole).abs() < 1e-5, "outline {k}");
        }
    }

    /// As [`windowed_fillets_match_the_whole_closing`] on an outline grown with round joins as
    /// `geom::probe::outline_around` grows the shield's (arcs flattened finely, so the windows'
    /// simplification removes vertices): the windowed fillets' area is the whole closing's
    /// within the tolerance times the fillets' perimeter.
    #[test]
    fn simplified_windows_match_the_whole_closing_within_the_tolerance() {
        use geo::{Euclidean, Length};
        let r = 1.0;
        let ring = circle(Point::new(0.0, 10.0), 10.0);
        let handle = rect(-4.0, -30.0, 4.0, 0.5);
        let joined = largest(&MultiPolygon(vec![ring]).union(&MultiPolygon(vec![handle])));
        let grown = largest(&round_buffer(&MultiPolygon(vec![joined]), 0.3));
        let whole = closing_fillets(&grown, r);
        let local = local_fillets(&grown, r, false).expect("windowed");
        let perimeter: f64 = whole.0.iter().map(|p| Euclidean.length(p.exterior())).sum();
        let (a, b) = (whole.unsigned_area(), local.unsigned_area());
        assert!(a > 0.05, "the closing adds fillets: {a} mm²");
        assert!(
            (a - b).abs() <= shape::ARC_TOLERANCE * perimeter + 1e-6,
            "{b} against {a} mm² (perimeter {perimeter} mm)"
        );
        // The simplification did something: the window's outline had vertices to drop.
        use geo::Simplify;
        let n = |m: &MultiPolygon<f64>| m.0.iter().map(|p| p.exterior().0.len()).sum::<usize>();
        let g = MultiPolygon(vec![grown.clone()]);
        let (before, after) = (n(&g), n(&g.simplify(shape::ARC_TOLERANCE)));
        assert!(3 * after < 2 * before, "{after} of {before} vertices");
    }

    /// On a mirror-symmetric outline the left windows alone give the same filleted outline, to
    /// the bit, as every window.
    #[test]
    fn left_windows_give_the_same_outline() {
        // A large ring on a narrow handle (a window round each corner, the right one skipped),
        // and a small ring on a wide handle (the two corners' windows merge across the axis,
        // and that window is kept).
        for (radius, half_handle, r, skipped) in [(6.0, 2.0, 0.5, true), (3.0, 1.5, 1.0, false)] {
            let ring = circle(Point::new(0.0, 10.0), radius);
            let handle = rect(-half_handle, -20.0, half_handle, 10.0 - 0.6 * radius);
            let joined = largest(&symmetrise(
                &MultiPolygon(vec![ring]).union(&MultiPolygon(vec![handle])),
            ));
            let all = local_fillets(&joined, r, false).expect("windowed");
            let left = local_fillets(&joined, r, true).expect("windowed");
            assert_eq!(left.0.len() < all.0.len(), skipped, "ring {radius} mm");
            let every = largest(&symmetrise(&MultiPolygon(vec![joined.clone()]).union(&all)));
            assert_eq!(fillet_internal(&joined, r), every, "ring {radius} mm");
        }
    }
}
