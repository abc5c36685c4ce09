//! `CrossSection::resolve`: every field checked, clearances between conductors, fences and
//! coat, and the solution domain, into the `Resolved` form the mesher reads.

use super::validate::*;
use super::*;
use crate::error::{FieldError, fmt_num};
use crate::model::line::MAX_LENGTH_MM;

/// How many times over a solid conductor's extents and a layer's or coat's thickness count
/// in the smallest feature (see `resolve`): their corners are less singular than a sheet's edge.
const SOLID_FEATURE_WEIGHT: f64 = 10.0;

impl CrossSection {
    /// Checks every field and the arrangement; returns every problem found.
    pub fn validate(&self) -> Vec<FieldError> {
        // Cropping to the signal's box adds no error: the whole domain is checked.
        self.resolve(false).err().unwrap_or_default()
    }

    /// Validates and reduces the cross-section for the mesher. With `reduce`, a section that
    /// ground closes round its signal is cropped to that grounded box (`enclosure`), and a
    /// mirror-antisymmetric one is marked for its half; without, the whole domain is kept (the
    /// check that these change nothing but the mesh). A mirror-symmetric section is marked for
    /// its half either way.
    pub(crate) fn resolve(&self, reduce: bool) -> Result<Resolved, Vec<FieldError>> {
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
        // Ground closing a box round the signal: only the inside is solved (`enclosure`).
        let boxed = match reduce {
            true => super::enclosure::crop(
                &conductors,
                domain,
                dirichlet,
                tol,
                self.coat.map(|_| stack_top),
            ),
            false => None,
        };
        let conductors = match boxed {
            Some((bx, kept)) => {
                domain = bx;
                dirichlet = [true; 4];
                kept
            }
            None => conductors,
        };

        // The smallest feature near the signal: widths, thicknesses, clearances, layers. The
        // smallest cell is a fixed fraction of it, small enough for the edge of a sheet
        // (a conductor of zero thickness or zero width), where the field grows as r^(−1/2) and
        // the corner cell's energy error is first order in its size. A solid conductor's
        // corners (field as r^(−1/3), error of order 4/3) and the corners of dielectric layers
        // and coats (weaker still) need ten times less: their extents, and layer and coat
        // thicknesses, count ten times over (a third fewer nodes on the probes' sections,
        // whose 17.5–35 µm copper set the smallest cell; Z0 moved by 1e-6 to 4e-5 at
        // `Standard`, well inside its 6e-4).
        let mut min_feature = size;
        for c in &conductors {
            let [x0, x1, y0, y1] = c.bbox();
            let (w, h) = (x1 - x0, y1 - y0);
            let weight = if w > tol && h > tol {
                SOLID_FEATURE_WEIGHT
            } else {
                1.0
            };
            for v in [w, h] {
                if v > tol && v.is_finite() {
                    min_feature = min_feature.min(weight * v);
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
        // The smallest distance from a signal to a ground: a conductor, or a grounded side.
        let mut signal_to_ground = f64::INFINITY;
        for a in conductors.iter().filter(|c| c.role == Role::Signal) {
            for b in conductors.iter().filter(|c| c.role == Role::Ground) {
                signal_to_ground =
                    signal_to_ground.min(polygon_distance(&a.polygon(far), &b.polygon(far)));
            }
            // And its clearance to every grounded side of the domain (a shield, the box the
            // section is cropped to, whose planes and walls are no longer conductors).
            let [x0, x1, y0, y1] = a.bbox();
            let gaps = [
                x0 - domain[0],
                domain[1] - x1,
                y0 - domain[2],
                domain[3] - y1,
            ];
            for (gap, grounded) in gaps.into_iter().zip(dirichlet) {
                if grounded && gap > tol {
                    signal_to_ground = signal_to_ground.min(gap);
                }
            }
        }
        min_feature = min_feature.min(signal_to_ground);
        for l in &self.layers {
            min_feature = min_feature.min(SOLID_FEATURE_WEIGHT * l.thickness);
        }
        if let Some(c) = self.coat {
            min_feature = min_feature.min(SOLID_FEATURE_WEIGHT * c.thickness);
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
            signal_to_ground,
            half: Half::Whole,
        };
        // Antisymmetry only on a domain with no grounded side: a grounded side, at 0 V, is not
        // odd about ½ V.
        let half = if mirrored(&resolved, tol, true) {
            Half::Mirror
        } else if reduce && resolved.dirichlet == [false; 4] && mirrored(&resolved, tol, false) {
            Half::Antimirror
        } else {
            Half::Whole
        };
        Ok(Resolved { half, ..resolved })
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

/// Mirror symmetry about `x = 0` of everything that shapes the field; with `same_role` false,
/// the mirror antisymmetry (every conductor's image a conductor of the other role).
fn mirrored(r: &Resolved, tol: f64, same_role: bool) -> bool {
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
        r.conductors.iter().any(|b| {
            (b.role == a.role) == same_role && key(b).iter().zip(&m).all(|(u, v)| same(*u, *v))
        })
    })
}
