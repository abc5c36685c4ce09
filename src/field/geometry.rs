//! The cross-section a field solution is computed for: horizontal dielectric layers,
//! conductors (the signal and its grounds), an optional conformal coat, via fences and
//! the outer boundary.
//!
//! Coordinates are millimetres: `x` across the board, `y` upwards, with `y = 0` at the
//! bottom of the dielectric stack. Layers stack upwards from `y = 0`; everything outside
//! the stack (and outside the board's edges, when given) is air.

use crate::error::{FieldError, fmt_num};
use crate::model::line::{MAX_ER, MAX_LENGTH_MM};

/// One horizontal dielectric layer.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Dielectric {
    /// Thickness, mm.
    pub thickness: f64,
    /// Relative permittivity.
    pub er: f64,
}

impl Dielectric {
    /// A layer of `thickness` mm and relative permittivity `er`.
    pub fn new(thickness: f64, er: f64) -> Self {
        Dielectric { thickness, er }
    }
}

/// What a conductor does in the two-conductor line.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Role {
    /// Part of the signal conductor (held at 1 V). Several signal shapes are one conductor.
    Signal,
    /// Part of the return (held at 0 V): planes, coplanar ground, walls.
    Ground,
}

/// A conductor's outline in the cross-section, mm.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Shape {
    /// Axis-aligned rectangle `[x0, x1] × [y0, y1]`.
    ///
    /// `y0 == y1` is a zero-thickness sheet; `x0 == x1` a zero-width wall (ground only).
    /// A ground rectangle may have `x0 = -inf` and/or `x1 = +inf`: a plane or a coplanar
    /// ground of unlimited width.
    Rect {
        /// Left edge, mm.
        x0: f64,
        /// Right edge, mm.
        x1: f64,
        /// Bottom face, mm.
        y0: f64,
        /// Top face, mm.
        y1: f64,
    },
    /// Trapezoid with horizontal bottom `[bottom[0], bottom[1]]` at `y0` and top
    /// `[top[0], top[1]]` at `y1` (an etched trace: the top narrower than the bottom).
    Trapezoid {
        /// Bottom face height, mm.
        y0: f64,
        /// Top face height, mm.
        y1: f64,
        /// Left and right ends of the bottom face, mm.
        bottom: [f64; 2],
        /// Left and right ends of the top face, mm.
        top: [f64; 2],
    },
}

/// A conductor: a shape and its role.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Conductor {
    /// Signal or ground.
    pub role: Role,
    /// Its outline.
    pub shape: Shape,
}

impl Conductor {
    /// A signal trace centred at `x_centre`, standing on `y` (its bottom face), `width` wide
    /// at the bottom, `thickness` thick, with its top narrower than its bottom by `etch` in
    /// total (0: rectangular; the common etch-factor picture has the top `etch/2` narrower on
    /// each side).
    pub fn trace(x_centre: f64, y: f64, width: f64, thickness: f64, etch: f64) -> Self {
        let shape = if etch == 0.0 {
            Shape::Rect {
                x0: x_centre - width / 2.0,
                x1: x_centre + width / 2.0,
                y0: y,
                y1: y + thickness,
            }
        } else {
            Shape::Trapezoid {
                y0: y,
                y1: y + thickness,
                bottom: [x_centre - width / 2.0, x_centre + width / 2.0],
                top: [
                    x_centre - (width - etch) / 2.0,
                    x_centre + (width - etch) / 2.0,
                ],
            }
        };
        Conductor {
            role: Role::Signal,
            shape,
        }
    }

    /// A ground rectangle `[x0, x1] × [y0, y1]` (infinite `x0`/`x1` allowed).
    pub fn ground(x0: f64, x1: f64, y0: f64, y1: f64) -> Self {
        Conductor {
            role: Role::Ground,
            shape: Shape::Rect { x0, x1, y0, y1 },
        }
    }

    /// A ground plane of unlimited width with its bottom face at `y`.
    pub fn plane(y: f64, thickness: f64) -> Self {
        Conductor::ground(f64::NEG_INFINITY, f64::INFINITY, y, y + thickness)
    }

