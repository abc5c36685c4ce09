//! Stripline, centred and offset.
//!
//! - Cohn 1954 (exact, t = 0): Z0 = η0/(4√εr)·K(k)/K(k′), k = sech(πw/2b), k′ = tanh(πw/2b).
//!   S. B. Cohn, "Characteristic Impedance of the Shielded-Strip Transmission Line",
//!   IRE Trans. MTT-2(2), pp. 52–57, 1954.
//! - Wheeler 1978 as given by Wadell (finite thickness through an effective width).
//!   H. A. Wheeler, IEEE Trans. MTT-26(11), 1978; B. C. Wadell, *Transmission Line Design
//!   Handbook*, Artech House 1991. Stated accuracy about 0.5 % for W′/(b−t) < 10 (from memory).
//! - IPC-2141A symmetric and asymmetric stripline.
//! - Offset stripline by the parallel combination of two centred lines (credited to
//!   Cohn/Wadell): each half sees a centred line of spacing 2·hᵢ + t; the capacitances add.

use super::{ETA0, Method, Solution, Stripline, Warning, range_warning, sig};
use crate::solve::elliptic::k_ratio;
use std::f64::consts::PI;

/// Cohn's exact impedance of a zero-thickness strip of width `w` centred between planes
/// `b` apart, in a homogeneous dielectric `er`.
pub fn cohn_centred(w: f64, b: f64, er: f64) -> f64 {
    let x = PI * w / (2.0 * b);
    // k = sech x, k′ = tanh x, both computed directly (never √(1 − k²)).
    let k = 1.0 / x.cosh();
    let kp = x.tanh();
    ETA0 / (4.0 * er.sqrt()) * k_ratio(k, kp)
}

/// Wheeler's thickness term ΔW/(b − t) (zero at t = 0, where its x·ln x term tends to 0).
fn wheeler_dw(w: f64, b: f64, t: f64) -> f64 {
    let x = t / b;
    if x <= 0.0 {
        return 0.0;
    }
    let m = 2.0 / (1.0 + (2.0 / 3.0) * x / (1.0 - x));
    x / (PI * (1.0 - x))
        * (1.0 - 0.5 * ((x / (2.0 - x)).powi(2) + (0.0796 * x / (w / b + 1.1 * x)).powf(m)).ln())
}

/// W′/(b − t) of Wheeler's formula: the effective width ratio, valid below 10.
fn wheeler_effective_ratio(w: f64, b: f64, t: f64) -> f64 {
    w / (b - t) + wheeler_dw(w, b, t)
}

/// Wheeler 1978 (Wadell's form) for a strip of width `w`, thickness `t`, centred between
/// planes `b` apart (b includes t).
pub fn wheeler_centred(w: f64, b: f64, t: f64, er: f64) -> f64 {
    let a = 4.0 / (PI * wheeler_effective_ratio(w, b, t));
    ETA0 / (4.0 * PI * er.sqrt()) * (1.0 + a * (2.0 * a + (4.0 * a * a + 6.27).sqrt())).ln()
}

/// IPC-2141A symmetric stripline: Z0 = 60/√εr·ln(1.9b/(0.8w + t)).
pub fn ipc_symmetric(w: f64, b: f64, t: f64, er: f64) -> f64 {
    60.0 / er.sqrt() * (1.9 * b / (0.8 * w + t)).ln()
}

/// IPC-2141A asymmetric stripline, the form that reduces to the symmetric one when centred:
/// Z0 = 80/√εr·ln(1.9(2h_near + t)/(0.8w + t))·(1 − h_near/(4h_far)).
pub fn ipc_asymmetric(w: f64, h_near: f64, h_far: f64, t: f64, er: f64) -> f64 {
    80.0 / er.sqrt()
        * (1.9 * (2.0 * h_near + t) / (0.8 * w + t)).ln()
        * (1.0 - h_near / (4.0 * h_far))
}

/// Overestimate of Z0 by the parallel combination, in percent, against a 2-D finite-difference
/// reference (t = 0; our notes' study, rows w/b = 0.2, 0.5, 1.0; columns h_near/b).
/// Used only to tell the user how far off the closed form is expected to be.
const PARALLEL_ERROR_TABLE: [(f64, [f64; 4]); 3] = [
    (0.2, [10.1, 7.69, 3.69, 0.87]),
    (0.5, [6.75, 5.61, 3.00, 0.75]),
    (1.0, [4.09, 3.55, 2.01, 0.52]),
];
const PARALLEL_ERROR_COLS: [f64; 4] = [0.10, 0.15, 0.25, 0.375];

/// Interpolated expected overestimate (percent) of the parallel combination.
fn parallel_error_pct(w_over_b: f64, near_over_b: f64) -> f64 {
    let col = |row: &[f64; 4]| -> f64 {
        let x = near_over_b.clamp(PARALLEL_ERROR_COLS[0], 0.5);
        if x >= 0.375 {
            // Linear to 0 at the centred case (exact there).
            return row[3] * (0.5 - x) / 0.125;
        }
        for i in 0..3 {
            let (x0, x1) = (PARALLEL_ERROR_COLS[i], PARALLEL_ERROR_COLS[i + 1]);
            if x <= x1 {
                return row[i] + (row[i + 1] - row[i]) * (x - x0) / (x1 - x0);
            }
        }
        row[3]
    };
    let wb = w_over_b.clamp(0.2, 1.0);
    let t = &PARALLEL_ERROR_TABLE;
    let (r0, r1) = if wb <= 0.5 {
        (&t[0], &t[1])
    } else {
        (&t[1], &t[2])
    };
    let f = (wb - r0.0) / (r1.0 - r0.0);
    col(&r0.1) * (1.0 - f) + col(&r1.1) * f
}

