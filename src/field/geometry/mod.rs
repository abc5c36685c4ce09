//! The cross-section a field solution is computed for: horizontal dielectric layers,
//! conductors (the signal and its grounds), an optional conformal coat, via fences and
//! the outer boundary.
//!
//! Coordinates are millimetres: `x` across the board, `y` upwards, with `y = 0` at the
//! bottom of the dielectric stack. Layers stack upwards from `y = 0`; everything outside
//! the stack (and outside the board's edges, when given) is air.

mod enclosure;
mod resolve;
mod validate;

pub(crate) use validate::point_segment;

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
    /// The smallest length that matters near the signal, mm: a sheet's width, a clearance, a
    /// trapezoid's slope, or ten times a solid conductor's extent or a layer's or coat's
    /// thickness (their corners are less singular than a sheet's edge).
    pub min_feature: f64,
    /// The smallest distance from a signal to a ground conductor or a grounded side of the
    /// domain, mm (infinite when there is neither): part of `min_feature`, and the scale of
    /// the far corners' estimate (`field::corners`).
    pub signal_to_ground: f64,
    /// Whether, and how, the half `x ≥ 0` stands for the whole.
    pub half: Half,
}

/// How the solved domain stands for the whole section.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Half {
    /// The whole section is solved.
    Whole,
    /// The half `x ≥ 0` of a mirror-symmetric section: the axis is a zero-normal-field wall.
    Mirror,
    /// The half `x ≥ 0` of a mirror-antisymmetric one: every conductor's mirror image is a
    /// conductor of the other role, and no side of the domain is grounded. The potential less
    /// ½ V is then odd in x, so the axis stands at ½ V: the half is solved with the axis held.
    Antimirror,
}

impl Half {
    /// The whole section's C over the solved half's: 2 for a mirrored half; ½ for an
    /// antimirrored one, whose whole carries 1 V where the half carries ½ V, over twice the
    /// region (2 × (½)² = ½).
    pub(crate) fn c_factor(self) -> f64 {
        match self {
            Half::Whole => 1.0,
            Half::Mirror => 2.0,
            Half::Antimirror => 0.5,
        }
    }
}