    /// A ground plane from `x0` to `x1` (a shield of finite width) with its bottom face at `y`.
    pub fn finite_plane(x0: f64, x1: f64, y: f64, thickness: f64) -> Self {
        Conductor::ground(x0, x1, y, y + thickness)
    }

    /// The pair of coplanar grounds beside a trace centred at `x_centre` of bottom width
    /// `width`: each starts `gap` from the trace's bottom edge and is `ground_width` wide
    /// (`f64::INFINITY`: unlimited), standing on `y`, `thickness` thick.
    pub fn coplanar_pair(
        x_centre: f64,
        y: f64,
        width: f64,
        gap: f64,
        ground_width: f64,
        thickness: f64,
    ) -> [Self; 2] {
        let inner = width / 2.0 + gap;
        [
            Conductor::ground(
                x_centre - inner - ground_width,
                x_centre - inner,
                y,
                y + thickness,
            ),
            Conductor::ground(
                x_centre + inner,
                x_centre + inner + ground_width,
                y,
                y + thickness,
            ),
        ]
    }

    /// Corner points (anticlockwise from bottom-left) with infinite ends clipped to `±far`.
    pub(crate) fn polygon(&self, far: f64) -> [(f64, f64); 4] {
        let c = |v: f64| v.clamp(-far, far);
        match self.shape {
            Shape::Rect { x0, x1, y0, y1 } => [(c(x0), y0), (c(x1), y0), (c(x1), y1), (c(x0), y1)],
            Shape::Trapezoid {
                y0,
                y1,
                bottom,
                top,
            } => [(bottom[0], y0), (bottom[1], y0), (top[1], y1), (top[0], y1)],
        }
    }

    /// The bounding box `[x0, x1, y0, y1]` (infinite ends kept infinite).
    pub(crate) fn bbox(&self) -> [f64; 4] {
        match self.shape {
            Shape::Rect { x0, x1, y0, y1 } => [x0, x1, y0, y1],
            Shape::Trapezoid {
                y0,
                y1,
                bottom,
                top,
            } => [bottom[0].min(top[0]), bottom[1].max(top[1]), y0, y1],
        }
    }

    /// Left and right edges at height `y` (clamped to the shape's height range).
    pub(crate) fn edges_at(&self, y: f64) -> (f64, f64) {
        match self.shape {
            Shape::Rect { x0, x1, .. } => (x0, x1),
            Shape::Trapezoid {
                y0,
                y1,
                bottom,
                top,
            } => {
                if y1 <= y0 {
                    return (bottom[0].min(top[0]), bottom[1].max(top[1]));
                }
                let f = ((y - y0) / (y1 - y0)).clamp(0.0, 1.0);
                (
                    bottom[0] + f * (top[0] - bottom[0]),
                    bottom[1] + f * (top[1] - bottom[1]),
                )
            }
        }
    }

    /// True when the point lies inside or on the shape (within `tol`).
    pub(crate) fn contains(&self, x: f64, y: f64, tol: f64) -> bool {
        let [_, _, y0, y1] = self.bbox();
        if y < y0 - tol || y > y1 + tol {
            return false;
        }
        let (l, r) = self.edges_at(y);
        x >= l - tol && x <= r + tol
    }

    /// True when the shape reaches `x = -inf` (left) / `+inf` (right).
    pub(crate) fn unbounded(&self) -> (bool, bool) {
        let [x0, x1, ..] = self.bbox();
        (x0 == f64::NEG_INFINITY, x1 == f64::INFINITY)
    }
}

/// A conformal coat (solder mask) over the top surface of the dielectric stack: a layer of
/// `thickness` over the bare surface, and the same thickness over the top and the sides of
/// every conductor standing on that surface (square corners).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Coat {
    /// Coat thickness, mm (over the bare surface, over the conductor tops and beside them).
    pub thickness: f64,
    /// Coat relative permittivity.
    pub er: f64,
}

