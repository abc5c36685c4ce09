//! A multi-turn loop's response: the shield is one turn with one gap, the winding inside it N
//! turns of line, each passing the gap once.
//!
//! Model (quasi-static in the shield, transmission lines inside it; docs/formulas.md §13):
//! - Each pass of the winding across the gap sees the gap's voltage V_g as a series source
//!   (the interior of the shield is a line driven at the gap), and the shield's outer current
//!   crossing the gap is the sum of the passes' currents: at low frequency the shield and the
//!   winding are an ideal 1 : N transformer whose magnetising inductance is the shield's outer
//!   inductance L_out.
//! - The winding is a chain of lines of the stacked turns' common-mode impedance per turn Z_cm
//!   (field-solved, `solve::winding`): from the first pass, one section per turn to the next
//!   pass, then the last turn's stub to its short; the run from the first pass to the
//!   connector is the matched line into R_L. With V_g = 1 the chain gives each pass's current
//!   (their sum Y_Σ) and the load's current I_L.
//! - Neighbouring turns stand V_g apart all along the ring (one pass between them): their
//!   capacitance C_adj per metre over the ring's length ℓ stores ½·C_adj·ℓ·V_g², so that each
//!   pair adds C_adj·ℓ across the gap, beside the gap's own capacitance C_gap.
//! - The gap: V_oc = V_g·(1 + jω·L_out·(Y_Σ + jω·C)), C = C_gap + Σ C_adj·ℓ, and
//!   V_out/V_oc = R_L·I_L·e^(−α·l1)/(1 + jω·L_out·Y_Σ − ω²·L_out·C). At low frequency
//!   Y_Σ = N²/R_L and I_L = N/R_L: N times one turn's response below the corner
//!   R_L/(2π·(N²·L_out + L_w)), L_w the chain's inductance, and 1/N of it above. One turn
//!   gives the single loop's formula exactly.
//!
//! Left out: the run's part on the ring is stacked over the other turns, whose coupling to it is
//! not modelled; the differential modes between turns enter only through C_adj (lumped at the
//! gap). Checked against an FDTD of a 10 mm loop with one and two turns (`tests/multiturn.rs`):
//! the inductance at the output 3 % low for both, the first resonance 15–16 % high for both,
//! the two turns' change from one within 1 % ([`SELF_RESONANCE_MARGIN`]).

use super::{C0, Cx};

/// A quantity linear in the short's current J and the gap's voltage V_g: its two coefficients.
type Lin = (Cx, Cx);

/// A multi-turn loop's own response numbers.
#[derive(Debug, Clone, PartialEq)]
pub struct WindingResponse {
    /// Turns.
    pub turns: u32,
    /// The stacked turns' common-mode impedance per turn, Ω.
    pub z_common: f64,
    /// Its effective permittivity.
    pub eps_common: f64,
    /// Capacitance between neighbouring turns over the ring, summed over the pairs, F: what
    /// the winding adds across the gap.
    pub c_turns: f64,
    /// The winding's line from pass k to pass k + 1, m.
    pub sections_m: Vec<f64>,
    /// The last turn's stub from its pass to the short, m.
    pub stub_m: f64,
    /// The chain's inductance at low frequency, Z_cm·√εcm·(Σ sections + stub)/c0, H.
    pub l_inner: f64,
    /// The self-resonance: the lowest frequency above the corner at which the probe's impedance
    /// at its output (the connector: the chain seen through the run) turns from inductive to
    /// capacitive (parallel resonance), Hz (set by `predict`; the lumped L_out with C where none
    /// is found below twice that).
    pub self_resonance_hz: f64,
}

/// A multi-turn loop's band ends this factor below its predicted self-resonance: the FDTD of a
/// 10 mm loop with one turn and with two stacked turns (`tests/multiturn.rs`, against
/// `tests/data/fdtd_multiturn.toml`) found the model's first parallel resonance at the port 15 %
/// and 16 % above its own, while the two turns' shift from one turn agreed within 1 %.
pub const SELF_RESONANCE_MARGIN: f64 = 1.2;

/// The budget's share of the turn-to-turn capacitance: ±10 % (the 2-D solution takes the turns
/// stacked over the whole ring; near the junction they part; our estimate, no source).
pub const C_TURNS_TOL: f64 = 0.10;

impl WindingResponse {
    /// The winding's numbers: `c_adjacent` per metre of ring (F/m, per pair), the ring's length
    /// `ring_m`, the sections between passes and the last stub (m).
    pub fn new(
        turns: u32,
        z_common: f64,
        eps_common: f64,
        c_adjacent: &[f64],
        ring_m: f64,
        sections_m: Vec<f64>,
        stub_m: f64,
    ) -> WindingResponse {
        let c_turns = c_adjacent.iter().sum::<f64>() * ring_m;
        let line = sections_m.iter().sum::<f64>() + stub_m;
        let l_inner = z_common * eps_common.sqrt() * line / C0;
        WindingResponse {
            turns,
            z_common,
            eps_common,
            c_turns,
            sections_m,
            stub_m,
            l_inner,
            self_resonance_hz: f64::NAN,
        }
    }

