//! Two-port network arithmetic for the launches: line sections and shunt stubs as ABCD
//! matrices, their cascade, S11 and a launch's return-loss budget over a band (the textbook
//! ABCD matrices of a line and of a shunt admittance, e.g. Pozar, *Microwave Engineering*,
//! 4th ed., ch. 4, from memory; checked against scikit-rf's cascade in
//! `tests/launch_budget.rs`).

use crate::math::Cx;
use std::f64::consts::PI;

/// Speed of light, m/s.
use crate::math::C0;

/// Default worst return loss a launch may have up to f_max, dB (the model's default).
pub use crate::model::probe::defaults::RETURN_LOSS_LIMIT_DB as DEFAULT_LIMIT_DB;

/// One section of a launch.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Section {
    /// A series line with loss: α(f) = α_c(1 GHz)·√(f/1 GHz) + α_d(1 GHz)·(f/1 GHz), Np/m.
    LossyLine {
        /// Characteristic impedance, Ω.
        z0: f64,
        /// Effective relative permittivity.
        eps_eff: f64,
        /// Length, m.
        len_m: f64,
        /// Conductor loss at 1 GHz, Np/m.
        alpha_c_1ghz: f64,
        /// Dielectric loss at 1 GHz, Np/m.
        alpha_d_1ghz: f64,
    },
    /// A series line: Z0 (Ω), effective permittivity, length (m).
    Line {
        /// Characteristic impedance, Ω.
        z0: f64,
        /// Effective relative permittivity.
        eps_eff: f64,
        /// Length, m.
        len_m: f64,
    },
    /// An open-ended stub in shunt: Z0 (Ω), effective permittivity, length (m).
    OpenStub {
        /// Characteristic impedance, Ω.
        z0: f64,
        /// Effective relative permittivity.
        eps_eff: f64,
        /// Length, m.
        len_m: f64,
    },
}

/// A 2 × 2 complex ABCD matrix [[a, b], [c, d]].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Abcd {
    /// A.
    pub a: Cx,
    /// B, Ω.
    pub b: Cx,
    /// C, S.
    pub c: Cx,
    /// D.
    pub d: Cx,
}

impl Abcd {
    /// The identity.
    pub const ONE: Abcd = Abcd {
        a: Cx::new(1.0, 0.0),
        b: Cx::new(0.0, 0.0),
        c: Cx::new(0.0, 0.0),
        d: Cx::new(1.0, 0.0),
    };

    /// The cascade `self` then `o`.
    pub fn then(self, o: Abcd) -> Abcd {
        Abcd {
            a: self.a * o.a + self.b * o.c,
            b: self.a * o.b + self.b * o.d,
            c: self.c * o.a + self.d * o.c,
            d: self.c * o.b + self.d * o.d,
        }
    }

    /// The input impedance with `z_load` on port 2, Ω.
    pub fn z_in(&self, z_load: Cx) -> Cx {
        (self.a * z_load + self.b) / (self.c * z_load + self.d)
    }
}

impl Section {
    /// Its characteristic impedance, Ω.
    pub fn z0(&self) -> f64 {
        match *self {
            Section::Line { z0, .. }
            | Section::OpenStub { z0, .. }
            | Section::LossyLine { z0, .. } => z0,
        }
    }

    /// Its effective permittivity.
    pub fn eps_eff(&self) -> f64 {
        match *self {
            Section::Line { eps_eff, .. }
            | Section::OpenStub { eps_eff, .. }
            | Section::LossyLine { eps_eff, .. } => eps_eff,
        }
    }

    /// Its length, m.
    pub fn len_m(&self) -> f64 {
        match *self {
            Section::Line { len_m, .. }
            | Section::OpenStub { len_m, .. }
            | Section::LossyLine { len_m, .. } => len_m,
        }
    }

    /// Its ABCD matrix at `f` Hz (lossless).
    pub fn abcd(&self, f: f64) -> Abcd {
        match *self {
            Section::Line { z0, eps_eff, len_m } => {
                let bl = 2.0 * PI * f * eps_eff.sqrt() / C0 * len_m;
                let (s, c) = bl.sin_cos();
                Abcd {
                    a: Cx::new(c, 0.0),
                    b: Cx::new(0.0, z0 * s),
                    c: Cx::new(0.0, s / z0),
                    d: Cx::new(c, 0.0),
                }
            }
            Section::LossyLine {
                z0,
                eps_eff,
                len_m,
                alpha_c_1ghz,
                alpha_d_1ghz,
            } => {
                let u = f / 1e9;
                let alpha = alpha_c_1ghz * u.sqrt() + alpha_d_1ghz * u;
                let beta = 2.0 * PI * f * eps_eff.sqrt() / C0;
                lossy_line(z0, Cx::new(alpha, beta), len_m)
            }
            Section::OpenStub { z0, eps_eff, len_m } => {
                // Y = j·tan(βl)/Z0.
                let bl = 2.0 * PI * f * eps_eff.sqrt() / C0 * len_m;
                Abcd {
                    c: Cx::new(0.0, bl.tan() / z0),
                    ..Abcd::ONE
                }
            }
        }
    }
}

