//! A predicted probe over a solved test-line fixture: mutual coupling, predicted S21 with the
//! fixture's launches, and the electric pickup over the line.

use crate::physics::predicted::Predicted;

/// A probe's predicted coupling to a test-line fixture at a height.
pub struct FixtureCoupling {
    /// The fixture's name.
    pub fixture: String,
    /// Tip height above the line's copper, mm.
    pub height_mm: f64,
    /// The coupling.
    pub coupling: crate::physics::coupling::Coupling,
    /// Predicted S21 at the probe-factor table's frequencies: (Hz, dB, degrees), with the line
    /// current under the probe from the fixture's launch model (its magnitude; the phase stays
    /// referred to the current under the probe).
    pub s21: Vec<(f64, f64, f64)>,
    /// That current per V_inc/R at the same frequencies, dB (0 on a uniform matched line).
    pub line_current_db: Vec<f64>,
    /// Wave impedance of the line's near field assumed for the electric pickup, Ω: η0/√εeff
    /// of the line (its field in air taken as that of the same line without dielectric at the
    /// same voltage, an estimate).
    pub line_wave_ohm: f64,
    /// Worst-case E-rejection over the line at the same frequencies, dB: the line's electric
    /// field taken across the loop's axis (a probe in the usual orientation, centred on the
    /// line, rejects it by symmetry).
    pub e_rejection_db: Vec<f64>,
}

/// The coupling of a predicted loop to a solved fixture at `height_mm` (None for an electric
/// probe: its coupling to the fixture is not built yet).
pub fn fixture_coupling(
    x: &Predicted,
    fx: &crate::model::fixture::Fixture,
    fs: &crate::solve::fixture::SolvedFixture,
    height_mm: f64,
) -> Option<FixtureCoupling> {
    use crate::physics::coupling::{launch_current, probe_coupling, probe_s21};
    let r = x.response.as_loop()?;
    let c = probe_coupling(
        &x.probe,
        &x.solved,
        r,
        height_mm,
        &fs.test_line(crate::physics::R_LOAD),
    );
    let freqs: Vec<f64> = r.probe_factor.iter().map(|(f, _)| *f).collect();
    // The fixture's launches (a fixture that solved has sections; none would mean k = 1).
    let secs = crate::solve::fixture::launch_sections(fx, fs).unwrap_or_default();
    let beyond: Vec<_> = secs.iter().rev().copied().collect();
    let k_db: Vec<f64> = freqs
        .iter()
        .map(|&f| {
            let k = launch_current(&secs, &beyond, crate::physics::R_LOAD, f);
            20.0 * k.abs().log10()
        })
        .collect();
    let s21 = probe_s21(&x.probe, &x.solved, r, &c, &freqs)
        .into_iter()
        .zip(&k_db)
        .map(|((f, s), k)| (f, 20.0 * s.abs().log10() + k, s.im.atan2(s.re).to_degrees()))
        .collect();
    let line_wave_ohm = crate::physics::electric::ETA0 / fs.solution.eps_eff.sqrt();
    let e_rejection_db = freqs
        .iter()
        .map(|&f| r.e_rejection_db(f, line_wave_ohm))
        .collect();
    Some(FixtureCoupling {
        fixture: fx.name.clone(),
        height_mm,
        coupling: c,
        s21,
        line_current_db: k_db,
        line_wave_ohm,
        e_rejection_db,
    })
}
