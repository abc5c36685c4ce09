//! Walking along paths: equal straight-line steps, steps that end on a path's end, round-joined
//! offsets.

use super::shape::point_at;
use kurbo::{Point, Vec2};

/// The arc position, after `from`, of the first point at straight-line distance `d` from the
/// point at `from` (None when the path ends first).
pub(super) fn next_at(path: &[Point], s: &[f64], from: f64, d: f64) -> Option<f64> {
    let total = *s.last().unwrap();
    let p0 = point_at(path, s, from).0;
    let dist = |t: f64| (point_at(path, s, t).0 - p0).hypot();
    // March in small steps to the first crossing, then bisect.
    let h = (d / 16.0).max(1e-4);
    let mut t = from;
    while t < total {
        let t1 = (t + h).min(total);
        if dist(t1) >= d {
            let (mut lo, mut hi) = (t, t1);
            for _ in 0..60 {
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
    // The last one lands on the end (within the bisection's precision): put it there.
    if let Some(last) = out.last_mut() {
        let total = *s.last().unwrap();
        if (total - *last).abs() < 1e-6 {
            *last = total;
        }
    }
    out
}

/// The step length for which `n` equal straight-line steps from `from` end exactly at the end of
/// the path.
pub(super) fn steps_to_end(path: &[Point], s: &[f64], from: f64, n: usize) -> Option<f64> {
    let total = *s.last().unwrap();
    let reach = |d: f64| -> f64 {
        let w = walk(path, s, from, d, n);
        if w.len() == n + 1 {
            w[n]
        } else {
            f64::INFINITY
        }
    };
    let (mut lo, mut hi) = (1e-4, total - from + 1e-9);
    if hi <= lo {
        return None;
    }
    if reach(hi) < total - 1e-6 {
        return None;
    }
    for _ in 0..50 {
        let mid = 0.5 * (lo + hi);
        if reach(mid) >= total - 1e-9 {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    Some(hi)
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
