//! Loop centreline curves and their offsets, built so that the right half is the exact mirror
//! of the left half (x → −x), which keeps the artwork symmetric to the last nanometre.

use crate::model::probe::LoopShape;
use kurbo::{Arc, ParamCurve, Point, Vec2};
use std::f64::consts::{FRAC_PI_2, PI};

/// Flattening tolerance for arcs, mm (0.5 µm).
pub const ARC_TOLERANCE: f64 = 0.0005;

/// Points of a circular arc from angle `a0` to `a1` (radians, counter-clockwise positive),
/// endpoints included, with chord error at most [`ARC_TOLERANCE`].
pub fn arc_points(c: Point, r: f64, a0: f64, a1: f64) -> Vec<Point> {
    if r <= 0.0 {
        return vec![c];
    }
    let sweep = a1 - a0;
    let step = 2.0 * (1.0 - ARC_TOLERANCE / r).clamp(-1.0, 1.0).acos();
    let n = ((sweep.abs() / step.max(1e-3)).ceil() as usize).max(1);
    let arc = Arc::new(c, Vec2::new(r, r), a0, sweep, 0.0);
    (0..=n).map(|i| arc.eval(i as f64 / n as f64)).collect()
}

fn push_dedup(v: &mut Vec<Point>, pts: impl IntoIterator<Item = Point>) {
    for p in pts {
        if v.last().is_none_or(|q| (*q - p).hypot() > 1e-9) {
            v.push(p);
        }
    }
}

/// The left half of the centreline offset by `off` (outward positive): from the top point on the
/// axis, counter-clockwise through the left side, to the bottom point on the axis.
pub fn left_half(shape: &LoopShape, off: f64) -> Vec<Point> {
    let mut v = Vec::new();
    match *shape {
        LoopShape::Round { diameter } => {
            let r = diameter / 2.0 + off;
            push_dedup(&mut v, arc_points(Point::ZERO, r, FRAC_PI_2, 1.5 * PI));
        }
        LoopShape::Rect {
            width,
            height,
            corner_radius,
            ..
        } => {
            let a = width / 2.0 + off;
            let b = height / 2.0 + off;
            let rc = (corner_radius + off).max(0.0).min(a.min(b));
            push_dedup(&mut v, [Point::new(0.0, b), Point::new(-(a - rc), b)]);
            push_dedup(
                &mut v,
                arc_points(Point::new(-(a - rc), b - rc), rc, FRAC_PI_2, PI),
            );
            push_dedup(&mut v, [Point::new(-a, -(b - rc))]);
            push_dedup(
                &mut v,
                arc_points(Point::new(-(a - rc), -(b - rc)), rc, PI, 1.5 * PI),
            );
            push_dedup(&mut v, [Point::new(0.0, -b)]);
        }
    }
    // Exactly on the axis at both ends.
    if let Some(p) = v.first_mut() {
        p.x = 0.0;
    }
    if let Some(p) = v.last_mut() {
        p.x = 0.0;
    }
    v
}

/// Where the left half (from the top, [`left_half`]) crosses x = −`x` on its way back to the
/// axis at the bottom: the index of the segment it crosses in, the fraction along it, and the
/// point. None when the half never reaches that far from the axis.
pub fn crossing_down(left: &[Point], x: f64) -> Option<(usize, f64, Point)> {
    let k = (0..left.len().saturating_sub(1))
        .rev()
        .find(|&i| left[i].x <= -x && left[i + 1].x > -x)?;
    let (a, b) = (left[k], left[k + 1]);
    let t = (-x - a.x) / (b.x - a.x);
    Some((k, t, Point::new(-x, a.y + t * (b.y - a.y))))
}

/// Mirror about the axis.
pub fn mirror(p: Point) -> Point {
    Point::new(-p.x, p.y)
}

/// The whole closed centreline offset by `off`, counter-clockwise, starting at the top (the
/// first point is not repeated at the end).
pub fn closed(shape: &LoopShape, off: f64) -> Vec<Point> {
    let left = left_half(shape, off);
    let mut v = left.clone();
    // Right half: from the bottom back up to the top, mirrored.
    for p in left.iter().rev().skip(1) {
        v.push(mirror(*p));
    }
    v.pop(); // the top point again
    v
}

/// Cumulative arc length along a polyline.
pub fn arclengths(pts: &[Point]) -> Vec<f64> {
    let mut s = vec![0.0];
    for w in pts.windows(2) {
        let last = *s.last().unwrap();
        s.push(last + (w[1] - w[0]).hypot());
    }
    s
}

/// Where a stitching row (a [`left_half`]) leaves the shield gap's keep-out: the arc position
/// of its first point at `x <= -keep` (the row's end when none is).
pub fn row_start(half: &[Point], s: &[f64], keep: f64) -> f64 {
    let total = s.last().copied().unwrap_or(0.0);
    (0..half.len())
        .find(|&i| half[i].x <= -keep)
        .map(|i| {
            if i == 0 {
                0.0
            } else {
                let (a, b) = (half[i - 1], half[i]);
                let t = (-keep - a.x) / (b.x - a.x);
                s[i - 1] + t * (s[i] - s[i - 1])
            }
        })
        .unwrap_or(total)
}

/// The shield gap's keep-out half-width for stitching vias: half the gap, the via's pad
/// radius and 0.1 mm.
pub fn gap_keep(gap: f64, via_pad: f64) -> f64 {
    gap / 2.0 + via_pad / 2.0 + 0.1
}

/// The point at arc length `t` along a polyline, with its unit tangent.
pub fn point_at(pts: &[Point], s: &[f64], t: f64) -> (Point, Vec2) {
    // The first arc position at or beyond t (s is sorted): a binary search, as the via
    // placement calls this many times along long paths.
    let i = match s.partition_point(|&x| x < t) {
        0 => 1,
        i if i >= pts.len() => pts.len() - 1,
        i => i,
    };
    let (a, b) = (pts[i - 1], pts[i]);
    let seg = b - a;
    let len = seg.hypot().max(1e-15);
    let f = ((t - s[i - 1]) / len).clamp(0.0, 1.0);
    (a + seg * f, seg / len)
}

/// Distance from a point to a polyline.
pub fn dist_to_polyline(p: Point, pts: &[Point]) -> f64 {
    if pts.len() == 1 {
        return (p - pts[0]).hypot();
    }
    pts.windows(2)
        .map(|w| dist_to_segment(p, w[0], w[1]))
        .fold(f64::INFINITY, f64::min)
}

/// Distance from a point to a segment.
pub fn dist_to_segment(p: Point, a: Point, b: Point) -> f64 {
    use kurbo::ParamCurveNearest;
    kurbo::Line::new(a, b).nearest(p, 1e-12).distance_sq.sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn closed_curves_are_symmetric_and_have_the_right_length() {
        for shape in [
            LoopShape::Round { diameter: 10.0 },
            LoopShape::Rect {
                width: 12.0,
                height: 6.0,
                corner_radius: 1.5,
                square: false,
            },
        ] {
            let c = closed(&shape, 0.0);
            for p in &c {
                let m = mirror(*p);
                assert!(c.iter().any(|q| (*q - m).hypot() < 1e-12));
            }
            let mut ring = c.clone();
            ring.push(c[0]);
            let len = *arclengths(&ring).last().unwrap();
            // Flattened length is within the chord error of the exact circumference.
            assert!((len / shape.circumference() - 1.0).abs() < 1e-4, "{len}");
        }
    }
}
