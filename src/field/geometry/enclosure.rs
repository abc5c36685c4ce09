//! A grounded box around the signal: when ground copper closes a rectangle round
//! every signal conductor (the probes' shield planes joined by their via rows, a shield
//! boundary, unlimited planes), nothing outside it carries field, and the section is solved
//! inside it alone.
//!
//! Why this is exact: every point of the box's outline is held at 0 V, so the potential
//! outside the box solves Laplace's equation with zero on all of its boundary and no charge,
//! which makes it zero; the outside stores no energy and adds nothing to C or C0. The same
//! holds on the mesh: the box's sides are node lines (they are conductor faces, hence key
//! lines), every node on them is held, and the five-point stencil couples no free node inside
//! to one outside. Cropping therefore removes no energy; what it changes is the mesh inside,
//! which no longer carries the grading lines of corners outside the box (plane ends, board
//! edges, the far region), so the same accuracy costs fewer nodes.
//!
//! A corner on the box's outline is not singular: the solved region's angle there is at most
//! 180°, so the field is bounded and the mesher grades no ladder to it (`mesh::plan`).

use super::{Conductor, Role, Shape};

/// At most this many candidate positions are tried for each side, innermost first.
const CANDIDATES: usize = 8;

/// The box `[x0, x1, y0, y1]` and the conductors clipped to it, when ground closes a box round
/// every signal inside `domain`; `None` otherwise (or when a trapezoidal ground crosses the
/// box's outline, which a rectangle cannot clip exactly).
///
/// `dirichlet` says which of the domain's sides are grounded walls (a shield, an unlimited
/// plane); they count as ground. Grounds wholly outside the box, or lying on its outline with
/// no area inside, are dropped; the others are clipped to it. Signals are kept as they are
/// (they lie strictly inside).
///
/// `coated` is the top of the dielectric stack when a coat covers it: a box reaching above it
/// is refused, because the coat beside a conductor standing on that surface is drawn from the
/// conductor's own outline, which clipping or dropping would change.
pub(super) fn crop(
    conductors: &[Conductor],
    domain: [f64; 4],
    dirichlet: [bool; 4],
    tol: f64,
    coated: Option<f64>,
) -> Option<([f64; 4], Vec<Conductor>)> {
    let mut sig = [
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::INFINITY,
        f64::NEG_INFINITY,
    ];
    for c in conductors.iter().filter(|c| c.role == Role::Signal) {
        let [x0, x1, y0, y1] = c.bbox();
        sig = [
            sig[0].min(x0),
            sig[1].max(x1),
            sig[2].min(y0),
            sig[3].max(y1),
        ];
    }
    if !sig.iter().all(|v| v.is_finite()) {
        return None;
    }
    // Ground rectangles: the only shapes that can close a side.
    let rects: Vec<[f64; 4]> = conductors
        .iter()
        .filter(|c| c.role == Role::Ground)
        .filter_map(|c| match c.shape {
            Shape::Rect { x0, x1, y0, y1 } => Some([x0, x1, y0, y1]),
            Shape::Trapezoid { .. } => None,
        })
        .collect();
    let within = |v: f64, lo: f64, hi: f64| v >= lo - tol && v <= hi + tol;
    // Candidate sides: a ground face looking towards the signal, or a grounded domain wall;
    // innermost first.
    let side = |faces: Vec<f64>, wall: Option<f64>, lo: f64, hi: f64, inward_up: bool| {
        let mut v: Vec<f64> = faces
            .into_iter()
            .chain(wall)
            .filter(|v| v.is_finite() && within(*v, lo, hi))
            .collect();
        v.sort_by(f64::total_cmp);
        if !inward_up {
            v.reverse();
        }
        v.dedup_by(|a, b| (*a - *b).abs() <= tol);
        v.truncate(CANDIDATES);
        v
    };
    let [dx0, dx1, dy0, dy1] = domain;
    // Left, right, bottom, top: a ground's face looking towards the signal (a right face for
    // the left side, ...), beyond the signal's extent on that side.
    let [left, right, bottom, top]: [Vec<f64>; 4] = std::array::from_fn(|k| {
        let face = [1, 0, 3, 2][k];
        let low = k % 2 == 0;
        let (lo, hi) = if k < 2 { (dx0, dx1) } else { (dy0, dy1) };
        let faces = rects
            .iter()
            .map(|r| r[face])
            .filter(|&v| {
                if low {
                    v < sig[k] - tol
                } else {
                    v > sig[k] + tol
                }
            })
            .collect();
        side(faces, dirichlet[k].then_some(domain[k]), lo, hi, !low)
    });
    // Is the segment from `a` to `b` at `at` (vertical: x = at, else y = at) covered by
    // ground rectangles or a grounded domain wall?
    let covered = |vertical: bool, at: f64, a: f64, b: f64| -> bool {
        let wall = if vertical {
            (dirichlet[0] && (at - dx0).abs() <= tol) || (dirichlet[1] && (at - dx1).abs() <= tol)
        } else {
            (dirichlet[2] && (at - dy0).abs() <= tol) || (dirichlet[3] && (at - dy1).abs() <= tol)
        };
        if wall {
            return true;
        }
        let mut spans: Vec<(f64, f64)> = rects
            .iter()
            .filter_map(|r| {
                let (lo, hi, s0, s1) = if vertical {
                    (r[0], r[1], r[2], r[3])
                } else {
                    (r[2], r[3], r[0], r[1])
                };
                within(at, lo, hi).then_some((s0, s1))
            })
            .collect();
        spans.sort_by(|p, q| p.0.total_cmp(&q.0));
        let mut reach = a;
        for (s0, s1) in spans {
            if s0 > reach + tol {
                break;
            }
            reach = reach.max(s1);
        }
        reach >= b - tol
    };
    // The first closed box, trying the innermost sides first.
    for &x0 in &left {
        for &x1 in &right {
            for &y0 in &bottom {
                for &y1 in &top {
                    if coated.is_some_and(|surface| y1 > surface + tol) {
                        continue;
                    }
                    let closed = covered(true, x0, y0, y1)
                        && covered(true, x1, y0, y1)
                        && covered(false, y0, x0, x1)
                        && covered(false, y1, x0, x1);
                    if !closed {
                        continue;
                    }
                    if let Some(kept) = clip(conductors, [x0, x1, y0, y1], tol) {
                        return Some(([x0, x1, y0, y1], kept));
                    }
                }
            }
        }
    }
    None
}

