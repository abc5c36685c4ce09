//! Microstrip and coated microstrip.
//!
//! - Hammerstad & Jensen, "Accurate Models for Microstrip Computer-Aided Design",
//!   IEEE MTT-S Int. Microwave Symp. Digest, pp. 407–409, June 1980: Z0 and εeff with the
//!   strip-thickness correction. Stated accuracy (from memory of the paper): Z01 better than
//!   0.01 % for u ≤ 1 and 0.03 % for u ≤ 1000; εe better than 0.2 % for εr ≤ 128 and
//!   0.01 ≤ u ≤ 100. Same algebra as scikit-rf `skrf/media/mline.py`.
//! - IPC-2141A surface and embedded microstrip.
//! - The exponential cover blend for a solder-mask coat (see [`cover_blend`]).

use super::{CoatedMicrostrip, ETA0, Method, Microstrip, Solution, Warning, range_warning, sig};
use std::f64::consts::{E, PI};

/// Air-filled microstrip impedance Z01(u), u = w/h (Hammerstad & Jensen 1980).
fn z01(u: f64) -> f64 {
    let f = 6.0 + (2.0 * PI - 6.0) * (-(30.666 / u).powf(0.7528)).exp();
    ETA0 / (2.0 * PI) * (f / u + (1.0 + (2.0 / u).powi(2)).sqrt()).ln()
}

/// Effective permittivity εe(u, εr) of zero-thickness microstrip (Hammerstad & Jensen 1980).
fn eps_e(u: f64, er: f64) -> f64 {
    let a = 1.0
        + (1.0 / 49.0) * ((u.powi(4) + (u / 52.0).powi(2)) / (u.powi(4) + 0.432)).ln()
        + (1.0 / 18.7) * (1.0 + (u / 18.1).powi(3)).ln();
    let b = 0.564 * ((er - 0.9) / (er + 3.0)).powf(0.053);
    (er + 1.0) / 2.0 + (er - 1.0) / 2.0 * (1.0 + 10.0 / u).powf(-a * b)
}

/// Hammerstad–Jensen microstrip with the thickness correction: returns (Z0 Ω, εeff).
///
/// Δu1 = (t̄/π)·ln[1 + 4e/(t̄·coth²√(6.517u))], Δur = ½[1 + sech√(εr−1)]·Δu1,
/// Z0 = Z01(u + Δur)/√εe(u + Δur), εeff = εe(u + Δur)·[Z01(u + Δu1)/Z01(u + Δur)]².
pub fn hammerstad_jensen(w: f64, h: f64, t: f64, er: f64) -> (f64, f64) {
    let u = w / h;
    let (u1, ur) = if t > 0.0 {
        let tn = t / h;
        let coth = 1.0 / (6.517 * u).sqrt().tanh();
        let du1 = tn / PI * (1.0 + 4.0 * E / (tn * coth * coth)).ln();
        let dur = 0.5 * (1.0 + 1.0 / (er - 1.0).sqrt().cosh()) * du1;
        (u + du1, u + dur)
    } else {
        (u, u)
    };
    let z0 = z01(ur) / eps_e(ur, er).sqrt();
    let eeff = eps_e(ur, er) * (z01(u1) / z01(ur)).powi(2);
    (z0, eeff)
}

/// IPC-2141A surface microstrip: Z0 = 87/√(εr + 1.41)·ln(5.98h/(0.8w + t)).
/// Quoted validity 0.1 < w/h < 2.0, 1 < εr < 15. It gives no εeff.
pub fn ipc_microstrip(w: f64, h: f64, t: f64, er: f64) -> f64 {
    87.0 / (er + 1.41).sqrt() * (5.98 * h / (0.8 * w + t)).ln()
}

/// IPC-2141A embedded microstrip: Z0 = 60/√εr′·ln(5.98h/(0.8w + t)),
/// εr′ = εr·[1 − exp(−1.55·h1/h)], with h1 the plane-to-top-of-cover distance.
/// Returns (Z0, εr′). Quoted validity h1/h > 1.2 and w/h < 1.
pub fn ipc_embedded(w: f64, h: f64, h1: f64, t: f64, er: f64) -> (f64, f64) {
    let erp = er * (1.0 - (-1.55 * h1 / h).exp());
    (60.0 / erp.sqrt() * (5.98 * h / (0.8 * w + t)).ln(), erp)
}

/// The exponential cover blend: εeff,c = εeff,0 + (εr − εeff,0)·(1 − e^(−2c/h))·(εm − 1)/(εr − 1).
///
/// With a cover of the substrate's own permittivity (εm = εr) this is the published blend
/// εeff,c = εeff,0·e^(−2c/h) + εr·(1 − e^(−2c/h)) (D. Brooks, *Signal Integrity Issues and
/// Printed Circuit Board Design*, 2003, and Wadell's embedded microstrip; recalled from
/// memory in our notes, not checked against the printed page). The factor
/// (εm − 1)/(εr − 1) for a mask of another permittivity is our own extension (it gives no
/// change for an air cover). Z0 scales as √(εeff,0/εeff,c), exactly, because a dielectric
/// does not change L′. Accuracy against a finite-difference study in our notes: within
/// 1.6 percentage points of the change in Z0 for c/h ≤ 0.2.
fn cover_blend(eeff0: f64, er: f64, mask_t: f64, h: f64, mask_er: f64) -> f64 {
    if er - 1.0 < 1e-9 {
        // An air substrate: the blend has no meaning; the cover is ignored.
        return eeff0;
    }
    let fill = 1.0 - (-2.0 * mask_t / h).exp();
    eeff0 + (er - eeff0) * fill * (mask_er - 1.0) / (er - 1.0)
}

