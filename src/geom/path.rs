//! Walking along paths: equal straight-line steps, steps that end on a path's end, round-joined
//! offsets.

use super::shape::point_at;
use kurbo::{Point, Vec2};

/// The arc position, after `from`, of the first point at straight-line distance `d` from the
/// point at `from` (None when the path ends first, or `d` is not positive).
///
/// Exact, segment by segment: on a straight piece from `a` (inside the circle of radius `d`
/// about the start point p0) towards `b`, |a − p0 + u·(b − a)|² = d² has one root u > 0 (the
/// product of its roots is negative), where the piece leaves the circle; the first piece
/// on which that root is at most 1 holds the point.
pub(super) fn next_at(path: &[Point], s: &[f64], from: f64, d: f64) -> Option<f64> {
    if d.is_nan() || d <= 0.0 || path.len() < 2 {
        return None;
    }
    let p0 = point_at(path, s, from).0;
    // The piece holding `from`: the first vertex beyond it.
    let mut i = s.partition_point(|&x| x <= from).max(1);
    let (mut a, mut t0) = (p0, from);
    while i < path.len() {
        let b = path[i];
        let (v, w) = (b - a, a - p0);
        let vv = v.dot(v);
        if vv > 0.0 {
            let half_b = w.dot(v);
            let c = w.dot(w) - d * d;
            // A later piece starting on or (by rounding) beyond the circle: the point is its
            // start, where the piece before ended.
            if c >= 0.0 {
                return Some(t0);
            }
            let u = (-half_b + (half_b * half_b - vv * c).max(0.0).sqrt()) / vv;
            if u <= 1.0 {
                return Some(t0 + u.max(0.0) * (s[i] - t0));
            }
        }
        (a, t0) = (b, s[i]);
        i += 1;
    }
    None
}

/// `n + 1` arc positions from `from`, each at straight-line distance `d` from the previous.
pub(super) fn walk(path: &[Point], s: &[f64], from: f64, d: f64, n: usize) -> Vec<f64> {
    let mut out = vec![from];
    let mut t = from;
    for _ in 0..n {
        match next_at(path, s, t, d) {
            Some(t1) => {
                out.push(t1);
                t = t1;
            }
            None => break,
        }
    }
    // The last one lands on the end (within the search's precision): put it there.
    if let Some(last) = out.last_mut() {
        let total = *s.last().unwrap();
        if (total - *last).abs() < 1e-6 {
            *last = total;
        }
    }
    out
}

/// How far `n` straight-line steps of `d` from `from` go past the end of the path, mm: the
/// arc position of the last less the path's length when all `n` fit (at most 0), else the
/// straight-line distance the step that ran off still lacked plus `d` for every step not taken
/// (above 0). Continuous and rising in `d` while the straight-line distance from each step's
/// start only grows along the path within a step (the round rows' halves: they turn by 180° at
/// most); on a row that turns back within a step it may jump, and [`steps_to_end`] then finds
/// no step length for that count.
fn overshoot(path: &[Point], s: &[f64], from: f64, d: f64, n: usize) -> f64 {
    let total = *s.last().unwrap();
    let mut t = from;
    for k in 0..n {
        match next_at(path, s, t, d) {
            Some(t1) => t = t1,
            None => {
                let end = *path.last().unwrap();
                let short = d - (end - point_at(path, s, t).0).hypot();
                return short + (n - k - 1) as f64 * d;
            }
        }
    }
    t - total
}

