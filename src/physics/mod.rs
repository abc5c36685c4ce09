//! Response predictions: what a probe measures. Reads the probe model and its solved values,
//! never the artwork.
//!
//! Model (quasi-static, documented with its limits in `docs/response.md`):
//! - the loop is the shield's outer surface, a loop following the trace centreline; its
//!   inductance is the regularised Neumann integral of that centreline with the geometric mean
//!   distance (GMD) of the shield's cross-section (for a circle this equals Maxwell's formula for
//!   two coaxial filaments one GMD apart, i.e. Rosa/Grover's thin-ring inductance);
//! - the EMF jωμ0·A·H appears across the gap at the apex and drives the inner line: towards the
//!   output a matched line (the 50 Ω load), towards the short a shorted stub of half the turn;
//!   V_out = V_oc·R_L/(R_L + jωL_out + jZ0·tan βl2);
//! - the probe factor is |H/V_out| in S/m with H the **area-average** field normal to the loop.

pub mod coupling;
pub mod electric;
pub mod elliptic2;
pub mod launch;
pub mod predicted;
pub mod shield;

use crate::error::{Error, FieldError, check_range};
use crate::model::probe::{LoopShape, Probe};
use crate::model::stackup::Layer;
use crate::solve::probe::SolvedProbe;
use std::f64::consts::PI;

pub use crate::math::{C0, MU0};
/// The load the probe drives, Ω.
pub const R_LOAD: f64 = 50.0;

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
fn gauss24() -> (Vec<f64>, Vec<f64>) {
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
    let height = loop_height_mm(shape) * 1e-3;
    let (gx, gw) = gauss24();
    let panels = 16;
    let mut s = 0.0;
    for p in 0..panels {
        let a = height * (p as f64 / panels as f64).powi(2);
        let b = height * ((p + 1) as f64 / panels as f64).powi(2);
        for (xi, wi) in gx.iter().zip(&gw) {
            let u = 0.5 * (a + b) + 0.5 * (b - a) * xi;
            s += 0.5 * (b - a) * wi * chord_mm(shape, u * 1e3) * 1e-3 * hx(u);
        }
    }
    s
}

/// Options of a prediction.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PredictOptions {
    /// Height of the probe's tip (its board edge at the apex) above the scanned trace, mm.
    pub height_mm: f64,
    /// Height of the scanned trace above its ground plane, mm.
    pub trace_h_mm: f64,
    /// Lowest frequency of the probe-factor table, Hz (None: a decade below the corner).
    pub f_min_hz: Option<f64>,
    /// Highest frequency (None: the upper usable frequency).
    pub f_max_hz: Option<f64>,
    /// Points per decade.
    pub per_decade: usize,
}

impl Default for PredictOptions {
    /// Tip 1 mm above a trace that runs 1.5 mm above its plane (a two-layer 1.6 mm board), 20
    /// points per decade.
    fn default() -> Self {
        PredictOptions {
            height_mm: 1.0,
            trace_h_mm: 1.5,
            f_min_hz: None,
            f_max_hz: None,
            per_decade: 20,
        }
    }
}

impl PredictOptions {
    /// Checks the options; every problem is reported.
    pub fn validate(&self) -> Vec<FieldError> {
        let mut e = Vec::new();
        check_range(&mut e, "height", self.height_mm, 0.0, 1000.0);
        check_range(&mut e, "trace-h", self.trace_h_mm, 1e-3, 1000.0);
        if let Some(f) = self.f_min_hz {
            check_range(&mut e, "f-min", f, 1.0, 1e12);
        }
        if let Some(f) = self.f_max_hz {
            check_range(&mut e, "f-max", f, 1.0, 1e12);
        }
        if let (Some(a), Some(b)) = (self.f_min_hz, self.f_max_hz)
            && a.is_finite()
            && b.is_finite()
            && b <= a
        {
            e.push(FieldError::new(
                "f-max",
                b,
                format!("must be greater than f-min = {a} (the range would be empty)"),
            ));
        }
        e
    }
}

