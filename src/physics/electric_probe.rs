//! What an electric-field probe measures: its electrode (module [`super::electrode`]) held flat
//! over a board, into the 50 Ω load at the end of its matched line.
//!
//! - the electric probe factor in dB(1/m), E[dBµV/m] = V[dBµV] + factor, for a field normal to
//!   the face: the electrode collects the charge ε0·E·A_eff (Gauss's law) over its collecting
//!   area A_eff = π·(r + c/2)², and drives it into the load shunted by its own capacitance
//!   ([`super::electrode::factor_db`]);
//! - the corner above which the output stops rising, 1/(2π·R·C_self);
//! - the capacitance to a trace below it and the output per volt on that trace, and the −6 dB
//!   width of that coupling scanned across the trace (the resolution).
//!
//! The scanned trace is a 50 Ω microstrip on εr 4.3 at the stated height over its plane (a
//! two-layer FR-4 board, the loop's default scene), its width solved by Hammerstad–Jensen.

use super::electrode::{
    corner_hz, effective_radius, factor_db, line_coupling, resolution_mm, self_capacitance,
};
use super::{PredictOptions, R_LOAD, SCAN_FROM_HZ};
use crate::error::{Error, FieldError};
use crate::model::line::{Line, Microstrip};
use crate::model::probe::{Electrode, Probe};
use crate::solve::probe::SolvedProbe;
use std::f64::consts::PI;

/// Relative permittivity of the scanned trace's board (FR-4; the loop's scene is the same
/// two-layer board).
pub const SCENE_ER: f64 = 4.3;
/// Copper thickness of the scanned trace, mm (1 oz).
pub const SCENE_T: f64 = 0.035;
/// Points of the coupling profile across the trace.
const PROFILE_POINTS: usize = 61;
/// The face's height over the scanned trace's copper an electric probe is predicted at, mm:
/// above 0 (the face on the copper) and at most 20 (beyond, the 2-D section's domain holds no
/// sound field; a near-field probe is not used that far off).
pub const HEIGHT_RANGE_MM: (f64, f64) = (0.0, 20.0);
/// The scanned trace's height over its plane, mm: a 50 Ω microstrip on εr 4.3 of 0.05 to 20 mm
/// (0.1 to 38 mm wide: printed boards).
pub const TRACE_H_RANGE_MM: (f64, f64) = (0.05, 20.0);

/// What an electric probe measures.
#[derive(Debug, Clone, PartialEq)]
pub struct ElectricResponse {
    /// The electrode.
    pub electrode: Electrode,
    /// Collecting radius r + c/2, m.
    pub r_eff_m: f64,
    /// Collecting area π·r_eff², m².
    pub area_eff_m2: f64,
    /// The electrode's own capacitance to the face round it (both outer layers), F.
    pub c_self: f64,
    /// Relative permittivity under the outer layers, taken for `c_self`.
    pub er_outer: f64,
    /// Corner above which the output stops rising, Hz.
    pub corner_hz: f64,
    /// Small-electrode limit: the collecting circumference is λ0/10, Hz.
    pub f_small_hz: f64,
    /// Upper usable frequency: the lower of the small-electrode limit and the stitching's
    /// design frequency (`[via] f_max_hz`), Hz.
    pub upper_hz: f64,
    /// Which rule set `upper_hz`.
    pub upper_rule: &'static str,
    /// The scanned trace (a 50 Ω microstrip at the stated height).
    pub trace: Microstrip,
    /// Capacitance from the trace to the electrode centred over it, face at the stated
    /// height, F.
    pub coupling_f: f64,
    /// −6 dB full width of that coupling scanned across the trace, m (None: it never falls
    /// 6 dB within the profile).
    pub resolution_m: Option<f64>,
    /// Electric probe factor table: (Hz, dB(1/m)).
    pub factor: Vec<(f64, f64)>,
    /// Output per volt on the trace below, centred: (Hz, dB re 1 V/V).
    pub output_per_volt: Vec<(f64, f64)>,
    /// The options used.
    pub options: PredictOptions,
}

impl ElectricResponse {
    /// The electric probe factor at `f` Hz, dB(1/m).
    pub fn factor_db_at(&self, f: f64) -> f64 {
        factor_db(f, self.area_eff_m2, R_LOAD, self.c_self)
    }

    /// |V_out/V_trace| at `f` Hz ([`transfer`] into the 50 Ω load).
    pub fn per_volt(&self, f: f64) -> f64 {
        transfer(f, self.coupling_f, self.c_self, R_LOAD).abs()
    }
}

/// V_out/V_line of an electric probe whose electrode couples `c_c` F to the line and `c_self` F
/// to its face, into `r_load` Ω at `f` Hz: jωC_c·R/(1 + jωR(C_self + C_c)).
pub fn transfer(f: f64, c_c: f64, c_self: f64, r_load: f64) -> crate::math::Cx {
    let w = 2.0 * PI * f;
    crate::math::Cx::new(0.0, w * c_c * r_load)
        / crate::math::Cx::new(1.0, w * r_load * (c_self + c_c))
}

