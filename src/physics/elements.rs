//! The response model's elements from a probe's geometry: the shield's plates and their
//! current (outer inductance, effective area), the gap capacitance, the feed's loss.

use super::*;
use crate::error::Error;
use crate::field::{Cells, kept_in};
use crate::model::probe::{LoopShape, Probe};
use crate::model::stackup::Layer;
use crate::solve::probe::SolvedProbe;

/// The shield's cross-section as thin plates (m): every copper layer but the signal layer
/// carries the full ring (± the ring's half width about the centreline); the signal layer
/// carries the coplanar ground outside the trace's clearance. Heights from the board's
/// mid-plane, at each copper layer's mid-thickness.
pub fn shield_plates(p: &Probe, s: &SolvedProbe) -> Vec<shield::Plate> {
    let hw = s.ring_half_width * 1e-3;
    let slot = (s.trace_width / 2.0 + p.clearance) * 1e-3;
    let mid = p.stackup.thickness_mm() / 2.0;
    let mut top = p.stackup.thickness_mm();
    let mut plates = Vec::new();
    let mut n = 0;
    for layer in p.stackup.layers() {
        match layer {
            Layer::Copper(c) => {
                n += 1;
                let z = (top - c.thickness_mm / 2.0 - mid) * 1e-3;
                if n == p.signal_layer {
                    if slot < hw {
                        plates.push(shield::Plate {
                            z,
                            d0: -hw,
                            d1: -slot,
                        });
                        plates.push(shield::Plate {
                            z,
                            d0: slot,
                            d1: hw,
                        });
                    }
                } else {
                    plates.push(shield::Plate { z, d0: -hw, d1: hw });
                }
                top -= c.thickness_mm;
            }
            Layer::Dielectric(d) => top -= d.thickness_mm,
        }
    }
    plates
}

/// The outer current of a probe's shield (module [`shield`]).
///
/// Kept for the process under its exact inputs (the shape and the plates): a family's probes of
/// one size and stackup (a singly-loaded and a balanced loop, say) share it.
pub fn shield_current(p: &Probe, s: &SolvedProbe) -> Result<shield::ShieldCurrent, Error> {
    static KEPT: std::sync::OnceLock<Cells<shield::ShieldCurrent>> = std::sync::OnceLock::new();
    let plates = shield_plates(p, s);
    let key = format!("{:?}|{plates:?}", p.shape);
    kept_in(KEPT.get_or_init(Default::default), KEEP, key, || {
        solve_shield_current(p, s, &plates)
    })
}

/// How many shield currents and gap corrections are kept: each holds a few hundred kB, so a
/// large family keeps the last few rather than all (a 64-probe family's peak memory rose by
/// 28 MB keeping all).
const KEEP: usize = 8;

/// [`shield_current`], solved.
fn solve_shield_current(
    p: &Probe,
    s: &SolvedProbe,
    plates: &[shield::Plate],
) -> Result<shield::ShieldCurrent, Error> {
    let n = shield::RIBBONS_PER_PLATE;
    let solved = match p.shape {
        LoopShape::Round { diameter } => shield::solve_round(diameter * 0.5e-3, plates, n),
        _ => {
            let pts = centreline_m(&p.shape);
            shield::solve_shape(
                p.shape.centreline_area() * 1e-6,
                p.shape.circumference() * 1e-3,
                &pts,
                plates,
                n,
            )
        }
    };
    solved.ok_or_else(|| {
        Error::Unsolvable(format!(
            "{}: the shield's outer current could not be solved (ring half width {} mm on a loop of {})",
            p.name,
            s.ring_half_width,
            p.shape.size_text()
        ))
    })
}

/// The radius of the round loop whose outer current stands for the shape's (m): the loop's own
/// radius, or R_eq = 2A/P for other shapes (module [`shield`]).
pub fn shield_radius_m(shape: &LoopShape) -> f64 {
    match *shape {
        LoopShape::Round { diameter } => diameter * 0.5e-3,
        _ => 2.0 * shape.centreline_area() / shape.circumference() * 1e-3,
    }
}

