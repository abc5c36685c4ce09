//! Probe factor from a measurement on the test-line fixture.
//!
//! A VNA drives the fixture's line (port `line_port`, far end matched) and reads the probe
//! (port `probe_port`). With the line matched, its current is I = V_inc/R_ref, so the field the
//! probe sees is known from the coupling model ([`crate::physics::coupling`]): the
//! **area-average** Hx over the loop's own effective area per ampere, M/(μ0·A). Then
//!
//!   PF = (H_avg/I)/(R_ref·|S21|),  PF[dB(S/m)] = 20·log10(H_avg/I) − 20·log10(R_ref) − |S21|dB.
//!
//! When the line is not uniform (the fixture's launches narrow it at each port) the current
//! under the probe is k·V_inc/R_ref, with k from the launch model or the measured line
//! ([`LineCurrent`]); then PF[dB(S/m)] gains 20·log10|k|. That factor refers to the test line's
//! field; [`line_to_uniform_db`] converts it to the predicted probe factor's reference, a
//! uniform field normal to the loop (the loop–gap rise, and the handle's share of a uniform
//! field, which the line's field does not reach).

use crate::calib::touchstone::Network;
use crate::error::{Error, FieldError};
use crate::model::probe::Probe;
use crate::physics::Response;
use crate::physics::coupling::{
    Coupling, TestLine, line_to_uniform_db, pf_from_s21, probe_coupling, probe_s21,
};
use crate::solve::probe::SolvedProbe;

/// One frequency of a calibration.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CalPoint {
    /// Frequency, Hz.
    pub f: f64,
    /// Measured |S21|, dB.
    pub s21_db: f64,
    /// Predicted |S21|, dB.
    pub s21_pred_db: f64,
    /// Measured probe factor, dB(S/m).
    pub pf_db: f64,
    /// Predicted probe factor, dB(S/m).
    pub pf_pred_db: f64,
    /// At or below the probe's predicted upper usable frequency.
    pub in_band: bool,
    /// The line current under the probe relative to V_inc/R_ref, dB (0 on a uniform matched
    /// line; the launch's or the measured line's standing waves otherwise).
    pub current_db: f64,
}

impl CalPoint {
    /// Measured minus predicted probe factor, dB.
    pub fn diff_db(&self) -> f64 {
        self.pf_db - self.pf_pred_db
    }
}

/// A calibration: the points and the coupling they rest on.
#[derive(Debug, Clone, PartialEq)]
pub struct Calibration {
    /// Points, by frequency.
    pub points: Vec<CalPoint>,
    /// The probe-to-line coupling at the stated height.
    pub coupling: Coupling,
    /// The line as the model saw it.
    pub line: TestLine,
    /// Probe tip height above the line's copper, mm.
    pub height_mm: f64,
    /// Ports used: (line input, probe output).
    pub ports: (usize, usize),
    /// Points at 0 Hz that were skipped (a probe factor needs f > 0).
    pub skipped_dc: usize,
    /// How the line current under the probe was found, as text.
    pub current_source: String,
}

/// How the line current under the probe is found.
pub struct LineCurrent<'a> {
    /// What it is, for the notes and the output.
    pub source: String,
    /// The current per V_inc/R_ref at a frequency (Hz), complex.
    pub ratio: &'a dyn Fn(f64) -> crate::math::Cx,
}

impl Calibration {
    /// (mean, largest absolute) difference over the in-band points, dB; None without any.
    pub fn in_band_diff(&self) -> Option<(f64, f64)> {
        let d: Vec<f64> = self
            .points
            .iter()
            .filter(|p| p.in_band)
            .map(|p| p.diff_db())
            .collect();
        if d.is_empty() {
            return None;
        }
        let mean = d.iter().sum::<f64>() / d.len() as f64;
        let max = d.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        Some((mean, max))
    }
}

/// How far (fraction) the file's reference resistance may stray from the probe model's 50 Ω
/// load, and the fixture's line impedance from the reference: 2 % (our tolerance: the
/// reflection coefficient is then at most 0.01, so the current under the probe is within 1 %,
/// 0.09 dB, of V_inc/R).
pub const Z_MATCH_TOL: f64 = 0.02;

/// Frequencies a probe factor is derived at, Hz (0 Hz points are skipped); bounds of our own
/// that keep every number finite.
pub const F_RANGE: (f64, f64) = (1.0, 1e12);

/// Checks the named ports of an n-port file.
pub fn check_ports(ports: usize, line_port: usize, probe_port: usize) -> Vec<FieldError> {
    let mut e = Vec::new();
    for (flag, v) in [("line-port", line_port), ("probe-port", probe_port)] {
        if v == 0 || v > ports {
            e.push(FieldError::new(
                flag,
                v,
                format!("the file has ports 1 to {ports}"),
            ));
        }
    }
    if line_port == probe_port {
        e.push(FieldError::new(
            "probe-port",
            probe_port,
            "must differ from --line-port",
        ));
    }
    e
}

