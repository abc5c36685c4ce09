//! What the connector launch does to the probe factor: the response model's circuit with the
//! feed run written out as a lossy line and the launch (`solve::launch`, cascaded by
//! `solve::network`) between it and the 50 Ω load.

use super::{Cx, R_LOAD, Response};
use crate::model::probe::Probe;
use crate::solve::network::{Budget, Section, budget, cascade, lossy_line};
use crate::solve::probe::SolvedProbe;
use std::f64::consts::PI;

/// V_out/V_oc of the probe at `f` Hz with the launch `sections` (connector side first) between
/// the feed run and the 50 Ω load: the response model's circuit
/// ([`Response::gap_transfer`]) with the run written out as a lossy line and the launch as its
/// cascade. With no sections it is the ideal launch (the run straight into R_L).
pub fn transfer_with(r: &Response, sections: &[Section], f: f64) -> Cx {
    let w = 2.0 * PI * f;
    let g = r.gamma(f);
    // The launch seen from the line, the 50 Ω load on the connector's side: the sections are
    // symmetric, so the reversed network is the sections in reverse order.
    let rev: Vec<Section> = sections.iter().rev().copied().collect();
    let load = cascade(&rev, f).z_in(Cx::new(R_LOAD, 0.0));
    let run = lossy_line(r.z0_line, g, r.l1_m);
    let z_run = run.z_in(load);
    if let Some(wd) = &r.winding {
        // A multi-turn loop: the winding's chain (module [`super::winding`]).
        let v_run = wd.run_drive(f, wd.gamma(g, r.eps_eff), z_run, r.l_outer, r.c_gap);
        let m = run.then(cascade(sections, f));
        return v_run / (m.a + m.b / Cx::new(R_LOAD, 0.0));
    }
    let stub = Cx::new(r.z0_line, 0.0) * Cx::new(g.re * r.l2_m, g.im * r.l2_m).tanh();
    let z_in = z_run + stub;
    // (A balanced loop: two such loads in the turn, the launch on each.)
    let den = z_in * Cx::new(r.loads(), 0.0)
        + Cx::new(0.0, w * r.l_outer)
        + z_in * Cx::new(-w * w * r.l_outer * r.c_gap, 0.0);
    let i = Cx::new(1.0, 0.0) / den;
    let v_run = i * z_run;
    // V at the run's input = (A + B/R_L)·V_out for the whole chain, run then launch.
    let m = run.then(cascade(sections, f));
    v_run / (m.a + m.b / Cx::new(R_LOAD, 0.0))
}

/// What the launch does to the probe factor at `f` Hz, dB: 20·log10 of |V_out| with the
/// launch over |V_out| with an ideal one (positive: the probe reads higher).
pub fn pf_effect_db(r: &Response, sections: &[Section], f: f64) -> f64 {
    20.0 * (transfer_with(r, sections, f).abs() / transfer_with(r, &[], f).abs()).log10()
}

/// A probe's launch budget.
#[derive(Debug, Clone, PartialEq)]
pub struct ProbeLaunch {
    /// The sections, connector side first.
    pub sections: Vec<Section>,
    /// The load the launch sees: the handle line's Z0, Ω.
    pub z_line: f64,
    /// |S11| at the connector (50 Ω) from 10 MHz to the probe's f_max.
    pub s11: Budget,
    /// The frequency the budget runs to (the stitching design frequency f_max), Hz.
    pub f_max_hz: f64,
    /// Largest |effect| on the probe factor from the corner/10 up to the upper usable
    /// frequency, dB (signed), and where.
    pub pf_below_upper: (f64, f64),
    /// The same from the upper usable frequency to f_max, dB, and where (None when f_max
    /// is below the upper frequency).
    pub pf_to_fmax: Option<(f64, f64)>,
}

/// Points per decade of the launch scans.
const PER_DECADE: f64 = 50.0;

/// The largest |pf_effect_db| over a log scan from `lo` to `hi`: (Hz, dB).
fn worst_effect(r: &Response, sections: &[Section], lo: f64, hi: f64) -> (f64, f64) {
    let n = (((hi / lo).log10() * PER_DECADE).ceil() as usize).max(1);
    (0..=n)
        .map(|i| {
            let f = lo * (hi / lo).powf(i as f64 / n as f64);
            (f, pf_effect_db(r, sections, f))
        })
        .fold((lo, 0.0), |a, b| if b.1.abs() > a.1.abs() { b } else { a })
}

