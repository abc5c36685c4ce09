//! A probe with its solved values and predicted response, and the modelling assumptions stated
//! with every prediction (library side: the command line, the notes and the report share them).

use crate::model::probe::Probe;
use crate::physics::Response;
use crate::physics::electric_probe::ElectricResponse;
use crate::solve::probe::SolvedProbe;

/// The modelling assumptions, stated with every prediction.
pub const ASSUMPTIONS: [&str; 7] = [
    "quasi-static: the loop is electrically small below the upper usable frequency; no \
     radiation. The electric field is ideally rejected by symmetry when it lies along the \
     loop's axis (the residual is not predicted); \
     across the axis the loop responds like a short dipole, 2ka·(E/H)/η0 relative to its \
     magnetic response (the E-rejection, given for the worst orientation)",
    "probe factor referred to a uniform field normal to the loop (equivalently the average over \
     the effective loop), into a 50 Ω load; H[dBµA/m] = V[dBµV] + PF[dB(S/m)]",
    "shield: a perfect conductor whose outer current is solved over every copper layer of the \
     ring (thin plates, equal flux linkage) and where it gathers to cross the gap: it gives the \
     effective area and the outer-loop inductance; via walls, the handle junction and (for \
     non-round loops) the corners' own crowding are approximated. In a uniform field the \
     handle's shield diverts flux through the ring: its share is solved on a thin sheet of the \
     outline and applied as a ratio (full-wave checks with a 40 mm handle: +1.67 dB measured, \
     +1.84 dB modelled on a 5 mm loop, so its factor reads about 0.2 dB low; +0.85 and \
     +0.89 dB on a 10 mm loop); a test line's field is taken not to reach the handle",
    "inner line: a shorted stub from the gap to the short (half the turn) and a matched run to \
     the output, with conductor loss (smooth copper, Wheeler's rule) and dielectric loss",
    "gap capacitance: 2-D field solution across the gap, the plates straight for a quarter \
     turn each side (about 20 % below a full-wave check); the trace crossing the gap left out. \
     A uniform field rings up the loop–gap resonance; a trace or test line under the tip is \
     taken not to (the capacitance in the gap's impedance only): a full-wave check bears that \
     out on a 5 mm loop but not on a 10 mm one, up to about 0.6 dB at the top of its band",
    "coupling and resolution: a thin trace over a perfect plane (image theory), loop plane \
     vertical and containing the trace's axis, tip at the stated height",
    "near-field readings locate and rank sources; they do not predict a compliance result",
];

/// What differs for a balanced loop, stated after [`ASSUMPTIONS`] wherever one is predicted.
pub const BALANCED_ASSUMPTIONS: [&str; 3] = [
    "balanced loop: two gaps, at the sides, each loaded by its own line (a stub of about a \
     millimetre to its short, a matched run to its output); its two outputs read through an \
     ideal 180° hybrid, Δ = (a − b)/√2 (its probe factor; its E-rejection is not predicted, \
     null in the JSON) and Σ = (a + b)/√2 \
     (its electric factor, for a uniform field along the axis); Δ holds no electric pickup to \
     first order and Σ no magnetic one (NEC-2: both loads 70 dB or more below the magnetic \
     response in a field across the axis)",
    "balanced loop, Σ: the thin ring's mode-1 charge with the ring's equivalent radius taken as \
     a quarter of its width plus the board's thickness (NEC-2 reads 0.35–0.55 dB above it on the \
     demo's shield in the band); the shield's correction at a gap taken once per gap, solved for \
     an apex gap; the handle's share of a uniform field solved on the sheet with the two side \
     gaps (no full-wave check of it on a balanced loop)",
    "balanced loop, calibration: from a 3-port file (line in, both outputs), the outputs' \
     difference (S(a, l) − S(b, l))/√2 is calibrated as the probe's output against Δ's \
     prediction; the sum's share of the line's coupling is reported, not predicted",
];