/// The cascade of `sections` at `f` Hz.
pub fn cascade(sections: &[Section], f: f64) -> Abcd {
    sections.iter().fold(Abcd::ONE, |m, s| m.then(s.abcd(f)))
}

/// S11 at port 1 (reference `z_ref` Ω) of `sections` terminated in `z_load` Ω.
pub fn s11(sections: &[Section], z_ref: f64, z_load: f64, f: f64) -> Cx {
    let z = cascade(sections, f).z_in(Cx::new(z_load, 0.0));
    let r = Cx::new(z_ref, 0.0);
    (z + Cx::new(-z_ref, 0.0)) / (z + r)
}

/// |S11| in dB.
pub fn s11_db(sections: &[Section], z_ref: f64, z_load: f64, f: f64) -> f64 {
    20.0 * s11(sections, z_ref, z_load, f).abs().log10()
}

/// Coaxial Z0 of a via of finished hole `d` mm in an antipad of diameter `dd` mm, in a
/// dielectric `er`: (η0/2π)/√εr·ln(D/d), Ω.
pub fn coax_z0(d: f64, dd: f64, er: f64) -> f64 {
    crate::math::ETA0 / (2.0 * PI) / er.sqrt() * (dd / d).ln()
}

/// A launch's budget over a band.
#[derive(Debug, Clone, PartialEq)]
pub struct Budget {
    /// Worst |S11| up to `f_max`, dB, and where.
    pub worst_db: f64,
    /// Frequency of the worst |S11|, Hz.
    pub worst_hz: f64,
    /// |S11| at the points of the band, (Hz, dB).
    pub s11_db: Vec<(f64, f64)>,
}

/// |S11| of `sections` (reference `z_ref`, load `z_load`) at `n` points from `f_lo` to
/// `f_max` (log-spaced), with the worst.
pub fn budget(
    sections: &[Section],
    z_ref: f64,
    z_load: f64,
    f_lo: f64,
    f_max: f64,
    n: usize,
) -> Budget {
    let pts: Vec<(f64, f64)> = (0..n)
        .map(|i| {
            let f = f_lo * (f_max / f_lo).powf(i as f64 / (n - 1).max(1) as f64);
            (f, s11_db(sections, z_ref, z_load, f))
        })
        .collect();
    let (worst_hz, worst_db) =
        pts.iter().copied().fold(
            (f_lo, f64::NEG_INFINITY),
            |a, b| if b.1 > a.1 { b } else { a },
        );
    Budget {
        worst_db,
        worst_hz,
        s11_db: pts,
    }
}

/// A line of characteristic impedance `z0` and propagation constant `g` (1/m), `len_m` long:
/// its ABCD matrix (cosh γl, Z0·sinh γl; sinh γl/Z0, cosh γl).
pub fn lossy_line(z0: f64, g: Cx, len_m: f64) -> Abcd {
    let (a, b) = (g.re * len_m, g.im * len_m);
    let ch = Cx::new(a.cosh() * b.cos(), a.sinh() * b.sin());
    let sh = Cx::new(a.sinh() * b.cos(), a.cosh() * b.sin());
    Abcd {
        a: ch,
        b: Cx::new(z0, 0.0) * sh,
        c: sh / Cx::new(z0, 0.0),
        d: ch,
    }
}

/// The S-parameters [S11, S21, S12, S22] of a two-port with ABCD `m`, both ports referenced to
/// `z_ref` Ω: Δ = A + B/Z + C·Z + D, S11 = (A + B/Z − C·Z − D)/Δ, S21 = 2/Δ,
/// S12 = 2(AD − BC)/Δ, S22 = (−A + B/Z − C·Z + D)/Δ (the textbook conversion, e.g. Pozar,
/// *Microwave Engineering*, table 4.2, from memory; checked against scikit-rf by
/// `tests/fixture_network.rs`).
pub fn s_params(m: &Abcd, z_ref: f64) -> [Cx; 4] {
    let z = Cx::new(z_ref, 0.0);
    let bz = m.b / z;
    let cz = m.c * z;
    let neg = |x: Cx| Cx::new(-x.re, -x.im);
    let delta = m.a + bz + cz + m.d;
    let two = Cx::new(2.0, 0.0);
    [
        (m.a + bz + neg(cz) + neg(m.d)) / delta,
        two / delta,
        two * (m.a * m.d + neg(m.b * m.c)) / delta,
        (neg(m.a) + bz + neg(cz) + m.d) / delta,
    ]
}