/// A row of vias (posts) joining two ground planes, seen end-on: the posts stand at `x`
/// with `diameter` at `pitch` along the line, from `y0` to `y1`.
///
/// It is modelled as a continuous zero-thickness conducting wall from `y0` to `y1`, moved
/// from the post centres by the equivalent-wall offset Δ ([`Fence::equivalent_offset`]) away
/// from the signal. Δ makes the wall and the row of posts carry the same charge in a field
/// that is uniform on the scale of the pitch (our derivation in `docs/field-solver.md`,
/// "Via fences", checked there against a direct solution of the row of posts). It assumes
/// pitch ≪ wavelength and pitch small against the distances to the trace and between the
/// planes; the pitch must be at least twice the diameter.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Fence {
    /// The posts' centre line, mm.
    pub x: f64,
    /// Post (finished hole or via) diameter, mm.
    pub diameter: f64,
    /// Post pitch along the line, mm.
    pub pitch: f64,
    /// Bottom of the posts (top face of the lower plane), mm.
    pub y0: f64,
    /// Top of the posts (bottom face of the upper plane), mm.
    pub y1: f64,
}

impl Fence {
    /// A symmetric pair of fences at `±distance` from `x = 0` (the trace's centre line).
    pub fn pair(distance: f64, diameter: f64, pitch: f64, y0: f64, y1: f64) -> [Fence; 2] {
        [
            Fence {
                x: -distance,
                diameter,
                pitch,
                y0,
                y1,
            },
            Fence {
                x: distance,
                diameter,
                pitch,
                y0,
                y1,
            },
        ]
    }

    /// Δ, the distance behind the post centres (away from the signal) of the solid wall with
    /// the same far field: Δ = (p/2π)·ln(p/(π·d)) − π·d²/(8·p) (negative: in front of the
    /// centres). The first term is the row of line charges, the second the dipole each post
    /// carries in the applied field.
    pub fn equivalent_offset(&self) -> f64 {
        let (p, d) = (self.pitch, self.diameter);
        let pi = std::f64::consts::PI;
        p / (2.0 * pi) * (p / (pi * d)).ln() - pi * d * d / (8.0 * p)
    }

    /// The posts' body `[x0, x1] × [y0, y1]`, for the clearance check.
    pub(crate) fn body(&self) -> Conductor {
        Conductor::ground(
            self.x - self.diameter / 2.0,
            self.x + self.diameter / 2.0,
            self.y0,
            self.y1,
        )
    }
}

/// The outer boundary of the solved region.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Boundary {
    /// No enclosure. The mesh reaches [`OPEN_FAR_FACTOR`] times the structure's size beyond
    /// it on every side not closed by an unlimited plane; the outer edge carries a
    /// zero-normal-field (Neumann) condition, so no charge ends on it and the signal's charge
    /// returns entirely on the grounds. The truncation error is quantified in
    /// `docs/field-solver.md`.
    Open,
    /// A grounded rectangular enclosure `[x0, x1] × [y0, y1]`, mm.
    Shield {
        /// Left wall, mm.
        x0: f64,
        /// Right wall, mm.
        x1: f64,
        /// Floor, mm.
        y0: f64,
        /// Lid, mm.
        y1: f64,
    },
}

/// How far the open boundary is placed, in multiples of the structure's size.
pub const OPEN_FAR_FACTOR: f64 = 300.0;

/// A transmission-line cross-section.
#[derive(Debug, Clone, PartialEq)]
pub struct CrossSection {
    /// Dielectric layers from the bottom (`y = 0`) up.
    pub layers: Vec<Dielectric>,
    /// The board's left and right edges, mm: the layers stop there (air beyond).
    /// `None`: the layers are unlimited in `x`.
    pub board: Option<[f64; 2]>,
    /// The conductors: at least one signal shape, and the grounds.
    pub conductors: Vec<Conductor>,
    /// Conformal coat (solder mask) over the top surface of the stack.
    pub coat: Option<Coat>,
    /// Via fences, each modelled as an equivalent solid wall.
    pub fences: Vec<Fence>,
    /// The outer boundary.
    pub boundary: Boundary,
}

impl CrossSection {
    /// Height of the top surface of the stack, mm.
    pub fn stack_top(&self) -> f64 {
        self.layers.iter().map(|l| l.thickness).sum()
    }

