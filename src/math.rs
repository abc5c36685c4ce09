//! Physical constants, complex numbers and number formatting: the bottom of the library's
//! import order (docs/architecture.md), used by every layer above it.

/// Speed of light in vacuum, m/s (exact by the SI definition).
pub const C0: f64 = 299_792_458.0;
/// μ0, H/m (CODATA 2022, 1.25663706127e-6; the classical 4π·1e-7 differs by 1e-10).
pub const MU0: f64 = 1.256_637_061_27e-6;
/// ε0, F/m (CODATA 2022).
pub const EPS0: f64 = 8.854_187_818_8e-12;
/// Impedance of free space η0 = μ0·c0, Ω.
pub const ETA0: f64 = MU0 * C0;

/// A complex number, just what the transfer needs.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Cx {
    /// Real part.
    pub re: f64,
    /// Imaginary part.
    pub im: f64,
}

impl std::ops::Add for Cx {
    type Output = Cx;
    fn add(self, o: Cx) -> Cx {
        Cx::new(self.re + o.re, self.im + o.im)
    }
}

impl std::ops::Sub for Cx {
    type Output = Cx;
    fn sub(self, o: Cx) -> Cx {
        Cx::new(self.re - o.re, self.im - o.im)
    }
}

impl std::ops::Neg for Cx {
    type Output = Cx;
    fn neg(self) -> Cx {
        Cx::new(-self.re, -self.im)
    }
}

impl std::ops::Mul for Cx {
    type Output = Cx;
    fn mul(self, o: Cx) -> Cx {
        Cx::new(
            self.re * o.re - self.im * o.im,
            self.re * o.im + self.im * o.re,
        )
    }
}

impl std::ops::Div for Cx {
    type Output = Cx;
    fn div(self, o: Cx) -> Cx {
        let d = o.re * o.re + o.im * o.im;
        Cx::new(
            (self.re * o.re + self.im * o.im) / d,
            (self.im * o.re - self.re * o.im) / d,
        )
    }
}

impl Cx {
    /// re + j·im.
    pub const fn new(re: f64, im: f64) -> Cx {
        Cx { re, im }
    }
    /// Modulus.
    pub fn abs(self) -> f64 {
        self.re.hypot(self.im)
    }
    /// tanh(z) = (sinh 2a + j sin 2b)/(cosh 2a + cos 2b), z = a + jb.
    pub fn tanh(self) -> Cx {
        let (a, b) = (2.0 * self.re, 2.0 * self.im);
        let d = a.cosh() + b.cos();
        Cx::new(a.sinh() / d, b.sin() / d)
    }
    /// cosh(a + jb) = cosh a·cos b + j·sinh a·sin b.
    pub fn cosh(self) -> Cx {
        Cx::new(
            self.re.cosh() * self.im.cos(),
            self.re.sinh() * self.im.sin(),
        )
    }
    /// sinh(a + jb) = sinh a·cos b + j·cosh a·sin b.
    pub fn sinh(self) -> Cx {
        Cx::new(
            self.re.sinh() * self.im.cos(),
            self.re.cosh() * self.im.sin(),
        )
    }
}

/// Formats a number for a message without noise (`NaN`, `inf`, `0.2`).
pub fn fmt_num(v: f64) -> String {
    if v.is_nan() {
        "NaN".to_string()
    } else if v != 0.0 && v.is_finite() && !(1e-4..1e7).contains(&v.abs()) {
        format!("{v:e}")
    } else {
        format!("{v}")
    }
}

