//! Coupling between a probe and a test line: the line's magnetic field per ampere, the mutual
//! inductance to a probe held above it, and the S21 a vector network analyzer would read from the
//! line's input to the probe's output.
//!
//! Model (quasi-static; limits in `docs/response.md`):
//! - the line is a straight strip of width `w` at height `h` over an infinite perfect ground
//!   plane; its return current is the image strip at −h (image theory);
//! - the strip's current is spread uniformly over its width (the finite-width current-sheet
//!   correction); `w → 0` gives the thin filament. Real microstrip current is edge-peaked and
//!   lies mostly on the strip's underside, so within about one width of the strip both models
//!   are approximate;
//! - the probe stands upright with its loop plane containing the line's axis, tip `height`
//!   above the strip, so only the field component across the line (`Hx`) threads it;
//! - the line is matched (its far end in the port impedance), so the current along it is
//!   I = V_inc/R_port;
//! - the probe's output follows the transfer of [`super::predict`]:
//!   V_out = jωM·I·R_L/(R_L + jX), X = ωL_outer + Z0·tan βl2.

use super::{LoopShape, MU0, Response, loop_height_mm};
use std::f64::consts::PI;

pub use crate::solve::fixture::TestLine;

/// Field of one strip and its image at (x, z), z above the strip (A/m per A): (Hx, Hz).
///
/// Filament (w = 0), image theory:
///   Hx = (1/2π)·[z/(x² + z²) − (z + 2h)/(x² + (z + 2h)²)],
///   Hz = −(1/2π)·[x/(x² + z²) − x/(x² + (z + 2h)²)].
/// Uniform sheet of width w:
///   Hx = (1/(2πw))·[atan((w/2 − x)/z) + atan((w/2 + x)/z)] − (same with z → z + 2h),
///   Hz = −(1/(4πw))·ln[((x + w/2)² + z²)/((x − w/2)² + z²)] − (same with z → z + 2h).
pub fn line_field(x: f64, z: f64, line: &TestLine) -> (f64, f64) {
    let h = line.h;
    let w = line.width;
    if w <= 0.0 {
        let hx =
            (z / (x * x + z * z) - (z + 2.0 * h) / (x * x + (z + 2.0 * h).powi(2))) / (2.0 * PI);
        let hz = -(x / (x * x + z * z) - x / (x * x + (z + 2.0 * h).powi(2))) / (2.0 * PI);
        return (hx, hz);
    }
    let sheet_x = |z: f64| ((w / 2.0 - x) / z).atan() + ((w / 2.0 + x) / z).atan();
    let sheet_z = |z: f64| (((x + w / 2.0).powi(2) + z * z) / ((x - w / 2.0).powi(2) + z * z)).ln();
    let hx = (sheet_x(z) - sheet_x(z + 2.0 * h)) / (2.0 * PI * w);
    let hz = -(sheet_z(z) - sheet_z(z + 2.0 * h)) / (4.0 * PI * w);
    (hx, hz)
}

/// Flux per ampere divided by μ0 (m) through an upright loop whose centreline apex is `z0` (m)
/// above the strip, displaced sideways by `x` (m): ∫ chord(u)·Hx(x, z0 + u) du by composite
/// Gauss–Legendre, as [`super::flux_per_amp`] but with the strip's own field.
pub fn flux_per_amp_line(shape: &LoopShape, x: f64, z0: f64, line: &TestLine) -> f64 {
    super::integrate_over_loop(shape, |u| line_field(x, z0 + u, line).0)
}

/// The coupling of one probe to one test line at one height.
#[derive(Debug, Clone, PartialEq)]
pub struct Coupling {
    /// Height of the apex of the loop's centreline above the current sheet, m.
    pub apex_m: f64,
    /// Mutual inductance line → probe, H (strip model).
    pub mutual: f64,
    /// The same with the strip as a thin filament, H.
    pub mutual_filament: f64,
    /// Area-average Hx over the loop per ampere, 1/m: M/(μ0·A). The probe factor's reference.
    pub h_avg_per_amp: f64,
    /// Hx at the loop's geometric centre per ampere, 1/m (for comparison only).
    pub h_centre_per_amp: f64,
    /// Port impedance, Ω.
    pub r_port: f64,
}

impl Coupling {
    /// Predicted S21 (line input → probe output) at `f` Hz, complex, for a probe whose
    /// response is `r` (its outer inductance, gap capacitance and inner line), through
    /// [`Response::line_transfer`]: the line's EMF is induced next to the gap, so the gap
    /// capacitance acts in the gap's impedance only. The phase is
    /// referred to the line's current under the probe: the delay of the fixture's line up to
    /// the probe is not included (a measured phase carries it); the probe's own feed run
    /// enters by its loss only, and the sign follows the loop's orientation.
    pub fn s21(&self, r: &Response, f: f64) -> super::Cx {
        // jωM/R_port · V_out/V_oc.
        let w = 2.0 * PI * f;
        r.line_transfer(f) * super::Cx::new(0.0, w * self.mutual / self.r_port)
    }
}

