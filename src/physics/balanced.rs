//! The balanced (doubly-loaded) loop: its two outputs' difference (the magnetic response) and
//! sum (the electric response).
//!
//! **Difference.** The loop's EMF V = jω·μ0·A·H drives the outer loop's inductance L_out and
//! the two side gaps in series, each gap its capacitance C_gap across the inner line seen from
//! it, Z_in = R_L + Z0·tanh(γ·l_s) (the matched run to its output in series with the short stub
//! l_s from the gap to its short). Each output takes V_out = I·Z_gap·R_L/Z_in, and the two are in
//! antiphase; through an ideal 180° hybrid (Δ = (a − b)/√2, Σ = (a + b)/√2: the convention of
//! every balanced figure here) the difference is
//!
//!   V_Δ/V = √2·R_L·e^(−α·l1) / (2·Z_in + jω·L_out − ω²·L_out·C_gap·Z_in),
//!
//! the singly-loaded loop's circuit (`Response::gap_transfer`) with two loads in the turn: the
//! corner rises to 2·R_L/(2π·(L_out + 2·L_stub)), and the low-frequency output through the hybrid
//! is 3 dB below a singly-loaded loop's of the same size. The stub is a millimetre or so, so
//! the singly-loaded loop's stub null (a half-turn of stub) is gone. The shield's outer current,
//! its inductance and area are the singly-loaded loop's (`shield`), with the correction at a gap
//! (`shield_gap`) taken once for each of the two gaps (solved for an apex gap; the correction is
//! local, so its position on the ring is taken not to matter: an assumption, to be checked by
//! the full-wave reference).
//!
//! **Sum.** A uniform electric field E along the axis (in the loop's plane) polarises the ring
//! in mode 1 with its charge maxima at the top and bottom and its current maxima at the sides,
//! where the gaps are: the short-circuit current at each gap (thin ring, module `electric`)
//! is I_sc = jω·a·λ1 = jω·2π·ε0·E·a²/Λ1, Λ1 = ln(8a/b) − 2 (from memory), flowing the same way
//! (up, say) through both gaps, so the two outputs carry it in phase. Each gap's load takes it
//! whole (the ring's mode-1 source capacitance, ~0.3 pF on a 10 mm loop, is left out: its
//! reactance stays well above the loads' 100 Ω in the band), so
//!
//!   V_Σ = √2·I_sc·Z_gap·R_L/Z_in·e^(−α·l1),
//!
//! with a the radius of the circle of the centreline's area (as for the singly-loaded loop's
//! electric pickup) and b the ring's electrostatic equivalent radius, taken as (w + t)/4 for
//! its cross-section of width w (the shield ring's) and thickness t (the board's): a thin flat
//! strip has exactly the capacitance of a round wire of a quarter of its width (conformal
//! mapping; from memory), and adding the thickness is our approximation, which NEC-2 checks
//! (tests/balanced.rs: the GMD 0.2235·(w + t) that sets the inductance read 0.8–1.1 dB low on
//! the demo's shield; (w + t)/4 reads 0.35–0.55 dB low in the band). The electric factor of the
//! sum is E/V_Σ, dB(1/m): E[dBµV/m] = V_Σ[dBµV] + factor.
//!
//! **Rejection.** A field across the axis drives mode 1 with its current nodes at the gaps:
//! neither output sees it to first order, and the model predicts no E pickup in the
//! difference (the residual, from the handle's asymmetry and the ring's width, is left to the
//! full-wave reference). A field along the axis or normal to the board is even under the
//! board's mirror and the magnetic field odd, so by symmetry alone the difference holds no
//! electric response of those and the sum no magnetic one.

use super::{C0, Cx, MU0, R_LOAD};
use std::f64::consts::PI;

/// Vacuum permittivity, F/m (1/(μ0·c0²)).
fn eps0() -> f64 {
    1.0 / (MU0 * C0 * C0)
}

/// A balanced loop's own numbers, beside the magnetic response it shares with the loop.
#[derive(Debug, Clone, PartialEq)]
pub struct Balanced {
    /// The short stub from each gap to its short, m.
    pub stub_m: f64,
    /// Equivalent radius of the ring's conductor for its mode-1 charge ((w + t)/4 of its
    /// cross-section), m.
    pub b_m: f64,
    /// The thin ring's mode-1 potential factor Λ1 = ln(8a/b) − 2.
    pub lambda1: f64,
    /// The sum's electric factor at each frequency: (Hz, dB(1/m)).
    pub e_factor: Vec<(f64, f64)>,
}

impl Balanced {
    /// The sum's electric factor at the tabulated frequency nearest `f` (in log), dB(1/m).
    pub fn e_factor_near(&self, f: f64) -> f64 {
        self.e_factor
            .iter()
            .min_by(|x, y| (x.0 / f).ln().abs().total_cmp(&(y.0 / f).ln().abs()))
            .map_or(f64::NAN, |x| x.1)
    }
}

/// The thin ring's mode-1 potential factor, ln(8a/b) − 2 (from memory; checked against NEC-2
/// through the sum it sets, tests/balanced.rs).
pub fn lambda1(a_m: f64, b_m: f64) -> f64 {
    (8.0 * a_m / b_m).ln() - 2.0
}

/// The short-circuit current at each side gap per V/m of a field along the axis, A/(V/m):
/// ω·2π·ε0·a²/Λ1 (magnitude).
pub fn sum_current_per_field(f: f64, a_m: f64, b_m: f64) -> f64 {
    2.0 * PI * f * 2.0 * PI * eps0() * a_m * a_m / lambda1(a_m, b_m)
}

/// The gap's load seen by the loop current and the output's share of it: (Z_gap, R_L/Z_in),
/// Z_gap = Z_in ∥ 1/(jω·C_gap).
pub fn gap_load(f: f64, z_in: Cx, c_gap: f64) -> (Cx, Cx) {
    let w = 2.0 * PI * f;
    let y = Cx::new(1.0, 0.0) / z_in + Cx::new(0.0, w * c_gap);
    (Cx::new(1.0, 0.0) / y, Cx::new(R_LOAD, 0.0) / z_in)
}

/// |V_Σ/E| of the sum through the ideal hybrid at `f` Hz, m: √2·I_sc·Z_gap·R_L/Z_in·e^(−α·l1)
/// per V/m.
pub fn sum_transfer(f: f64, a_m: f64, b_m: f64, z_in: Cx, c_gap: f64, run: f64) -> f64 {
    let (z_gap, share) = gap_load(f, z_in, c_gap);
    std::f64::consts::SQRT_2 * sum_current_per_field(f, a_m, b_m) * (z_gap * share).abs() * run
}
