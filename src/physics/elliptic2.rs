//! Complete elliptic integrals K and E together, by the arithmetic–geometric mean
//! (Abramowitz & Stegun 17.6): with a0 = 1, b0 = k′, c0 = k,
//! K = π/(2·a_N) and E = K·(1 − Σ 2^(n−1)·c_n²).

/// (K(k), E(k)) from the complementary modulus k′ (k² = 1 − k′²).
pub fn k_and_e(kp: f64) -> (f64, f64) {
    let mut a = 1.0;
    let mut b = kp;
    let mut c2 = 1.0 - kp * kp; // c0² = k²
    let mut sum = 0.5 * c2; // 2^(−1)·c0²
    let mut pow = 0.5;
    for _ in 0..64 {
        let an = 0.5 * (a + b);
        let bn = (a * b).sqrt();
        let cn = 0.5 * (a - b);
        pow *= 2.0;
        c2 = cn * cn;
        sum += pow * c2;
        a = an;
        b = bn;
        if cn.abs() <= 1e-16 * a {
            break;
        }
    }
    let k = std::f64::consts::PI / (2.0 * a);
    (k, k * (1.0 - sum))
}

#[cfg(test)]
mod tests {
    use super::*;

    // K(0) = E(0) = π/2; E(1/√2) = 1.3506438810476755 (Abramowitz & Stegun table 17.1,
    // also scipy.special.ellipe(0.5)).
    #[test]
    fn known_values() {
        let (k, e) = k_and_e(1.0);
        assert!((k - std::f64::consts::FRAC_PI_2).abs() < 1e-15);
        assert!((e - std::f64::consts::FRAC_PI_2).abs() < 1e-15);
        let (k, e) = k_and_e(std::f64::consts::FRAC_1_SQRT_2);
        assert!((k - 1.854_074_677_301_372).abs() < 1e-14);
        assert!((e - 1.350_643_881_047_675_5).abs() < 1e-14);
    }
}
