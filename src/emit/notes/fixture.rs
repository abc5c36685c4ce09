//! Fabrication notes of a test-line fixture board.

use super::*;
use crate::artwork::Artwork;
use crate::drc::Violation;
use crate::emit::cautions::CAUTIONS;
use std::fmt::Write;

/// Fabrication and use notes (Markdown) of a test-line fixture.
pub fn fixture_notes(
    f: &crate::model::fixture::Fixture,
    s: &crate::solve::fixture::SolvedFixture,
    art: &Artwork,
    files: &[String],
    violations: &[Violation],
) -> String {
    use crate::physics::coupling::{TestLine, line_field};
    let mut o = String::new();
    let _ = writeln!(o, "# Fabrication notes: {} (test-line fixture)\n", f.name);
    o.push_str(&forced_banner(violations));
    let _ = writeln!(
        o,
        "A {} Ω test line between two coaxial edge-launch connectors, for calibrating near-field \
         H probes: the line's current is known from the incident power, so its field at a \
         stated height is known, and the probe's output then gives its probe factor. Generated \
         by loopwright {}.\n",
        crate::model::probe::num(f.target_z0),
        env!("CARGO_PKG_VERSION")
    );
    let n = f.stackup.copper_count();
    let _ = writeln!(o, "## Board\n");
    let _ = writeln!(
        o,
        "- Size: {:.2} × {:.2} mm (outline in the profile file), thickness {:.2} mm without mask",
        f.length,
        f.width,
        f.stackup.thickness_mm()
    );
    let _ = writeln!(
        o,
        "- {n} copper layers; test line on L{}, ground pour around it, every other layer a \
         ground plane; {} stitching vias",
        f.line_layer,
        art.drills.len()
    );
    let _ = writeln!(
        o,
        "- Solder mask both sides, covering everything but the connector pads (vias tented); \
         silkscreen on the line's side"
    );
    o.push_str(&super::order_lines(&f.fab));
    let _ = writeln!(
        o,
        "- **Two nets.** `LINE` (the line and both connectors' centre pads) must be continuous \
         from port to port and isolated from `GND` (everything else).\n"
    );
    o.push_str(&stackup_table(&f.stackup, |k| {
        if k == f.line_layer {
            "test line, ground pour"
        } else {
            "ground plane"
        }
    }));
    let reference = if f.on_top() { 2 } else { n - 1 };
    let _ = writeln!(o, "\n## Impedance requirement\n");
    let _ = writeln!(
        o,
        "- **L{}, w = {:.3} mm, {} Ω ± 10 %, referenced to L{reference}** ({}).",
        f.line_layer,
        s.width,
        crate::model::probe::num(f.target_z0),
        s.line.structure().name()
    );
    let _ = writeln!(
        o,
        "- Closed form ({}): {:.2} Ω, εeff {:.3}.",
        s.solution.method, s.solution.z0, s.solution.eps_eff
    );
    if let Some(z) = s.field_z0 {
        let _ = writeln!(
            o,
            "- 2-D field solution of the same cross-section: {z:.2} Ω ({:+.2} % from the \
             closed form).",
            (z / s.solution.z0 - 1.0) * 100.0
        );
    }
    let port = &s.port;
    let gaps = |v: &[crate::solve::fixture::Station]| {
        v.iter()
            .map(|st| format!("{:.2}/{:.3}", st.width, st.gap))
            .collect::<Vec<_>>()
            .join(", ")
    };
    let (worst, at) = s.port_s11;
    let _ = writeln!(
        o,
        "- Ground on L{} kept {:.3} mm from the line's edges along its uniform part.\n\
         - **Ports (part of the 50 Ω path).** The connector's centre pad ({} mm wide) sits in a \
         {:.3} mm gap to the ground on L{} ({:.2} Ω, grounded CPW by the conformal closed form), \
         which takes in the ground pads. From the pad's inner end the line widens linearly to \
         {:.3} mm over {:.3} mm with the ground gap solved for {} Ω at each station (a \
         constant-impedance coplanar taper, no narrow neck); width/gap in mm: {}. Ground vias \
         follow the ground's edge beside the launch and ring the ground pads. By the 2-D field \
         solver (with the mask) the pad is {:.2} Ω and the taper's steps {:.1}–{:.1} Ω into the \
         line's {:.2} Ω; cascaded, the worst return loss per port up to {} GHz is {worst:.1} dB \
         at {:.0} MHz ({}).",
        f.line_layer,
        s.keepout,
        crate::model::probe::num(f.connector.centre_pad_width),
        port.pad_gap,
        f.line_layer,
        port.pad_z0,
        s.width,
        s.taper,
        crate::model::probe::num(f.target_z0),
        gaps(&port.stations),
        port.pad_field.0,
        port.mid
            .iter()
            .map(|m| m.field_z0)
            .fold(f64::INFINITY, f64::min),
        port.mid
            .iter()
            .map(|m| m.field_z0)
            .fold(f64::NEG_INFINITY, f64::max),
        port.line_field.0,
        crate::model::probe::num(f.vias.f_max_hz / 1e9),
        at / 1e6,
        if worst <= crate::solve::network::DEFAULT_LIMIT_DB {
            format!(
                "meets the {} dB limit",
                crate::solve::network::DEFAULT_LIMIT_DB
            )
        } else {
            format!(
                "**exceeds the {} dB limit**",
                crate::solve::network::DEFAULT_LIMIT_DB
            )
        }
    );
    let _ = writeln!(
        o,
        "- Line length between the centre pads: {:.2} mm; one-way delay {:.3} ns.\n",
        s.line_length,
        s.delay_s * 1e9
    );
    o.push_str(&drill_table(art, &f.fab));
    let _ = writeln!(
        o,
        "\nStitching pitch: at most {:.2} mm (λ/{} at {} GHz), at least {:.2} mm (fab). No \
         non-plated holes, so there is no NPTH drill file.\n",
        s.pitch_max,
        crate::model::probe::num(f.vias.pitch_n),
        crate::model::probe::num(f.vias.f_max_hz / 1e9),
        s.pitch_min
    );
    let _ = writeln!(o, "## Predicted field above the line\n");
    let line = s.test_line(f.target_z0);
    let thin = TestLine { width: 0.0, ..line };
    let i_0dbm = (1e-3f64 / f.target_z0).sqrt();
    let _ = writeln!(
        o,
        "Quasi-static, image theory over the plane {:.3} mm below the line; the strip as a \
         uniform current sheet {:.3} mm wide (the filament column for comparison). Hx on the \
         line's axis, at the height above the line's copper. Matched line: I = V_inc/{} Ω, \
         i.e. {:.3} mA for 0 dBm incident.\n",
        s.h,
        s.width,
        crate::model::probe::num(f.target_z0),
        i_0dbm * 1e3
    );
    let _ = writeln!(
        o,
        "| height (mm) | Hx sheet (A/m per A) | Hx filament (A/m per A) | Hx at 0 dBm (dBµA/m) |"
    );
    let _ = writeln!(o, "|---|---|---|---|");
    for z in FIELD_TABLE_HEIGHTS_MM {
        let hs = line_field(0.0, z * 1e-3 + line.top, &line).0;
        let hf = line_field(0.0, z * 1e-3 + line.top, &thin).0;
        let _ = writeln!(
            o,
            "| {z} | {hs:.3} | {hf:.3} | {:.2} |",
            20.0 * (hs * i_0dbm * 1e6).log10()
        );
    }
    let _ = writeln!(o, "\n## Use\n");
    let _ = writeln!(
        o,
        "1. VNA port 1 to PORT 1; PORT 2 to a {z} Ω load (or to VNA port 3, and save a 3-port \
         file). The probe's connector to VNA port 2.\n\
         2. Stand the probe on the centre mark with its loop plane containing the line's axis \
         (the loop along the line), tip at the stated height above the line's copper (a \
         spacer of known thickness on the solder mask works; add the mask's thickness).\n\
         3. Measure S21 (line to probe) and save it as Touchstone version 1.\n\
         4. `loopwright calibrate --touchstone FILE --probes SPEC --probe NAME --fixture \
         FIXTURE.toml --height MM --out DIR` writes the measured probe factor, the prediction \
         and their difference.\n",
        z = crate::model::probe::num(f.target_z0)
    );
    if (f.target_z0 / crate::physics::R_LOAD - 1.0).abs() > crate::calib::calibrate::Z_MATCH_TOL {
        let _ = writeln!(
            o,
            "> This line is {} Ω; `loopwright calibrate` takes a 50 Ω line measured with a 50 Ω \
             VNA (the probe model's load), so it will refuse this fixture.\n",
            crate::model::probe::num(f.target_z0)
        );
    }
    let _ = writeln!(
        o,
        "- Coordinates in mm, origin at the centre of the line, line along x, port 1 at \
         x = −{:.3}. All files share these coordinates.\n",
        f.length / 2.0
    );
    let _ = writeln!(o, "## Files\n");
    for name in files {
        let _ = writeln!(o, "- `{name}`");
    }
    let _ = writeln!(
        o,
        "\n## Cautions\n\n{}\n\n{CAUTIONS}",
        crate::emit::cautions::CAL_CAUTIONS
    );
    o
}
