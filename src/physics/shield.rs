//! The shield's outer current: where the loop current really flows, and what that makes of the
//! loop's inductance and sensitivity.
//!
//! Above a few MHz the shield copper is many skin depths thick, so the outer (loop) current
//! flows on its surfaces as on a perfect conductor. Every copper layer of the shield ring is
//! part of one conductor, split only at the gap, so every current filament over the copper
//! sees the same EMF: the current distributes so that every filament links the same flux
//! (the magnetostatic method of moments for a perfect conductor; e.g. C. R. Paul,
//! *Inductance: Loop and Partial*, Wiley 2010, the filament / partial-element method, from
//! memory). On a flat ring the current crowds towards the inner edge (the shorter path),
//! so the loop is smaller, and its inductance lower, than the centreline and the solid-section
//! GMD say.
//!
//! Round loops are solved exactly as coaxial ribbons: each copper plate of the ring's
//! cross-section (thin: its two faces are one sheet) is cut into ribbons clustered towards its
//! edges, where the surface current has its edge singularity; the mutual inductance of two
//! ribbons is Maxwell's coaxial-filament formula with the near-field logarithm replaced by the
//! ribbons' exact geometric mean distance (a Galerkin integral of the log kernel over both
//! widths), the self term Maxwell's formula at the ribbon's own GMD e^(−3/2)·width. Solving
//! M·I = 1 (unit flux linkage) gives L_outer = 1/ΣI and the effective area ΣIᵢ·Aᵢ/ΣI, Aᵢ the
//! mean π r² over ribbon i: by reciprocity the loop's EMF in a uniform normal field is
//! jωμ0·A_eff·H.
//!
//! Other shapes (rectangles with rounded corners) use the current shares of the round loop with
//! the same perimeter-to-area ratio (R_eq = 2A/P, the ratio that sets how much area an inward
//! shift of the current costs) applied to the shape's own offset curves: A_eff = Σ sᵢ·A(dᵢ)
//! with A(d) = A + P·d + π·d² (exact for a rounded rectangle while an inward offset stays within
//! the corner radius; beyond it the true area is larger by (4 − π)(|d| − rc)²); L_outer is the
//! regularised Neumann integral of the centreline with the equivalent radius that reproduces the
//! round solution. An approximation, stated in `docs/response.md`.

use super::{MU0, maxwell_coaxial, neumann_loop};
use crate::math::dot;
use std::f64::consts::PI;

/// One thin copper plate of the shield ring's cross-section (m): `z` across the board from its
/// mid-plane (positive towards L1), and the extent from `d0` to `d1` as offsets from the loop's
/// centreline (positive outwards).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Plate {
    /// Height across the board from its mid-plane, m.
    pub z: f64,
    /// Inner edge, offset from the centreline, m (negative: inside the centreline).
    pub d0: f64,
    /// Outer edge, m.
    pub d1: f64,
}

/// The solved outer current of a shield.
#[derive(Debug, Clone, PartialEq)]
pub struct ShieldCurrent {
    /// The ribbons the plates were cut into (same type: a narrow plate each).
    pub ribbons: Vec<Plate>,
    /// Each ribbon's share of the total current (sums to 1).
    pub share: Vec<f64>,
    /// Outer-loop inductance, H.
    pub l_outer: f64,
    /// Effective (current-weighted) area, m².
    pub area_eff: f64,
    /// Ribbons per plate (each plate's ribbons are consecutive in `ribbons`).
    pub per_plate: usize,
}

/// Ribbons per plate in [`solve_round`]'s default use: enough for 0.05 % on the demo's rings
/// (the convergence is shown in `tests/shield.rs`).
pub const RIBBONS_PER_PLATE: usize = 48;

/// Cuts every plate into `n` ribbons with edges at (1 − cos(πk/n))/2 of its width: fine at
/// both edges, where the current density is singular.
pub fn ribbons(plates: &[Plate], n: usize) -> Vec<Plate> {
    let n = n.max(1);
    let mut out = Vec::with_capacity(plates.len() * n);
    for p in plates {
        let w = p.d1 - p.d0;
        let at = |k: usize| p.d0 + w * 0.5 * (1.0 - (PI * k as f64 / n as f64).cos());
        for k in 0..n {
            out.push(Plate {
                z: p.z,
                d0: at(k),
                d1: at(k + 1),
            });
        }
    }
    out
}