/// The conductors clipped to `bx`: signals kept, grounds clipped or dropped; `None` when a
/// trapezoidal ground crosses the box's outline.
fn clip(conductors: &[Conductor], bx: [f64; 4], tol: f64) -> Option<Vec<Conductor>> {
    let [bx0, bx1, by0, by1] = bx;
    let mut kept = Vec::with_capacity(conductors.len());
    for c in conductors {
        if c.role == Role::Signal {
            kept.push(*c);
            continue;
        }
        let [x0, x1, y0, y1] = c.bbox();
        let outside = x1 <= bx0 + tol || x0 >= bx1 - tol || y1 <= by0 + tol || y0 >= by1 - tol;
        if outside {
            // Wholly outside, or lying on the outline with no area inside: the outline is
            // ground already.
            continue;
        }
        let inside = x0 >= bx0 - tol && x1 <= bx1 + tol && y0 >= by0 - tol && y1 <= by1 + tol;
        match c.shape {
            _ if inside => kept.push(*c),
            Shape::Rect { .. } => kept.push(Conductor::ground(
                x0.max(bx0),
                x1.min(bx1),
                y0.max(by0),
                y1.min(by1),
            )),
            Shape::Trapezoid { .. } => return None,
        }
    }
    Some(kept)
}

#[cfg(test)]
mod tests {
    use super::*;

    const TOL: f64 = 1e-9;
    const OPEN: [bool; 4] = [false; 4];
    const FAR: [f64; 4] = [-300.0, 300.0, -300.0, 300.0];

    /// A trace 0.2 mm wide at y = 0.2 between finite planes at y = 0 and 0.5, x ±2, with
    /// walls at ±`wall` from `y0` to `y1`.
    fn shielded(wall: f64, y0: f64, y1: f64) -> Vec<Conductor> {
        vec![
            Conductor::finite_plane(-2.0, 2.0, 0.0, 0.0),
            Conductor::trace(0.0, 0.2, 0.2, 0.035, 0.0),
            Conductor::finite_plane(-2.0, 2.0, 0.5, 0.0),
            Conductor::ground(-wall, -wall, y0, y1),
            Conductor::ground(wall, wall, y0, y1),
        ]
    }

