//! Electric-field pickup of the singly-loaded (split-shield) loop, and the upper usable
//! frequency set by an error budget.
//!
//! **Pickup.** A uniform field E across the loop's symmetry axis, in the loop's plane,
//! polarises the shield ring: with θ measured round the ring from the feed, the ring carries
//! the mode-1 charge λ(θ) = λ1·sin θ, λ1 = 2π·ε0·E·a/Λ1, where Λ1 = ln(8a/b) − 2 is the thin
//! ring's mode-1 potential factor (a the ring's radius, b the conductor's equivalent radius;
//! from memory: it cancels in the result below, so no check here tests it). Charge continuity
//! along a ring that is open at the gap (θ = π) makes it carry, besides the mode-1 current
//! jω·a·λ1·cos θ, a circulating current K = jω·a·λ1; the gap therefore sees a Norton source K
//! across the outer loop's inductance L0, i.e. a Thévenin source V_E = jω·L0·K in series with
//! the same jω·L0 as the magnetic source V_H = jω·μ0·A_eff·H. The load, the stub and the gap
//! capacitance act on both alike, so the ratio of the responses is that of the sources:
//!
//!   |V_E / V_H| = ω·L0·2π·ε0·a²·Z_w / (Λ1·μ0·A_eff),   Z_w = E/H.
//!
//! For a thin ring, L0 = μ0·a·(ln(8a/b) − 2) = μ0·a·Λ1 and A_eff = π·a², and this is
//! **2·k·a·(Z_w/η0)**, k = ω/c0: in a plane wave, 2ka (our derivation; a thin ring, a = 5 mm,
//! b = 0.1 mm, 50 Ω gap load, agrees with NEC-2 to 0.01 dB at 100 and 300 MHz and 0.09 dB at
//! 1 GHz). The shield ring is not thin, and the thin-ring factors do not carry over one by one
//! (with Λ1 read from the solved L0, a 5 mm loop's ring would be more polarisable than a solid
//! disc of its outer radius). The whole shield in NEC-2, as a wire grid over the demo's four
//! plates with the gap bus and load of the full-wave reference, follows the thin-ring value
//! 2ka with a the radius of the circle of the centreline's area (`tests/reference/erej_refs.py`,
//! `tests/data/erej_refs.toml`, compared in `tests/shield.rs` and docs/response.md), so that
//! is the model. A field along the axis drives no gap voltage while the loop is
//! mirror-symmetric about the axis with the gap on it; the feed and the short sit slightly off
//! the axis inside the shield, and that residual is not predicted. No outside check covers the
//! 5 mm loop (NEC's grid is erratic there) or a non-round loop, and the thin-ring form may be
//! several dB off on a ring as wide as a 5 mm loop's.
//!
//! The **E-rejection** is −20·log10 |V_E/V_H|: how far the electric response sits below the
//! magnetic one when the electric field lies across the axis (the worst orientation). Over a
//! straight trace, with the loop's plane along it, the trace's field lies along the axis and is
//! rejected by symmetry; tilting the probe in its own plane by ψ brings sin ψ of it across.

use super::C0;
use std::f64::consts::PI;

/// Wave impedance of free space, μ0·c0, Ω.
pub use crate::math::ETA0;

/// The error budget of the upper usable frequency: the largest change, dB, that the effects
/// the model leaves out may make to a reading.
pub const BUDGET_DB: f64 = 1.0;

/// Relative uncertainty of the stub's electrical length in the budget, a judgement: in the FDTD
/// reference the 10 mm loop's stub null climbs 1.85 → 1.98 → 2.07 GHz over three meshes
/// towards the model's 2.26 GHz (the staircased loop is electrically long), 8 % below it on
/// the finest mesh and still moving.
pub const STUB_LENGTH_TOL: f64 = 0.05;

/// |V_E/V_H| at `f` Hz for a field of wave impedance `z_w` (Ω) across the loop's axis, for a
/// loop of radius `a_m` (a non-round loop: the circle of its centreline's area): 2·k·a·Z_w/η0
/// (module docs).
pub fn e_to_h(f: f64, a_m: f64, z_w: f64) -> f64 {
    let k = 2.0 * PI * f / C0;
    2.0 * k * a_m * (z_w / ETA0)
}

/// E-rejection in dB (positive: the electric response is below the magnetic one).
pub fn e_rejection_db(f: f64, a_m: f64, z_w: f64) -> f64 {
    -20.0 * e_to_h(f, a_m, z_w).log10()
}

/// The most a reading can change, dB, when an electric response `ratio` (|V_E/V_H|) adds to
/// the magnetic one in the worst phase: 20·log10(1 + ratio).
pub fn pickup_error_db(ratio: f64) -> f64 {
    20.0 * (1.0 + ratio).log10()
}

/// Published and rule-of-thumb limits quoted beside the budget's frequency, Hz, for a loop of
/// centreline circumference `c_m` (m) and diameter `d_m` (m): (name, frequency).
pub fn quoted_limits(c_m: f64, d_m: f64) -> [(&'static str, f64); 2] {
    [
        (
            "small loop: circumference ≤ λ0/10 (Balanis, Antenna Theory, 2005; from memory)",
            C0 / (10.0 * c_m),
        ),
        (
            "singly-loaded loop: diameter ≤ 0.01·λ0 for a small E error (Whiteside & King, IEEE \
             Trans. AP-12, 1964; abstract)",
            0.01 * C0 / d_m,
        ),
    ]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn thin_ring_in_a_plane_wave_is_2ka() {
        // A 10 mm loop at 1 GHz: 2ka = 0.2096 (k = 20.958 /m), i.e. 13.57 dB.
        let r = e_to_h(1e9, 5e-3, ETA0);
        assert!((r - 0.209_58).abs() < 1e-5, "{r}");
        // Rejection falls 20 dB per decade and rises as the wave impedance falls.
        let d = e_rejection_db(1e8, 5e-3, ETA0) - e_rejection_db(1e9, 5e-3, ETA0);
        assert!((d - 20.0).abs() < 1e-9);
        let h = e_rejection_db(1e9, 5e-3, ETA0 / 2.0) - e_rejection_db(1e9, 5e-3, ETA0);
        assert!((h - 6.0206).abs() < 1e-4);
    }
}
