//! Solved values of a test-line fixture: the line width for the target Z0 in its stackup, its
//! field-solver check, the keepout and taper, and the stitching pitch.

use super::impedance::{Line, Solution, SolveLimits, Structure, solve_width};
use super::network::Section;
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
    /// Each port's launch: the centre pad's gap and the taper's stations.
    pub port: FixturePort,
    /// Worst |S11| of one port's launch up to f_max (50 Ω, into the uniform line), dB and Hz.
    pub port_s11: (f64, f64),
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
    pub fn test_line(&self, r_port: f64) -> TestLine {
        TestLine {
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
    let field = crate::field::solve_line(&line, Default::default()).ok();
    let field_z0 = field.as_ref().map(|s| s.z0_ohms);
    let (h, t, er) = line_dielectric(&line);
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
    let ends = 2.0 * taper;
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
    let mut port = design_port(f, (h, t, er), width, keepout, taper)?;
    port.line_field = field
        .map(|x| (x.z0_ohms, x.eps_eff))
        .unwrap_or((solution.z0, solution.eps_eff));
    let port_s11 = port_budget(f, &port, port.line_field.0, taper);
    Ok(SolvedFixture {
        width,
        line,
        solution,
        field_z0,
        h,
        t,
        keepout,
        taper,
        port_s11,
        port,
        pitch_max,
        pitch_min,
        line_length,
        delay_s,
    })
}

/// One station of a port's taper: where it is and what the line is there.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Station {
    /// Distance from the centre pad's inner end towards the board's centre, mm.
    pub x: f64,
    /// Line width, mm.
    pub width: f64,
    /// Gap to the ground on the line's layer, mm.
    pub gap: f64,
    /// Z0 there (grounded CPW by the conformal closed form, the design's), Ω.
    pub z0: f64,
    /// Effective permittivity there (the same closed form).
    pub eps_eff: f64,
}

/// One step of a port's taper, between two stations, at its mid-width: the station there and
/// its line by the 2-D field solver, with the solder mask where the board has it (the check
/// the launch budget uses).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TaperStep {
    /// The step's middle.
    pub at: Station,
    /// Z0 by the 2-D field solver, Ω.
    pub field_z0: f64,
    /// Effective permittivity by the field solver.
    pub field_eps_eff: f64,
}

/// A port's launch: the connector's centre pad in a coplanar gap, then a constant-impedance
/// taper to the uniform line (module docs of [`design_port`]).
#[derive(Debug, Clone, PartialEq)]
pub struct FixturePort {
    /// Gap from the centre pad to the ground on the line's layer, mm.
    pub pad_gap: f64,
    /// The pad's Z0 in that gap (bare pad, conformal closed form), Ω.
    pub pad_z0: f64,
    /// The pad's effective permittivity.
    pub pad_eps_eff: f64,
    /// The pad's Z0 and εeff by the 2-D field solver (bare pad).
    pub pad_field: (f64, f64),
    /// The uniform line's Z0 and εeff by the 2-D field solver.
    pub line_field: (f64, f64),
    /// Taper stations from the pad's inner end (x = 0) to the uniform line (x = taper), by
    /// the closed form that designs them; the sections between them are checked at their
    /// mid-width.
    pub stations: Vec<Station>,
    /// One section per gap between stations, at its mid-width, with its own gap and the field
    /// solver's check.
    pub mid: Vec<TaperStep>,
}

/// Stations in a port's taper (our rule: 8 steps keep each step's width change small).
pub const PORT_STEPS: usize = 8;