    #[test]
    fn walls_joining_the_planes_close_the_box_and_the_rest_is_dropped() {
        let mut cs = shielded(1.0, 0.0, 0.5);
        // A ground outside the box, and a coplanar ground crossing its wall.
        cs.push(Conductor::ground(1.5, 1.8, 0.2, 0.235));
        cs.push(Conductor::ground(0.4, 1.8, 0.2, 0.235));
        let (bx, kept) = crop(&cs, FAR, OPEN, TOL, None).expect("closed");
        assert_eq!(bx, [-1.0, 1.0, 0.0, 0.5]);
        // The planes and walls lie on the outline (dropped); the outer ground is outside; the
        // coplanar ground is clipped at the wall.
        assert_eq!(
            kept,
            vec![cs[1], Conductor::ground(0.4, 1.0, 0.2, 0.235)],
            "{kept:?}"
        );
    }

    #[test]
    fn a_wall_short_of_a_plane_leaves_the_section_open() {
        assert!(crop(&shielded(1.0, 0.0, 0.45), FAR, OPEN, TOL, None).is_none());
        // Open microstrip: a plane below, nothing above.
        let ms = [
            Conductor::plane(0.0, 0.0),
            Conductor::trace(0.0, 0.2, 0.2, 0.0, 0.0),
        ];
        assert!(crop(&ms, FAR, OPEN, TOL, None).is_none());
    }

    #[test]
    fn grounded_domain_sides_count_as_ground() {
        // Stripline between unlimited planes (the domain's grounded bottom and top) with
        // fence walls: the box is the walls and the planes.
        let cs = [
            Conductor::trace(0.0, 0.2, 0.2, 0.0, 0.0),
            Conductor::ground(-0.7, -0.7, 0.0, 0.5),
            Conductor::ground(0.9, 0.9, 0.0, 0.5),
        ];
        let domain = [-150.0, 150.0, 0.0, 0.5];
        let (bx, kept) = crop(&cs, domain, [false, false, true, true], TOL, None).expect("closed");
        assert_eq!(bx, [-0.7, 0.9, 0.0, 0.5]);
        assert_eq!(kept, vec![cs[0]]);
        // Without the planes grounded there is no box.
        assert!(crop(&cs, domain, OPEN, TOL, None).is_none());
    }

    #[test]
    fn the_innermost_closed_box_is_taken_and_a_sloped_ground_across_it_is_refused() {
        // Two pairs of walls: the inner pair closes the box.
        let mut cs = shielded(1.5, 0.0, 0.5);
        cs.push(Conductor::ground(-0.8, -0.8, 0.0, 0.5));
        cs.push(Conductor::ground(0.8, 0.8, 0.0, 0.5));
        assert_eq!(
            crop(&cs, FAR, OPEN, TOL, None).unwrap().0,
            [-0.8, 0.8, 0.0, 0.5]
        );
        // A trapezoidal ground across the inner box's wall cannot be clipped to a rectangle:
        // the boxes whose right side is the inner wall are refused, and the first that holds
        // it whole is taken (the inner wall on the left, the outer on the right).
        let mut sloped = cs.clone();
        sloped.push(Conductor {
            role: Role::Ground,
            shape: Shape::Trapezoid {
                y0: 0.3,
                y1: 0.33,
                bottom: [0.5, 1.0],
                top: [0.52, 0.98],
            },
        });
        let (bx, kept) = crop(&sloped, FAR, OPEN, TOL, None).unwrap();
        assert_eq!(bx, [-0.8, 1.5, 0.0, 0.5]);
        assert_eq!(
            kept.len(),
            3,
            "trace, right inner wall, trapezoid: {kept:?}"
        );
    }

    #[test]
    fn a_coated_surface_inside_the_box_refuses_it() {
        // The stack's top at 0.2 mm under a coat: the box reaching 0.5 mm would hold coat drawn
        // round conductors that clipping changes, so it is refused; a box whose lid is the
        // coated surface itself holds no coat and stands.
        let cs = shielded(1.0, 0.0, 0.5);
        assert!(crop(&cs, FAR, OPEN, TOL, Some(0.2)).is_none());
        assert!(crop(&cs, FAR, OPEN, TOL, Some(0.5)).is_some());
    }
}
