//! What a probe is (`kind`) and its turn count, read from a `[[probe]]`: the singly-loaded
//! loop, the balanced loop and the electric-field probe with its electrode's fields and
//! limits. Re-exported from `model::probe`.

use super::fab::FabProfile;
use super::probe::LoopShape;
use crate::error::FieldError;
use crate::spec::probe::LoopSpec;

/// What a probe is.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ProbeKind {
    /// A singly-loaded shielded loop: the trace runs round the turn inside the split shield and
    /// is shorted to it where the turn closes.
    Loop,
    /// An electric-field probe: the shielded line runs up the handle to a disc electrode at the
    /// tip, exposed on both outer layers and joined through the board by a via; every shield
    /// layer stands a clearance back from it. Held flat, the face round the electrode is the
    /// grounded plane of `physics::electrode`.
    Electric(Electrode),
    /// A doubly-loaded (balanced) shielded loop: the shield is split at both sides of the loop,
    /// midway along each half-turn (mirror images about the axis), and each gap has its own
    /// shielded 50 Ω line, shorted just past its gap, down the handle to its own connector;
    /// the two connectors stand side by side. The difference of the two outputs carries the
    /// magnetic response, their sum the electric one (`physics::balanced`).
    Balanced,
}

/// The electrode of an electric-field probe (mm).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Electrode {
    /// Diameter of the disc on the outer layers.
    pub diameter: f64,
    /// How far every shield layer stands back from the disc's edge.
    pub clearance: f64,
}

impl ProbeKind {
    /// The spec's spelling.
    pub fn name(self) -> &'static str {
        match self {
            ProbeKind::Loop => "loop",
            ProbeKind::Electric(_) => "electric",
            ProbeKind::Balanced => "balanced",
        }
    }

    /// True for the kinds that are loops (a shield ring round an opening).
    pub fn is_loop(self) -> bool {
        matches!(self, ProbeKind::Loop | ProbeKind::Balanced)
    }

    /// The electrode, for an electric probe.
    pub fn electrode(self) -> Option<Electrode> {
        match self {
            ProbeKind::Electric(e) => Some(e),
            ProbeKind::Loop | ProbeKind::Balanced => None,
        }
    }
}

/// Electrode defaults and limits (mm), documented in docs/probe-spec.md.
pub mod electrode_limits {
    /// Default clearance from the electrode to the shield, mm: the geometry the full-wave check
    /// of the electrode model ran on (`tests/data/electrode_fdtd.toml`).
    pub const CLEARANCE: f64 = 0.3;
    /// Largest electrode diameter, mm.
    pub const DIAMETER_MAX: f64 = 20.0;
    /// Largest clearance, mm.
    pub const CLEARANCE_MAX: f64 = 5.0;
    /// Largest clearance against the electrode's radius: the collecting radius r + c/2 is
    /// checked up to c/r = 0.6 (its planar analogue, 1.8 % short there and the shortfall
    /// growing faster than linearly; `tests/electrode.rs`).
    pub const CLEARANCE_PER_RADIUS_MAX: f64 = 0.6;
}

