//! Field-by-field checks of a cross-section and the geometric tests they use (distance and
//! overlap of convex quadrilaterals).

use crate::error::{FieldError, fmt_num};
use crate::model::line::{MAX_ER, MAX_LENGTH_MM};

pub(super) fn bad(
    errs: &mut Vec<FieldError>,
    field: String,
    value: impl std::fmt::Display,
    allowed: &str,
) {
    errs.push(FieldError::new(field, value, allowed));
}

pub(super) fn check_len(errs: &mut Vec<FieldError>, field: String, v: f64, zero_ok: bool) {
    let ok = v.is_finite() && v <= MAX_LENGTH_MM && if zero_ok { v >= 0.0 } else { v > 0.0 };
    if !ok {
        let lo = if zero_ok {
            "from 0"
        } else {
            "greater than 0 and"
        };
        errs.push(FieldError::new(
            field,
            fmt_num(v),
            format!("must be a finite length {lo} up to {MAX_LENGTH_MM} mm"),
        ));
    }
}

pub(super) fn check_coord(errs: &mut Vec<FieldError>, field: String, v: f64) {
    if !(v.is_finite() && v.abs() <= MAX_LENGTH_MM) {
        errs.push(FieldError::new(
            field,
            fmt_num(v),
            format!("must be a finite coordinate from -{MAX_LENGTH_MM} to {MAX_LENGTH_MM} mm"),
        ));
    }
}

pub(super) fn check_er(errs: &mut Vec<FieldError>, field: String, v: f64) {
    if !(v.is_finite() && (1.0..=MAX_ER).contains(&v)) {
        errs.push(FieldError::new(
            field,
            fmt_num(v),
            format!("must be a finite relative permittivity from 1 to {MAX_ER}"),
        ));
    }
}

/// Shortest distance between two convex polygons, 0 when they touch or overlap.
pub(super) fn polygon_distance(a: &[(f64, f64); 4], b: &[(f64, f64); 4]) -> f64 {
    if convex_overlap(a, b) {
        return 0.0;
    }
    let mut d = f64::INFINITY;
    for (p, q) in [(a, b), (b, a)] {
        for &v in p.iter() {
            for i in 0..4 {
                d = d.min(point_segment(v, q[i], q[(i + 1) % 4]));
            }
        }
    }
    d
}

pub(crate) fn point_segment(p: (f64, f64), a: (f64, f64), b: (f64, f64)) -> f64 {
    let pt = |q: (f64, f64)| kurbo::Point::new(q.0, q.1);
    crate::model::centreline::dist_to_segment(pt(p), pt(a), pt(b))
}

/// Separating-axis test for two convex quadrilaterals (degenerate ones included).
pub(super) fn convex_overlap(a: &[(f64, f64); 4], b: &[(f64, f64); 4]) -> bool {
    let mut axes = vec![(1.0, 0.0), (0.0, 1.0)];
    for p in [a, b] {
        for i in 0..4 {
            let (dx, dy) = (p[(i + 1) % 4].0 - p[i].0, p[(i + 1) % 4].1 - p[i].1);
            let l = (dx * dx + dy * dy).sqrt();
            if l > 0.0 {
                axes.push((-dy / l, dx / l));
            }
        }
    }
    for (nx, ny) in axes {
        let proj = |p: &[(f64, f64); 4]| {
            let v: Vec<f64> = p.iter().map(|q| q.0 * nx + q.1 * ny).collect();
            (
                v.iter().cloned().fold(f64::INFINITY, f64::min),
                v.iter().cloned().fold(f64::NEG_INFINITY, f64::max),
            )
        };
        let (a0, a1) = proj(a);
        let (b0, b1) = proj(b);
        if a1 < b0 || b1 < a0 {
            return false;
        }
    }
    true
}