/// What a probe measures.
#[derive(Debug, Clone, PartialEq)]
pub struct Response {
    /// Area enclosed by the loop centreline, m².
    pub area_m2: f64,
    /// Effective (current-weighted) area of the shield's outer current, m²: the loop's
    /// sensitivity, V_oc = jωμ0·A_eff·H (module [`shield`]).
    pub area_eff_m2: f64,
    /// GMD of the shield's solid cross-section, 0.2235·(ring width + board thickness), m: the
    /// earlier closed form's input, kept for comparison.
    pub gmd_m: f64,
    /// Outer-loop inductance of the earlier closed form (centreline Neumann integral with
    /// `gmd_m`), H: kept as a documented limit and for comparison.
    pub l_outer_gmd: f64,
    /// Outer-loop inductance from the shield's outer current, H.
    pub l_outer: f64,
    /// The inner line's shorted half-turn at low frequency, H.
    pub l_stub: f64,
    /// Their sum, H.
    pub l_total: f64,
    /// Capacitance across the shield gap, F.
    pub c_gap: f64,
    /// Inner line's characteristic impedance, Ω.
    pub z0_line: f64,
    /// Its effective permittivity.
    pub eps_eff: f64,
    /// Gap to the short (half the turn), m.
    pub l2_m: f64,
    /// Gap to the output connector (half the turn plus the handle), m.
    pub l1_m: f64,
    /// Conductor loss of the inner line, Np/m at 1 GHz (scales as √f).
    pub alpha_c_1ghz: f64,
    /// DC resistance loss of the inner line's trace, ρ/(w·t)/(2·Z0), Np/m: the floor of the
    /// conductor loss where the skin depth exceeds the copper.
    pub alpha_dc: f64,
    /// Dielectric loss tangent of the inner line.
    pub tan_d: f64,
    /// Low-frequency corner R_L/(2π·L_total), Hz.
    pub corner_hz: f64,
    /// Small-loop limit: circumference = λ0/10, Hz.
    pub f_small_loop_hz: f64,
    /// First null: the shorted half-turn is a quarter wave, Hz.
    pub f_null_hz: f64,
    /// The outer loop resonating with the gap capacitance, 1/(2π√(L_outer·C_gap)), Hz.
    pub f_gap_res_hz: f64,
    /// Upper usable frequency: the lower of the error budget's frequency and the small-loop
    /// limit (module [`electric`]).
    pub upper_hz: f64,
    /// Which rule set `upper_hz`.
    pub upper_rule: &'static str,
    /// The error budget's frequency: where the electric pickup (field of wave impedance η0,
    /// probe tilted [`BUDGET_TILT_DEG`] in its plane) plus a ±5 % error in the stub's
    /// electrical length could change a reading by [`electric::BUDGET_DB`], Hz (None: not
    /// reached below the first null).
    pub budget_hz: Option<f64>,
    /// Published limits quoted beside the upper frequency: (rule, Hz).
    pub quoted_limits: Vec<(&'static str, f64)>,
    /// Radius of the electric pickup model, m: that of the circle of the centreline's area.
    pub e_radius_m: f64,
    /// Worst-case E-rejection at each probe-factor frequency, (Hz, dB): the electric response
    /// below the magnetic one for a field of wave impedance η0 lying across the loop's axis.
    pub e_rejection: Vec<(f64, f64)>,
    /// Probe factor table: (Hz, dB(S/m)).
    pub probe_factor: Vec<(f64, f64)>,
    /// Output per ampere of trace current at the stated height: (Hz, dBΩ).
    pub output_per_amp: Vec<(f64, f64)>,
    /// Mutual inductance to the trace at the stated height, H.
    pub mutual: f64,
    /// −6 dB full width of the output scanned across the trace, m.
    pub resolution_m: f64,
    /// The shield's outer current grouped into filaments: (offset from the centreline m,
    /// height across the board from its mid-plane m, share of the current).
    pub filaments: Vec<(f64, f64, f64)>,
    /// The connector launch's budget: its return loss to f_max and its effect on the probe
    /// factor (module [`launch`]).
    pub launch: Option<launch::ProbeLaunch>,
    /// The options used.
    pub options: PredictOptions,
}

pub use crate::math::Cx;

/// Resistivity of annealed copper, Ω·m (IEC 60028 standard annealed copper, 1.7241e-8).
pub const RHO_CU: f64 = 1.7241e-8;

/// Surface resistance of copper at `f` Hz, √(π·f·μ0·ρ), Ω (smooth copper).
pub fn surface_resistance(f: f64) -> f64 {
    (PI * f * MU0 * RHO_CU).sqrt()
}

impl Response {
    /// Propagation constant γ = α + jβ of the inner line at `f` Hz, 1/m: conductor loss
    /// α_c(1 GHz)·√(f/1 GHz) (Wheeler's incremental-inductance rule), not below the trace's DC
    /// loss, dielectric loss
    /// π·f·√εeff·tan δ/c0, β = 2π·f·√εeff/c0.
    pub fn gamma(&self, f: f64) -> Cx {
        let sq = self.eps_eff.sqrt();
        let alpha_c = (self.alpha_c_1ghz * (f / 1e9).sqrt()).max(self.alpha_dc);
        let alpha = alpha_c + PI * f * sq * self.tan_d / C0;
        Cx::new(alpha, 2.0 * PI * f * sq / C0)
    }