    /// The line's propagation constant `g` (found on permittivity `eps`) moved to the stacked
    /// turns' permittivity: the phase scaled by √(εcm/ε), the loss kept.
    pub fn gamma(&self, g: Cx, eps: f64) -> Cx {
        Cx::new(g.re, g.im * (self.eps_common / eps).sqrt())
    }

    /// Turns as a number.
    pub fn n(&self) -> f64 {
        self.turns as f64
    }

    /// The winding's whole line from the first pass to the short, m.
    pub fn line_m(&self) -> f64 {
        self.sections_m.iter().sum::<f64>() + self.stub_m
    }

    /// Every length of the winding scaled by `k` (the error budget).
    pub fn scale_lengths(&mut self, k: f64) {
        for s in &mut self.sections_m {
            *s *= k;
        }
        self.stub_m *= k;
    }

    /// The chain's state at the first pass's output side and the passes' current sum, each as
    /// (coefficient of the short's current J, coefficient of V_g): ((V, I), I_Σ), I flowing
    /// from the short towards the load.
    fn chain(&self, g: Cx) -> ((Lin, Lin), Lin) {
        let z = Cx::new(self.z_common, 0.0);
        let line = |l: f64, v: (Cx, Cx), i: (Cx, Cx)| {
            let gl = Cx::new(g.re * l, g.im * l);
            let (ch, sh) = (gl.cosh(), gl.sinh());
            (
                (v.0 * ch + z * sh * i.0, v.1 * ch + z * sh * i.1),
                (v.0 * sh / z + i.0 * ch, v.1 * sh / z + i.1 * ch),
            )
        };
        let zero = Cx::new(0.0, 0.0);
        let one = Cx::new(1.0, 0.0);
        let (mut v, mut i) = line(self.stub_m, (zero, zero), (one, zero));
        let mut sum = (zero, zero);
        for k in (0..self.turns as usize).rev() {
            // The pass: its current joins the shield's; its source raises the potential on the
            // short's side by V_g.
            sum = (sum.0 + i.0, sum.1 + i.1);
            v.1 = v.1 - one;
            if k > 0 {
                (v, i) = line(self.sections_m[k - 1], v, i);
            }
        }
        ((v, i), sum)
    }

    /// The probe's impedance seen from the run's input at `f` Hz, no field applied: the
    /// chain with the shield's gap node (L_out, C) closing the passes' sources, Ω.
    pub fn z_out(&self, f: f64, g: Cx, l_outer: f64, c_gap: f64) -> Cx {
        let w = 2.0 * std::f64::consts::PI * f;
        let ((v, i), sum) = self.chain(g);
        // V_oc = 0 = V_g·(1 − ω²·L·C) + jω·L·I_Σ: V_g per unit of J.
        let c = c_gap + self.c_turns;
        let jwl = Cx::new(0.0, w * l_outer);
        let vg = -(jwl * sum.0) / (Cx::new(1.0 - w * w * l_outer * c, 0.0) + jwl * sum.1);
        let (vv, ii) = (v.0 + v.1 * vg, i.0 + i.1 * vg);
        // A load z_run at the run's input takes V = −z_run·I (`drive`): −I flows into the load,
        // so I flows into the probe from the output's side.
        vv / ii
    }

    /// The chain driven by V_g = 1 at every pass, the run's input impedance `z_run` on the
    /// first pass's output side, at the line's propagation constant `g`: (Y_Σ, I_L), the sum
    /// of the passes' currents and the current into the run (A per volt).
    pub fn drive(&self, g: Cx, z_run: Cx) -> (Cx, Cx) {
        let ((v, i), sum) = self.chain(g);
        // The run's input: V = −z_run·I.
        let j = -(v.1 + z_run * i.1) / (v.0 + z_run * i.0);
        let at = |c: (Cx, Cx)| c.0 * j + c.1;
        (at(sum), at(i))
    }

    /// V_run/V_oc: the voltage at the run's input per EMF, the run's input impedance `z_run`,
    /// the shield's outer inductance `l_outer` and the gap's capacitance `c_gap`, at `f` Hz.
    pub fn run_drive(&self, f: f64, g: Cx, z_run: Cx, l_outer: f64, c_gap: f64) -> Cx {
        let w = 2.0 * std::f64::consts::PI * f;
        let (y_sum, i_l) = self.drive(g, z_run);
        let c = c_gap + self.c_turns;
        let den = Cx::new(1.0 - w * w * l_outer * c, 0.0) + Cx::new(0.0, w * l_outer) * y_sum;
        z_run * i_l / den
    }