/// The shield current's correction at the gap (module [`shield_gap`]) of the probe's own outer
/// current ([`shield_current`]): solved on the round loop of [`shield_radius_m`] with the feed
/// window the trace's slot (trace width plus twice its clearance).
pub fn gap_current(p: &Probe, s: &SolvedProbe) -> Result<shield_gap::GapCurrent, Error> {
    static KEPT: std::sync::OnceLock<Cells<shield_gap::GapCurrent>> = std::sync::OnceLock::new();
    let plates = shield_plates(p, s);
    let wf = (s.trace_width + 2.0 * p.clearance) * 1e-3;
    // Kept under its exact inputs: the outer current's (the shape and the plates) and the
    // slot and the gap.
    let key = format!("{:?}|{plates:?}|{wf:?}|{:?}", p.shape, p.gap);
    kept_in(KEPT.get_or_init(Default::default), KEEP, key, || {
        let sc = shield_current(p, s)?;
        solve_gap_current(p, s, &sc, &plates, wf)
    })
}

/// [`gap_current`], solved.
fn solve_gap_current(
    p: &Probe,
    s: &SolvedProbe,
    sc: &shield::ShieldCurrent,
    plates: &[shield::Plate],
    wf: f64,
) -> Result<shield_gap::GapCurrent, Error> {
    shield_gap::solve(
        shield_radius_m(&p.shape),
        plates,
        sc,
        wf,
        p.gap * 1e-3,
        shield_gap::GAP_MESH,
    )
    .ok_or_else(|| {
        Error::Unsolvable(format!(
            "{}: the shield's current at the gap could not be solved (ring half width {} mm, slot {} mm)",
            p.name,
            s.ring_half_width,
            wf * 1e3
        ))
    })
}

/// Depth below the apex of the centreline at arc length `s` (m) from the apex, and the
/// downward component of the outward normal there (1 at the apex, −1 at the top).
pub fn apex_path(shape: &LoopShape, s: f64) -> (f64, f64) {
    let s = s.abs();
    match *shape {
        LoopShape::Round { diameter } => {
            let r = diameter * 0.5e-3;
            let t = (s / r).min(PI);
            (r * (1.0 - t.cos()), t.cos())
        }
        LoopShape::Rect {
            width,
            height,
            corner_radius,
            ..
        } => {
            let (w, h, rc) = (width * 1e-3, height * 1e-3, corner_radius * 1e-3);
            let flat = 0.5 * w - rc;
            let quarter = 0.5 * PI * rc;
            let side = h - 2.0 * rc;
            if s <= flat {
                (0.0, 1.0)
            } else if s <= flat + quarter {
                let f = (s - flat) / rc;
                (rc * (1.0 - f.cos()), f.cos())
            } else if s <= flat + quarter + side {
                (rc + (s - flat - quarter), 0.0)
            } else if s <= flat + 2.0 * quarter + side {
                let f = (s - flat - quarter - side) / rc;
                (rc + side + rc * f.sin(), -f.sin())
            } else {
                (h, -1.0)
            }
        }
    }
}

/// The loop's centreline as a closed polygon, m.
pub(super) fn centreline_m(shape: &LoopShape) -> Vec<(f64, f64)> {
    crate::model::centreline::closed(shape, 0.0)
        .iter()
        .map(|q| (q.x * 1e-3, q.y * 1e-3))
        .collect()
}

/// The shape offset outwards by `d` mm (inwards when negative): a circle's diameter grows by
/// 2d; a rounded rectangle's sides by 2d and its corner radius by d (not below 0).
pub fn offset_shape(shape: &LoopShape, d: f64) -> LoopShape {
    match *shape {
        LoopShape::Round { diameter } => LoopShape::Round {
            diameter: diameter + 2.0 * d,
        },
        LoopShape::Rect {
            width,
            height,
            corner_radius,
            square,
        } => LoopShape::Rect {
            width: width + 2.0 * d,
            height: height + 2.0 * d,
            corner_radius: (corner_radius + d).max(0.0),
            square,
        },
    }
}

/// Groups the shield's ribbons into at most `per_plate` filaments per plate at their
/// current-weighted mean offset: (offset m, height m, share). Enough for the flux from a
/// nearby line, which varies smoothly across the ring.
pub fn filaments(c: &shield::ShieldCurrent, per_plate: usize) -> Vec<(f64, f64, f64)> {
    let n = c.per_plate.max(1);
    let mut group = n.div_ceil(per_plate.max(1));
    // Groups must not straddle two plates.
    while !n.is_multiple_of(group) {
        group += 1;
    }
    let mut out = Vec::new();
    for (rb, sh) in c.ribbons.chunks(group).zip(c.share.chunks(group)) {
        let s: f64 = sh.iter().sum();
        if s == 0.0 {
            continue;
        }
        let d = rb
            .iter()
            .zip(sh)
            .map(|(r, x)| x * 0.5 * (r.d0 + r.d1))
            .sum::<f64>()
            / s;
        out.push((d, rb[0].z, s));
    }
    out
}