fn hj_warnings(w: &mut Vec<Warning>, m: &Microstrip) {
    let name = "Hammerstad–Jensen";
    let u = m.width / m.h;
    if !(0.01..=100.0).contains(&u) {
        w.push(Warning::outside(format!(
            "{name}: w/h = {} is outside its validity range 0.01 ≤ w/h ≤ 100 (εeff to 0.2 %)",
            sig(u)
        )));
    }
    if m.er > 128.0 {
        w.push(Warning::outside(format!(
            "{name}: εr = {} is above its validity limit 128",
            sig(m.er)
        )));
    }
}

pub(super) fn analyse(m: &Microstrip, method: Method) -> Solution {
    let mut warnings = Vec::new();
    let (z_hj, e_hj) = hammerstad_jensen(m.width, m.h, m.t, m.er);
    let (z0, eps_eff) = match method {
        Method::Ipc2141 => {
            let z = ipc_microstrip(m.width, m.h, m.t, m.er);
            range_warning(
                &mut warnings,
                "IPC-2141 microstrip",
                "w/h",
                m.width / m.h,
                0.1,
                2.0,
            );
            range_warning(&mut warnings, "IPC-2141 microstrip", "εr", m.er, 1.0, 15.0);
            warnings.push(Warning::note(
                "IPC-2141 gives no εeff; the εeff shown is Hammerstad–Jensen's",
            ));
            (z, e_hj)
        }
        _ => {
            hj_warnings(&mut warnings, m);
            (z_hj, e_hj)
        }
    };
    Solution {
        z0,
        eps_eff,
        method,
        warnings,
    }
}

pub(super) fn analyse_coated(c: &CoatedMicrostrip, method: Method) -> Solution {
    let m = &c.line;
    let mut warnings = Vec::new();
    match method {
        Method::Ipc2141 => {
            let h1 = m.h + m.t + c.mask_t;
            let (z, erp) = ipc_embedded(m.width, m.h, h1, m.t, m.er);
            let name = "IPC-2141 embedded microstrip";
            if h1 / m.h <= 1.2 {
                warnings.push(Warning::outside(format!(
                    "{name}: h1/h = {} is outside its validity range h1/h > 1.2 \
                     (it is about 10 % low for thin solder mask; use cover-blend)",
                    sig(h1 / m.h)
                )));
            }
            if m.width / m.h >= 1.0 {
                warnings.push(Warning::outside(format!(
                    "{name}: w/h = {} is outside its validity range w/h < 1",
                    sig(m.width / m.h)
                )));
            }
            if (c.mask_er - m.er).abs() > 1e-9 {
                warnings.push(Warning::note(format!(
                    "{name} assumes the cover has the substrate's εr; the mask's εr = {} is not used",
                    sig(c.mask_er)
                )));
            }
            Solution {
                z0: z,
                eps_eff: erp,
                method,
                warnings,
            }
        }
        _ => {
            hj_warnings(&mut warnings, m);
            let (z0_bare, e0) = hammerstad_jensen(m.width, m.h, m.t, m.er);
            let ec = cover_blend(e0, m.er, c.mask_t, m.h, c.mask_er);
            let ratio = c.mask_t / m.h;
            if ratio > 0.2 {
                warnings.push(Warning::outside(format!(
                    "cover blend: mask thickness / h = {} is outside its checked range ≤ 0.2",
                    sig(ratio)
                )));
            }
            Solution {
                z0: z0_bare * (e0 / ec).sqrt(),
                eps_eff: ec,
                method,
                warnings,
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // A dielectric cover never raises Z0 and an air cover changes nothing (physics).
    #[test]
    fn cover_lowers_z0_and_air_cover_is_neutral() {
        let m = Microstrip {
            width: 0.4,
            h: 0.2,
            t: 0.035,
            er: 4.3,
        };
        let bare = analyse(&m, Method::HammerstadJensen);
        let coat = |mask_t, mask_er| {
            analyse_coated(
                &CoatedMicrostrip {
                    line: m,
                    mask_t,
                    mask_er,
                },
                Method::CoverBlend,
            )
        };
        assert!(coat(0.02, 3.5).z0 < bare.z0);
        assert!((coat(0.02, 1.0).z0 - bare.z0).abs() < 1e-12);
        assert!((coat(0.0, 3.5).z0 - bare.z0).abs() < 1e-12);
        assert!(coat(0.04, 3.5).z0 < coat(0.02, 3.5).z0);
    }
}