/// What differs for a multi-turn loop, stated after [`ASSUMPTIONS`] wherever one is predicted.
pub const WINDING_ASSUMPTIONS: [&str; 3] = [
    "multi-turn loop: the turns stacked on successive inner layers inside the one shield, each \
     passing the one gap; each pass sees the gap's voltage in series and the shield's outer \
     current is the passes' sum (a 1 : N transformer at low frequency: N times a single turn's \
     output below the corner, 1/N above it, the corner about N² lower); in place of the single \
     stub above, the winding is a chain of \
     lines of the stacked turns' common-mode impedance per turn (2-D field solution of the \
     ring's cross-section), a source at each pass, the run to the output matched",
    "multi-turn loop: neighbouring turns stand one gap voltage apart all along the ring, so \
     their capacitance (2-D field solution, the turns stacked over the whole ring) sits across \
     the gap beside the gap's own; the self-resonance is where the probe's impedance at its \
     connector (through the run and handle) turns capacitive, which is conservative for a long \
     handle (a matched run does not itself limit the response into 50 Ω); the error budget adds a ±5 % winding length and a ±10 % \
     turn-to-turn capacitance (our estimate) to the electric pickup",
    "multi-turn loop: a full-wave check (FDTD, a 10 mm loop with one turn and with two) finds \
     the inductance at the output 3 % low and the first resonance 15–16 % high for both, the \
     two turns' change from one within 1 %: the band ends 1.2 times below the predicted \
     self-resonance; the run's part on the ring stacked over the other turns, and the \
     differential modes between turns beyond their capacitance, are left out",
];

/// The electric probe's modelling assumptions, stated with its predictions.
pub const ELECTRIC_ASSUMPTIONS: [&str; 5] = [
    "quasi-static: the electrode and its face are small against the wavelength below the upper \
     usable frequency; the line to the connector is matched, so the load is 50 Ω; the line's \
     loss and the connector launch are left out (a loop's factor includes the feed's loss)",
    "the probe held flat: its outer copper is a grounded plane of unlimited width facing the \
     field, the electrode a disc set into it; the clearance widens the collecting radius by half \
     of itself (a full-wave check of a tip-sized face: 0.9 % above it at the tested geometry)",
    "electric probe factor referred to the field normal to the face over the electrode, into \
     50 Ω: E[dBµV/m] = V[dBµV] + factor[dB(1/m)]",
    "self-capacitance: each face's disc edge as the coplanar gap of a coplanar waveguide (an \
     estimate; the via and the inner layers' clearance left out): it sets the corner only",
    "coupling and resolution: a 50 Ω microstrip on εr 4.3 at the stated height over its plane, \
     the face at the stated height above its copper, solved in 2-D across the trace (the \
     electrode short against the trace's length)",
];

/// A probe with its solved values and prediction.
pub struct Predicted {
    /// The probe.
    pub probe: Probe,
    /// Its solved values.
    pub solved: SolvedProbe,
    /// Its response.
    pub response: ProbeResponse,
}

/// What a probe measures, by its kind.
#[derive(Debug, Clone, PartialEq)]
pub enum ProbeResponse {
    /// A loop's magnetic response.
    Loop(Box<Response>),
    /// An electric probe's.
    Electric(Box<ElectricResponse>),
}

impl ProbeResponse {
    /// A loop's response.
    pub fn as_loop(&self) -> Option<&Response> {
        match self {
            ProbeResponse::Loop(r) => Some(r),
            ProbeResponse::Electric(_) => None,
        }
    }

    /// An electric probe's response.
    pub fn as_electric(&self) -> Option<&ElectricResponse> {
        match self {
            ProbeResponse::Electric(r) => Some(r),
            ProbeResponse::Loop(_) => None,
        }
    }

    /// The upper usable frequency, Hz.
    pub fn upper_hz(&self) -> f64 {
        match self {
            ProbeResponse::Loop(r) => r.upper_hz,
            ProbeResponse::Electric(r) => r.upper_hz,
        }
    }
}

/// Predicts what a probe of any kind measures.
pub fn predict_any(
    p: &Probe,
    s: &SolvedProbe,
    o: &crate::physics::PredictOptions,
) -> Result<ProbeResponse, crate::error::Error> {
    Ok(match p.kind {
        crate::model::probe::ProbeKind::Loop | crate::model::probe::ProbeKind::Balanced => {
            ProbeResponse::Loop(Box::new(crate::physics::predict(p, s, o)?))
        }
        crate::model::probe::ProbeKind::Electric(_) => {
            ProbeResponse::Electric(Box::new(crate::physics::electric_probe::predict(p, s, o)?))
        }
    })
}
