//! Toroidal functions: the Fourier coefficients of the inverse distance between two coaxial
//! circles, q_n(r, r′, Δz) = ∫₀^{2π} cos(nα)/√(r² + r′² − 2rr′·cos α + Δz²) dα
//! = (2/√(rr′))·Q_{n−½}(χ), χ = (r² + r′² + Δz²)/(2rr′) (Legendre functions of the second kind
//! of half-integer degree). q_0 and q_1 come from the complete elliptic integrals (q_1 is
//! Maxwell's coaxial-circle formula), the rest from the three-term recurrence
//! (n + ½)·q_{n+1} = 2nχ·q_n − (n − ½)·q_{n−1} (NIST DLMF §14.10, from memory): forward while
//! its error growth e^(2ηn), η = arccosh χ, stays below e^8, else Miller's backward recurrence
//! for the minimal solution normalised by q_0 (DLMF §3.6). Both are checked against quadrature
//! below. Used by [`super::shield_gap`].

use super::elliptic2;

/// Euler–Mascheroni constant.
const EULER_GAMMA: f64 = 0.577_215_664_901_532_9;

/// ψ(n + ½) for n ≥ 0: −γ − 2·ln 2 + Σ_{k=1}^{n} 2/(2k − 1).
pub fn digamma_half(n: usize) -> f64 {
    let mut s = -EULER_GAMMA - 2.0 * std::f64::consts::LN_2;
    for k in 1..=n {
        s += 2.0 / (2 * k - 1) as f64;
    }
    s
}

/// q_n(r, r′, Δz) for n = 0..=nmax (module docs), r ≠ r′ or Δz ≠ 0: [`toroidal_batch`] of
/// the one pair.
pub fn toroidal(r: f64, rp: f64, dz: f64, nmax: usize, out: &mut Vec<f64>) {
    toroidal_batch(&[(r, rp, dz)], nmax, out);
}

/// What both recurrences start from: q_0, χ, and either q_1 (the forward recurrence, while its
/// error growth e^(2ηn) stays below e^8) or the backward recurrence's start.
struct Prelude {
    q0: f64,
    chi: f64,
    q1: Option<f64>,
    start: usize,
}

impl Prelude {
    fn of(r: f64, rp: f64, dz: f64, nmax: usize) -> Prelude {
        let s2 = (r + rp).powi(2) + dz * dz;
        let kp = (((r - rp).powi(2) + dz * dz) / s2).sqrt();
        let k = (4.0 * r * rp / s2).sqrt();
        let (kk, ee) = elliptic2::k_and_e(kp);
        let pre = 2.0 / (r * rp).sqrt();
        let q0 = pre * k * kk;
        let chi = (r * r + rp * rp + dz * dz) / (2.0 * r * rp);
        let eta = chi.acosh();
        if 2.0 * eta * (nmax as f64 + 1.0) < 8.0 {
            let q1 = pre * ((2.0 / k - k) * kk - 2.0 / k * ee);
            Prelude {
                q0,
                chi,
                q1: Some(q1),
                start: 0,
            }
        } else {
            let start = nmax + 6 + (18.0 / eta).ceil() as usize;
            Prelude {
                q0,
                chi,
                q1: None,
                start,
            }
        }
    }
}

/// The forward recurrence q_{n+1} = (2n/(n + ½))·χ·q_n − ((n − ½)/(n + ½))·q_{n−1} into `out`
/// (its length: nmax + 1) from q_0 and q_1, on the coefficients `c` (at least that long).
fn forward(q0: f64, q1: f64, chi: f64, c: &[[f64; 4]], out: &mut [f64]) {
    out[0] = q0;
    if out.len() > 1 {
        out[1] = q1;
    }
    let (mut prev, mut cur) = (q0, q1);
    for n in 1..out.len().saturating_sub(1) {
        let [_, _, fa, fb] = c[n];
        let next = fa * chi * cur - fb * prev;
        out[n + 1] = next;
        (prev, cur) = (cur, next);
    }
}