/// ∫∫ over u-intervals of ½·ln(u² + d²): the antiderivative G with G'' = ½·ln(u² + d²).
fn g2(u: f64, d: f64) -> f64 {
    let s = u * u + d * d;
    let l = if s > 0.0 { s.ln() } else { 0.0 };
    let at = if d > 0.0 {
        2.0 * d * u * (u / d).atan()
    } else {
        0.0
    };
    0.5 * (0.5 * (s * l - s) - u * u + at - d * d * l)
}

/// Natural log of the geometric mean distance between two parallel coplanar-or-stacked ribbons
/// `[a0, a1]` and `[b0, b1]` (m) whose planes are `dz` apart: the mean of ln(distance) over
/// both widths, in closed form. For one ribbon with itself it is ln(w) − 3/2 (Maxwell). Both
/// widths must be positive ([`solve_round`] refuses plates without width).
pub fn ln_gmd(a0: f64, a1: f64, b0: f64, b1: f64, dz: f64) -> f64 {
    let dz = dz.abs();
    let (wa, wb) = (a1 - a0, b1 - b0);
    let (ca, cb) = (0.5 * (a0 + a1), 0.5 * (b0 + b1));
    let rho = ((ca - cb).powi(2) + dz * dz).sqrt();
    if rho > 8.0 * wa.max(wb) {
        // Far apart: the closed form would cancel to few digits; 3 × 3 Gauss–Legendre over
        // both widths is exact to O((w/ρ)⁶) there.
        let (x, wt) = (
            [-(0.6f64).sqrt(), 0.0, (0.6f64).sqrt()],
            [5.0 / 18.0, 8.0 / 18.0, 5.0 / 18.0],
        );
        let mut s = 0.0;
        for i in 0..3 {
            for j in 0..3 {
                let u = (ca + 0.5 * wa * x[i]) - (cb + 0.5 * wb * x[j]);
                s += wt[i] * wt[j] * 0.5 * (u * u + dz * dz).ln();
            }
        }
        return s;
    }
    let s = g2(a1 - b0, dz) - g2(a0 - b0, dz) - g2(a1 - b1, dz) + g2(a0 - b1, dz);
    s / ((a1 - a0) * (b1 - b0))
}

/// Mutual inductance of two coaxial ribbons of a round loop of centreline radius `r` (m).
fn ribbon_mutual(r: f64, a: &Plate, b: &Plate) -> f64 {
    let ra = r + 0.5 * (a.d0 + a.d1);
    let rb = r + 0.5 * (b.d0 + b.d1);
    let dz = a.z - b.z;
    let lg = ln_gmd(a.d0, a.d1, b.d0, b.d1, dz);
    let rho2 = (ra - rb).powi(2) + dz * dz;
    if rho2 == 0.0 {
        // The same ribbon: Maxwell's formula at its own GMD.
        return maxwell_coaxial(ra, rb, lg.exp());
    }
    // Maxwell between the centres, with the near-field log term ln(1/ρ) replaced by the
    // Galerkin mean ln(1/g) over both widths.
    maxwell_coaxial(ra, rb, dz) + MU0 * (ra * rb).sqrt() * (0.5 * rho2.ln() - lg)
}

/// Cholesky factorisation of a symmetric positive-definite matrix (row-major, n × n) in place:
/// the lower triangle becomes L with A = L·Lᵀ. False when the matrix is not positive definite.
/// The row products are [`dot`]s (four interleaved partial sums).
pub(crate) fn cholesky_factor(a: &mut [f64], n: usize) -> bool {
    for j in 0..n {
        let (above, rest) = a.split_at_mut((j + 1) * n);
        let row_j = &mut above[j * n..];
        let d = row_j[j] - dot(&row_j[..j], &row_j[..j]);
        if d <= 0.0 || !d.is_finite() {
            return false;
        }
        let d = d.sqrt();
        row_j[j] = d;
        let lj = &row_j[..j];
        for row_i in rest.chunks_exact_mut(n) {
            row_i[j] = (row_i[j] - dot(&row_i[..j], lj)) / d;
        }
    }
    true
}