    /// The inductance seen at the output at low frequency: N²·L_out + L_w, H.
    pub fn l_total(&self, l_outer: f64) -> f64 {
        self.n() * self.n() * l_outer + self.l_inner
    }

    /// The winding seen from the gap for a matched run at `g`: 1/Y_Σ, Ω.
    pub fn z_gap(&self, g: Cx, z_run: Cx) -> Cx {
        Cx::new(1.0, 0.0) / self.drive(g, z_run).0
    }

    /// The probe's impedance at its output at `f` Hz: [`Self::z_out`] seen through the run from
    /// the first pass to the connector, `l1` m of line of impedance `z0` at the line's γ `g`
    /// (the winding's own lines at the stacked turns' permittivity, `eps` the run's), Ω.
    #[allow(clippy::too_many_arguments)]
    pub fn z_at_output(
        &self,
        f: f64,
        g: Cx,
        eps: f64,
        l_outer: f64,
        c_gap: f64,
        z0: f64,
        l1: f64,
    ) -> Cx {
        let z = self.z_out(f, self.gamma(g, eps), l_outer, c_gap);
        let t = Cx::new(g.re * l1, g.im * l1).tanh();
        let z0 = Cx::new(z0, 0.0);
        z0 * (z + z0 * t) / (z0 + z * t)
    }

    /// The self-resonance between `lo` and `hi` Hz at the run's γ(f) `gamma` (found on
    /// permittivity `eps`): where Im Z at the output, through the run (`z0`, `l1`), first turns
    /// from positive to negative.
    #[allow(clippy::too_many_arguments)]
    pub fn find_self_resonance(
        &self,
        gamma: impl Fn(f64) -> Cx,
        eps: f64,
        lo: f64,
        hi: f64,
        l_outer: f64,
        c_gap: f64,
        z0: f64,
        l1: f64,
    ) -> Option<f64> {
        let im = |f: f64| {
            self.z_at_output(f, gamma(f), eps, l_outer, c_gap, z0, l1)
                .im
        };
        let n = ((hi / lo).log10() * 400.0).ceil().max(2.0) as usize;
        let fs: Vec<f64> = (0..=n)
            .map(|i| lo * (hi / lo).powf(i as f64 / n as f64))
            .collect();
        let k = (1..=n).find(|&k| im(fs[k - 1]) > 0.0 && im(fs[k]) <= 0.0)?;
        let (mut a, mut b) = (fs[k - 1], fs[k]);
        for _ in 0..60 {
            let m = (a * b).sqrt();
            if im(m) > 0.0 { a = m } else { b = m }
        }
        Some(b)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn g(f: f64) -> Cx {
        Cx::new(
            0.3 * (f / 1e9).sqrt(),
            2.0 * std::f64::consts::PI * f * 2.0 / C0,
        )
    }

    // One turn: the chain is the single loop's gap circuit, I = 1/(R_L + Z·tanh γl), the
    // winding's current also the load's.
    #[test]
    fn one_turn_is_the_single_loop() {
        let w = WindingResponse::new(1, 50.0, 4.0, &[], 0.0, vec![], 0.031);
        for f in [1e6, 1e8, 6e8, 2e9] {
            let (y, il) = w.drive(g(f), Cx::new(50.0, 0.0));
            let gl = Cx::new(g(f).re * 0.031, g(f).im * 0.031);
            let want = Cx::new(1.0, 0.0) / (Cx::new(50.0, 0.0) + Cx::new(50.0, 0.0) * gl.tanh());
            assert!(
                (y - want).abs() < 1e-12 * want.abs(),
                "{f}: {y:?} vs {want:?}"
            );
            assert!(
                (il - want).abs() < 1e-12 * want.abs(),
                "{f}: {il:?} vs {want:?}"
            );
        }
    }

    // Low frequency: an ideal 1 : N transformer, Y_Σ = N²/R_L and I_L = N/R_L; the probe's
    // impedance from its output is jω·(N²·L_out + L_w).
    #[test]
    fn low_frequency_is_an_ideal_transformer() {
        for n in [2u32, 3] {
            let secs = vec![0.07; n as usize - 1];
            let w = WindingResponse::new(n, 60.0, 4.0, &[], 0.0, secs, 0.03);
            let f = 1e5;
            let (y, il) = w.drive(g(f), Cx::new(50.0, 0.0));
            let nn = n as f64;
            assert!((y.re * 50.0 / (nn * nn) - 1.0).abs() < 1e-3, "{n}: {y:?}");
            assert!((il.re * 50.0 / nn - 1.0).abs() < 1e-3, "{n}: {il:?}");
            let l_out = 30e-9;
            let z = w.z_out(f, g(f), l_out, 0.3e-12);
            let l = z.im / (2.0 * std::f64::consts::PI * f);
            assert!((l / w.l_total(l_out) - 1.0).abs() < 1e-3, "{n}: {l} H");
        }
    }
}
