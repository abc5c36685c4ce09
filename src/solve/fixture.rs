//! Solved values of a test-line fixture: the line width for the target Z0 in its stackup, its
//! field-solver check, the keepout and taper, and the stitching pitch.

use super::impedance::{Line, Solution, SolveLimits, Structure, solve_width};
use super::probe::C0;
use crate::error::{Error, FieldError};
use crate::model::fixture::{Fixture, FixtureLine, defaults};

/// Numbers computed for a fixture.
#[derive(Debug, Clone, PartialEq)]
pub struct SolvedFixture {
    /// Line width, mm.
    pub width: f64,
    /// The line's cross-section as solved.
    pub line: Line,
    /// Its closed-form solution.
    pub solution: Solution,
    /// The 2-D field solution of the same cross-section at that width, Ω (None if it failed).
    pub field_z0: Option<f64>,
    /// Dielectric height between the line and its plane, mm.
    pub h: f64,
    /// The line's copper thickness, mm.
    pub t: f64,
    /// Line edge to ground on the line's layer, mm.
    pub keepout: f64,
    /// Length over which the line narrows to the connector's centre pad, mm (0: no taper).
    pub taper: f64,
    /// Largest stitching pitch (λ/N in the dielectric at f_max), mm.
    pub pitch_max: f64,
    /// Smallest via pitch the fab allows, mm.
    pub pitch_min: f64,
    /// Line length between the centre pads' inner ends, mm.
    pub line_length: f64,
    /// One-way delay of that length, s.
    pub delay_s: f64,
}

impl SolvedFixture {
    /// The line as the coupling model sees it (m), driven and terminated in `r_port` Ω.
    pub fn test_line(&self, r_port: f64) -> crate::physics::coupling::TestLine {
        crate::physics::coupling::TestLine {
            width: self.width * 1e-3,
            h: (self.h + self.t / 2.0) * 1e-3,
            top: self.t / 2.0 * 1e-3,
            r_port,
        }
    }
}

/// Solves a fixture.
pub fn solve(f: &Fixture) -> Result<SolvedFixture, Error> {
    let structure = match f.line {
        FixtureLine::Cpwg { .. } => Structure::Cpwg,
        FixtureLine::Microstrip { .. } => {
            let mask = if f.on_top() {
                f.stackup.mask_top()
            } else {
                f.stackup.mask_bottom()
            };
            if mask.is_some() {
                Structure::CoatedMicrostrip
            } else {
                Structure::Microstrip
            }
        }
    };
    let gap = match f.line {
        FixtureLine::Cpwg { gap } => Some(gap),
        _ => None,
    };
    let template = f
        .stackup
        .line_for_layer(f.line_layer, structure, 1.0, gap)?;
    let limits = SolveLimits {
        min_trace_mm: f.fab.min_trace,
        ..Default::default()
    };
    let (line, solution) = solve_width(&template, None, f.target_z0, &limits).map_err(|e| {
        let hint = match f.line {
            FixtureLine::Cpwg { gap } => format!(
                " (with fixture.cpwg_gap_mm = {gap}: a wider or narrower gap moves the reachable \
                 range)"
            ),
            _ => String::new(),
        };
        let why = e.to_string().replace("; try another --method", "");
        Error::Invalid(vec![FieldError::new(
            "fixture.target_z0_ohms",
            f.target_z0,
            format!(
                "cannot be met on layer {} of '{}'{hint}: {why}",
                f.line_layer,
                f.stackup.name()
            ),
        )])
    })?;
    let width = line.width();
    let field_z0 = crate::field::solve_line(&line, Default::default())
        .ok()
        .map(|s| s.z0_ohms);
    let (h, t, er) = match &line {
        Line::Microstrip(m) => (m.h, m.t, m.er),
        Line::CoatedMicrostrip(c) => (c.line.h, c.line.t, c.line.er),
        Line::Cpwg(c) => (c.h, c.t, c.er),
        Line::Stripline(s) => (s.h2, s.t, s.er1.max(s.er2)),
    };
    let keepout = match f.line {
        FixtureLine::Microstrip { keepout } => {
            keepout.unwrap_or((defaults::KEEPOUT_H * h).max(width))
        }
        FixtureLine::Cpwg { gap } => gap,
    };
    let cp_w = f.connector.centre_pad_width;
    let taper = if width > cp_w {
        defaults::TAPER_RATIO * (width - cp_w)
    } else {
        0.0
    };
    let lambda_mm = C0 / (f.vias.f_max_hz * er.sqrt()) * 1e3;
    let pitch_max = lambda_mm / f.vias.pitch_n;
    let pitch_min = (f.vias.pad + f.fab.min_space).max(f.vias.drill + f.fab.min_hole_gap);
    let line_length = f.length - 2.0 * f.connector.centre_pad_length;
    let mut errs = Vec::new();
    if pitch_max < pitch_min {
        errs.push(FieldError::new(
            "via.pitch_n",
            f.vias.pitch_n,
            format!(
                "λ/{} at {} GHz is {pitch_max:.3} mm, below the fab's smallest via pitch \
                 {pitch_min:.3} mm",
                f.vias.pitch_n,
                f.vias.f_max_hz / 1e9
            ),
        ));
    }
    // The straight part of the line must be longer than its two tapers and the connector
    // tabs with room to spare for a probe.
    let ends = 2.0 * (taper + neck_length(f));
    if line_length - ends < defaults::MIN_UNIFORM {
        errs.push(FieldError::new(
            "fixture.length_mm",
            f.length,
            format!(
                "leaves {:.2} mm of uniform line between the tapers; at least {} mm are needed \
                 (length ≥ {:.1} mm)",
                line_length - ends,
                defaults::MIN_UNIFORM,
                f.length - (line_length - ends) + defaults::MIN_UNIFORM
            ),
        ));
    }
    // Across the board: the line, its keepout, then at least one row of stitching vias in the
    // pour on each side, then the copper-to-edge pull-back.
    let via_row = f.vias.pad + 2.0 * super::probe::VIA_WEB;
    let need = 2.0 * (width.max(cp_w) / 2.0 + keepout + via_row + f.fab.copper_to_edge);
    if need > f.width {
        errs.push(FieldError::new(
            "fixture.width_mm",
            f.width,
            format!(
                "must hold the line, its keepout and a row of stitching vias on each side: at \
                 least {need:.2} mm"
            ),
        ));
    }
    if !errs.is_empty() {
        return Err(Error::Invalid(errs));
    }
    let delay_s = line_length * 1e-3 * solution.eps_eff.sqrt() / C0;
    Ok(SolvedFixture {
        width,
        line,
        solution,
        field_z0,
        h,
        t,
        keepout,
        taper,
        pitch_max,
        pitch_min,
        line_length,
        delay_s,
    })
}

