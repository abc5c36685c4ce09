//! Grounded (conductor-backed) coplanar waveguide by conformal mapping.
//!
//! G. Ghione and C. Naldi, "Parameters of coplanar waveguides with lower common planes",
//! Electronics Letters 19(18), pp. 734–735, 1983 (eqs. 4, 7, 8); Wadell 1991 §3.4.3:
//!
//! k = w/(w + 2s), k3 = tanh(πw/4h)/tanh(π(w + 2s)/4h),
//! q1 = K(k)/K(k′), q3 = K(k3)/K(k3′), εeff = (q1 + εr·q3)/(q1 + q3),
//! Z0 = η0/(2√εeff)·1/(q1 + q3).
//!
//! Thickness correction (K. C. Gupta, R. Garg, I. J. Bahl, P. Bhartia, *Microstrip Lines and
//! Slotlines*, 2nd ed., 1996, eqs. 7.98–7.100, applied a posteriori as scikit-rf does):
//! Δ = (1.25t/π)·[1 + ln(4πw/t)], ke = k + (1 − k²)·Δ/(2s); Z0 uses K(ke)/K(ke′) for q1;
//! εeff,t = εeff − 0.7(εeff − 1)(t/s)/(q1 + 0.7t/s).
//!
//! Assumes coplanar grounds wide and tied to the plane, no lid. Against a 2-D field solution
//! (our notes): within 0.15 % for s ≲ h, a few percent high when s > h.

use super::{Cpwg, ETA0, Method, Solution, Warning, sig};
use crate::solve::elliptic::k_ratio;
use std::f64::consts::PI;

/// Ghione–Naldi grounded CPW with the thickness correction: returns (Z0 Ω, εeff).
pub fn ghione_naldi(w: f64, s: f64, h: f64, t: f64, er: f64) -> (f64, f64) {
    let (a, b) = (w, w + 2.0 * s);
    let k = a / b;
    let kp = ((b - a) * (b + a)).sqrt() / b;
    let q1 = k_ratio(k, kp);
    let (aa, bb) = (PI * a / (4.0 * h), PI * b / (4.0 * h));
    let k3 = aa.tanh() / bb.tanh();
    // 1 − k3 without cancellation (exact identity, overflow-free).
    let one_minus_k3 = 2.0 * (-2.0 * aa).exp() * -(-2.0 * (bb - aa)).exp_m1()
        / ((1.0 + (-2.0 * aa).exp()) * -(-2.0 * bb).exp_m1());
    let k3p = (one_minus_k3 * (1.0 + k3)).sqrt();
    let q3 = k_ratio(k3, k3p);
    let eeff = (q1 + er * q3) / (q1 + q3);
    if t <= 0.0 {
        return (ETA0 / (2.0 * eeff.sqrt() * (q1 + q3)), eeff);
    }
    let delta = 1.25 * t / PI * (1.0 + (4.0 * PI * w / t).ln());
    let ke = k + (1.0 - k * k) * delta / (2.0 * s);
    let kep = ((1.0 - ke) * (1.0 + ke)).max(0.0).sqrt();
    let qe = k_ratio(ke, kep);
    let eeff_t = eeff - 0.7 * (eeff - 1.0) * (t / s) / (q1 + 0.7 * t / s);
    (ETA0 / (2.0 * eeff_t.sqrt() * (qe + q3)), eeff_t)
}

pub(super) fn analyse(c: &Cpwg) -> Solution {
    let mut warnings = Vec::new();
    let (z0, eps_eff) = ghione_naldi(c.width, c.gap, c.h, c.t, c.er);
    if c.gap > c.h {
        warnings.push(Warning::outside(format!(
            "conformal mapping: gap/h = {} > 1, where the line acts as microstrip with side \
             grounds and the formula reads a few percent high (2-D field comparison)",
            sig(c.gap / c.h)
        )));
    }
    if c.t > 0.0 {
        // The correction widens the strip by Δ; when that eats the gap (k_e ≥ 1) the formula
        // has no meaning left.
        let delta = 1.25 * c.t / std::f64::consts::PI
            * (1.0 + (4.0 * std::f64::consts::PI * c.width / c.t).ln());
        let k = c.width / (c.width + 2.0 * c.gap);
        let ke = k + (1.0 - k * k) * delta / (2.0 * c.gap);
        if ke >= 1.0 || ke.is_nan() || !z0.is_finite() || z0 <= 0.0 {
            warnings.push(Warning::outside(format!(
                "conformal mapping thickness correction: the strip's effective widening ({} mm) \
                 fills the {} mm gap; the result is meaningless here (use --method field)",
                sig(delta),
                sig(c.gap)
            )));
        } else if c.t / c.gap > 0.1 {
            warnings.push(Warning::note(format!(
                "conformal mapping: t/gap = {} > 0.1, where the thickness correction reads high \
                 (35 µm in a 150 µm gap: −3.6 % against −8.8 % by the field solver); consider \
                 --method field",
                sig(c.t / c.gap)
            )));
        }
    }
    if c.t > 0.0 && c.t >= c.width {
        warnings.push(Warning::outside(format!(
            "conformal mapping thickness correction: t/w = {} ≥ 1 is outside its use",
            sig(c.t / c.width)
        )));
    }
    if c.t > 0.0 && c.t >= c.gap {
        warnings.push(Warning::outside(format!(
            "conformal mapping thickness correction: t/gap = {} ≥ 1 is outside its use",
            sig(c.t / c.gap)
        )));
    }
    warnings.push(Warning::note(
        "grounded CPW assumes coplanar grounds wide and tied to the plane, and no lid",
    ));
    Solution {
        z0,
        eps_eff,
        method: Method::Conformal,
        warnings,
    }
}