/// Impedance of a centred line of spacing `b` at permittivity `er` by the chosen method.
fn centred(method: Method, w: f64, b: f64, t: f64, er: f64) -> f64 {
    match method {
        Method::Cohn => cohn_centred(w, b, er),
        _ => wheeler_centred(w, b, t, er),
    }
}

pub(super) fn analyse(s: &Stripline, method: Method) -> Solution {
    let mut warnings = Vec::new();
    let b = s.b();
    let (w, t) = (s.width, s.t);
    if method == Method::Ipc2141 {
        // IPC's equations take one εr: a thickness-weighted mean when the two sides differ.
        let er = (s.er1 * s.h1 + s.er2 * s.h2) / (s.h1 + s.h2);
        if s.er1 != s.er2 {
            warnings.push(Warning::note(format!(
                "IPC-2141 takes one εr; used the thickness-weighted mean {}",
                sig(er)
            )));
        }
        let z0 = if s.is_centred() {
            let name = "IPC-2141 stripline";
            range_warning(&mut warnings, name, "w/(b−t)", w / (b - t), 0.0, 0.35);
            range_warning(&mut warnings, name, "t/b", t / b, -f64::MIN_POSITIVE, 0.25);
            range_warning(&mut warnings, name, "εr", er, 1.0, 15.0);
            ipc_symmetric(w, b, t, er)
        } else {
            let (near, far) = (s.h1.min(s.h2), s.h1.max(s.h2));
            let name = "IPC-2141 asymmetric stripline";
            range_warning(&mut warnings, name, "w/h_near", w / near, 0.1, 2.0);
            range_warning(
                &mut warnings,
                name,
                "t/h_near",
                t / near,
                -f64::MIN_POSITIVE,
                0.25,
            );
            if w / b > 0.2 {
                warnings.push(Warning::note(format!(
                    "IPC-2141 asymmetric stripline is known to be off by 10 % or more for \
                     w/b > 0.2 (here {}); prefer wheeler or cohn",
                    sig(w / b)
                )));
            }
            ipc_asymmetric(w, near, far, t, er)
        };
        if z0 <= 0.0 {
            warnings.push(Warning::outside(
                "IPC-2141 gives a non-positive Z0 here: the formula has broken down",
            ));
        }
        return Solution {
            z0,
            eps_eff: er,
            method,
            warnings,
        };
    }

    if method == Method::Cohn && t > 0.0 {
        warnings.push(Warning::outside(format!(
            "Cohn's exact solution assumes t = 0; the thickness t = {} mm is ignored \
             (the planes stay h1 + t + h2 apart); use wheeler for finite thickness",
            sig(t)
        )));
    }
    if method == Method::Wheeler {
        let r = wheeler_effective_ratio(w, b, t);
        if r >= 10.0 {
            warnings.push(Warning::outside(format!(
                "Wheeler: W′/(b−t) = {} is outside its validity range < 10",
                sig(r)
            )));
        }
    }
    // Each half: a centred line of spacing 2·hᵢ + t. Per-unit-length capacitances
    // C = √εr/(c·Z), C0 = 1/(c·Z_air); the strip carries half of each line's charge.
    // (c cancels in Z0 = 1/(c·√(C·C0)) and εeff = C/C0, so it is left out.)
    let (b1, b2) = (2.0 * s.h1 + t, 2.0 * s.h2 + t);
    let t_used = if method == Method::Cohn { 0.0 } else { t };
    let za1 = centred(method, w, b1, t_used, 1.0);
    let za2 = centred(method, w, b2, t_used, 1.0);
    let c0 = 0.5 * (1.0 / za1 + 1.0 / za2);
    let c = 0.5 * (s.er1 / za1 + s.er2 / za2);
    let z0 = 1.0 / (c * c0).sqrt();
    let eps_eff = c / c0;
    if !s.is_centred() {
        let near = s.h1.min(s.h2) + 0.5 * t;
        let pct = parallel_error_pct(w / b, near / b);
        let text = format!(
            "offset stripline by parallel combination of two centred lines: an upper bound \
             on Z0, expected about {:.1} % high here (h_near/b = {}, w/b = {}; 2-D field \
             comparison, t = 0)",
            pct,
            sig(near / b),
            sig(w / b)
        );
        // An accuracy statement, not a validity limit: the method has no published range.
        // The 2-D field solver is the remedy when the few percent matter.
        warnings.push(Warning::note(text));
    }
    Solution {
        z0,
        eps_eff,
        method,
        warnings,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Cohn's narrow-strip limit: Z0 → (60/√εr)·ln(8b/(πw)) as w → 0 (with η0/4π for 30).
    #[test]
    fn cohn_narrow_limit() {
        let (w, b) = (1e-4, 1.0);
        let lim = ETA0 / (2.0 * PI) * (8.0 * b / (PI * w)).ln();
        assert!((cohn_centred(w, b, 1.0) / lim - 1.0).abs() < 1e-6);
    }

    // Cohn's wide-strip limit: Z0 → (η0/4√εr)/(w/b + 2ln2/π).
    #[test]
    fn cohn_wide_limit() {
        let (w, b) = (10.0, 1.0);
        let lim = ETA0 / 4.0 / (w / b + 2.0 * 2f64.ln() / PI);
        assert!((cohn_centred(w, b, 1.0) / lim - 1.0).abs() < 1e-9);
    }

    #[test]
    fn parallel_error_table_interpolates() {
        assert!((parallel_error_pct(0.5, 0.25) - 3.0).abs() < 1e-12);
        assert!((parallel_error_pct(0.2, 0.10) - 10.1).abs() < 1e-12);
        assert!(parallel_error_pct(0.5, 0.5).abs() < 1e-12);
    }
}
