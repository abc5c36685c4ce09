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
/// probe: its coupling is [`electric_fixture_coupling`]).
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

/// An electric probe over a solved test-line fixture, held flat with its face `height_mm` above
/// the line's copper, the electrode centred over the line.
#[derive(Debug, Clone, PartialEq)]
pub struct ElectricOnFixture {
    /// The fixture's name.
    pub fixture: String,
    /// Face height above the line's copper, mm.
    pub height_mm: f64,
    /// Capacitance from the line to the electrode, F (2-D field solution of the fixture's own
    /// cross-section with the face above it).
    pub coupling_f: f64,
    /// The field normal to the face averaged over the collecting area, per volt on the line,
    /// 1/m: C_c/(ε0·A_eff) (Gauss's law).
    pub e_per_volt: f64,
    /// Z0 of the fixture's line (its field solution), Ω, for the record.
    pub line_z0: f64,
    /// Predicted S21 (line input to probe output) at `freqs`: (Hz, dB, degrees).
    pub s21: Vec<(f64, f64, f64)>,
    /// The line voltage under the probe per incident voltage at the same frequencies, dB (0 on
    /// a uniform matched line).
    pub line_voltage_db: Vec<f64>,
}

pub use crate::physics::electric_probe::transfer as electric_transfer;

/// The coupling of a predicted electric probe to a solved fixture at `height_mm`, with the line
/// voltage under the probe per V_inc from `line_voltage` (the fixture's launch model:
/// `coupling::launch_voltage`; or 1 on a uniform matched line).
pub fn electric_fixture_coupling(
    r: &crate::physics::electric_probe::ElectricResponse,
    fx: &crate::model::fixture::Fixture,
    fs: &crate::solve::fixture::SolvedFixture,
    height_mm: f64,
    freqs: &[f64],
    line_voltage: &dyn Fn(f64) -> crate::math::Cx,
) -> Result<ElectricOnFixture, crate::error::Error> {
    let q =
        crate::physics::electrode::surface_coupling(&fs.line, height_mm, r.r_eff_m * 1e3, &[0.0])?;
    let c_c = q[0].abs();
    let line_z0 = fs.field_z0.unwrap_or(fs.solution.z0);
    let mut s21 = Vec::new();
    let mut line_voltage_db = Vec::new();
    for &f in freqs {
        let v_line = line_voltage(f);
        let s = electric_transfer(f, c_c, r.c_self, crate::physics::R_LOAD) * v_line;
        s21.push((f, 20.0 * s.abs().log10(), s.im.atan2(s.re).to_degrees()));
        line_voltage_db.push(20.0 * v_line.abs().log10());
    }
    Ok(ElectricOnFixture {
        fixture: fx.name.clone(),
        height_mm,
        coupling_f: c_c,
        e_per_volt: c_c / (crate::math::EPS0 * r.area_eff_m2),
        line_z0,
        s21,
        line_voltage_db,
    })
}

/// A predicted probe of either kind over a fixture.
pub enum OnFixture {
    /// A loop's.
    Loop(Box<FixtureCoupling>),
    /// An electric probe's.
    Electric(Box<ElectricOnFixture>),
}

/// The coupling of a predicted probe of either kind to a solved fixture at `height_mm`, at the
/// frequencies of its factor table, the line's current from the fixture's launch model.
pub fn on_fixture(
    x: &Predicted,
    fx: &crate::model::fixture::Fixture,
    fs: &crate::solve::fixture::SolvedFixture,
    height_mm: f64,
) -> Result<OnFixture, crate::error::Error> {
    match &x.response {
        crate::physics::predicted::ProbeResponse::Loop(_) => fixture_coupling(x, fx, fs, height_mm)
            .map(|c| OnFixture::Loop(Box::new(c)))
            .ok_or_else(|| crate::error::Error::Unsolvable("a loop without a response".into())),
        crate::physics::predicted::ProbeResponse::Electric(r) => {
            let secs = crate::solve::fixture::launch_sections(fx, fs).unwrap_or_default();
            let beyond: Vec<_> = secs.iter().rev().copied().collect();
            let r_port = crate::physics::R_LOAD;
            let voltage =
                |f: f64| crate::physics::coupling::launch_voltage(&secs, &beyond, r_port, f);
            let freqs: Vec<f64> = r.factor.iter().map(|(f, _)| *f).collect();
            electric_fixture_coupling(r, fx, fs, height_mm, &freqs, &voltage)
                .map(|c| OnFixture::Electric(Box::new(c)))
        }
    }
}