/// Length of the line's narrow neck beyond the centre pad, which runs past the connector's
/// ground tabs before the taper starts, mm.
pub fn neck_length(f: &Fixture) -> f64 {
    let c = &f.connector;
    (c.ground_pad_length + tab_length(f) - c.centre_pad_length).max(0.0) + f.fab.min_space
}

/// Length of the ground tab that carries each ground pad to its via, mm.
pub fn tab_length(f: &Fixture) -> f64 {
    f.vias.pad + 2.0 * super::probe::VIA_WEB
}

/// Steps the launch's taper is cut into for the line-current model.
pub const TAPER_STEPS: usize = 24;

/// The line from one port (the board's edge) to the probe position (the board's centre) as
/// lossless line sections, the fixture being symmetric: the connector's centre pad and the
/// neck at the pad's width, the taper in [`TAPER_STEPS`] steps (each at its mid width), then
/// the uniform line. Z0 and εeff of each width come from the impedance engine on the fixture's
/// own cross-section, by the method that solved the uniform line. The connector itself and the
/// pads' fringing are not modelled.
pub fn launch_sections(
    f: &Fixture,
    s: &SolvedFixture,
) -> Result<Vec<crate::physics::coupling::Section>, Error> {
    use crate::physics::coupling::Section;
    let method = Some(s.solution.method);
    let section = |w: f64, len_mm: f64| -> Result<Section, Error> {
        let sol =
            super::impedance::analyse(&s.line.with_width(w), method).map_err(Error::Invalid)?;
        Ok(Section {
            z0: sol.z0,
            eps_eff: sol.eps_eff,
            len: len_mm * 1e-3,
        })
    };
    let w = s.width;
    let wn = w.min(f.connector.centre_pad_width);
    let narrow = f.connector.centre_pad_length + neck_length(f);
    let uniform = f.length / 2.0 - narrow - s.taper;
    let mut out = Vec::new();
    if (w - wn).abs() > 1e-9 {
        out.push(section(wn, narrow)?);
        let dl = s.taper / TAPER_STEPS as f64;
        for k in 0..TAPER_STEPS {
            let t = (k as f64 + 0.5) / TAPER_STEPS as f64;
            out.push(section(wn + (w - wn) * t, dl)?);
        }
        out.push(section(w, uniform)?);
    } else {
        out.push(section(w, f.length / 2.0)?);
    }
    Ok(out)
}