    /// V_out/V_oc at `f` Hz: the EMF in series with the outer loop's inductance drives the gap,
    /// shunted by the gap capacitance and loaded by the inner line (the matched run to the
    /// output plus the shorted stub, Z_in = R_L + Z0·tanh γl2); the line's current reaches the
    /// output R_L through the run l1 (its loss e^(−αl1) only: phases are referred to the gap):
    /// V_out/V_oc = R_L·e^(−αl1)/(Z_in + jωL_out − ω²·L_out·C_gap·Z_in).
    pub fn gap_transfer(&self, f: f64) -> Cx {
        let w = 2.0 * PI * f;
        let g = self.gamma(f);
        let z_in = Cx::new(R_LOAD, 0.0)
            + Cx::new(self.z0_line, 0.0) * Cx::new(g.re * self.l2_m, g.im * self.l2_m).tanh();
        let den = z_in
            + Cx::new(0.0, w * self.l_outer)
            + z_in * Cx::new(-w * w * self.l_outer * self.c_gap, 0.0);
        // The run's loss; its delay is left out, so phases stay referred to the gap.
        let run = (-g.re * self.l1_m).exp();
        Cx::new(R_LOAD * run, 0.0) / den
    }

    /// |V_out/H| (V per A/m) in a uniform normal field at `f` Hz.
    pub fn transfer(&self, f: f64) -> f64 {
        2.0 * PI * f * MU0 * self.area_eff_m2 * self.gap_transfer(f).abs()
    }

    /// Loss of the feed run from the gap to the connector at `f` Hz, dB (8.686·α·l1).
    pub fn feed_loss_db(&self, f: f64) -> f64 {
        20.0 * std::f64::consts::LOG10_E * self.gamma(f).re * self.l1_m
    }

    /// The probe factor at `f` Hz, dB(S/m).
    pub fn pf_db_at(&self, f: f64) -> f64 {
        pf_db(self.transfer(f))
    }

    /// |V_E/V_H| at `f` Hz for a field of wave impedance `z_w` Ω lying across the loop's axis
    /// ([`electric::e_to_h`]).
    pub fn e_to_h(&self, f: f64, z_w: f64) -> f64 {
        electric::e_to_h(f, self.e_radius_m, z_w)
    }

    /// E-rejection at `f` Hz, dB, for a field of wave impedance `z_w` Ω across the axis.
    pub fn e_rejection_db(&self, f: f64, z_w: f64) -> f64 {
        -20.0 * self.e_to_h(f, z_w).log10()
    }

