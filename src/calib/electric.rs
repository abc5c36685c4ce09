//! The electric probe's calibration on the test-line fixture: its factor from the line voltage.
//!
//! Held flat over the fixture's line with its electrode centred, the probe's face `height` above
//! the copper, the electrode sees the field E = C_c·V_line/(ε0·A_eff) averaged over its
//! collecting area (Gauss's law; C_c the line-to-electrode capacitance of the fixture's own
//! cross-section, A_eff the collecting area), and V_line the line voltage under the probe
//! (the fixture's launch model: the current there times the impedance the rest of the line
//! presents; or V_inc on a uniform matched line). The measured |S21| =
//! |V_out/V_inc| then gives the factor E/V_out:
//! EF = 20·log10(C_c/(ε0·A_eff)) + 20·log10|V_line/V_inc| − |S21|dB − 20·log10(|1 + jωR(C_s +
//! C_c)|/|1 + jωR·C_s|), the last term taking off the fixture line's own loading of the
//! electrode (C_c beside its self-capacitance C_s), so that a measurement equal to the
//! prediction gives the predicted factor, which is defined with C_s alone.

use super::calibrate::{LineCurrent, measured_transmission};
use super::touchstone::Network;
use crate::error::Error;
use crate::physics::R_LOAD;
use crate::physics::electric_probe::ElectricResponse;
use crate::physics::on_fixture::{ElectricOnFixture, electric_fixture_coupling};

/// One calibrated frequency.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ElectricPoint {
    /// Frequency, Hz.
    pub f: f64,
    /// Measured |S21|, dB.
    pub s21_db: f64,
    /// Predicted |S21|, dB.
    pub s21_pred_db: f64,
    /// Measured electric probe factor, dB(1/m).
    pub ef_db: f64,
    /// Predicted electric probe factor, dB(1/m).
    pub ef_pred_db: f64,
    /// At or below the predicted upper usable frequency.
    pub in_band: bool,
    /// |V_line/V_inc| under the probe, dB.
    pub line_voltage_db: f64,
}

impl ElectricPoint {
    /// Measured − predicted factor, dB.
    pub fn diff_db(&self) -> f64 {
        self.ef_db - self.ef_pred_db
    }
}

/// An electric probe's calibration.
#[derive(Debug, Clone, PartialEq)]
pub struct ElectricCalibration {
    /// The points above 0 Hz, in the file's order.
    pub points: Vec<ElectricPoint>,
    /// The predicted coupling to the fixture's line at the file's frequencies.
    pub on: ElectricOnFixture,
    /// (line port, probe port).
    pub ports: (usize, usize),
    /// Where the line's current under the probe came from.
    pub current_source: String,
}

/// 20·log10(|1 + jωR(C_s + C_c)|/|1 + jωR·C_s|) at `f` Hz: the fixture line's loading of the
/// electrode.
pub fn line_loading_db(f: f64, c_self: f64, c_c: f64) -> f64 {
    let w = 2.0 * std::f64::consts::PI * f * R_LOAD;
    10.0 * ((1.0 + (w * (c_self + c_c)).powi(2)) / (1.0 + (w * c_self).powi(2))).log10()
}

/// Derives an electric probe's factor from a network measured on a fixture, with the checks
/// every calibration makes ([`measured_transmission`]). `path` names the file in errors;
/// `voltage.ratio` is the line voltage under the probe per V_inc.
#[allow(clippy::too_many_arguments)]
pub fn calibrate_electric(
    r: &ElectricResponse,
    fx: &crate::model::fixture::Fixture,
    fs: &crate::solve::fixture::SolvedFixture,
    net: &Network,
    path: &str,
    ports: (usize, usize),
    height_mm: f64,
    voltage: &LineCurrent,
) -> Result<ElectricCalibration, Error> {
    let s21 = measured_transmission(net, path, ports, height_mm, fx.target_z0)?;
    let freqs: Vec<f64> = s21.iter().map(|p| p.0).collect();
    let on = electric_fixture_coupling(r, fx, fs, height_mm, &freqs, voltage.ratio)?;
    let e_db = 20.0 * on.e_per_volt.log10();
    let points = s21
        .iter()
        .zip(&on.s21)
        .zip(&on.line_voltage_db)
        .map(|((&(f, mag), &(_, pred_db, _)), &lv)| {
            let s21_db = 20.0 * mag.log10();
            ElectricPoint {
                f,
                s21_db,
                s21_pred_db: pred_db,
                ef_db: e_db + lv - s21_db - line_loading_db(f, r.c_self, on.coupling_f),
                ef_pred_db: r.factor_db_at(f),
                in_band: f <= r.upper_hz,
                line_voltage_db: lv,
            }
        })
        .collect();
    Ok(ElectricCalibration {
        points,
        on,
        ports,
        current_source: voltage.source.clone(),
    })
}
