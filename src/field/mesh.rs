//! The graded rectilinear mesh: node lines in `x` and `y`, the permittivity of every cell,
//! and which nodes belong to a conductor.
//!
//! Each axis is built from its *key* coordinates (every conductor edge, layer interface,
//! coat edge, board edge, wall) so that conductors and interfaces lie exactly on mesh lines.
//! Between keys the node spacing follows
//!
//! ```text
//!     s(x) = min over the axis's corners c of (w_c·δ + g·|x − c|)
//! ```
//!
//! over the conductor corners on that axis (where the field is singular), δ being the smallest
//! cell, g the growth rate and w_c a corner's weight: 1, or more for a corner the field hardly
//! reaches ([`super::corners`]). With every weight 1 this is δ + g·(distance to the nearest
//! corner): cells grow geometrically away from corners, also out to the far boundary. `s` is
//! piecewise linear in x, so the cell count ∫dx/s and the node positions (equidistributed in
//! ∫dx/s) are computed in closed form: mirrored geometry gives a mirrored mesh, scaled geometry
//! a scaled mesh. This *base* mesh is then refined by splitting every cell into `m` equal parts,
//! so meshes of levels m and 2m are nested (see `docs/field-solver.md`).

use super::geometry::{Resolved, Role};

/// Base-mesh parameters, relative to the structure's lengths.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct MeshParams {
    /// Smallest cell (at conductor corners), in units of the smallest feature.
    pub delta_rel: f64,
    /// Growth of the cell size per unit distance from a corner.
    pub growth: f64,
}

/// One axis: sorted node coordinates.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Axis {
    pub nodes: Vec<f64>,
}

/// A piece on which the spacing is linear: from `x0` (spacing `s0`) to `x1` (spacing `s1`).
#[derive(Debug, Clone, Copy)]
struct Piece {
    x0: f64,
    x1: f64,
    s0: f64,
    s1: f64,
}

impl Piece {
    /// ∫ dx / s over the piece.
    fn weight(&self) -> f64 {
        let dx = self.x1 - self.x0;
        let ds = self.s1 - self.s0;
        if ds.abs() <= 1e-12 * self.s0.max(self.s1) {
            dx / (0.5 * (self.s0 + self.s1))
        } else {
            (self.s1 / self.s0).ln() * dx / ds
        }
    }

    /// The point where ∫ from x0 reaches `f` (0 ≤ f ≤ weight).
    fn locate(&self, f: f64) -> f64 {
        let dx = self.x1 - self.x0;
        let ds = self.s1 - self.s0;
        if ds.abs() <= 1e-12 * self.s0.max(self.s1) {
            self.x0 + f * 0.5 * (self.s0 + self.s1)
        } else {
            let beta = ds / dx;
            let s = self.s0 * (beta * f).exp();
            self.x0 + (s - self.s0) / beta
        }
    }
}

/// The spacing function of one axis.
pub(crate) struct Spacing<'a> {
    /// Corner coordinates (sorted), each with its smallest cell in units of `delta`.
    pub singular: &'a [(f64, f64)],
    /// Smallest cell, mm.
    pub delta: f64,
    /// Growth rate g.
    pub growth: f64,
}