/// The coupling of a probe (shape, centreline-apex offset from its tip) held with its tip
/// `height_m` above the strip's copper top.
pub fn couple(
    shape: &LoopShape,
    area_m2: f64,
    tip_to_apex_m: f64,
    height_m: f64,
    line: &TestLine,
) -> Coupling {
    let apex = height_m + tip_to_apex_m + line.top;
    let flux = flux_per_amp_line(shape, 0.0, apex, line);
    let filament = TestLine {
        width: 0.0,
        ..*line
    };
    let flux_f = flux_per_amp_line(shape, 0.0, apex, &filament);
    let centre = apex + loop_height_mm(shape) * 1e-3 / 2.0;
    Coupling {
        apex_m: apex,
        mutual: MU0 * flux,
        mutual_filament: MU0 * flux_f,
        h_avg_per_amp: flux / area_m2,
        h_centre_per_amp: line_field(0.0, centre, line).0,
        r_port: line.r_port,
    }
}

/// Probe factor in dB(S/m) from a measured |S21| (linear) and the reference field per ampere:
/// PF = (H_ref/I)/(R_port·|S21|), i.e. PF[dB(S/m)] = 20·log10(H_ref/I) − 20·log10(R_port) − |S21|dB.
/// This is the factor in the test line's own field; [`line_to_uniform_db`] converts it to the
/// uniform-field probe factor that `predict` gives.
pub fn pf_from_s21(s21_mag: f64, h_per_amp: f64, r_port: f64) -> f64 {
    20.0 * (h_per_amp / (r_port * s21_mag)).log10()
}

/// dB to add to a probe factor derived on a test line ([`pf_from_s21`]) for the uniform-field
/// probe factor at `f` Hz: 20·log10|1 − ω²·L_out·C_gap| ([`Response::line_factor`]; a uniform
/// field rings up the loop–gap resonance, a test line's field under the apex does not), less
/// the handle's share of a uniform field, 20·log10(1 + A_handle/A_eff) (a test line's field
/// hardly reaches the handle; module [`super::handle`]).
pub fn line_to_uniform_db(r: &Response, f: f64) -> f64 {
    20.0 * r.line_factor(f).abs().log10() - r.local_field_db()
}

/// The coupling of a built probe held with its tip `height_mm` above the strip: the flux
/// through the shield's own current filaments (its effective loop), referred to its effective
/// area.
pub fn probe_coupling(
    p: &crate::model::probe::Probe,
    s: &crate::solve::probe::SolvedProbe,
    r: &Response,
    height_mm: f64,
    line: &TestLine,
) -> Coupling {
    let apex = height_mm * 1e-3 + super::tip_to_apex_m(p, s) + line.top;
    let shape = &p.shape;
    let flux_with = |l: &TestLine| r.flux_through(shape, |x, z| line_field(x, z, l).0, 0.0, apex);
    let flux = flux_with(line);
    let filament = TestLine {
        width: 0.0,
        ..*line
    };
    let flux_f = flux_with(&filament);
    let centre = apex + loop_height_mm(shape) * 1e-3 / 2.0;
    Coupling {
        apex_m: apex,
        mutual: MU0 * flux,
        mutual_filament: MU0 * flux_f,
        h_avg_per_amp: flux / r.area_eff_m2,
        h_centre_per_amp: line_field(0.0, centre, line).0,
        r_port: line.r_port,
    }
}

/// Predicted S21 of a built probe over `freqs` (Hz): (Hz, S21).
pub fn probe_s21(
    _p: &crate::model::probe::Probe,
    _s: &crate::solve::probe::SolvedProbe,
    r: &Response,
    c: &Coupling,
    freqs: &[f64],
) -> Vec<(f64, super::Cx)> {
    freqs.iter().map(|&f| (f, c.s21(r, f))).collect()
}

// The line current under the probe when the line is not one uniform matched line: the
// fixture's launches (connector pad in its coplanar gap, taper) as cascaded lossless line
// sections (`solve::network`).

use crate::solve::network::{Abcd, Section, cascade};

/// The current into the load end of a two-port `left` driven by a source of `r_port` Ω (an
/// incident wave V_inc) when that end sees `z_right` Ω, per V_inc/r_port: 1 (at some phase) for
/// a matched uniform line. With V_s = 2·V_inc behind r_port and (V1, I1) = M·(V2, I2),
/// V2 = Z·I2: I2 = 2·V_inc/(A·Z + B + r_port·(C·Z + D)).
pub fn current_ratio(left: &Abcd, z_right: super::Cx, r_port: f64) -> super::Cx {
    use super::Cx;
    let r = Cx::new(r_port, 0.0);
    let den = left.a * z_right + left.b + r * (left.c * z_right + left.d);
    Cx::new(2.0 * r_port, 0.0) / den
}

