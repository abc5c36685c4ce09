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
/// radius `r` (a closing: grown, then shrunk, by `r`), never inside the original and mirror
/// symmetric; convex corners and straight edges are kept.
pub fn fillet_internal(exterior: &Polygon<f64>, r: f64) -> Polygon<f64> {
    use geo::Area;
    let m = MultiPolygon(vec![Polygon::new(exterior.exterior().clone(), vec![])]);
    let closed = round_buffer(&round_buffer(&m, r), -r);
    // Only the fillets are added: where the closing merely re-flattens the original's own
    // arcs it leaves slivers of a few nm², whose union would notch the outline.
    let fillets = MultiPolygon(
        closed
            .difference(&m)
            .0
            .into_iter()
            .filter(|p| p.unsigned_area() > 1e-4 * r * r)
            .collect(),
    );
    largest(&symmetrise(&m.union(&fillets)))
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