impl Spacing<'_> {
    /// s(x) = the least over the corners of δ·w + g·(distance to the corner), w the corner's
    /// weight (δ + g·(distance to the nearest corner) when every weight is 1); infinite when
    /// the axis has no corner (then [`Spacing::nodes`] spaces the minimum number of cells
    /// evenly).
    fn at(&self, x: f64) -> f64 {
        self.singular.iter().fold(f64::INFINITY, |a, &(p, w)| {
            a.min(self.delta * w + self.growth * (x - p).abs())
        })
    }

    /// The pieces of [a, b] on which s is linear.
    fn pieces(&self, a: f64, b: f64) -> Vec<Piece> {
        let mut br = vec![a, b];
        let inside = |v: f64| v > a && v < b;
        // A corner whose spacing another's undercuts everywhere shapes nothing; between two
        // that remain, s turns where their ramps cross (half way when their weights are equal).
        let (d, g) = (self.delta, self.growth);
        let shaping: Vec<(f64, f64)> = self
            .singular
            .iter()
            .copied()
            .filter(|&(p, w)| {
                !self
                    .singular
                    .iter()
                    .any(|&(q, v)| d * v + g * (p - q).abs() < d * w)
            })
            .collect();
        for (i, &(p, w)) in shaping.iter().enumerate() {
            if inside(p) {
                br.push(p);
            }
            if let Some(&(q, v)) = shaping.get(i + 1) {
                let m = 0.5 * (p + q) + 0.5 * d * (v - w) / g;
                if inside(m) {
                    br.push(m);
                }
            }
        }
        br.sort_by(f64::total_cmp);
        br.dedup();
        let mut out = Vec::with_capacity(br.len());
        for w in br.windows(2) {
            if w[1] > w[0] {
                out.push(Piece {
                    x0: w[0],
                    x1: w[1],
                    s0: self.at(w[0]),
                    s1: self.at(w[1]),
                });
            }
        }
        out
    }

    /// Nodes of the base mesh on [a, b], ends included: at least `n_min` cells,
    /// equidistributed in ∫dx/s.
    fn nodes(&self, a: f64, b: f64, n_min: usize) -> Vec<f64> {
        let pieces = self.pieces(a, b);
        // No corner on this axis: the minimum number of cells, evenly spaced.
        if pieces.iter().any(|p| !p.s0.is_finite()) {
            return (0..=n_min)
                .map(|k| a + (b - a) * k as f64 / n_min as f64)
                .collect();
        }
        let weights: Vec<f64> = pieces.iter().map(Piece::weight).collect();
        let total: f64 = weights.iter().sum();
        let n = ((total - 1e-9).ceil() as usize).max(n_min).max(1);
        let mut out = Vec::with_capacity(n + 1);
        out.push(a);
        let (mut k, mut acc) = (0usize, 0.0);
        for i in 1..n {
            let target = total * i as f64 / n as f64;
            while k + 1 < pieces.len() && acc + weights[k] < target {
                acc += weights[k];
                k += 1;
            }
            let x = pieces[k].locate((target - acc).clamp(0.0, weights[k]));
            out.push(x.clamp(a, b));
        }
        out.push(b);
        out
    }
}

/// Builds one axis: base nodes between sorted `keys` (which include both ends), then every
/// base cell split into `m` equal cells.
pub(crate) fn build_axis(keys: &[f64], spacing: &Spacing, n_min: usize, m: usize) -> Axis {
    let mut base = vec![keys[0]];
    for w in keys.windows(2) {
        let seg = spacing.nodes(w[0], w[1], n_min);
        base.extend_from_slice(&seg[1..]);
    }
    Axis {
        nodes: subdivide(&base, m),
    }
}

/// Every cell split into `m` equal cells.
pub(crate) fn subdivide(base: &[f64], m: usize) -> Vec<f64> {
    let mut out = Vec::with_capacity((base.len() - 1) * m + 1);
    for w in base.windows(2) {
        for k in 0..m {
            out.push(w[0] + (w[1] - w[0]) * k as f64 / m as f64);
        }
    }
    out.push(*base.last().expect("an axis has nodes"));
    out
}

/// Sorts and merges coordinates closer than `tol`.
fn merge(mut v: Vec<f64>, tol: f64) -> Vec<f64> {
    v.sort_by(f64::total_cmp);
    let mut out: Vec<f64> = Vec::with_capacity(v.len());
    for x in v {
        match out.last() {
            Some(&l) if x - l <= tol => {}
            _ => out.push(x),
        }
    }
    out
}

/// Sorts corner coordinates and merges those closer than `tol`, keeping the smallest weight.
fn merge_corners(mut v: Vec<(f64, f64)>, tol: f64) -> Vec<(f64, f64)> {
    v.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut out: Vec<(f64, f64)> = Vec::with_capacity(v.len());
    for (x, w) in v {
        match out.last_mut() {
            Some(l) if x - l.0 <= tol => l.1 = l.1.min(w),
            _ => out.push((x, w)),
        }
    }
    out
}

/// Node state: free, or held at the signal or ground potential.
pub(crate) const FREE: u8 = 0;
/// Node held at 1 V.
pub(crate) const SIGNAL: u8 = 1;
/// Node held at 0 V.
pub(crate) const GROUND: u8 = 2;

/// The mesh of one cross-section at one refinement level.
#[derive(Debug, Clone)]
pub(crate) struct Grid {
    pub xs: Vec<f64>,
    pub ys: Vec<f64>,
    /// Relative permittivity of each cell, row-major (`j·(nx−1) + i`).
    pub eps: Vec<f64>,
    /// Node states, row-major (`j·nx + i`).
    pub state: Vec<u8>,
}

impl Grid {
    /// Number of node columns.
    pub fn nx(&self) -> usize {
        self.xs.len()
    }
    /// Number of node rows.
    pub fn ny(&self) -> usize {
        self.ys.len()
    }
}