/// A number to `n` significant digits for a message, trailing zeros trimmed, no float noise
/// (`0` as "0", NaN and infinities as [`fmt_num`] writes them).
pub fn sig_fig(v: f64, n: i32) -> String {
    if !v.is_finite() {
        return fmt_num(v);
    }
    if v == 0.0 {
        return "0".into();
    }
    let digits = (n - 1 - v.abs().log10().floor() as i32).max(0) as usize;
    let s = format!("{v:.digits$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// A number to at most `d` decimals, trailing zeros trimmed: 10 → "10", 2.5 → "2.5".
pub fn trimmed(v: f64, d: usize) -> String {
    let s = format!("{v:.d$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// A frequency with its unit (Hz, kHz, MHz, GHz) to four significant figures, trailing zeros
/// trimmed (166.7 MHz, 461 MHz, 1.5 GHz): the one way loopwright writes a frequency for
/// reading (tables, plots, notes; files keep full precision).
pub fn hz_label(hz: f64) -> String {
    // The unit is chosen after rounding, so that 999.96 kHz reads "1 MHz".
    let v = if hz.is_finite() && hz > 0.0 {
        let q = 10f64.powi(hz.log10().floor() as i32 - 3);
        (hz / q).round() * q
    } else {
        hz
    };
    let (k, unit) = if v >= 1e9 {
        (1e9, "GHz")
    } else if v >= 1e6 {
        (1e6, "MHz")
    } else if v >= 1e3 {
        (1e3, "kHz")
    } else {
        (1.0, "Hz")
    };
    format!("{} {unit}", sig_fig(v / k, 4))
}

/// `v × unit` for a decimal reading and a power-of-ten unit (a Touchstone file's MHz column
/// to Hz), rounded to 15 significant digits so that no binary noise of the multiplication
/// shows (33.017942 MHz is 33017942 Hz, not 33017941.999999996): a double holds 15 decimal
/// digits exactly, and the product is off from the decimal one by at most one unit in the
/// last place.
pub fn scaled(v: f64, unit: f64) -> f64 {
    let p = v * unit;
    if !p.is_finite() || p == 0.0 {
        return p;
    }
    format!("{p:.14e}").parse().unwrap_or(p)
}

/// Σ a_i·b_i in four interleaved partial sums (vectorisable; the order of a plain sum is not).
pub(crate) fn dot(a: &[f64], b: &[f64]) -> f64 {
    let mut acc = [0.0; 4];
    let (qa, qb) = (a.chunks_exact(4), b.chunks_exact(4));
    let (ra, rb) = (qa.remainder(), qb.remainder());
    for (x, y) in qa.zip(qb) {
        for c in 0..4 {
            acc[c] += x[c] * y[c];
        }
    }
    let tail: f64 = ra.iter().zip(rb).map(|(x, y)| x * y).sum();
    (acc[0] + acc[1]) + (acc[2] + acc[3]) + tail
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The four lanes and the remainder: every length from 0 to 9, on integers (exact sums).
    #[test]
    fn dot_sums_every_element() {
        for n in 0..10_usize {
            let a: Vec<f64> = (0..n).map(|i| (i + 1) as f64).collect();
            let b: Vec<f64> = (0..n).map(|i| (2 * i + 1) as f64).collect();
            let want: f64 = (0..n).map(|i| ((i + 1) * (2 * i + 1)) as f64).sum();
            assert_eq!(dot(&a, &b), want, "length {n}");
        }
    }

    #[test]
    fn formats() {
        assert_eq!(sig_fig(49.8612, 4), "49.86");
        assert_eq!(sig_fig(0.000123456, 6), "0.000123456");
        assert_eq!(sig_fig(1000.025, 4), "1000");
        assert_eq!(trimmed(10.0, 3), "10");
        assert_eq!(trimmed(2.5, 3), "2.5");
        assert_eq!(hz_label(2.5e9), "2.5 GHz");
        assert_eq!(hz_label(150e3), "150 kHz");
        assert_eq!(hz_label(166.7132e6), "166.7 MHz");
        assert_eq!(hz_label(461e6), "461 MHz");
        assert_eq!(hz_label(999.96e3), "1 MHz");
        assert_eq!(hz_label(1e12), "1000 GHz");
        // The bench's MHz Touchstone case: no binary noise in the Hz value.
        assert_eq!(33.017942 * 1e6, 33017941.999999996);
        assert_eq!(scaled(33.017942, 1e6), 33017942.0);
        assert_eq!(scaled(0.1, 3.0), 0.3);
        assert!((ETA0 - 376.730_313_412).abs() < 1e-6);
    }
}