/// Designs a port's launch. The connector's centre pad is narrower than a 50 Ω microstrip on
/// a thick board, so ground is brought beside it on the line's layer: the pad sits in a
/// coplanar gap solved for the target (grounded CPW, Ghione–Naldi conformal mapping). From
/// the pad's inner end the line widens linearly to its own width over the taper length
/// ([`crate::model::fixture::defaults::TAPER_RATIO`] per mm of width change), and at every
/// station the gap is solved again for the target, up to the line's own keepout (or CPW gap):
/// a constant-impedance coplanar taper, so that the launch reflects only what the closed
/// form misses, and there is no narrow neck. The ground the gap brings in joins the
/// connector's ground pads to the pour.
pub fn design_port(
    f: &Fixture,
    (h, t, er): (f64, f64, f64),
    width: f64,
    keepout: f64,
    taper: f64,
) -> Result<FixturePort, Error> {
    use super::impedance::{Cpwg, Method, analyse};
    let target = f.target_z0;
    let g_lo = f.fab.min_space;
    let z_at = |w: f64, g: f64| -> Result<(f64, f64), Error> {
        let line = Line::Cpwg(Cpwg {
            width: w,
            gap: g,
            h,
            t,
            er,
        });
        analyse(&line, Some(Method::Conformal))
            .map(|s| (s.z0, s.eps_eff))
            .map_err(Error::Invalid)
    };
    // The gap for the target at width w, within [fab space, g_hi]; bisection in ln g.
    let gap_for = |w: f64, g_hi: f64| -> Result<f64, Error> {
        let g_hi = g_hi.max(g_lo);
        if z_at(w, g_hi)?.0 <= target {
            return Ok(g_hi);
        }
        if z_at(w, g_lo)?.0 >= target {
            return Ok(g_lo);
        }
        let (mut a, mut b) = (g_lo, g_hi);
        while b / a - 1.0 > 1e-6 {
            let m = (a * b).sqrt();
            if z_at(w, m)?.0 < target {
                a = m;
            } else {
                b = m;
            }
        }
        Ok((a * b).sqrt())
    };
    let cp_w = f.connector.centre_pad_width;
    let c = &f.connector;
    // The pad's gap stops at the ground pads' inner edge.
    let g_pad_max = (c.ground_pad_offset - c.ground_pad_width / 2.0 - cp_w / 2.0).min(keepout);
    let pad_gap = (gap_for(cp_w, g_pad_max)? * 1e3).round() / 1e3;
    let (pad_z0, pad_eps_eff) = z_at(cp_w, pad_gap)?;
    let station = |x: f64, w: f64| -> Result<Station, Error> {
        let g = gap_for(w, keepout)?;
        let (z0, eps_eff) = z_at(w, g)?;
        Ok(Station {
            x,
            width: w,
            gap: g,
            z0,
            eps_eff,
        })
    };
    // Only the steps' middles are solved by the field solver: the budget cascades them (the
    // stations themselves are where the artwork's outline turns).
    let (mut stations, mut mid) = (Vec::new(), Vec::new());
    if taper > 0.0 {
        for k in 0..=PORT_STEPS {
            let u = k as f64 / PORT_STEPS as f64;
            stations.push(station(taper * u, cp_w + (width - cp_w) * u)?);
            if k < PORT_STEPS {
                let um = (k as f64 + 0.5) / PORT_STEPS as f64;
                let at = station(taper * um, cp_w + (width - cp_w) * um)?;
                let (field_z0, field_eps_eff) =
                    station_field(f, (h, t, er), at.width, at.gap, true)?;
                mid.push(TaperStep {
                    at,
                    field_z0,
                    field_eps_eff,
                });
            }
        }
    }
    let pad_field = station_field(f, (h, t, er), cp_w, pad_gap, false)?;
    Ok(FixturePort {
        pad_gap,
        pad_z0,
        pad_eps_eff,
        pad_field,
        line_field: (0.0, 0.0),
        stations,
        mid,
    })
}

/// The dielectric under a fixture's line, the ports' taper is designed on: (height, copper
/// thickness, εr).
fn line_dielectric(line: &Line) -> (f64, f64, f64) {
    match line {
        Line::Microstrip(m) => (m.h, m.t, m.er),
        Line::CoatedMicrostrip(c) => (c.line.h, c.line.t, c.line.er),
        Line::Cpwg(c) => (c.h, c.t, c.er),
        Line::Stripline(s) => (s.h2, s.t, s.er1.max(s.er2)),
    }
}

impl SolvedFixture {
    /// The dielectric the ports' taper is designed on: (height, copper thickness, εr), mm.
    pub fn port_dielectric(&self) -> (f64, f64, f64) {
        line_dielectric(&self.line)
    }
}