/// An axis's corner coordinates (sorted), each with its smallest cell in units of δ.
pub(crate) type Singular = Vec<(f64, f64)>;

/// A conductor's corner, where the field is singular.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Corner {
    /// Position in the solved domain (a half's corners mirrored into x ≥ 0), mm.
    pub x: f64,
    pub y: f64,
    /// A signal conductor's corner.
    pub signal: bool,
    /// The corner of a conductor of no thickness or no width (a sheet's edge).
    pub sheet: bool,
    /// Its smallest cell in units of the section's δ: 1, unless `field::corners` grew it.
    pub weight: f64,
}

/// The key coordinates of both axes and the corners.
pub(crate) struct Plan {
    pub xkeys: Vec<f64>,
    pub ykeys: Vec<f64>,
    pub corners: Vec<Corner>,
    /// Coordinates closer than this are one.
    pub tol: f64,
}

impl Plan {
    /// The corner coordinates of each axis (sorted, merged within the tolerance), each with
    /// the smallest weight of the corners there.
    pub fn singular(&self) -> (Singular, Singular) {
        let axis = |at: fn(&Corner) -> f64| {
            merge_corners(
                self.corners.iter().map(|c| (at(c), c.weight)).collect(),
                self.tol,
            )
        };
        (axis(|c| c.x), axis(|c| c.y))
    }
}

/// Collects the key coordinates of a resolved cross-section (the half `x ≥ 0` when
/// `half` is set).
pub(crate) fn plan(r: &Resolved, half: bool) -> Plan {
    let tol = super::geometry::REL_TOL * r.size;
    let [dx0, dx1, dy0, dy1] = r.domain;
    let x_lo = if half { 0.0 } else { dx0 };
    let in_x = |v: f64| v.is_finite() && v >= x_lo - tol && v <= dx1 + tol;
    let in_y = |v: f64| v.is_finite() && v >= dy0 - tol && v <= dy1 + tol;
    let mut xk = vec![x_lo, dx1];
    let mut yk = vec![dy0, dy1];
    let mut corners = Vec::new();
    // Layer interfaces.
    let mut y = 0.0;
    yk.push(y);
    for l in &r.layers {
        y += l.thickness;
        yk.push(y);
    }
    if let Some(b) = r.board {
        xk.extend(b);
    }
    let top = y;
    for c in &r.conductors {
        let poly = c.polygon(f64::INFINITY);
        let (ub_l, ub_r) = c.unbounded();
        let [cx0, cx1, cy0, cy1] = c.bbox();
        yk.extend([cy0, cy1]);
        for (k, p) in poly.iter().enumerate() {
            if p.0.is_finite() {
                xk.push(p.0);
            }
            // A corner is a vertex at a finite x: the field is singular there. Unlimited
            // planes have none.
            let unbounded_side = if k == 0 || k == 3 { ub_l } else { ub_r };
            // Nor is a vertex on a grounded side of the domain: the solved region's angle
            // there is at most 180°, so the field is bounded (a plane or a wall meeting the
            // shield, a clipped ground; `geometry::enclosure`).
            let on_wall = (r.dirichlet[0] && (p.0 - dx0).abs() <= tol)
                || (r.dirichlet[1] && (p.0 - dx1).abs() <= tol)
                || (r.dirichlet[2] && (p.1 - dy0).abs() <= tol)
                || (r.dirichlet[3] && (p.1 - dy1).abs() <= tol);
            if !unbounded_side && !on_wall {
                // Corners are mirrored into the half domain too: the other half's corners
                // shape it.
                corners.push(Corner {
                    x: if half { p.0.abs() } else { p.0 },
                    y: p.1,
                    signal: c.role == Role::Signal,
                    sheet: cy1 - cy0 <= tol || cx1 - cx0 <= tol,
                    weight: 1.0,
                });
            }
        }
        if let Some(co) = r.coat {
            // Conductors standing on the coated surface get a coat beside and on top.
            if (cy0 - top).abs() <= tol {
                let (l, rr) = c.edges_at(cy0);
                let (lt, rt) = c.edges_at(cy1);
                for v in [l, rr, lt, rt] {
                    if v.is_finite() {
                        let sign = if v == l || v == lt { -1.0 } else { 1.0 };
                        xk.push(v + sign * co.thickness);
                    }
                }
                yk.push(cy1 + co.thickness);
            }
        }
    }
    if let Some(co) = r.coat {
        yk.push(top + co.thickness);
    }
    let xkeys = merge(xk.into_iter().filter(|v| in_x(*v)).collect(), tol);
    let ykeys = merge(yk.into_iter().filter(|v| in_y(*v)).collect(), tol);
    Plan {
        xkeys,
        ykeys,
        corners,
        tol,
    }
}