/// q_n(r, r′, Δz), n = 0..=nmax, for many pairs (r, r′, Δz): q_n of pair p is
/// `out[p·(nmax + 1) + n]`. Both recurrences run on the coefficients of [`coefficients`] (a
/// product per term in place of a division: the step's latency is what the backward
/// recurrence, up to 5.5·nmax steps long, costs). The backward recurrences (Miller's, for the
/// minimal solution normalised by q_0: t_{n−1} = (2n/(n − ½))·χ·t_n − ((n + ½)/(n − ½))·t_{n+1})
/// run four pairs at a time (pairs of similar length together), four independent chains that
/// the processor overlaps; each pair's arithmetic is what it would be alone (the same bits,
/// `toroidal_batch_matches_one_by_one`).
pub fn toroidal_batch(pairs: &[(f64, f64, f64)], nmax: usize, out: &mut Vec<f64>) {
    let len = nmax + 1;
    out.clear();
    out.resize(pairs.len() * len, 0.0);
    // (pair, its start, χ, q0) of each pair that needs the backward recurrence.
    let mut backward = Vec::new();
    let table = coefficients(nmax + 1);
    for (p, &(r, rp, dz)) in pairs.iter().enumerate() {
        let pre = Prelude::of(r, rp, dz, nmax);
        match pre.q1 {
            Some(q1) => forward(
                pre.q0,
                q1,
                pre.chi,
                &table,
                &mut out[p * len..(p + 1) * len],
            ),
            None => backward.push((p, pre.start, pre.chi, pre.q0)),
        }
    }
    backward.sort_by_key(|&(p, start, _, _)| (start, p));
    const LANES: usize = 4;
    let longest = backward.iter().map(|b| b.1).max().unwrap_or(0);
    let c = coefficients(longest + 1);
    for group in backward.chunks(LANES) {
        let lanes = group.len();
        let (mut above, mut cur) = ([0.0; LANES], [1e-30; LANES]);
        let top = group.iter().map(|b| b.1).max().unwrap_or(0);
        for n in (1..=top).rev() {
            let [ba, bb, _, _] = c[n];
            for l in 0..lanes {
                let (p, start, chi, _) = group[l];
                if n > start {
                    continue;
                }
                let mut next = ba * chi * cur[l] - bb * above[l];
                if next.abs() > 1e200 {
                    next *= 1e-200;
                    cur[l] *= 1e-200;
                    if n <= nmax {
                        for v in out[p * len + n..(p + 1) * len].iter_mut() {
                            *v *= 1e-200;
                        }
                    }
                }
                if n - 1 <= nmax {
                    out[p * len + n - 1] = next;
                }
                (above[l], cur[l]) = (cur[l], next);
            }
        }
        for &(p, _, _, q0) in group {
            let t = &mut out[p * len..(p + 1) * len];
            let scale = q0 / t[0];
            t.iter_mut().for_each(|v| *v *= scale);
        }
    }
}

/// The recurrences' coefficients for n = 0..len: [2n/(n − ½), (n + ½)/(n − ½), 2n/(n + ½),
/// (n − ½)/(n + ½)] (backward then forward), computed once per process up to the longest
/// asked for.
fn coefficients(len: usize) -> std::sync::Arc<Vec<[f64; 4]>> {
    use std::sync::{Arc, Mutex, OnceLock};
    static TABLE: OnceLock<Mutex<Arc<Vec<[f64; 4]>>>> = OnceLock::new();
    let cell = TABLE.get_or_init(Default::default);
    let make = |len: usize| -> Arc<Vec<[f64; 4]>> {
        Arc::new(
            (0..len.max(64))
                .map(|n| {
                    let nf = n as f64;
                    [
                        2.0 * nf / (nf - 0.5),
                        (nf + 0.5) / (nf - 0.5),
                        2.0 * nf / (nf + 0.5),
                        (nf - 0.5) / (nf + 0.5),
                    ]
                })
                .collect(),
        )
    };
    let Ok(mut t) = cell.lock() else {
        return make(len);
    };
    if t.len() < len {
        *t = make(len.next_power_of_two());
    }
    t.clone()
}