/// The line current at the probe per V_inc/r_port at `f` Hz, for a line made of `to_probe`
/// (sections from the driven port to the probe position) and `beyond` (from the probe to the
/// far end, terminated in r_port). Complex.
pub fn launch_current(to_probe: &[Section], beyond: &[Section], r_port: f64, f: f64) -> super::Cx {
    let z = cascade(beyond, f).z_in(super::Cx::new(r_port, 0.0));
    current_ratio(&cascade(to_probe, f), z, r_port)
}

/// The line voltage at the probe per V_inc at `f` Hz (the same line as [`launch_current`]):
/// the current there times the impedance the rest of the line presents, V = I·Z_beyond (1 at
/// some phase on a matched uniform line; not I·Z0 where the line carries standing waves).
pub fn launch_voltage(to_probe: &[Section], beyond: &[Section], r_port: f64, f: f64) -> super::Cx {
    let z = cascade(beyond, f).z_in(super::Cx::new(r_port, 0.0));
    current_ratio(&cascade(to_probe, f), z, r_port) * z * super::Cx::new(1.0 / r_port, 0.0)
}

#[cfg(test)]
mod launch_tests {
    use super::*;

    #[test]
    fn a_matched_uniform_line_carries_v_over_r_everywhere() {
        let s = |len_m| Section::Line {
            z0: 50.0,
            eps_eff: 3.3,
            len_m,
        };
        for f in [1e6, 1e9, 3e9] {
            let k = launch_current(&[s(0.03)], &[s(0.05)], 50.0, f);
            assert!((k.abs() - 1.0).abs() < 1e-12, "{f}: {k:?}");
        }
    }

    #[test]
    fn a_quarter_wave_mismatch_is_the_textbook_one() {
        // A 100 Ω quarter-wave section into a 50 Ω line terminated in 50 Ω: the source sees
        // 100²/50 = 200 Ω, so the current into the section's far end (by power conservation,
        // lossless) is |I2|²·50 = P_in = (1 − |Γ|²)·V_inc²/50 with Γ = (200 − 50)/(200 + 50).
        let f = 1e9;
        let eps: f64 = 4.0;
        let lq = super::super::C0 / (4.0 * f * eps.sqrt());
        let q = Section::Line {
            z0: 100.0,
            eps_eff: eps,
            len_m: lq,
        };
        let k = launch_current(&[q], &[], 50.0, f);
        let g: f64 = 150.0 / 250.0;
        assert!((k.abs() - (1.0 - g * g).sqrt()).abs() < 1e-12, "{k:?}");
        // The voltage at its far end, across the 50 Ω: the same power, so |V2|²/50 = P_in.
        let v = launch_voltage(&[q], &[], 50.0, f);
        assert!((v.abs() - (1.0 - g * g).sqrt()).abs() < 1e-12, "{v:?}");
    }

    #[test]
    fn the_voltage_is_the_incident_one_at_dc_whatever_the_sections() {
        // At DC a lossless line is a wire: the 50 Ω source into the 50 Ω load gives V = V_inc
        // everywhere, whatever the sections' Z0 (circuit theory). Just above DC it is within
        // (βl)² of it; the current ratio times Z0 (the wrong form) is Z0/R off.
        let sec = |z0| Section::Line {
            z0,
            eps_eff: 3.0,
            len_m: 0.02,
        };
        let v = launch_voltage(&[sec(93.0), sec(40.0)], &[sec(40.0), sec(93.0)], 50.0, 1e3);
        assert!((v.abs() - 1.0).abs() < 1e-9, "{v:?}");
        // At a frequency where the far part is a quarter wave of 93 Ω into 50 Ω, the probe sees
        // 93²/50 = 173 Ω beyond it: the voltage is I·173 Ω, not I·Z0.
        let f = 1e9;
        let lq = super::super::C0 / (4.0 * f * 3f64.sqrt());
        let q = Section::Line {
            z0: 93.0,
            eps_eff: 3.0,
            len_m: lq,
        };
        let i = launch_current(&[], &[q], 50.0, f);
        let v = launch_voltage(&[], &[q], 50.0, f);
        // (V per V_inc, I per V_inc/50 Ω: their ratio is Z_beyond/50 Ω.)
        assert!(
            (v.abs() / i.abs() - 93.0 * 93.0 / 50.0 / 50.0).abs() < 1e-9,
            "{v:?} {i:?}"
        );
    }
}