/// Derives the probe factor from a measured network. `path` names the file in errors;
/// `line_z0` is the fixture line's impedance, Ω.
///
/// Refused: a reference resistance other than the probe model's 50 Ω load, a line whose
/// impedance differs from it (then I ≠ V_inc/R_ref), frequencies outside [`F_RANGE`], and an
/// |S21| that is zero, not finite or above 0 dB (a passive fixture cannot gain).
#[allow(clippy::too_many_arguments)]
pub fn calibrate(
    p: &Probe,
    s: &SolvedProbe,
    r: &Response,
    line: TestLine,
    line_z0: f64,
    net: &Network,
    path: &str,
    (line_port, probe_port): (usize, usize),
    height_mm: f64,
    current: &LineCurrent,
) -> Result<Calibration, Error> {
    let s21 = measured_transmission(net, path, (line_port, probe_port), height_mm, line_z0)?;
    let line = TestLine {
        r_port: net.r_ref,
        ..line
    };
    let coupling = probe_coupling(p, s, r, height_mm, &line);
    let mut points = Vec::new();
    for (f, mag) in s21 {
        let pred = probe_s21(p, s, r, &coupling, &[f])[0].1;
        let k = (current.ratio)(f).abs();
        points.push(CalPoint {
            f,
            s21_db: 20.0 * mag.log10(),
            s21_pred_db: 20.0 * (pred.abs() * k).log10(),
            pf_db: pf_from_s21(mag, coupling.h_avg_per_amp * k, net.r_ref)
                + line_to_uniform_db(r, f),
            pf_pred_db: crate::physics::probe_factor_at(p, s, r, f),
            in_band: f <= r.upper_hz,
            current_db: 20.0 * k.log10(),
        });
    }
    Ok(Calibration {
        points,
        coupling,
        line,
        height_mm,
        ports: (line_port, probe_port),
        skipped_dc: net.freqs.iter().filter(|f| **f == 0.0).count(),
        current_source: current.source.clone(),
    })
}

/// The measured transmission S(probe, line) of `net` at every point above 0 Hz, (Hz, |S|),
/// after the checks every calibration makes: the ports, the height, a reference resistance of
/// the probe model's 50 Ω load, a fixture line that matches it (`line_z0`), frequencies within
/// [`F_RANGE`], and an |S| that is finite, non-zero and at most 0 dB (a passive fixture cannot
/// gain). `path` names the file in errors.
pub fn measured_transmission(
    net: &Network,
    path: &str,
    (line_port, probe_port): (usize, usize),
    height_mm: f64,
    line_z0: f64,
) -> Result<Vec<(f64, f64)>, Error> {
    let mut errs = check_ports(net.ports, line_port, probe_port);
    crate::error::check_range(&mut errs, "height", height_mm, 0.0, 100.0);
    let r_load = crate::physics::R_LOAD;
    if (net.r_ref / r_load - 1.0).abs() > Z_MATCH_TOL {
        errs.push(FieldError::new(
            "touchstone",
            format!("{path} (option line R {})", net.r_ref),
            format!(
                "the reference resistance must be {r_load} Ω ± {} %: the probe model's load \
                 (renormalise the file to 50 Ω)",
                Z_MATCH_TOL * 100.0
            ),
        ));
    } else if (line_z0 / net.r_ref - 1.0).abs() > Z_MATCH_TOL {
        errs.push(FieldError::new(
            "fixture.target_z0_ohms",
            line_z0,
            format!(
                "must match the file's reference resistance {} Ω within {} %: a mismatched \
                 line carries standing waves, so its current is not V_inc/R",
                net.r_ref,
                Z_MATCH_TOL * 100.0
            ),
        ));
    }
    if !errs.is_empty() {
        return Err(Error::Invalid(errs));
    }
    let s21 = net.param(probe_port, line_port);
    let mut points = Vec::new();
    for (k, &f) in net.freqs.iter().enumerate() {
        if f == 0.0 {
            continue;
        }
        let bad = |why: String| Error::Parse {
            path: path.to_string(),
            message: format!("line {}: {why}", net.lines[k]),
        };
        if !(F_RANGE.0..=F_RANGE.1).contains(&f) {
            return Err(bad(format!(
                "frequency {f} Hz is outside {} Hz to {} Hz",
                F_RANGE.0, F_RANGE.1
            )));
        }
        let (re, im) = s21[k];
        let mag = re.hypot(im);
        if !(mag > 0.0 && mag.is_finite()) {
            return Err(bad(format!(
                "|S{probe_port}{line_port}| = {mag} at {f} Hz; a probe factor needs a finite, \
                 non-zero transmission"
            )));
        }
        if mag > 1.0 {
            return Err(bad(format!(
                "|S{probe_port}{line_port}| = {:.2} dB at {f} Hz is above 0 dB: a passive \
                 fixture and probe cannot gain (wrong ports, or a file that is not S-parameters)",
                20.0 * mag.log10()
            )));
        }
        points.push((f, mag));
    }
    if points.is_empty() {
        return Err(Error::Parse {
            path: path.to_string(),
            message: format!(
                "line {}: no point above 0 Hz to derive a probe factor from",
                net.lines.first().copied().unwrap_or(1)
            ),
        });
    }
    Ok(points)
}