/// The regular part of q_n on one plate as r′ → r: q_n + ln((r − r′)²)/r → (2/r)·(ln 2r − γ −
/// ψ(n + ½)) (the logarithmic expansion of Q_ν near 1, DLMF 14.8, from memory; checked in the
/// tests).
pub fn toroidal_self(r: f64, nmax: usize, out: &mut Vec<f64>) {
    out.clear();
    out.extend((0..=nmax).map(|n| 2.0 / r * ((2.0 * r).ln() - EULER_GAMMA - digamma_half(n))));
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::PI;

    /// q_n by brute-force quadrature (composite midpoint on a fine grid, fine enough for
    /// the checked pairs).
    fn brute(r: f64, rp: f64, dz: f64, n: usize) -> f64 {
        let steps = 400_000;
        let h = 2.0 * PI / steps as f64;
        (0..steps)
            .map(|i| {
                let a = (i as f64 + 0.5) * h;
                (n as f64 * a).cos() / (r * r + rp * rp - 2.0 * r * rp * a.cos() + dz * dz).sqrt()
            })
            .sum::<f64>()
            * h
    }

    #[test]
    fn toroidal_functions_match_quadrature() {
        let mut q = Vec::new();
        for &(r, rp, dz) in &[
            (2.0e-3, 2.05e-3, 0.0),
            (2.0e-3, 2.0e-3, 0.3e-3),
            (1.4e-3, 3.6e-3, 1.5e-3),
            (5.0e-3, 5.4e-3, 0.0),
            (1.0, 3.0, 2.0),
        ] {
            toroidal(r, rp, dz, 41, &mut q);
            for n in [0, 1, 2, 5, 17, 41] {
                let b = brute(r, rp, dz, n);
                assert!(
                    (q[n] - b).abs() <= 1e-7 * q[0].abs(),
                    "r {r} r' {rp} dz {dz} n {n}: {} vs {b}",
                    q[n]
                );
            }
        }
    }

    /// A batch gives each pair the values it gets alone ([`toroidal`], checked against
    /// quadrature above), to the bit: the lanes do not mix, whatever the grouping. Pairs that
    /// take the forward recurrence, the backward one (of different lengths, so that lanes start
    /// apart), and far pairs whose backward recurrence is rescaled on the way.
    #[test]
    fn toroidal_batch_matches_one_by_one() {
        let pairs = [
            (2.0e-3, 2.05e-3, 0.0),
            (2.0e-3, 2.0e-3, 0.3e-3),
            (1.4e-3, 3.6e-3, 1.5e-3),
            (5.0e-3, 5.4e-3, 0.0),
            (2.0e-3, 2.2e-3, 0.1e-3),
            (1.0, 3.0, 2.0),
            (1.0, 1000.0, 0.0),
            (2.5e-3, 2.52e-3, 0.0),
            (1.0, 400.0, 5.0),
        ];
        for nmax in [5, 41, 100] {
            let mut batch = Vec::new();
            toroidal_batch(&pairs, nmax, &mut batch);
            let mut one = Vec::new();
            for (p, &(r, rp, dz)) in pairs.iter().enumerate() {
                toroidal(r, rp, dz, nmax, &mut one);
                assert_eq!(
                    &batch[p * (nmax + 1)..(p + 1) * (nmax + 1)],
                    &one[..],
                    "pair {p}"
                );
            }
        }
    }

    /// Far pairs, whose backward recurrence passes 1e200 and is rescaled on the way (several
    /// times over 300 steps): the values must still satisfy the three-term recurrence
    /// (n + ½)·q_{n+1} = 2nχ·q_n − (n − ½)·q_{n−1} at every n (a block of values left unscaled
    /// would break it where the rescale fell), and q_0 and q_1 must match quadrature.
    #[test]
    fn rescaled_recurrences_hold_throughout() {
        for &(r, rp, dz) in &[(1.0, 1000.0, 0.0), (1.0, 30.0, 0.0), (1.0, 400.0, 5.0)] {
            let nmax = 300;
            let mut q = Vec::new();
            toroidal(r, rp, dz, nmax, &mut q);
            let chi: f64 = (r * r + rp * rp + dz * dz) / (2.0 * r * rp);
            for n in 1..nmax {
                let nf = n as f64;
                let (lhs, a, b) = (
                    (nf + 0.5) * q[n + 1],
                    2.0 * nf * chi * q[n],
                    (nf - 0.5) * q[n - 1],
                );
                if q[n + 1].abs() < 1e-290 {
                    break; // near underflow: e^(−ηn) past what a double holds in full
                }
                assert!(
                    (lhs - (a - b)).abs() <= 1e-9 * a.abs(),
                    "r′ {rp} n {n}: {lhs} vs {}",
                    a - b
                );
            }
            for n in [0, 1] {
                let b = brute(r, rp, dz, n);
                assert!(
                    (q[n] / b - 1.0).abs() < 1e-7,
                    "r′ {rp} n {n}: {} vs {b}",
                    q[n]
                );
            }
        }
    }

    #[test]
    fn self_limit_is_the_log_expansion() {
        let (r, mut a, mut b) = (2.0e-3, Vec::new(), Vec::new());
        toroidal_self(r, 30, &mut b);
        let e = 1e-9;
        toroidal(r, r + e, 0.0, 30, &mut a);
        for n in [0, 1, 7, 30] {
            let reg = a[n] + (e * e).ln() / (r * (r + e)).sqrt();
            assert!(
                (reg - b[n]).abs() < 1e-4 * b[0].abs(),
                "n {n}: {reg} vs {}",
                b[n]
            );
        }
    }
}