/// The step length for which `n` equal straight-line steps from `from` end exactly at the end of
/// the path (the last within 1e-9 mm short of it).
///
/// The root of [`overshoot`], bracketed from the start and narrowed by the Illinois variant of
/// regula falsi (a secant step inside the bracket; the end kept twice running has its value
/// halved), which takes a handful of walks where bisection took fifty.
pub(super) fn steps_to_end(path: &[Point], s: &[f64], from: f64, n: usize) -> Option<f64> {
    let total = *s.last().unwrap();
    let (mut lo, mut hi) = (1e-4, total - from + 1e-9);
    if hi <= lo || n == 0 {
        return None;
    }
    // Done: short of the end by at most this (the walk then puts the last on the end).
    const SHORT: f64 = 1e-9;
    let f = |d: f64| overshoot(path, s, from, d, n);
    let (mut flo, mut fhi) = (f(lo), f(hi));
    if fhi < -SHORT {
        return None;
    }
    if flo >= -SHORT {
        return (flo <= 0.0).then_some(lo);
    }
    if fhi <= 0.0 {
        return Some(hi);
    }
    let mut kept = 0i8; // +1: `hi` moved last time (`lo` kept), −1: `lo` moved
    for _ in 0..100 {
        let secant = hi - fhi * (hi - lo) / (fhi - flo);
        let mid = if secant > lo && secant < hi {
            secant
        } else {
            0.5 * (lo + hi)
        };
        if mid <= lo || mid >= hi {
            break;
        }
        let fm = f(mid);
        if (-SHORT..=0.0).contains(&fm) {
            return Some(mid);
        }
        if fm > 0.0 {
            (hi, fhi) = (mid, fm);
            if kept == 1 {
                flo *= 0.5;
            }
            kept = 1;
        } else {
            (lo, flo) = (mid, fm);
            if kept == -1 {
                fhi *= 0.5;
            }
            kept = -1;
        }
    }
    // Not settled (an overshoot with a jump, no root): the longest step that falls short, if
    // the walk still puts its last on the end; else none for this count (the caller tries
    // more steps).
    (flo >= -1e-6).then_some(lo)
}

