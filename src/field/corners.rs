//! Far corners: a larger smallest cell for the corners the field hardly reaches.
//!
//! The mesh grades its cells down to δ at every conductor corner ([`super::mesh`]), because a
//! corner's own energy error is of the first order in its smallest cell and must stay far below
//! the rest (`docs/field-solver.md`, §3). That error is also proportional to the square of the
//! strength of the corner's singularity, which a corner far from the signal in a screened
//! place (a board's edge beside grounded planes, several millimetres from a launch pad) has
//! next to nothing of; yet its ladder of cells, carried across the whole section by the
//! rectilinear mesh, costs as many node lines as the signal's own corners.
//!
//! The geometry alone does not tell such a corner from one the field reaches in full: the far
//! edge of a ground plate facing a signal plate (the solver's antisymmetric plate pair) sees the
//! whole structure's field, as strong as the signal plate's own far edge, however far it is
//! from the signal. So the strength is measured: a quick solution on a coarse mesh of the same
//! section (under a tenth of a full solution's work; its potentials within some 15 % of a fine
//! solution's) gives each far corner's largest potential Φ on the circle round it whose radius
//! is the signal-to-ground distance `s`, the signal being at 1 V. A singularity's strength goes
//! as the potential it reaches at a given distance; a corner's error with smallest cell h goes
//! as strength² · h^(2α), α = 2/3 at a right-angled solid corner and 1/2 at a sheet's edge (a
//! conductor of no thickness or width). Against the strongest a signal corner can be (solid,
//! its potential falling by the whole volt within `s`, smallest cell δ), a far corner with cell
//! w·δ errs by Φ²·w^(4/3) when solid and Φ²·w·(s/δ)^(1/3) when a sheet. The weight w is the
//! largest that keeps this below κ, rounded down to a power of two so that the tiny changes of
//! the estimate between nearby geometries (a width search) leave the mesh alone, at most
//! [`MAX_WEIGHT`]. A ground corner and its mirror image, when that is a ground corner too, take
//! the smaller of their weights.

use super::geometry::{Half, Resolved, Role, point_segment};
use super::mesh::{self, Grid, MeshParams, Plan};
use super::solver::System;

/// Ground corners within this many signal-to-ground distances of a signal keep the
/// section's δ without an estimate (the estimate is not made when no corner lies beyond).
pub(crate) const NEAR_ZONE: f64 = 2.0;
/// A far corner's error is held below this fraction of the strongest signal corner's (our
/// choice; the signal corners' own errors are made negligible by the section's δ).
pub(crate) const KAPPA: f64 = 0.25;
/// A corner's smallest cell is at most this many times the section's (a tenth of the smallest
/// feature at the default δ).
pub(crate) const MAX_WEIGHT: f64 = 1024.0;
/// The estimate's coarse mesh: `Draft`'s growth with ten times the smallest cell.
const ESTIMATE_MESH: MeshParams = MeshParams {
    delta_rel: 1e-3,
    growth: 0.9,
};
/// The estimate's conjugate gradients stop at this residual (its potentials are wanted to a
/// few per cent).
const ESTIMATE_TOL: f64 = 1e-3;
/// Points on the circle of radius `s` round a corner at which the potential is read.
const SAMPLES: usize = 16;

/// The distance from `p` to the nearest signal conductor, mm.
fn to_signal(r: &Resolved, far: f64, p: (f64, f64)) -> f64 {
    r.conductors
        .iter()
        .filter(|c| c.role == Role::Signal)
        .map(|c| {
            let q = c.polygon(far);
            (0..4)
                .map(|i| point_segment(p, q[i], q[(i + 1) % 4]))
                .fold(f64::INFINITY, f64::min)
        })
        .fold(f64::INFINITY, f64::min)
}

/// The potential of the grid's solution at (x, y), bilinear within its cell; `None` outside
/// the grid.
fn potential(g: &Grid, phi: &[f64], x: f64, y: f64) -> Option<f64> {
    let (xs, ys) = (&g.xs, &g.ys);
    let inside = |v: f64, a: &[f64]| v >= a[0] && v <= a[a.len() - 1];
    if !inside(x, xs) || !inside(y, ys) {
        return None;
    }
    let cell = |v: f64, a: &[f64]| a.partition_point(|&t| t <= v).clamp(1, a.len() - 1) - 1;
    let (i, j) = (cell(x, xs), cell(y, ys));
    let tx = (x - xs[i]) / (xs[i + 1] - xs[i]);
    let ty = (y - ys[j]) / (ys[j + 1] - ys[j]);
    let nx = xs.len();
    let at = |i: usize, j: usize| phi[j * nx + i];
    Some(
        (1.0 - ty) * ((1.0 - tx) * at(i, j) + tx * at(i + 1, j))
            + ty * ((1.0 - tx) * at(i, j + 1) + tx * at(i + 1, j + 1)),
    )
}

/// The largest estimate mesh made (nodes); a larger section keeps every corner's δ.
const ESTIMATE_MAX_NODES: usize = 250_000;