/// The section's smallest cell δ, mm: a fraction of its smallest feature; features far below
/// the structure's size are resolved by their key lines alone, and the floor keeps the corner
/// ladders (≈ ln(size/δ)/g cells) bounded.
pub(crate) fn smallest_cell(r: &Resolved, p: &MeshParams) -> f64 {
    (p.delta_rel * r.min_feature).max(1e-10 * r.size)
}

/// Builds the mesh at refinement level `m` (every base cell split into m).
pub(crate) fn build(r: &Resolved, plan: &Plan, p: &MeshParams, m: usize) -> Grid {
    let delta = smallest_cell(r, p);
    let (xsing, ysing) = plan.singular();
    let sx = Spacing {
        singular: &xsing,
        delta,
        growth: p.growth,
    };
    let sy = Spacing {
        singular: &ysing,
        delta,
        growth: p.growth,
    };
    let xs = build_axis(&plan.xkeys, &sx, 2, m).nodes;
    let ys = build_axis(&plan.ykeys, &sy, 2, m).nodes;
    fill(r, xs, ys)
}

/// Materials and node states for given node lines.
pub(crate) fn fill(r: &Resolved, xs: Vec<f64>, ys: Vec<f64>) -> Grid {
    let (nx, ny) = (xs.len(), ys.len());
    let tol = super::geometry::REL_TOL * r.size;
    // Layer permittivity by cell row.
    let mut bounds = vec![0.0];
    for l in &r.layers {
        bounds.push(bounds.last().unwrap() + l.thickness);
    }
    let top = *bounds.last().unwrap();
    let layer_er = |y: f64| -> f64 {
        for (k, l) in r.layers.iter().enumerate() {
            if y > bounds[k] && y < bounds[k + 1] {
                return l.er;
            }
        }
        1.0
    };
    // Coated regions: the flat coat over the surface and the coat around conductors
    // standing on it.
    let standing: Vec<_> = r
        .conductors
        .iter()
        .filter(|c| (c.bbox()[2] - top).abs() <= tol)
        .collect();
    let coat_at = |x: f64, y: f64| -> Option<f64> {
        let co = r.coat?;
        if y < top {
            return None;
        }
        if y < top + co.thickness {
            return Some(co.er);
        }
        for c in &standing {
            let [_, _, cy0, cy1] = c.bbox();
            if y < cy1 + co.thickness {
                let (l, rr) = c.edges_at(y.clamp(cy0, cy1));
                if x > l - co.thickness && x < rr + co.thickness {
                    return Some(co.er);
                }
            }
        }
        None
    };
    let mut eps = vec![1.0; (nx - 1) * (ny - 1)];
    for j in 0..ny - 1 {
        let yc = 0.5 * (ys[j] + ys[j + 1]);
        let row_er = layer_er(yc);
        for i in 0..nx - 1 {
            let xc = 0.5 * (xs[i] + xs[i + 1]);
            let on_board = r.board.is_none_or(|b| xc > b[0] && xc < b[1]);
            let mut e = if on_board { row_er } else { 1.0 };
            if let Some(c) = coat_at(xc, yc) {
                e = c;
            }
            eps[j * (nx - 1) + i] = e;
        }
    }
    let mut state = vec![FREE; nx * ny];
    for c in &r.conductors {
        let [x0, x1, y0, y1] = c.bbox();
        let v = if c.role == Role::Signal {
            SIGNAL
        } else {
            GROUND
        };
        let i0 = xs.partition_point(|&x| x < x0 - tol);
        let i1 = xs.partition_point(|&x| x <= x1 + tol);
        let j0 = ys.partition_point(|&y| y < y0 - tol);
        let j1 = ys.partition_point(|&y| y <= y1 + tol);
        for j in j0..j1 {
            for i in i0..i1 {
                if c.contains(xs[i], ys[j], tol) {
                    state[j * nx + i] = v;
                }
            }
        }
    }
    // The axis of an antimirrored half is held (at ½ V in the whole; at 0 V against the
    // signal's 1 V in the half solved, `Half::Antimirror`).
    if r.half == super::geometry::Half::Antimirror && xs[0] == 0.0 {
        for j in 0..ny {
            state[j * nx] = GROUND;
        }
    }
    // Grounded outer walls.
    let [left, right, bottom, topw] = r.dirichlet;
    for j in 0..ny {
        if left && xs[0] == r.domain[0] {
            state[j * nx] = GROUND;
        }
        if right {
            state[j * nx + nx - 1] = GROUND;
        }
    }
    for i in 0..nx {
        if bottom {
            state[i] = GROUND;
        }
        if topw {
            state[(ny - 1) * nx + i] = GROUND;
        }
    }
    Grid { xs, ys, eps, state }
}