/// The kind and turn count of a `[[probe]]`: today's meaning when absent; the kinds and turn
/// counts that are planned but not built are refused with that reason. An electric probe's
/// electrode fields are read here (its diameter is required); a loop refuses them.
pub(super) fn kind_from(
    out: &mut Vec<FieldError>,
    p: &str,
    l: &LoopSpec,
    fab: &FabProfile,
    via_pad: f64,
) -> (ProbeKind, u32) {
    let electrode_fields = [
        ("electrode_diameter_mm", l.electrode_diameter_mm),
        ("electrode_clearance_mm", l.electrode_clearance_mm),
    ];
    let kind = match l.kind.as_deref() {
        k @ (None | Some("loop") | Some("balanced")) => {
            for (field, v) in electrode_fields {
                if let Some(v) = v {
                    out.push(FieldError::new(
                        format!("{p}.{field}"),
                        crate::math::fmt_num(v),
                        "applies only to kind = \"electric\"; remove it",
                    ));
                }
            }
            if k == Some("balanced") {
                ProbeKind::Balanced
            } else {
                ProbeKind::Loop
            }
        }
        Some("electric") => {
            let diameter = match l.electrode_diameter_mm {
                Some(d) => {
                    if !(d >= via_pad && d <= electrode_limits::DIAMETER_MAX) {
                        out.push(FieldError::new(
                            format!("{p}.electrode_diameter_mm"),
                            crate::math::fmt_num(d),
                            format!(
                                "must be at least the via pad ({} mm: the electrode's via lands \
                                 in it) and at most {} mm",
                                crate::math::fmt_num(via_pad),
                                electrode_limits::DIAMETER_MAX
                            ),
                        ));
                    }
                    d
                }
                None => {
                    out.push(FieldError::new(
                        format!("{p}.electrode_diameter_mm"),
                        "(missing)",
                        format!(
                            "an electric probe's electrode diameter in mm, at least the via pad \
                             ({}) and at most {}",
                            crate::math::fmt_num(via_pad),
                            electrode_limits::DIAMETER_MAX
                        ),
                    ));
                    1.0
                }
            };
            let most = electrode_limits::CLEARANCE_MAX
                .min(electrode_limits::CLEARANCE_PER_RADIUS_MAX * diameter / 2.0);
            let clearance = l
                .electrode_clearance_mm
                .unwrap_or(electrode_limits::CLEARANCE.min(most).max(fab.min_space));
            if !(clearance >= fab.min_space && clearance <= most + 1e-12) {
                out.push(FieldError::new(
                    format!("{p}.electrode_clearance_mm"),
                    crate::math::fmt_num(clearance),
                    format!(
                        "must be at least the fab's least space ({} mm) and at most {} mm: 0.6 of \
                         the electrode's radius, as far as its collecting radius (r + c/2) is \
                         checked, and never above {} mm{}",
                        crate::math::fmt_num(fab.min_space),
                        crate::math::sig_fig(most, 3),
                        electrode_limits::CLEARANCE_MAX,
                        if l.electrode_clearance_mm.is_none() {
                            " (the default, for this electrode)"
                        } else {
                            ""
                        }
                    ),
                ));
            }
            ProbeKind::Electric(Electrode {
                diameter,
                clearance,
            })
        }
        Some(k) => {
            out.push(FieldError::new(
                format!("{p}.kind"),
                format!("\"{k}\""),
                "must be \"loop\" (a singly-loaded shielded loop), \"balanced\" (a doubly-loaded \
                 loop with two outputs) or \"electric\" (an electric-field probe)",
            ));
            ProbeKind::Loop
        }
    };
    let electric = matches!(kind, ProbeKind::Electric(_));
    let turns = match l.turns {
        None | Some(1) => 1,
        Some(n) if electric => {
            out.push(FieldError::new(
                format!("{p}.turns"),
                n,
                "does not apply to an electric probe, which has no turn; remove it",
            ));
            1
        }
        Some(n @ (2 | 3)) if kind == ProbeKind::Balanced => {
            out.push(FieldError::new(
                format!("{p}.turns"),
                n,
                "must be 1 on a balanced loop (its two gaps and lines are built on one turn); \
                 2 or 3 turns are built on a singly-loaded loop (kind = \"loop\")",
            ));
            1
        }
        Some(n @ (2 | 3)) => n as u32,
        Some(n) => {
            out.push(FieldError::new(
                format!("{p}.turns"),
                n,
                "must be 1, 2 or 3 (the turns stand on successive inner layers from signal_layer)",
            ));
            1
        }
    };
    (kind, turns)
}

/// An electric probe's stand-in shape: its electrode's disc (round, of the electrode's
/// diameter), which names and sizes it in the outputs. Loop fields given to it are refused.
pub(super) fn electrode_shape(
    out: &mut Vec<FieldError>,
    p: &str,
    l: &LoopSpec,
    e: Electrode,
) -> LoopShape {
    let given = [
        ("shape", l.shape.as_ref().map(|s| format!("\"{s}\""))),
        ("size_mm", l.size_mm.map(crate::math::fmt_num)),
        ("width_mm", l.width_mm.map(crate::math::fmt_num)),
        ("height_mm", l.height_mm.map(crate::math::fmt_num)),
        (
            "corner_radius_mm",
            l.corner_radius_mm.map(crate::math::fmt_num),
        ),
    ];
    for (field, set) in given {
        if let Some(value) = set {
            out.push(FieldError::new(
                format!("{p}.{field}"),
                value,
                "does not apply to an electric probe, which takes electrode_diameter_mm and \
                 electrode_clearance_mm; remove it",
            ));
        }
    }
    LoopShape::Round {
        diameter: e.diameter,
    }
}