    /// Every length multiplied by `k` (permittivities unchanged).
    pub fn scaled(&self, k: f64) -> CrossSection {
        let mut c = self.clone();
        for l in &mut c.layers {
            l.thickness *= k;
        }
        if let Some(b) = &mut c.board {
            b[0] *= k;
            b[1] *= k;
        }
        for cd in &mut c.conductors {
            cd.shape = match cd.shape {
                Shape::Rect { x0, x1, y0, y1 } => Shape::Rect {
                    x0: x0 * k,
                    x1: x1 * k,
                    y0: y0 * k,
                    y1: y1 * k,
                },
                Shape::Trapezoid {
                    y0,
                    y1,
                    bottom,
                    top,
                } => Shape::Trapezoid {
                    y0: y0 * k,
                    y1: y1 * k,
                    bottom: [bottom[0] * k, bottom[1] * k],
                    top: [top[0] * k, top[1] * k],
                },
            };
        }
        if let Some(co) = &mut c.coat {
            co.thickness *= k;
        }
        for f in &mut c.fences {
            f.x *= k;
            f.diameter *= k;
            f.pitch *= k;
            f.y0 *= k;
            f.y1 *= k;
        }
        if let Boundary::Shield { x0, x1, y0, y1 } = c.boundary {
            c.boundary = Boundary::Shield {
                x0: x0 * k,
                x1: x1 * k,
                y0: y0 * k,
                y1: y1 * k,
            };
        }
        c
    }

    /// The same cross-section mirrored left–right about `x = 0`.
    pub fn mirrored_x(&self) -> CrossSection {
        let mut c = self.clone();
        if let Some(b) = &mut c.board {
            *b = [-b[1], -b[0]];
        }
        for cd in &mut c.conductors {
            cd.shape = match cd.shape {
                Shape::Rect { x0, x1, y0, y1 } => Shape::Rect {
                    x0: -x1,
                    x1: -x0,
                    y0,
                    y1,
                },
                Shape::Trapezoid {
                    y0,
                    y1,
                    bottom,
                    top,
                } => Shape::Trapezoid {
                    y0,
                    y1,
                    bottom: [-bottom[1], -bottom[0]],
                    top: [-top[1], -top[0]],
                },
            };
        }
        for f in &mut c.fences {
            f.x = -f.x;
        }
        if let Boundary::Shield { x0, x1, y0, y1 } = c.boundary {
            c.boundary = Boundary::Shield {
                x0: -x1,
                x1: -x0,
                y0,
                y1,
            };
        }
        c
    }
}

/// Tolerance for "the same coordinate", relative to the structure's size.
pub(crate) const REL_TOL: f64 = 1e-9;

/// A validated cross-section, reduced to what the mesher needs: conductors (fences turned
/// into walls), the domain, and which sides are closed.
#[derive(Debug, Clone)]
pub(crate) struct Resolved {
    pub layers: Vec<Dielectric>,
    pub board: Option<[f64; 2]>,
    pub conductors: Vec<Conductor>,
    pub coat: Option<Coat>,
    /// Domain `[x0, x1, y0, y1]`.
    pub domain: [f64; 4],
    /// The outer boundary is a grounded wall on [left, right, bottom, top].
    pub dirichlet: [bool; 4],
    /// The structure's size (mm), the unit for tolerances.
    pub size: f64,
    /// The smallest length that matters near the signal (widths, gaps, thicknesses), mm.
    pub min_feature: f64,
    /// Mirror-symmetric about `x = 0`.
    pub symmetric: bool,
}

fn bad(errs: &mut Vec<FieldError>, field: String, value: impl std::fmt::Display, allowed: &str) {
    errs.push(FieldError::new(field, value, allowed));
}