/// The polyline `pts` offset by `d` to its left (negative: right), with round joins of
/// angular step about `max_seg`/|d| on the outside of each bend.
pub(crate) fn offset_round(pts: &[Point], d: f64, max_seg: f64) -> Vec<Point> {
    let mut out = Vec::new();
    let normal = |a: Point, b: Point| {
        let v = b - a;
        let l = v.hypot().max(1e-12);
        Vec2::new(-v.y / l, v.x / l)
    };
    for i in 0..pts.len().saturating_sub(1) {
        let n = normal(pts[i], pts[i + 1]);
        if i > 0 {
            let n0 = normal(pts[i - 1], pts[i]);
            let (a0, a1) = (n0.y.atan2(n0.x), n.y.atan2(n.x));
            let mut da = a1 - a0;
            while da > std::f64::consts::PI {
                da -= std::f64::consts::TAU;
            }
            while da < -std::f64::consts::PI {
                da += std::f64::consts::TAU;
            }
            let k = ((da.abs() * d.abs() / max_seg).ceil() as usize).clamp(1, 64);
            for j in 1..k {
                let a = a0 + da * j as f64 / k as f64;
                out.push(pts[i] + Vec2::new(a.cos(), a.sin()) * d);
            }
        }
        out.push(pts[i] + n * d);
        out.push(pts[i + 1] + n * d);
    }
    out.dedup_by(|a, b| (*a - *b).hypot() < 1e-9);
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::centreline::arclengths;

    /// A brute-force reference for [`next_at`]: march in steps of d/64, then bisect the first
    /// crossing to machine precision.
    fn next_at_marched(path: &[Point], s: &[f64], from: f64, d: f64) -> Option<f64> {
        let total = *s.last().unwrap();
        let p0 = point_at(path, s, from).0;
        let dist = |t: f64| (point_at(path, s, t).0 - p0).hypot();
        let h = d / 64.0;
        let mut t = from;
        while t < total {
            let t1 = (t + h).min(total);
            if dist(t1) >= d {
                let (mut lo, mut hi) = (t, t1);
                for _ in 0..80 {
                    let mid = 0.5 * (lo + hi);
                    if dist(mid) >= d {
                        hi = mid;
                    } else {
                        lo = mid;
                    }
                }
                return Some(hi);
            }
            t = t1;
        }
        None
    }

    /// A quarter circle of radius 10 mm flattened to 200 chords, then a straight run.
    fn bend() -> (Vec<Point>, Vec<f64>) {
        let mut pts: Vec<Point> = (0..=200)
            .map(|k| {
                let a = std::f64::consts::FRAC_PI_2 * k as f64 / 200.0;
                Point::new(10.0 * a.cos(), 10.0 * a.sin())
            })
            .collect();
        pts.push(Point::new(-7.0, 10.0));
        let s = arclengths(&pts);
        (pts, s)
    }

    #[test]
    fn the_exact_step_agrees_with_a_fine_march() {
        let (pts, s) = bend();
        let total = *s.last().unwrap();
        let mut worst: f64 = 0.0;
        for k in 0..40 {
            let from = total * k as f64 / 40.0;
            for d in [0.013, 0.4, 1.7, 6.0] {
                let exact = next_at(&pts, &s, from, d);
                let marched = next_at_marched(&pts, &s, from, d);
                assert_eq!(exact.is_some(), marched.is_some(), "from {from}, d {d}");
                if let (Some(a), Some(b)) = (exact, marched) {
                    worst = worst.max((a - b).abs());
                    // The point found is d from the start, in a straight line.
                    let chord = (point_at(&pts, &s, a).0 - point_at(&pts, &s, from).0).hypot();
                    assert!((chord - d).abs() < 1e-12, "chord {chord} for d {d}");
                }
            }
        }
        assert!(worst < 1e-12, "largest difference {worst} mm");
        assert_eq!(next_at(&pts, &s, 0.0, 0.0), None);
        assert_eq!(next_at(&pts, &s, total, 1.0), None);
    }

    /// Starts on a vertex, and a path with a repeated vertex (a piece of no length).
    #[test]
    fn the_exact_step_starts_on_vertices_and_skips_empty_pieces() {
        let (mut pts, _) = bend();
        pts.insert(100, pts[100]);
        let s = arclengths(&pts);
        for k in [0, 37, 99, 100, 101, 150, 200] {
            let from = s[k];
            for d in [0.05, 0.9, 4.0] {
                let exact = next_at(&pts, &s, from, d);
                let marched = next_at_marched(&pts, &s, from, d);
                match (exact, marched) {
                    (Some(a), Some(b)) => assert!((a - b).abs() < 1e-12, "vertex {k}, d {d}"),
                    (a, b) => assert_eq!(a.is_some(), b.is_some(), "vertex {k}, d {d}"),
                }
            }
        }
    }

    /// A hairpin: out 10 mm, across 1 mm, back 10 mm. A step longer than the crossing can
    /// reach the far side only by jumping: for such counts there is no step length, and none
    /// is returned, never one that stops short of the end.
    #[test]
    fn a_hairpin_gives_no_step_that_stops_short() {
        let pts: Vec<Point> = [(0.0, 0.0), (10.0, 0.0), (10.0, 1.0), (0.0, 1.0)]
            .iter()
            .map(|&(x, y)| Point::new(x, y))
            .collect();
        let s = arclengths(&pts);
        let total = *s.last().unwrap();
        let mut found = 0;
        for n in 1..=40 {
            if let Some(d) = steps_to_end(&pts, &s, 0.0, n) {
                let w = walk(&pts, &s, 0.0, d, n);
                assert_eq!(w.len(), n + 1, "n {n}");
                assert_eq!(*w.last().unwrap(), total, "n {n}");
                found += 1;
            }
        }
        // Counts whose steps are shorter than the crossing have a step length.
        assert!(found >= 20, "{found} counts");
    }

    #[test]
    fn steps_to_end_lands_the_last_step_on_the_end() {
        let (pts, s) = bend();
        let total = *s.last().unwrap();
        for from in [0.0, 3.3, 15.0] {
            for n in [1, 2, 7, 30, 200] {
                let d = steps_to_end(&pts, &s, from, n).expect("a step length");
                let w = walk(&pts, &s, from, d, n);
                assert_eq!(w.len(), n + 1, "from {from}, n {n}");
                assert_eq!(*w.last().unwrap(), total);
                // Any longer step runs off the end before its n-th step.
                let longer = walk(&pts, &s, from, d * (1.0 + 1e-6), n);
                assert!(longer.len() < n + 1 || *longer.last().unwrap() > total - 1e-6);
                assert!(overshoot(&pts, &s, from, d * (1.0 + 1e-6), n) > 0.0);
            }
        }
    }
}