/// The scanned trace: a 50 Ω microstrip (Hammerstad–Jensen) on εr [`SCENE_ER`], `h` mm over
/// its plane.
pub fn scene_trace(h: f64) -> Result<Microstrip, Error> {
    let template = Line::Microstrip(Microstrip {
        width: h,
        h,
        t: SCENE_T,
        er: SCENE_ER,
    });
    let limits = crate::solve::impedance::SolveLimits {
        min_trace_mm: 1e-3,
        ..Default::default()
    };
    let (line, _) = crate::solve::impedance::solve_width(&template, None, R_LOAD, &limits)?;
    match line {
        Line::Microstrip(m) => Ok(m),
        _ => Err(Error::Unsolvable(
            "the scanned trace did not solve as microstrip".into(),
        )),
    }
}

/// Predicts the response of an electric probe.
pub fn predict(p: &Probe, _s: &SolvedProbe, o: &PredictOptions) -> Result<ElectricResponse, Error> {
    let mut errs = o.validate();
    if errs.is_empty() {
        let (h0, h1) = HEIGHT_RANGE_MM;
        if !(o.height_mm > h0 && o.height_mm <= h1) {
            errs.push(FieldError::new(
                "height",
                o.height_mm,
                format!(
                    "must be above {h0} and at most {h1} mm for the electric probe '{}' (its face \
                     over the trace)",
                    p.name
                ),
            ));
        }
        let (t0, t1) = TRACE_H_RANGE_MM;
        if !(o.trace_h_mm >= t0 && o.trace_h_mm <= t1) {
            errs.push(FieldError::new(
                "trace-h",
                o.trace_h_mm,
                format!(
                    "must be from {t0} to {t1} mm for the electric probe '{}' (the scanned \
                     trace is a 50 Ω microstrip that high over its plane)",
                    p.name
                ),
            ));
        }
    }
    if !errs.is_empty() {
        return Err(Error::Invalid(errs));
    }
    let Some(e) = p.kind.electrode() else {
        return Err(Error::Invalid(vec![FieldError::new(
            "kind",
            format!("\"{}\"", p.kind.name()),
            format!("probe '{}': not an electric probe", p.name),
        )]));
    };
    let r = e.diameter / 2.0;
    let r_eff = effective_radius(r, e.clearance);
    let area = PI * (r_eff * 1e-3).powi(2);
    // The outer layers sit on the outermost dielectrics (the same on a symmetric stack).
    let n = p.stackup.copper_count();
    let er_outer = [1, n - 1]
        .into_iter()
        .filter_map(|k| p.stackup.dielectric_below(k))
        .map(|d| d.er)
        .fold(0.0, f64::max)
        .max(1.0);
    let c_self = self_capacitance(r, e.clearance, er_outer, 2);
    let corner = corner_hz(R_LOAD, c_self);
    let f_small = crate::math::C0 / (10.0 * 2.0 * PI * r_eff * 1e-3);
    let (upper, rule) = if p.vias.f_max_hz < f_small {
        (
            p.vias.f_max_hz,
            "stitching: the face's vias are spaced for [via] f_max_hz",
        )
    } else {
        (f_small, "small electrode: collecting circumference ≤ λ0/10")
    };
    let trace = scene_trace(o.trace_h_mm)?;
    // The coupling profile across the trace, from its axis out to several heights.
    let reach = 8.0 * (o.height_mm + o.trace_h_mm + r_eff) + trace.width;
    let xs: Vec<f64> = (0..PROFILE_POINTS)
        .map(|k| reach * k as f64 / (PROFILE_POINTS - 1) as f64)
        .collect();
    let q = line_coupling(&trace, o.height_mm, r_eff, &xs)?;
    let coupling = q[0].abs();
    let resolution = resolution_mm(&xs, &q).map(|w| w * 1e-3);
    let freqs = super::log_frequencies(
        o.f_min_hz.unwrap_or(SCAN_FROM_HZ),
        o.f_max_hz.unwrap_or(upper),
        o.per_decade,
    )?;
    let mut out = ElectricResponse {
        electrode: e,
        r_eff_m: r_eff * 1e-3,
        area_eff_m2: area,
        c_self,
        er_outer,
        corner_hz: corner,
        f_small_hz: f_small,
        upper_hz: upper,
        upper_rule: rule,
        trace,
        coupling_f: coupling,
        resolution_m: resolution,
        factor: Vec::new(),
        output_per_volt: Vec::new(),
        options: *o,
    };
    for f in freqs {
        out.factor.push((f, out.factor_db_at(f)));
        out.output_per_volt
            .push((f, 20.0 * out.per_volt(f).log10()));
    }
    Ok(out)
}