/// Z0 and εeff by the 2-D field solver of the fixture's grounded CPW `w` wide in a gap `g` on
/// a dielectric `h` thick (copper `t`, εr `er`), under the solder mask of the line's side
/// when `coated` and the board has one (the centre pad is bare).
pub fn station_field(
    f: &Fixture,
    (h, t, er): (f64, f64, f64),
    w: f64,
    g: f64,
    coated: bool,
) -> Result<(f64, f64), Error> {
    use super::impedance::Cpwg;
    let mut cs = crate::field::cross_section_for_line(&Line::Cpwg(Cpwg {
        width: w,
        gap: g,
        h,
        t,
        er,
    }));
    if coated {
        let mask = if f.on_top() {
            f.stackup.mask_top()
        } else {
            f.stackup.mask_bottom()
        };
        cs.coat = mask.map(|m| crate::field::Coat {
            thickness: m.thickness_mm,
            er: m.er,
        });
    }
    crate::field::solve(&cs, Default::default()).map(|r| (r.z0_ohms, r.eps_eff))
}

/// One port's launch as line sections from the board edge: the centre pad in its gap, the
/// taper's steps at their mid-widths, each with the field solver's Z0 and εeff (not the closed
/// form that designed them, so the budget checks the design).
pub fn port_sections(f: &Fixture, port: &FixturePort, taper: f64) -> Vec<Section> {
    let mut v = vec![Section::Line {
        z0: port.pad_field.0,
        eps_eff: port.pad_field.1,
        len_m: f.connector.centre_pad_length * 1e-3,
    }];
    let n = port.mid.len().max(1) as f64;
    v.extend(port.mid.iter().map(|m| Section::Line {
        z0: m.field_z0,
        eps_eff: m.field_eps_eff,
        len_m: taper / n * 1e-3,
    }));
    v
}

/// Worst |S11| of one port's launch into the uniform line (`z_line` Ω), 50 Ω at the
/// connector, from 10 MHz to f_max: (dB, Hz).
pub fn port_budget(f: &Fixture, port: &FixturePort, z_line: f64, taper: f64) -> (f64, f64) {
    let f_max = f.vias.f_max_hz;
    let lo = 10e6_f64.min(f_max / 10.0);
    let n = (((f_max / lo).log10() * 50.0).ceil() as usize).max(2);
    let b = super::network::budget(&port_sections(f, port, taper), 50.0, z_line, lo, f_max, n);
    (b.worst_db, b.worst_hz)
}

/// Length of each port's zone from the board edge: the ground pads and the row of ground vias
/// just inside them, mm (the silkscreen keeps clear of it).
pub fn port_zone_length(f: &Fixture) -> f64 {
    f.connector.ground_pad_length + f.vias.pad + 2.0 * super::probe::VIA_WEB
}

/// The line from one port (the board's edge) to the probe position (the board's centre) as
/// lossless line sections, the fixture being symmetric: the port's launch
/// ([`port_sections`]) then the uniform line, with the field solver's Z0 and εeff. The
/// connector itself and the pads' fringing are not modelled.
pub fn launch_sections(f: &Fixture, s: &SolvedFixture) -> Result<Vec<Section>, Error> {
    let mut out = port_sections(f, &s.port, s.taper);
    let narrow = f.connector.centre_pad_length + s.taper;
    out.push(Section::Line {
        z0: s.port.line_field.0,
        eps_eff: s.port.line_field.1,
        len_m: (f.length / 2.0 - narrow) * 1e-3,
    });
    Ok(out)
}

/// A test line as the coupling model sees it (all m, Ω).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TestLine {
    /// Strip width, m (0: a thin filament).
    pub width: f64,
    /// Height of the current sheet (the strip's mid-thickness) over its ground plane, m.
    pub h: f64,
    /// Height of the strip's copper top above the sheet (half the copper thickness), m:
    /// probe heights are given above the copper's top.
    pub top: f64,
    /// Port (and termination) impedance, Ω.
    pub r_port: f64,
}