/// Flux per ampere divided by μ0 (m) through the shield's current filaments of `shape` (apex of
/// the centreline `z0` m above a line of height `h`, the board's mid-plane `x` m beside the
/// line): Σ sᵢ·∫ chord(u)·Hx dudu over each filament's own offset shape, its apex dᵢ lower,
/// its plane zᵢ further sideways.
pub fn flux_filaments(
    shape: &LoopShape,
    fil: &[(f64, f64, f64)],
    field: impl Fn(f64, f64) -> f64,
    x: f64,
    z0: f64,
) -> f64 {
    FluxSampler::new(shape, fil, &Default::default(), 0.0).flux_filaments(&field, x, z0)
}

/// [`loop_nodes`]' list: (u m, weight·chord m²).
type LoopNodes = Vec<(f64, f64)>;

/// Where the flux integrals of a loop's outer current sample a field, and with what weights:
/// worked out once, so that a search moving the loop across a field (the resolution's)
/// evaluates only the field at each step.
pub struct FluxSampler {
    /// Per filament: its share, plane offset z, apex drop d, and its offset shape's
    /// [`loop_nodes`].
    filaments: Vec<(f64, f64, f64, LoopNodes)>,
    /// Per gap point: plane offset z, depth below the apex, the offset's drop d·down, weight.
    gap: Vec<(f64, f64, f64, f64)>,
}

impl FluxSampler {
    /// The samples of the filaments `fil` and the gap points `points` (solved on the round
    /// loop of radius `r_eq`) of `shape`.
    pub fn new(
        shape: &LoopShape,
        fil: &[(f64, f64, f64)],
        points: &shield_gap::GapSamples,
        r_eq: f64,
    ) -> FluxSampler {
        let filaments = fil
            .iter()
            .map(|&(d, z, s)| (s, z, d, loop_nodes(&offset_shape(shape, d * 1e3))))
            .collect();
        let gap = points
            .iter()
            .map(|q| {
                let th = if q.theta > PI {
                    q.theta - 2.0 * PI
                } else {
                    q.theta
                };
                let (depth, down) = apex_path(shape, r_eq * th);
                (q.z, depth, q.d * down, q.w)
            })
            .collect();
        FluxSampler { filaments, gap }
    }

    /// The filaments' flux ([`flux_filaments`], the same sum term for term).
    pub fn flux_filaments(&self, field: impl Fn(f64, f64) -> f64, x: f64, z0: f64) -> f64 {
        self.filaments
            .iter()
            .map(|(s, z, d, nodes)| s * integrate_nodes(nodes, |u| field(x + z, z0 - d + u)))
            .sum()
    }

    /// Flux per ampere divided by μ0 (m) through the gap correction's stream function (the
    /// counterpart of [`flux_filaments`] for [`shield_gap::GapCurrent::points`]): each point at
    /// its arc length from the gap (on the round loop of radius `r_eq` it was solved on) is
    /// placed on the shape's own path below the apex `z0`, its plane `z` further sideways than
    /// `x`.
    pub fn flux_gap(&self, field: impl Fn(f64, f64) -> f64, x: f64, z0: f64) -> f64 {
        self.gap
            .iter()
            .map(|&(z, depth, dd, w)| w * field(x + z, z0 + depth - dd))
            .sum()
    }

    /// Both: the flux of [`Response::flux_through`].
    pub fn flux(&self, field: impl Fn(f64, f64) -> f64, x: f64, z0: f64) -> f64 {
        self.flux_filaments(&field, x, z0) + self.flux_gap(&field, x, z0)
    }
}