    /// What the effects left out could do to a reading at `f` Hz, dB: the electric pickup of
    /// the budget's tilted probe in a field of wave impedance η0, plus the largest change of
    /// |V_out| when the stub's electrical length is off by ±[`electric::STUB_LENGTH_TOL`].
    pub fn budget_error_db(&self, f: f64) -> f64 {
        let tilt = BUDGET_TILT_DEG.to_radians().sin();
        let e = electric::pickup_error_db(tilt * self.e_to_h(f, electric::ETA0));
        let t0 = self.gap_transfer(f).abs();
        let stub = [
            1.0 - electric::STUB_LENGTH_TOL,
            1.0 + electric::STUB_LENGTH_TOL,
        ]
        .iter()
        .map(|k| {
            let mut q = self.clone();
            q.l2_m *= k;
            (20.0 * (q.gap_transfer(f).abs() / t0).log10()).abs()
        })
        .fold(0.0, f64::max);
        e + stub
    }
}

/// The error budget's tilt: a hand-held probe within this angle of upright, in its own plane,
/// brings sin(tilt) of a trace's electric field across its axis (common practice for the
/// budget, no source).
pub const BUDGET_TILT_DEG: f64 = 20.0;

/// Probe factor in dB(S/m) from the V/(A/m) transfer.
pub fn pf_db(transfer: f64) -> f64 {
    -20.0 * transfer.log10()
}

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
pub fn shield_current(p: &Probe, s: &SolvedProbe) -> Result<shield::ShieldCurrent, Error> {
    let plates = shield_plates(p, s);
    let n = shield::RIBBONS_PER_PLATE;
    let solved = match p.shape {
        LoopShape::Round { diameter } => shield::solve_round(diameter * 0.5e-3, &plates, n),
        _ => {
            let pts = centreline_m(&p.shape);
            shield::solve_shape(
                p.shape.centreline_area() * 1e-6,
                p.shape.circumference() * 1e-3,
                &pts,
                &plates,
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

/// The loop's centreline as a closed polygon, m.
fn centreline_m(shape: &LoopShape) -> Vec<(f64, f64)> {
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
    fil.iter()
        .map(|&(d, z, s)| {
            let sh = offset_shape(shape, d * 1e3);
            s * integrate_over_loop(&sh, |u| field(x + z, z0 - d + u))
        })
        .sum()
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
    let sol = crate::field::solve(&cs, crate::field::Accuracy::Draft).map_err(|e| {
        Error::Unsolvable(format!(
            "{}: the gap capacitance (2-D field solution across the {} mm shield gap) failed: {e}",
            p.name, p.gap
        ))
    })?;
    Ok(sol.c_per_m * 2.0 * s.ring_half_width * 1e-3)
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

/// Predicts the response of a probe.
pub fn predict(p: &Probe, s: &SolvedProbe, o: &PredictOptions) -> Result<Response, Error> {
    let errs = o.validate();
    if !errs.is_empty() {
        return Err(Error::Invalid(errs));
    }
    let shape = &p.shape;
    let area = shape.centreline_area() * 1e-6;
    // The earlier closed form, kept as a limit: the solid cross-section's GMD.
    let g = gmd_rectangle(2.0 * s.ring_half_width, p.stackup.thickness_mm()) * 1e-3;
    let pts = centreline_m(shape);
    let l_outer_gmd = neumann_loop(&pts, g);
    let sc = shield_current(p, s)?;
    let l_outer = sc.l_outer;
    let circumference = shape.circumference() * 1e-3;
    let l2 = circumference / 2.0;
    let eps_eff = s.solution.eps_eff;
    let z0_line = p.target_z0;
    let l_stub = z0_line * eps_eff.sqrt() * l2 / C0;
    let l_total = l_outer + l_stub;
    let corner = R_LOAD / (2.0 * PI * l_total);
    let f_small = C0 / (10.0 * circumference);
    let f_null = C0 / (4.0 * l2 * eps_eff.sqrt());
    let c_gap = gap_capacitance(p, s)?;
    let tan_d = signal_loss_tangent(p);
    let mut r = Response {
        area_m2: area,
        area_eff_m2: sc.area_eff,
        gmd_m: g,
        l_outer_gmd,
        l_outer,
        l_stub,
        l_total,
        c_gap,
        z0_line,
        eps_eff,
        l2_m: l2,
        l1_m: l2 + p.handle.length * 1e-3,
        alpha_c_1ghz: alpha_c_1ghz(s),
        alpha_dc: RHO_CU / (s.trace_width * 1e-3 * trace_thickness_m(p)) / (2.0 * z0_line),
        tan_d,
        corner_hz: corner,
        f_small_loop_hz: f_small,
        f_null_hz: f_null,
        f_gap_res_hz: 1.0 / (2.0 * PI * (l_outer * c_gap).sqrt()),
        upper_hz: f_small,
        upper_rule: "",
        budget_hz: None,
        quoted_limits: electric::quoted_limits(circumference, 2.0 * (area / PI).sqrt()).to_vec(),
        e_radius_m: (area / PI).sqrt(),
        e_rejection: Vec::new(),
        probe_factor: Vec::new(),
        output_per_amp: Vec::new(),
        mutual: 0.0,
        resolution_m: 0.0,
        filaments: filaments(&sc, 8),
        launch: None,
        options: *o,
    };
    r.budget_hz = budget_frequency(&r, corner / 10.0, f_null);
    (r.upper_hz, r.upper_rule) = match r.budget_hz {
        Some(b) if b < f_small => (
            b,
            "error budget: electric pickup (20° tilt, E/H = η0) and a ±5 % stub length reach 1 dB",
        ),
        _ => (f_small, "small loop: circumference ≤ λ0/10"),
    };
    let upper = r.upper_hz;
    let f_lo = o.f_min_hz.unwrap_or(corner / 10.0);
    let f_hi = o.f_max_hz.unwrap_or(upper);
    if f_hi <= f_lo {
        return Err(Error::Invalid(vec![FieldError::new(
            "f-max",
            f_hi,
            format!("must be greater than the lowest frequency {f_lo:.4e} Hz"),
        )]));
    }
    let decades = (f_hi / f_lo).log10();
    let n = ((decades * o.per_decade as f64).ceil() as usize).max(1);
    let freqs: Vec<f64> = (0..=n)
        .map(|i| f_lo * 10f64.powf(decades * i as f64 / n as f64))
        .collect();

    // Coupling to a trace: the apex of the centreline is the tip's edge distance further up.
    let z0 = o.height_mm * 1e-3 + tip_to_apex_m(p, s);
    let h = o.trace_h_mm * 1e-3;
    let fil = r.filaments.clone();
    let flux = |x: f64| flux_filaments(shape, &fil, |xx, zz| hx_line(xx, zz, h), x, z0);
    let flux0 = flux(0.0);
    r.mutual = MU0 * flux0;
    // The filaments sit on both sides of the board's mid-plane, so the scan is symmetric about
    // x = 0 only to first order: take the −6 dB points on both sides.
    let half = |x: f64| flux(x) - 0.5 * flux0;
    let find = |sign: f64| {
        crate::solve::roots::brent(|x| half(sign * x), 1e-9, 1.0, 1e-9).map_err(|e| {
            Error::Unsolvable(format!("resolution: the −6 dB point was not found ({e:?})"))
        })
    };
    r.resolution_m = find(1.0)? + find(-1.0)?;
    for f in freqs {
        let t = r.transfer(f);
        r.probe_factor.push((f, pf_db(t)));
        r.e_rejection.push((f, r.e_rejection_db(f, electric::ETA0)));
        let w = 2.0 * PI * f;
        let v_per_a = w * r.mutual * r.gap_transfer(f).abs();
        r.output_per_amp.push((f, 20.0 * v_per_a.log10()));
    }
    r.launch = Some(launch::probe_launch(p, s, &r));
    Ok(r)
}

/// The lowest frequency from `lo` up to `hi` (the first null) where the budget's error reaches
/// [`electric::BUDGET_DB`], Hz: a log scan of 200 points per decade, then bisection.
fn budget_frequency(r: &Response, lo: f64, hi: f64) -> Option<f64> {
    let over = |f: f64| r.budget_error_db(f) >= electric::BUDGET_DB;
    if !(lo.is_finite() && hi.is_finite() && lo > 0.0 && hi > lo) {
        return None;
    }
    let n = ((hi / lo).log10() * 200.0).ceil().max(1.0) as usize;
    let fs: Vec<f64> = (0..=n)
        .map(|i| lo * (hi / lo).powf(i as f64 / n as f64))
        .collect();
    let i = fs.iter().position(|&f| over(f))?;
    if i == 0 {
        return Some(lo);
    }
    let (mut a, mut b) = (fs[i - 1], fs[i]);
    for _ in 0..60 {
        let m = (a * b).sqrt();
        if over(m) { b = m } else { a = m }
    }
    Some(b)
}

/// Copper thickness of the signal layer, m.
fn trace_thickness_m(p: &Probe) -> f64 {
    p.stackup
        .copper(p.signal_layer)
        .map(|c| c.thickness_mm * 1e-3)
        .unwrap_or(35e-6)
}

/// Loss tangent of the inner line: the mean tan δ of the dielectrics on either side of the
/// signal layer.
fn signal_loss_tangent(p: &Probe) -> f64 {
    let ds: Vec<f64> = [p.signal_layer - 1, p.signal_layer]
        .into_iter()
        .filter_map(|n| p.stackup.dielectric_below(n))
        .map(|d| d.loss_tangent)
        .collect();
    if ds.is_empty() {
        0.0
    } else {
        ds.iter().sum::<f64>() / ds.len() as f64
    }
}

/// Distance from the probe's tip (its board edge at the apex) to the apex of the loop's
/// centreline, m: the shield ring's half width plus the copper-to-edge pull-back.
pub fn tip_to_apex_m(p: &Probe, s: &SolvedProbe) -> f64 {
    (s.ring_half_width + p.fab.copper_to_edge) * 1e-3
}

/// The probe factor at one frequency, dB(S/m) (the model of [`predict`]).
pub fn probe_factor_at(_p: &Probe, _s: &SolvedProbe, r: &Response, f: f64) -> f64 {
    r.pf_db_at(f)
}
