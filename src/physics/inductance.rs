//! Closed-form inductances and fields (Maxwell, Rosa, Grover, Neumann), the line's field,
//! and quadrature over a loop's area.

use super::*;
use crate::model::probe::LoopShape;
use std::f64::consts::PI;

/// Maxwell's mutual inductance of two coaxial circular filaments of radii `r1`, `r2` (m), `d`
/// apart along the axis: M = μ0·√(r1·r2)·[(2/k − k)·K(k) − (2/k)·E(k)],
/// k² = 4·r1·r2/((r1 + r2)² + d²). Henry.
pub fn maxwell_coaxial(r1: f64, r2: f64, d: f64) -> f64 {
    let k2 = 4.0 * r1 * r2 / ((r1 + r2).powi(2) + d * d);
    let k = k2.sqrt();
    let kp = (((r1 - r2).powi(2) + d * d) / ((r1 + r2).powi(2) + d * d)).sqrt();
    let (kk, ee) = elliptic2::k_and_e(kp);
    MU0 * (r1 * r2).sqrt() * ((2.0 / k - k) * kk - 2.0 / k * ee)
}

/// Rosa/Grover thin circular ring of radius `r` and round conductor radius `a` (m):
/// L = μ0·r·(ln(8r/a) − 2) with surface current (high frequency), − 7/4 with uniform current.
pub fn rosa_ring(r: f64, a: f64, uniform: bool) -> f64 {
    MU0 * r * ((8.0 * r / a).ln() - if uniform { 1.75 } else { 2.0 })
}

/// Grover's rectangle of sides `a`, `b` (m) made of a conductor of GMD `g` (m):
/// L = (μ0/π)·[a·ln(2a/g) + b·ln(2b/g) − a·asinh(a/b) − b·asinh(b/a) + 2√(a² + b²) − 2(a + b)].
pub fn grover_rectangle(a: f64, b: f64, g: f64) -> f64 {
    MU0 / PI
        * (a * (2.0 * a / g).ln() + b * (2.0 * b / g).ln()
            - a * (a / b).asinh()
            - b * (b / a).asinh()
            + 2.0 * (a * a + b * b).sqrt()
            - 2.0 * (a + b))
}

/// Maxwell's geometric mean distance of a rectangle w × t from itself: ≈ 0.2235·(w + t)
/// (tabulated by Grover 1946; the value is from memory of those tables).
pub fn gmd_rectangle(w: f64, t: f64) -> f64 {
    0.2235 * (w + t)
}

/// Regularised Neumann integral of a closed polygon (m, not repeating the first point):
/// L = (μ0/4π)·∮∮ dl1·dl2 / √(|r1 − r2|² + g²), by the midpoint rule on segments no longer
/// than g/4 (the regularisation makes the integrand smooth on that scale). Henry.
pub fn neumann_loop(pts: &[(f64, f64)], g: f64) -> f64 {
    let n = pts.len();
    let mut mids = Vec::new();
    let mut dls = Vec::new();
    for i in 0..n {
        let (a, b) = (pts[i], pts[(i + 1) % n]);
        let len = ((b.0 - a.0).powi(2) + (b.1 - a.1).powi(2)).sqrt();
        let k = ((len / (g / 4.0)).ceil() as usize).max(1);
        for j in 0..k {
            let t = (j as f64 + 0.5) / k as f64;
            mids.push((a.0 + (b.0 - a.0) * t, a.1 + (b.1 - a.1) * t));
            dls.push(((b.0 - a.0) / k as f64, (b.1 - a.1) / k as f64));
        }
    }
    let g2 = g * g;
    let mut s = 0.0;
    for i in 0..mids.len() {
        for j in 0..mids.len() {
            let dot = dls[i].0 * dls[j].0 + dls[i].1 * dls[j].1;
            let r2 = (mids[i].0 - mids[j].0).powi(2) + (mids[i].1 - mids[j].1).powi(2) + g2;
            s += dot / r2.sqrt();
        }
    }
    MU0 / (4.0 * PI) * s
}

/// Hx (A/m per A) of an infinite thin line carrying 1 A at height `h` over a perfect ground
/// plane, at lateral offset `x` and height `z` above the line (image theory):
/// Hx = (1/2π)·[z/(x² + z²) − (z + 2h)/(x² + (z + 2h)²)].
pub fn hx_line(x: f64, z: f64, h: f64) -> f64 {
    1.0 / (2.0 * PI) * (z / (x * x + z * z) - (z + 2.0 * h) / (x * x + (z + 2.0 * h).powi(2)))
}

/// Closed-form mutual inductance between that line (with its image) and a circle of radius `r`
/// in a vertical plane containing the line's axis, centre `zc` above the line:
/// M = μ0·[(c − √(c² − r²)) − (c2 − √(c2² − r²))], c = zc, c2 = zc + 2h. Henry.
pub fn mutual_circle_line(r: f64, zc: f64, h: f64) -> f64 {
    let f = |c: f64| c - (c * c - r * r).sqrt();
    MU0 * (f(zc) - f(zc + 2.0 * h))
}