/// Grows the smallest cell of the plan's far ground corners by the field that reaches them (see
/// the module's notes); `delta` is the section's smallest cell, mm. Leaves the plan alone on an
/// antimirrored half (there every ground corner lies, mirrored, on a signal's, whose δ it
/// keeps), when no ground corner lies beyond [`NEAR_ZONE`] signal-to-ground distances of a
/// signal, or when the estimate is too large or fails; a corner none of whose samples falls in
/// the solved region keeps δ.
pub(crate) fn relax(r: &Resolved, plan: &mut Plan, delta: f64) {
    if r.half == Half::Antimirror {
        return;
    }
    let [dx0, dx1, dy0, dy1] = r.domain;
    let far = 2.0
        * [dx0, dx1, dy0, dy1]
            .iter()
            .fold(0.0_f64, |a, v| a.max(v.abs()));
    let s = r.signal_to_ground;
    if !(s.is_finite() && s > 0.0 && delta > 0.0) {
        return;
    }
    let remote: Vec<usize> = (0..plan.corners.len())
        .filter(|&k| {
            let c = plan.corners[k];
            !c.signal && to_signal(r, far, (c.x, c.y)) > NEAR_ZONE * s
        })
        .collect();
    if remote.is_empty() {
        return;
    }
    let g = mesh::build(r, plan, &ESTIMATE_MESH, 1);
    if g.nx() * g.ny() > ESTIMATE_MAX_NODES {
        return;
    }
    let (phi, _, converged) = System::new(&g, &g.eps).solve(None, ESTIMATE_TOL);
    if !converged {
        return;
    }
    // The largest potential on the circle of radius s round (x, y), the signal at 1 V; None
    // when no sample falls in the solved region.
    let mirror = r.half == Half::Mirror;
    let reach = |x: f64, y: f64| -> Option<f64> {
        (0..SAMPLES)
            .filter_map(|k| {
                let a = 2.0 * std::f64::consts::PI * k as f64 / SAMPLES as f64;
                let px = x + s * a.cos();
                // A mirrored half holds the section's potential at |x|.
                let px = if mirror { px.abs() } else { px };
                potential(&g, &phi, px, y + s * a.sin()).filter(|v| v.is_finite())
            })
            .map(f64::abs)
            .reduce(f64::max)
    };
    // The signal corners' own error, with the smallest cell δ, is taken at its largest: a
    // right-angled solid corner (α = 2/3) with the potential falling by the whole 1 V within s.
    // A far corner's, for a cell w·δ: Φ²·(w·δ/s)^(2α) against (δ/s)^(4/3), α = 2/3 for a
    // solid corner and 1/2 for a sheet's edge (a conductor of no thickness or width).
    let shrink = (delta / s).cbrt();
    for k in remote {
        let c = &mut plan.corners[k];
        let w = match reach(c.x, c.y) {
            None => 1.0,
            Some(phi_c) if phi_c > 0.0 => {
                let q = KAPPA / (phi_c * phi_c);
                if c.sheet { q * shrink } else { q.powf(0.75) }
            }
            Some(_) => MAX_WEIGHT,
        };
        let w = w.clamp(1.0, MAX_WEIGHT);
        c.weight = 2f64.powi(w.log2().floor() as i32);
    }
    // A section that is its own mirror image keeps a mirrored mesh: a ground corner and its
    // image, a ground corner too, take the smaller weight of the two (their estimates differ in
    // rounding only).
    let tol = plan.tol;
    let weights: Vec<f64> = plan
        .corners
        .iter()
        .map(|c| {
            plan.corners
                .iter()
                .filter(|o| {
                    o.signal == c.signal && (o.x + c.x).abs() <= tol && (o.y - c.y).abs() <= tol
                })
                .fold(c.weight, |w, o| w.min(o.weight))
        })
        .collect();
    for (c, w) in plan.corners.iter_mut().zip(weights) {
        c.weight = w;
    }
}

#[cfg(test)]
mod tests {
    use super::super::geometry::{Boundary, Conductor, CrossSection, Dielectric};
    use super::super::{Accuracy, plate_pair, solve_as};
    use super::*;

    /// A connector's centre pad on a 4-layer board's top (the demo's launch, built here from
    /// the solver's own parts): the pad 0.8 mm wide and 35 µm thick, the top ground 0.209 mm
    /// from it out to 3.7 mm, layer 2 (17.5 µm) relieved to the same gap, referenced to a plane
    /// of the handle's 7.4 mm on layer 3, FR-4 (εr 4.3) on an 8 mm board, air above.
    fn pad() -> CrossSection {
        let (wp, gap, half) = (0.8, 0.209, 3.7);
        let top = 1.065 + 0.0175 + 0.21;
        let [left, right] =
            Conductor::coplanar_pair(0.0, top, wp, gap, half - wp / 2.0 - gap, 0.035);
        let r = wp / 2.0 + gap;
        CrossSection {
            layers: vec![
                Dielectric::new(1.065, 4.3),
                Dielectric::new(0.0175, 4.3),
                Dielectric::new(0.21, 4.3),
            ],
            board: Some([-4.0, 4.0]),
            conductors: vec![
                Conductor::finite_plane(-half, half, 0.0, 0.0),
                Conductor::trace(0.0, top, wp, 0.035, 0.0),
                left,
                right,
                Conductor::ground(-half, -r, 1.065, 1.0825),
                Conductor::ground(r, half, 1.065, 1.0825),
            ],
            coat: None,
            fences: vec![],
            boundary: Boundary::Open,
        }
    }