/// The probe's launch budget for its response `r`.
pub fn probe_launch(p: &Probe, s: &SolvedProbe, r: &Response) -> ProbeLaunch {
    let (sections, z_line) = crate::solve::launch::probe_sections(p, s);
    let f_max = p.vias.f_max_hz;
    let lo = 10e6_f64.min(f_max / 10.0);
    let n = (((f_max / lo).log10() * PER_DECADE).ceil() as usize).max(2);
    let s11 = budget(&sections, R_LOAD, z_line, lo, f_max, n);
    let f0 = r.corner_hz / 10.0;
    let pf_below_upper = worst_effect(r, &sections, f0, r.upper_hz);
    let pf_to_fmax = (f_max > r.upper_hz).then(|| worst_effect(r, &sections, r.upper_hz, f_max));
    ProbeLaunch {
        sections,
        z_line,
        s11,
        f_max_hz: f_max,
        pf_below_upper,
        pf_to_fmax,
    }
}

/// The fixture's predicted network from port 1's board edge to port 2's: port 1's launch, the
/// uniform line with its loss, port 2's launch (the mirror image). The uniform line's loss
/// per metre: conductor α_c = R_s/(Z0·w) (the wide-strip approximation, R_s of smooth copper)
/// and dielectric α_d = k0·εr·(εeff − 1)·tan δ/(2·√εeff·(εr − 1)) (both as in Pozar,
/// *Microwave Engineering*, §3.8, from memory); the launches are lossless.
pub fn fixture_sections(
    f: &crate::model::fixture::Fixture,
    s: &crate::solve::fixture::SolvedFixture,
) -> Vec<Section> {
    let port = crate::solve::fixture::port_sections(f, &s.port, s.taper);
    let (z0, eps_eff) = s.port.line_field;
    let n = f.stackup.copper_count();
    let diel = if f.on_top() {
        f.stackup.dielectric_below(1)
    } else {
        f.stackup.dielectric_below(n - 1)
    };
    let (er, tan_d) = diel.map(|d| (d.er, d.loss_tangent)).unwrap_or((1.0, 0.0));
    let k0_1ghz = 2.0 * PI * 1e9 / super::C0;
    let alpha_d_1ghz = if er > 1.0 {
        k0_1ghz * er * (eps_eff - 1.0) * tan_d / (2.0 * eps_eff.sqrt() * (er - 1.0))
    } else {
        0.0
    };
    let alpha_c_1ghz = super::surface_resistance(1e9) / (z0 * s.width * 1e-3);
    let uniform = f.length - 2.0 * (f.connector.centre_pad_length + s.taper);
    let mut v = port.clone();
    v.push(Section::LossyLine {
        z0,
        eps_eff,
        len_m: uniform * 1e-3,
        alpha_c_1ghz,
        alpha_d_1ghz,
    });
    v.extend(port.iter().rev().copied());
    v
}

/// Frequencies of the fixture's predicted Touchstone file: 201 points, log-spaced from 1 MHz
/// to the fixture's f_max.
pub fn fixture_freqs(f_max: f64) -> Vec<f64> {
    let (lo, n) = (1e6_f64.min(f_max / 10.0), 200);
    (0..=n)
        .map(|i| lo * (f_max / lo).powf(i as f64 / n as f64))
        .collect()
}

/// The fixture's predicted S-parameters as Touchstone v1 text (`# Hz S DB R 50`, S11 S21 S12
/// S22 as dB and degrees), with a header that says what the model holds.
pub fn fixture_touchstone(
    f: &crate::model::fixture::Fixture,
    s: &crate::solve::fixture::SolvedFixture,
) -> String {
    use std::fmt::Write;
    let secs = fixture_sections(f, s);
    let mut o = String::new();
    let _ = writeln!(
        o,
        "! Predicted S-parameters of fixture '{}' (loopwright {}), port 1 and port 2 at the\n\
         ! board's edges (the connectors are not included), 50 ohm reference. Model: each\n\
         ! port's launch (centre pad in its coplanar gap, constant-impedance taper) as line\n\
         ! sections with 2-D field-solver Z0 and eeff; the uniform line with conductor and\n\
         ! dielectric loss (docs/formulas.md section 10). Compare a thru measurement with it\n\
         ! after removing the connectors' and cables' own effect.",
        f.name,
        env!("CARGO_PKG_VERSION")
    );
    let _ = writeln!(o, "# Hz S DB R 50");
    for fr in fixture_freqs(f.vias.f_max_hz) {
        let sp = crate::solve::network::s_params(&cascade(&secs, fr), R_LOAD);
        let _ = write!(o, "{:.0}", fr);
        for x in sp {
            let _ = write!(
                o,
                " {:.6} {:.4}",
                20.0 * x.abs().log10(),
                x.im.atan2(x.re).to_degrees()
            );
        }
        let _ = writeln!(o);
    }
    o
}
