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
pub mod elliptic2;

use crate::error::{Error, FieldError, check_range};
use crate::model::probe::{LoopShape, Probe};
use crate::solve::probe::SolvedProbe;
use std::f64::consts::PI;

/// μ0, H/m (CODATA 2022, 1.25663706127e-6; the classical 4π·1e-7 differs by 1e-10).
pub const MU0: f64 = 1.256_637_061_27e-6;
/// Speed of light, m/s.
pub const C0: f64 = 299_792_458.0;
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
    /// GMD of the shield's cross-section used for the loop inductance, m.
    pub gmd_m: f64,
    /// Outer-loop inductance, H.
    pub l_outer: f64,
    /// The inner line's shorted half-turn at low frequency, H.
    pub l_stub: f64,
    /// Their sum, H.
    pub l_total: f64,
    /// Low-frequency corner R_L/(2π·L_total), Hz.
    pub corner_hz: f64,
    /// Small-loop limit: circumference = λ0/10, Hz.
    pub f_small_loop_hz: f64,
    /// First null: the shorted half-turn is a quarter wave, Hz.
    pub f_null_hz: f64,
    /// Upper usable frequency: the lower of the small-loop limit and half the null frequency.
    pub upper_hz: f64,
    /// Which rule set `upper_hz`.
    pub upper_rule: &'static str,
    /// Probe factor table: (Hz, dB(S/m)).
    pub probe_factor: Vec<(f64, f64)>,
    /// Output per ampere of trace current at the stated height: (Hz, dBΩ).
    pub output_per_amp: Vec<(f64, f64)>,
    /// Mutual inductance to the trace at the stated height, H.
    pub mutual: f64,
    /// −6 dB full width of the output scanned across the trace, m.
    pub resolution_m: f64,
    /// The options used.
    pub options: PredictOptions,
}

/// The series reactance the loop's EMF sees, X = ωL_outer + Z0·tan βl2, Ω.
pub fn reactance(r: &Response, w: f64, z0_line: f64, l2: f64, eps_eff: f64) -> f64 {
    let beta = w * eps_eff.sqrt() / C0;
    w * r.l_outer + z0_line * (beta * l2).tan()
}

/// |V_out/H| transfer (V per A/m) at `f` Hz.
fn transfer(r: &Response, f: f64, z0_line: f64, l2: f64, eps_eff: f64) -> f64 {
    let w = 2.0 * PI * f;
    let x = reactance(r, w, z0_line, l2, eps_eff);
    w * MU0 * r.area_m2 * R_LOAD / (R_LOAD * R_LOAD + x * x).sqrt()
}

/// Probe factor in dB(S/m) from the V/(A/m) transfer.
pub fn pf_db(transfer: f64) -> f64 {
    -20.0 * transfer.log10()
}

/// Predicts the response of a probe.
pub fn predict(p: &Probe, s: &SolvedProbe, o: &PredictOptions) -> Result<Response, Error> {
    let errs = o.validate();
    if !errs.is_empty() {
        return Err(Error::Invalid(errs));
    }
    let shape = &p.shape;
    let area = shape.centreline_area() * 1e-6;
    // Shield cross-section: the ring's width by the board's thickness.
    let g = gmd_rectangle(2.0 * s.ring_half_width, p.stackup.thickness_mm()) * 1e-3;
    let pts: Vec<(f64, f64)> = crate::geom::shape::closed(shape, 0.0)
        .iter()
        .map(|q| (q.x * 1e-3, q.y * 1e-3))
        .collect();
    let l_outer = neumann_loop(&pts, g);
    let circumference = shape.circumference() * 1e-3;
    let l2 = circumference / 2.0;
    let eps_eff = s.solution.eps_eff;
    let z0_line = p.target_z0;
    let l_stub = z0_line * eps_eff.sqrt() * l2 / C0;
    let l_total = l_outer + l_stub;
    let corner = R_LOAD / (2.0 * PI * l_total);
    let f_small = C0 / (10.0 * circumference);
    let f_null = C0 / (4.0 * l2 * eps_eff.sqrt());
    let (upper, rule) = if f_small <= 0.5 * f_null {
        (f_small, "small loop: circumference ≤ λ0/10")
    } else {
        (
            0.5 * f_null,
            "half the first null (shorted half-turn a quarter wave)",
        )
    };
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
    let mut r = Response {
        area_m2: area,
        gmd_m: g,
        l_outer,
        l_stub,
        l_total,
        corner_hz: corner,
        f_small_loop_hz: f_small,
        f_null_hz: f_null,
        upper_hz: upper,
        upper_rule: rule,
        probe_factor: Vec::new(),
        output_per_amp: Vec::new(),
        mutual: 0.0,
        resolution_m: 0.0,
        options: *o,
    };
    // Coupling to a trace: the apex of the centreline is the tip's edge distance further up.
    let z0 = o.height_mm * 1e-3 + tip_to_apex_m(p, s);
    let h = o.trace_h_mm * 1e-3;
    let flux0 = flux_per_amp(shape, 0.0, z0, h);
    r.mutual = MU0 * flux0;
    let half = |x: f64| flux_per_amp(shape, x, z0, h) - 0.5 * flux0;
    let x6 = crate::solve::roots::brent(half, 1e-9, 1.0, 1e-9).map_err(|e| {
        Error::Unsolvable(format!("resolution: the −6 dB point was not found ({e:?})"))
    })?;
    r.resolution_m = 2.0 * x6;
    for f in freqs {
        let t = transfer(&r, f, z0_line, l2, eps_eff);
        r.probe_factor.push((f, pf_db(t)));
        let w = 2.0 * PI * f;
        let v_per_a = w * r.mutual * t / (w * MU0 * area);
        r.output_per_amp.push((f, 20.0 * v_per_a.log10()));
    }
    Ok(r)
}

/// Distance from the probe's tip (its board edge at the apex) to the apex of the loop's
/// centreline, m: the shield ring's half width plus the copper-to-edge pull-back.
pub fn tip_to_apex_m(p: &Probe, s: &SolvedProbe) -> f64 {
    (s.ring_half_width + p.fab.copper_to_edge) * 1e-3
}

/// The probe factor at one frequency, dB(S/m) (the model of [`predict`]).
pub fn probe_factor_at(p: &Probe, s: &SolvedProbe, r: &Response, f: f64) -> f64 {
    let l2 = p.shape.circumference() * 1e-3 / 2.0;
    pf_db(transfer(r, f, p.target_z0, l2, s.solution.eps_eff))
}