#[cfg(test)]
mod tests {
    use super::*;

    // The closed-form equidistribution: a single corner at 0 with spacing δ + g·x has
    // ∫dx/s = ln(1 + g·L/δ)/g (calculus), and consecutive cells grow by a constant ratio.
    #[test]
    fn graded_axis_is_geometric_near_a_corner() {
        let sing = [(0.0, 1.0)];
        let s = Spacing {
            singular: &sing,
            delta: 1e-3,
            growth: 0.25,
        };
        let pieces = s.pieces(0.0, 1.0);
        let total: f64 = pieces.iter().map(Piece::weight).sum();
        let exact = (1.0_f64 + 0.25 * 1.0 / 1e-3).ln() / 0.25;
        assert!((total - exact).abs() < 1e-12 * exact);
        let nodes = s.nodes(0.0, 1.0, 2);
        let r1 = (nodes[2] - nodes[1]) / (nodes[1] - nodes[0]);
        let r2 = (nodes[5] - nodes[4]) / (nodes[4] - nodes[3]);
        assert!((r1 - r2).abs() < 1e-9, "{r1} {r2}");
    }

    // Two corners of different weights: the closed-form cell count ∫dx/s over the pieces matches
    // a midpoint-rule quadrature of 1/s (calculus), and s is linear on every piece (its
    // midpoint value is the mean of its ends): the breakpoints are where the ramps cross.
    #[test]
    fn weighted_corners_give_linear_pieces_and_the_exact_count() {
        let sing = [(0.0, 1.0), (0.3, 512.0), (0.5, 8.0), (1.0, 1.0)];
        let s = Spacing {
            singular: &sing,
            delta: 1e-3,
            growth: 0.6,
        };
        let pieces = s.pieces(-0.2, 1.3);
        for p in &pieces {
            let mid = s.at(0.5 * (p.x0 + p.x1));
            assert!((mid - 0.5 * (p.s0 + p.s1)).abs() < 1e-12, "{p:?}");
        }
        let closed: f64 = pieces.iter().map(Piece::weight).sum();
        let n = 2_000_000;
        let h = 1.5 / n as f64;
        let quad: f64 = (0..n).map(|k| h / s.at(-0.2 + (k as f64 + 0.5) * h)).sum();
        assert!((closed / quad - 1.0).abs() < 1e-6, "{closed} {quad}");
        // The corner of weight 512 is undercut by its neighbour's ramp: it shapes nothing.
        assert!(pieces.iter().all(|p| p.x0 != 0.3 && p.x1 != 0.3));
    }

    #[test]
    fn subdivision_keeps_the_base_nodes() {
        let base = [0.0, 0.1, 0.4, 1.0];
        let f = subdivide(&base, 4);
        assert_eq!(f.len(), 13);
        for (k, b) in base.iter().enumerate() {
            assert_eq!(f[4 * k], *b);
        }
    }

    // A vertex on a grounded side of the domain borders at most 180° of the solved region, so
    // no corner ladder is graded to it: here a shelf of ground across the whole shield, its
    // ends on the shield's walls, gives no corner; the trace's corners do.
    #[test]
    fn vertices_on_a_grounded_side_are_not_corners() {
        use super::super::geometry::{Boundary, Conductor, CrossSection, Dielectric};
        let cs = CrossSection {
            layers: vec![Dielectric::new(1.0, 1.0)],
            board: None,
            conductors: vec![
                Conductor::trace(0.375, 0.5, 0.25, 0.0, 0.0),
                Conductor::ground(-1.0, 1.0, 0.125, 0.25),
            ],
            coat: None,
            fences: vec![],
            boundary: Boundary::Shield {
                x0: -1.0,
                x1: 1.0,
                y0: 0.0,
                y1: 1.0,
            },
        };
        // Not cropped: the shelf closes a smaller box above it, which would drop it.
        let r = cs.resolve(false).unwrap();
        let p = plan(&r, false);
        let (xsing, ysing) = p.singular();
        assert_eq!(xsing, vec![(0.25, 1.0), (0.5, 1.0)]);
        assert_eq!(ysing, vec![(0.5, 1.0)]);
        // The shelf's faces are still key lines.
        assert!(p.ykeys.contains(&0.125) && p.ykeys.contains(&0.25));
    }
}