fn check_len(errs: &mut Vec<FieldError>, field: String, v: f64, zero_ok: bool) {
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

fn check_coord(errs: &mut Vec<FieldError>, field: String, v: f64) {
    if !(v.is_finite() && v.abs() <= MAX_LENGTH_MM) {
        errs.push(FieldError::new(
            field,
            fmt_num(v),
            format!("must be a finite coordinate from -{MAX_LENGTH_MM} to {MAX_LENGTH_MM} mm"),
        ));
    }
}

fn check_er(errs: &mut Vec<FieldError>, field: String, v: f64) {
    if !(v.is_finite() && (1.0..=MAX_ER).contains(&v)) {
        errs.push(FieldError::new(
            field,
            fmt_num(v),
            format!("must be a finite relative permittivity from 1 to {MAX_ER}"),
        ));
    }
}

/// Shortest distance between two convex polygons, 0 when they touch or overlap.
fn polygon_distance(a: &[(f64, f64); 4], b: &[(f64, f64); 4]) -> f64 {
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

fn point_segment(p: (f64, f64), a: (f64, f64), b: (f64, f64)) -> f64 {
    let pt = |q: (f64, f64)| kurbo::Point::new(q.0, q.1);
    crate::model::centreline::dist_to_segment(pt(p), pt(a), pt(b))
}

/// Separating-axis test for two convex quadrilaterals (degenerate ones included).
fn convex_overlap(a: &[(f64, f64); 4], b: &[(f64, f64); 4]) -> bool {
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

impl CrossSection {
    /// Checks every field and the arrangement; returns every problem found.
    pub fn validate(&self) -> Vec<FieldError> {
        self.resolve().err().unwrap_or_default()
    }

    /// Validates and reduces the cross-section for the mesher.
    pub(crate) fn resolve(&self) -> Result<Resolved, Vec<FieldError>> {
        let mut errs = Vec::new();
        if self.layers.is_empty() {
            bad(
                &mut errs,
                "layers".into(),
                "(none)",
                "at least one dielectric layer is needed",
            );
        }
        for (i, l) in self.layers.iter().enumerate() {
            check_len(
                &mut errs,
                format!("layers[{i}].thickness"),
                l.thickness,
                false,
            );
            check_er(&mut errs, format!("layers[{i}].er"), l.er);
        }
        if let Some([b0, b1]) = self.board {
            check_coord(&mut errs, "board[0]".into(), b0);
            check_coord(&mut errs, "board[1]".into(), b1);
            if b0.is_finite() && b1.is_finite() && b1 <= b0 {
                bad(
                    &mut errs,
                    "board[1]".into(),
                    fmt_num(b1),
                    &format!("must be greater than board[0] = {}", fmt_num(b0)),
                );
            }
        }
        if let Some(c) = self.coat {
            check_len(&mut errs, "coat.thickness".into(), c.thickness, false);
            check_er(&mut errs, "coat.er".into(), c.er);
        }
        for (i, c) in self.conductors.iter().enumerate() {
            let name = |f: &str| format!("conductors[{i}].{f}");
            let ground = c.role == Role::Ground;
            match c.shape {
                Shape::Rect { x0, x1, y0, y1 } => {
                    // Grounds may reach to -inf / +inf; signals may not.
                    if ground && x0 == f64::NEG_INFINITY {
                    } else {
                        check_coord(&mut errs, name("x0"), x0);
                    }
                    if ground && x1 == f64::INFINITY {
                    } else {
                        check_coord(&mut errs, name("x1"), x1);
                    }
                    check_coord(&mut errs, name("y0"), y0);
                    check_coord(&mut errs, name("y1"), y1);
                    if !x0.is_nan() && !x1.is_nan() && x1 < x0 {
                        bad(
                            &mut errs,
                            name("x1"),
                            fmt_num(x1),
                            &format!("must be at least x0 = {} (width ≥ 0)", fmt_num(x0)),
                        );
                    }
                    if !y0.is_nan() && !y1.is_nan() && y1 < y0 {
                        bad(
                            &mut errs,
                            name("y1"),
                            fmt_num(y1),
                            &format!("must be at least y0 = {} (thickness ≥ 0)", fmt_num(y0)),
                        );
                    }
                    if !ground && x1 - x0 <= 0.0 {
                        bad(
                            &mut errs,
                            format!("conductors[{i}] width"),
                            num(x1 - x0),
                            "a signal conductor must be wider than 0 mm",
                        );
                    } else if x1 == x0 && y1 == y0 {
                        bad(
                            &mut errs,
                            format!("conductors[{i}] size"),
                            "0 × 0 mm",
                            "a conductor must have a width or a height greater than 0 mm",
                        );
                    }
                }
                Shape::Trapezoid {
                    y0,
                    y1,
                    bottom,
                    top,
                } => {
                    check_coord(&mut errs, name("y0"), y0);
                    check_coord(&mut errs, name("y1"), y1);
                    for k in 0..2 {
                        check_coord(&mut errs, name(&format!("bottom[{k}]")), bottom[k]);
                        check_coord(&mut errs, name(&format!("top[{k}]")), top[k]);
                    }
                    if y1 <= y0 && y0.is_finite() && y1.is_finite() {
                        bad(
                            &mut errs,
                            name("y1"),
                            fmt_num(y1),
                            &format!(
                                "a trapezoid needs a thickness: y1 must be greater than y0 = {}",
                                fmt_num(y0)
                            ),
                        );
                    }
                    let wb = bottom[1] - bottom[0];
                    let wt = top[1] - top[0];
                    if wb.is_finite() && wb <= 0.0 {
                        bad(
                            &mut errs,
                            format!("conductors[{i}] bottom width"),
                            num(wb),
                            "must be greater than 0 mm",
                        );
                    }
                    if wt.is_finite() && wt <= 0.0 {
                        bad(
                            &mut errs,
                            format!("conductors[{i}] top width"),
                            num(wt),
                            "must be greater than 0 mm (the etch must be less than the width)",
                        );
                    }
                }
            }
        }
        for (i, f) in self.fences.iter().enumerate() {
            let name = |s: &str| format!("fences[{i}].{s}");
            check_coord(&mut errs, name("x"), f.x);
            check_len(&mut errs, name("diameter"), f.diameter, false);
            check_coord(&mut errs, name("y0"), f.y0);
            check_coord(&mut errs, name("y1"), f.y1);
            if f.pitch.is_finite() && f.diameter.is_finite() && f.diameter > 0.0 {
                if !(f.pitch >= 2.0 * f.diameter && f.pitch <= MAX_LENGTH_MM) {
                    bad(
                        &mut errs,
                        name("pitch"),
                        fmt_num(f.pitch),
                        &format!(
                            "must be from 2 × diameter = {} mm up to {MAX_LENGTH_MM} mm \
                             (closer posts: model the fence as a solid wall conductor)",
                            fmt_num(2.0 * f.diameter)
                        ),
                    );
                }
            } else {
                check_len(&mut errs, name("pitch"), f.pitch, false);
            }
            if f.y0.is_finite() && f.y1.is_finite() && f.y1 <= f.y0 {
                bad(
                    &mut errs,
                    name("y1"),
                    fmt_num(f.y1),
                    &format!("must be greater than y0 = {}", fmt_num(f.y0)),
                );
            }
        }
        if let Boundary::Shield { x0, x1, y0, y1 } = self.boundary {
            check_coord(&mut errs, "boundary.x0".into(), x0);
            check_coord(&mut errs, "boundary.x1".into(), x1);
            check_coord(&mut errs, "boundary.y0".into(), y0);
            check_coord(&mut errs, "boundary.y1".into(), y1);
            if x1 <= x0 {
                bad(
                    &mut errs,
                    "boundary.x1".into(),
                    fmt_num(x1),
                    &format!("must be greater than boundary.x0 = {}", fmt_num(x0)),
                );
            }
            if y1 <= y0 {
                bad(
                    &mut errs,
                    "boundary.y1".into(),
                    fmt_num(y1),
                    &format!("must be greater than boundary.y0 = {}", fmt_num(y0)),
                );
            }
        }
        let n_signal = self
            .conductors
            .iter()
            .filter(|c| c.role == Role::Signal)
            .count();
        if n_signal == 0 {
            bad(
                &mut errs,
                "conductors".into(),
                format!("{} conductors, none a signal", self.conductors.len()),
                "at least one conductor must have the role Signal",
            );
        }
        let n_ground = self.conductors.len() - n_signal + self.fences.len();
        if n_ground == 0 && matches!(self.boundary, Boundary::Open) {
            bad(
                &mut errs,
                "conductors".into(),
                "no ground",
                "a ground conductor (or a shield boundary) is needed for the return",
            );
        }
        if !errs.is_empty() {
            return Err(errs);
        }

        // Everything is finite (apart from unlimited grounds) from here on.
        let stack_top = self.stack_top();
        let mut conductors = self.conductors.clone();
        for f in &self.fences {
            // The wall is pushed away from the signal (the signal's centre decides the side).
            let xs = signal_centre(&self.conductors);
            let dir = if f.x >= xs { 1.0 } else { -1.0 };
            let x = f.x + dir * f.equivalent_offset();
            conductors.push(Conductor::ground(x, x, f.y0, f.y1));
        }

        // The structure's size: the span of every finite coordinate.
        let mut xs_fin: Vec<f64> = Vec::new();
        let mut ys_fin: Vec<f64> = vec![0.0, stack_top];
        for c in &conductors {
            let [x0, x1, y0, y1] = c.bbox();
            xs_fin.extend([x0, x1].iter().filter(|v| v.is_finite()));
            ys_fin.extend([y0, y1]);
        }
        if let Some(b) = self.board {
            xs_fin.extend(b);
        }
        let span = |v: &[f64]| {
            v.iter().cloned().fold(f64::NEG_INFINITY, f64::max)
                - v.iter().cloned().fold(f64::INFINITY, f64::min)
        };
        let size = span(&xs_fin).max(span(&ys_fin)).max(f64::MIN_POSITIVE);
        let tol = REL_TOL * size;
        let far = 1e3 * size + xs_fin.iter().fold(0.0_f64, |a, v| a.max(v.abs()));

        // Signals must not touch grounds (nor the posts' bodies).
        let mut bodies = conductors.clone();
        bodies.extend(self.fences.iter().map(Fence::body));
        for (i, a) in conductors.iter().enumerate() {
            if a.role != Role::Signal {
                continue;
            }
            for (j, b) in bodies.iter().enumerate() {
                if b.role != Role::Ground {
                    continue;
                }
                let d = polygon_distance(&a.polygon(far), &b.polygon(far));
                if d <= tol {
                    let n = self.conductors.len();
                    let what = if j < n {
                        format!("conductors[{j}]")
                    } else {
                        // Either the equivalent wall or the posts themselves.
                        format!("fences[{}]", (j - n) % self.fences.len().max(1))
                    };
                    errs.push(FieldError::new(
                        format!("conductors[{i}]"),
                        format!("touches or overlaps {what} (clearance {} mm)", num(d)),
                        "a signal conductor must keep a clearance greater than 0 mm from every ground",
                    ));
                }
            }
        }

        // The domain. Unlimited grounds that span the whole width close the domain above
        // or below the signal.
        let (mut sig_lo, mut sig_hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for c in conductors.iter().filter(|c| c.role == Role::Signal) {
            let [_, _, y0, y1] = c.bbox();
            sig_lo = sig_lo.min(y0);
            sig_hi = sig_hi.max(y1);
        }
        let mut y_lo = f64::NEG_INFINITY;
        let mut y_hi = f64::INFINITY;
        for c in &conductors {
            if c.role == Role::Ground && c.unbounded() == (true, true) {
                let [_, _, y0, y1] = c.bbox();
                if y1 <= sig_lo {
                    y_lo = y_lo.max(y1);
                } else if y0 >= sig_hi {
                    y_hi = y_hi.min(y0);
                }
            }
        }
        let x_min = xs_fin.iter().cloned().fold(f64::INFINITY, f64::min);
        let x_max = xs_fin.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
        let y_min = ys_fin.iter().cloned().fold(f64::INFINITY, f64::min);
        let y_max = ys_fin.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
        let pad = OPEN_FAR_FACTOR * size;
        let mut domain = [x_min - pad, x_max + pad, y_min - pad, y_max + pad];
        let mut dirichlet = [false; 4];
        if let Boundary::Shield { x0, x1, y0, y1 } = self.boundary {
            domain = [x0, x1, y0, y1];
            dirichlet = [true; 4];
        }
        if y_lo > domain[2] {
            domain[2] = y_lo;
            dirichlet[2] = true;
        }
        if y_hi < domain[3] {
            domain[3] = y_hi;
            dirichlet[3] = true;
        }

        // Every conductor must reach into the domain; signals must be strictly inside.
        for (i, c) in conductors.iter().enumerate() {
            let [x0, x1, y0, y1] = c.bbox();
            let name = if i < self.conductors.len() {
                format!("conductors[{i}]")
            } else {
                format!("fences[{}]", i - self.conductors.len())
            };
            let range = format!(
                "the solved region x {}..{}, y {}..{} mm (inside the shield, and between the \
                 nearest unlimited planes below and above the signal)",
                num(domain[0]),
                num(domain[1]),
                num(domain[2]),
                num(domain[3])
            );
            let bbox = format!("x {}..{}, y {}..{}", num(x0), num(x1), num(y0), num(y1));
            if c.role == Role::Signal {
                let inside = x0 > domain[0] + tol
                    && x1 < domain[1] - tol
                    && y0 > domain[2] + tol
                    && y1 < domain[3] - tol;
                if !inside {
                    errs.push(FieldError::new(
                        name,
                        bbox,
                        format!("a signal conductor must lie strictly inside {range}"),
                    ));
                }
            } else {
                let outside = x1 < domain[0] - tol
                    || x0 > domain[1] + tol
                    || y1 < domain[2] - tol
                    || y0 > domain[3] + tol;
                let is_closing_plane = c.unbounded() == (true, true)
                    && ((y1 - domain[2]).abs() <= tol || (y0 - domain[3]).abs() <= tol);
                if outside && !is_closing_plane {
                    errs.push(FieldError::new(
                        name,
                        bbox,
                        format!(
                            "a ground conductor must reach into {range}; this one is \
                             outside the shield or screened from the signal by an unlimited plane"
                        ),
                    ));
                }
            }
        }
        if !errs.is_empty() {
            return Err(errs);
        }

        // The smallest feature near the signal: widths, thicknesses, clearances, layers.
        let mut min_feature = size;
        for c in &conductors {
            let [x0, x1, y0, y1] = c.bbox();
            for v in [x1 - x0, y1 - y0] {
                if v > tol && v.is_finite() {
                    min_feature = min_feature.min(v);
                }
            }
            if let Shape::Trapezoid { bottom, top, .. } = c.shape {
                for v in [(top[0] - bottom[0]).abs(), (top[1] - bottom[1]).abs()] {
                    if v > tol {
                        min_feature = min_feature.min(v);
                    }
                }
            }
        }
        for a in conductors.iter().filter(|c| c.role == Role::Signal) {
            for b in conductors.iter().filter(|c| c.role == Role::Ground) {
                min_feature = min_feature.min(polygon_distance(&a.polygon(far), &b.polygon(far)));
            }
        }
        for l in &self.layers {
            min_feature = min_feature.min(l.thickness);
        }
        if let Some(c) = self.coat {
            min_feature = min_feature.min(c.thickness);
        }

        let resolved = Resolved {
            layers: self.layers.clone(),
            board: self.board,
            conductors,
            coat: self.coat,
            domain,
            dirichlet,
            size,
            min_feature,
            symmetric: false,
        };
        let symmetric = is_symmetric(&resolved, tol);
        Ok(Resolved {
            symmetric,
            ..resolved
        })
    }
}

/// A computed length for a message: 6 significant digits, no float noise.
fn num(v: f64) -> String {
    crate::math::sig_fig(v, 6)
}

fn signal_centre(conductors: &[Conductor]) -> f64 {
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for c in conductors.iter().filter(|c| c.role == Role::Signal) {
        let [x0, x1, ..] = c.bbox();
        lo = lo.min(x0);
        hi = hi.max(x1);
    }
    0.5 * (lo + hi)
}

/// Mirror symmetry about `x = 0` of everything that shapes the field.
fn is_symmetric(r: &Resolved, tol: f64) -> bool {
    let same = |a: f64, b: f64| (a == b) || (a - b).abs() <= tol;
    if !same(r.domain[0], -r.domain[1]) || r.dirichlet[0] != r.dirichlet[1] {
        return false;
    }
    if let Some(b) = r.board
        && !same(b[0], -b[1])
    {
        return false;
    }
    let mirror = |c: &Conductor| -> [f64; 6] {
        let p = c.polygon(f64::MAX);
        [-p[1].0, -p[0].0, -p[2].0, -p[3].0, p[0].1, p[2].1]
    };
    let key = |c: &Conductor| -> [f64; 6] {
        let p = c.polygon(f64::MAX);
        [p[0].0, p[1].0, p[3].0, p[2].0, p[0].1, p[2].1]
    };
    r.conductors.iter().all(|a| {
        let m = mirror(a);
        r.conductors
            .iter()
            .any(|b| b.role == a.role && key(b).iter().zip(&m).all(|(u, v)| same(*u, *v)))
    })
}