    // The pad's far corners (3.1–3.5 mm from it, screened by the planes) get cells hundreds of
    // times larger and the mesh over 20 % fewer nodes, while Z0 moves by under 1e-5 of itself,
    // far inside `Standard`'s own error (6e-4, docs/field-solver.md §4); and both settle on the
    // same value when refined (`Refined(2)`, within 1e-6). Measured 2026-12-05: the coarser mesh
    // 113 × 166 → 95 × 145 nodes (the finer 0.73 of its nodes), Z0 50.64064 → 50.64075 Ω
    // (2.1e-6), at `Refined(2)` 50.65313 against 50.65313 Ω (1.2e-7). Fails when the corners are
    // left alone (no fewer nodes).
    #[test]
    fn screened_far_corners_take_larger_cells_and_change_little() {
        let cs = pad();
        let (a, b) = (
            solve_as(&cs, Accuracy::Standard, true, true).unwrap(),
            solve_as(&cs, Accuracy::Standard, true, false).unwrap(),
        );
        assert!(
            (a.nodes as f64) < 0.8 * b.nodes as f64,
            "{} against {} nodes",
            a.nodes,
            b.nodes
        );
        assert!(
            (a.z0_ohms / b.z0_ohms - 1.0).abs() < 1e-5,
            "{} {}",
            a.z0_ohms,
            b.z0_ohms
        );
        assert!((a.eps_eff / b.eps_eff - 1.0).abs() < 1e-5);
        let (a2, b2) = (
            solve_as(&cs, Accuracy::Refined(2), true, true).unwrap(),
            solve_as(&cs, Accuracy::Refined(2), true, false).unwrap(),
        );
        assert!(
            (a2.z0_ohms / b2.z0_ohms - 1.0).abs() < 1e-6,
            "{} {}",
            a2.z0_ohms,
            b2.z0_ohms
        );
        assert!(a2.nodes < b2.nodes);
    }

    // Two plates facing across a 0.4 mm gap, signal right, ground left, on both faces of a
    // board, solved whole: the ground plates' far edges, 3.4 mm from the signal, see the whole
    // pair's field. Their cells may grow only so far that the change they make still falls
    // with the cells as the rest of the error does: fourfold and more from `Standard` to
    // `Refined(2)` (the same meshes halved), as Richardson's extrapolation assumes. Measured
    // 2026-12-05: Z0 moved by 6.2e-6 and 5.9e-7; with every far corner at the largest weight (a
    // rule by distance alone) by 1.0e-5 and 6.2e-6, a first-order error Richardson leaves in.
    #[test]
    fn exposed_far_corners_change_little_and_converge() {
        let pair = plate_pair();
        let moved = |acc| {
            let a = solve_as(&pair, acc, false, true).unwrap();
            let b = solve_as(&pair, acc, false, false).unwrap();
            (a.z0_ohms / b.z0_ohms - 1.0).abs()
        };
        let (standard, refined) = (moved(Accuracy::Standard), moved(Accuracy::Refined(2)));
        assert!(
            standard < 2e-5 && refined < standard / 4.0,
            "{standard:e} {refined:e}"
        );
    }

    // The same pair: the ground plates' far edges, 3.4 mm from the signal, see the whole pair's field,
    // and keep cells within 8 times the smallest (Φ ≈ 0.09; the distance alone would have relaxed
    // them as far as the pad's); the pad's screened corners (Φ 0.003–0.01) are grown 256–1024
    // times. Fails for a rule by distance alone, and for none.
    #[test]
    fn exposed_far_corners_keep_small_cells() {
        let pair = plate_pair();
        let weights = |cs: &CrossSection| -> Vec<f64> {
            // The whole section: the pair's half would be antimirrored (not relaxed).
            let r = cs.resolve(false).unwrap();
            let mut plan = mesh::plan(&r, false);
            let delta = mesh::smallest_cell(&r, &Accuracy::Standard.mesh().0);
            relax(&r, &mut plan, delta);
            plan.corners
                .iter()
                .filter(|c| !c.signal && c.x.abs() > 3.0)
                .map(|c| c.weight)
                .collect()
        };
        let exposed = weights(&pair);
        assert_eq!(exposed.len(), 4);
        assert!(
            exposed.iter().all(|&w| (1.0..=8.0).contains(&w)),
            "{exposed:?}"
        );
        let screened = weights(&pad());
        assert!(!screened.is_empty());
        assert!(screened.iter().all(|&w| w >= 256.0), "{screened:?}");
    }
}