/// Solves L·Lᵀ·x = b in place with the factor of [`cholesky_factor`].
pub(crate) fn cholesky_substitute(l: &[f64], n: usize, b: &mut [f64]) {
    for i in 0..n {
        b[i] = (b[i] - dot(&l[i * n..i * n + i], &b[..i])) / l[i * n + i];
    }
    for i in (0..n).rev() {
        let mut s = b[i];
        for k in i + 1..n {
            s -= l[k * n + i] * b[k];
        }
        b[i] = s / l[i * n + i];
    }
}

/// Solves a symmetric positive-definite system by Cholesky factorisation (in place).
fn cholesky_solve(a: &mut [f64], n: usize, b: &mut [f64]) -> bool {
    if !cholesky_factor(a, n) {
        return false;
    }
    cholesky_substitute(a, n, b);
    true
}

/// The outer current of a round loop of centreline radius `r` (m) whose shield cross-section
/// is `plates`, each cut into `n` ribbons. `None` when the plates are degenerate (no width,
/// reaching the axis, or a singular system).
pub fn solve_round(r: f64, plates: &[Plate], n: usize) -> Option<ShieldCurrent> {
    if plates.is_empty()
        || !r.is_finite()
        || plates.iter().any(|p| {
            p.d1.partial_cmp(&p.d0) != Some(std::cmp::Ordering::Greater)
                || r + p.d0 <= 0.0
                || !p.z.is_finite()
        })
    {
        return None;
    }
    let rb = ribbons(plates, n);
    let m = rb.len();
    let mut a = vec![0.0; m * m];
    for i in 0..m {
        for j in 0..=i {
            let v = ribbon_mutual(r, &rb[i], &rb[j]);
            a[i * m + j] = v;
            a[j * m + i] = v;
        }
    }
    let mut cur = vec![1.0; m];
    if !cholesky_solve(&mut a, m, &mut cur) {
        return None;
    }
    let total: f64 = cur.iter().sum();
    if total.is_nan() || total <= 0.0 {
        return None;
    }
    let share: Vec<f64> = cur.iter().map(|c| c / total).collect();
    let area_eff = rb
        .iter()
        .zip(&share)
        .map(|(p, s)| {
            let (a0, a1) = (r + p.d0, r + p.d1);
            s * PI * (a0 * a0 + a0 * a1 + a1 * a1) / 3.0
        })
        .sum();
    Some(ShieldCurrent {
        ribbons: rb,
        share,
        l_outer: 1.0 / total,
        area_eff,
        per_plate: n.max(1),
    })
}

/// The equivalent conductor radius a with which a thin ring of radius `r` has inductance `l`
/// by Maxwell's coaxial-filament formula, M(r, r, a) = l (bisection on ln a).
pub fn equivalent_radius(r: f64, l: f64) -> f64 {
    let (mut lo, mut hi) = ((r * 1e-9).ln(), (r * 2.0).ln());
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if maxwell_coaxial(r, r, mid.exp()) > l {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    (0.5 * (lo + hi)).exp()
}

/// Outer current of a non-round loop: the round solution at R_eq = 2A/P (centreline area `a`,
/// perimeter `p`, m² and m) transferred to the shape's offset curves (module docs). `closed`
/// gives the centreline polygon (m) for the Neumann integral.
pub fn solve_shape(
    a: f64,
    p: f64,
    centreline: &[(f64, f64)],
    plates: &[Plate],
    n: usize,
) -> Option<ShieldCurrent> {
    let r_eq = 2.0 * a / p;
    let round = solve_round(r_eq, plates, n)?;
    let area_eff = round
        .ribbons
        .iter()
        .zip(&round.share)
        .map(|(rb, s)| {
            // Mean of A(d) = A + P·d + π·d² over the ribbon.
            let (d0, d1) = (rb.d0, rb.d1);
            let mean_d = 0.5 * (d0 + d1);
            let mean_d2 = (d0 * d0 + d0 * d1 + d1 * d1) / 3.0;
            s * (a + p * mean_d + PI * mean_d2)
        })
        .sum();
    let g = equivalent_radius(r_eq, round.l_outer);
    let l_outer = neumann_loop(centreline, g);
    Some(ShieldCurrent {
        ribbons: round.ribbons,
        share: round.share,
        l_outer,
        area_eff,
        per_plate: round.per_plate,
    })
}
