//! A balanced loop's calibration: its 3-port measurement (line in, both outputs) turned into the
//! 2-port of its outputs' difference, which the loop's calibration then reads as the probe's
//! output.

use crate::calib::touchstone::Network;

/// The 2-port network of a balanced loop's outputs' difference through an ideal 180° hybrid:
/// port 1 the line (its own reflection kept), port 2 Δ = (S(a, l) − S(b, l))/√2 (both ways),
/// and the median over the file of |Σ/Δ| in dB, Σ = (S(a, l) + S(b, l))/√2: how much of the
/// line's coupling the sum took (the electric share; the model predicts Σ's response to a
/// uniform field only, not to the line's).
pub fn difference_network(net: &Network, l: usize, pa: usize, pb: usize) -> (Network, f64) {
    let k = std::f64::consts::FRAC_1_SQRT_2;
    let (sa, sb, sal, sbl, sll) = (
        net.param(pa, l),
        net.param(pb, l),
        net.param(l, pa),
        net.param(l, pb),
        net.param(l, l),
    );
    let mut ratios = Vec::new();
    let s = (0..net.freqs.len())
        .map(|i| {
            let d = ((sa[i].0 - sb[i].0) * k, (sa[i].1 - sb[i].1) * k);
            let d_rev = ((sal[i].0 - sbl[i].0) * k, (sal[i].1 - sbl[i].1) * k);
            let sum = ((sa[i].0 + sb[i].0) * k, (sa[i].1 + sb[i].1) * k);
            let dm = d.0.hypot(d.1);
            if dm > 0.0 && sum.0.hypot(sum.1) > 0.0 {
                ratios.push(20.0 * (sum.0.hypot(sum.1) / dm).log10());
            }
            vec![sll[i], d_rev, d, (0.0, 0.0)]
        })
        .collect();
    ratios.sort_by(f64::total_cmp);
    let median = ratios.get(ratios.len() / 2).copied().unwrap_or(f64::NAN);
    (
        Network {
            ports: 2,
            s,
            ..net.clone()
        },
        median,
    )
}