/// Capacitance across the shield gap, F: the 2-D field solution of the cut along the loop
/// through the gap (every shield copper layer as two plates facing across the gap, a quarter
/// turn long each, in the stackup's dielectrics), per metre, times the ring's width. The trace
/// crossing the gap and the plates' curvature are left out.
pub fn gap_capacitance(p: &Probe, s: &SolvedProbe) -> Result<f64, Error> {
    use crate::field::{Boundary, Conductor, CrossSection, Dielectric as FDiel};
    let g = p.gap;
    let len = (p.shape.circumference() / 4.0).max(2.0 * g);
    let layers_top: Vec<&Layer> = p.stackup.layers().iter().collect();
    // The field solver stacks from the bottom; copper layers become resin of the nearest
    // dielectric's permittivity (the gap between the plates is filled with it).
    let mut dielectrics = Vec::new();
    let mut conductors = Vec::new();
    let mut y = 0.0;
    let nl = layers_top.len();
    for k in (0..nl).rev() {
        match layers_top[k] {
            Layer::Copper(c) => {
                let near = |j: Option<usize>| match j.and_then(|j| layers_top.get(j)) {
                    Some(Layer::Dielectric(d)) => Some(d.er),
                    _ => None,
                };
                let er = near(k.checked_sub(1))
                    .into_iter()
                    .chain(near(Some(k + 1)))
                    .fold(1.0_f64, f64::max);
                dielectrics.push(FDiel::new(c.thickness_mm, er));
                conductors.push(Conductor::ground(
                    -g / 2.0 - len,
                    -g / 2.0,
                    y,
                    y + c.thickness_mm,
                ));
                conductors.push(Conductor {
                    role: crate::field::Role::Signal,
                    shape: crate::field::Shape::Rect {
                        x0: g / 2.0,
                        x1: g / 2.0 + len,
                        y0: y,
                        y1: y + c.thickness_mm,
                    },
                });
                y += c.thickness_mm;
            }
            Layer::Dielectric(d) => {
                dielectrics.push(FDiel::new(d.thickness_mm, d.er));
                y += d.thickness_mm;
            }
        }
    }
    let cs = CrossSection {
        layers: dielectrics,
        board: Some([-g / 2.0 - len, g / 2.0 + len]),
        conductors,
        coat: None,
        fences: Vec::new(),
        boundary: Boundary::Open,
    };
    let c_per_m = crate::field::capacitance_per_m(&cs, crate::field::Accuracy::Draft).map_err(|e| {
        Error::Unsolvable(format!(
            "{}: the gap capacitance (2-D field solution across the {} mm shield gap) failed: {e}",
            p.name, p.gap
        ))
    })?;
    Ok(c_per_m * 2.0 * s.ring_half_width * 1e-3)
}

/// Conductor loss of the inner line at 1 GHz, Np/m, by Wheeler's incremental-inductance rule
/// (H. A. Wheeler, "Formulas for the skin effect", Proc. IRE 30, 1942; from memory): every
/// conductor surface receding by δn/2 adds the field energy of the skin layer, so
/// R' = (R_s/μ0)·∂L'/∂n with L' = Z0·√εeff/c0 the line's inductance per metre, and
/// α_c = R'/(2·Z0). The derivative is taken on the closed form of the solved stripline (trace
/// narrower and thinner by 2δn, each plane δn further away). Smooth copper; 0 for a line that
/// is not a stripline.
pub fn alpha_c_1ghz(s: &SolvedProbe) -> f64 {
    use crate::solve::impedance::{Line, analyse};
    let Line::Stripline(st) = s.line else {
        return 0.0;
    };
    let l_per_m = |st: &crate::solve::impedance::Stripline| {
        analyse(&Line::Stripline(*st), None)
            .ok()
            .map(|sol| sol.z0 * sol.eps_eff.sqrt() / C0)
    };
    let dn = 1e-4 * st.t.min(st.width).min(st.h1).min(st.h2);
    if !(dn.is_finite() && dn > 0.0) {
        return 0.0;
    }
    let mut rec = st;
    rec.width -= 2.0 * dn;
    rec.t -= 2.0 * dn;
    // h1, h2 are measured from the trace's faces: the faces recede by δn and the planes by δn.
    rec.h1 += 2.0 * dn;
    rec.h2 += 2.0 * dn;
    match (l_per_m(&st), l_per_m(&rec)) {
        (Some(l0), Some(l1)) => {
            let dl_dn = (l1 - l0) / (dn * 1e-3);
            let z0 = s.solution.z0;
            let a = surface_resistance(1e9) / MU0 * dl_dn / (2.0 * z0);
            if a.is_finite() && a > 0.0 { a } else { 0.0 }
        }
        _ => 0.0,
    }
}