/// Width of the loop's centreline shape at depth `u` below its apex (m, shape in mm).
pub fn chord_mm(shape: &LoopShape, u: f64) -> f64 {
    match *shape {
        LoopShape::Round { diameter } => {
            let r = diameter / 2.0;
            if u <= 0.0 || u >= 2.0 * r {
                0.0
            } else {
                2.0 * (r * r - (r - u).powi(2)).sqrt()
            }
        }
        LoopShape::Rect {
            width,
            height,
            corner_radius: rc,
            ..
        } => {
            if u <= 0.0 || u >= height {
                return 0.0;
            }
            let d = u.min(height - u);
            if d >= rc {
                width
            } else {
                width - 2.0 * (rc - (rc * rc - (rc - d).powi(2)).max(0.0).sqrt())
            }
        }
    }
}

/// Height of the loop's centreline shape along the axis, mm.
pub fn loop_height_mm(shape: &LoopShape) -> f64 {
    match *shape {
        LoopShape::Round { diameter } => diameter,
        LoopShape::Rect { height, .. } => height,
    }
}

/// Gauss–Legendre nodes and weights on [−1, 1], 24 points (Abramowitz & Stegun 25.4.30).
/// Computed once per process.
pub(super) fn gauss24() -> &'static (Vec<f64>, Vec<f64>) {
    static NODES: std::sync::OnceLock<(Vec<f64>, Vec<f64>)> = std::sync::OnceLock::new();
    NODES.get_or_init(|| {
        // Computed by Newton iteration on P24 (standard construction), so no table is typed in.
        let n = 24;
        let mut x = vec![0.0; n];
        let mut w = vec![0.0; n];
        for i in 0..n {
            let mut z = (PI * (i as f64 + 0.75) / (n as f64 + 0.5)).cos();
            for _ in 0..100 {
                let (mut p1, mut p2) = (1.0, 0.0);
                for j in 0..n {
                    let p3 = p2;
                    p2 = p1;
                    p1 = ((2 * j + 1) as f64 * z * p2 - j as f64 * p3) / (j + 1) as f64;
                }
                let pp = n as f64 * (z * p1 - p2) / (z * z - 1.0);
                let z1 = z;
                z = z1 - p1 / pp;
                if (z - z1).abs() < 1e-15 {
                    x[i] = z;
                    w[i] = 2.0 / ((1.0 - z * z) * pp * pp);
                    break;
                }
            }
        }
        (x, w)
    })
}

/// Flux per ampere (divided by μ0: m) through the loop when its apex is `z0` (m) above a line
/// at height `h` over its plane, the loop plane vertical and containing the line's axis,
/// displaced sideways by `x`: ∫ chord(u)·Hx(x, z0 + u) du, by composite Gauss–Legendre.
pub fn flux_per_amp(shape: &LoopShape, x: f64, z0: f64, h: f64) -> f64 {
    integrate_over_loop(shape, |u| hx_line(x, z0 + u, h))
}

/// ∫ chord(u)·hx(u) du over the loop's height (u in m below the apex, chord in m), by
/// composite Gauss–Legendre on panels that crowd towards the apex, where fields are strongest.
pub fn integrate_over_loop(shape: &LoopShape, hx: impl Fn(f64) -> f64) -> f64 {
    integrate_nodes(&loop_nodes(shape), hx)
}

/// [`integrate_over_loop`]'s nodes for `shape`: (u m, weight·chord m²) of each, in its order.
/// A search that integrates many fields over one loop takes them once.
pub fn loop_nodes(shape: &LoopShape) -> Vec<(f64, f64)> {
    let height = loop_height_mm(shape) * 1e-3;
    let (gx, gw) = gauss24();
    let panels = 16;
    let mut nodes = Vec::with_capacity(panels * gx.len());
    for p in 0..panels {
        let a = height * (p as f64 / panels as f64).powi(2);
        let b = height * ((p + 1) as f64 / panels as f64).powi(2);
        for (xi, wi) in gx.iter().zip(gw) {
            let u = 0.5 * (a + b) + 0.5 * (b - a) * xi;
            nodes.push((u, 0.5 * (b - a) * wi * chord_mm(shape, u * 1e3) * 1e-3));
        }
    }
    nodes
}

/// Σ weight·hx(u) over [`loop_nodes`] (the sum [`integrate_over_loop`] takes).
pub fn integrate_nodes(nodes: &[(f64, f64)], hx: impl Fn(f64) -> f64) -> f64 {
    let mut s = 0.0;
    for &(u, c) in nodes {
        s += c * hx(u);
    }
    s
}
