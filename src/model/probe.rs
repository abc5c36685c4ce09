//! Validated probe model: a loop shape on a stackup, with its construction settings.
//!
//! Size definition (printed everywhere): a round loop's size is the **mean diameter of the
//! trace centreline**; a square's is the **side of the trace centreline**; a rectangle's are
//! the **width × height of the trace centreline** (width across the axis, height along it).

use super::fab::FabProfile;
use super::stackup::{Stackup, load};
use crate::error::{Error, FieldError, check_positive, check_range};
use crate::spec::probe::{LoopSpec, ProbeFileSpec};
use std::path::Path;

pub use super::kind::{Electrode, ProbeKind, electrode_limits};
use super::kind::{electrode_shape, kind_from};

/// The loop's shape, by its trace centreline.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum LoopShape {
    /// Circle of mean diameter `diameter`.
    Round {
        /// Mean diameter of the trace centreline, mm.
        diameter: f64,
    },
    /// Rounded rectangle (a square when width = height) with a flat tip edge.
    Rect {
        /// Width across the axis, mm.
        width: f64,
        /// Height along the axis, mm.
        height: f64,
        /// Corner radius of the centreline, mm.
        corner_radius: f64,
        /// True when the spec said `square`.
        square: bool,
    },
}

impl LoopShape {
    /// `round`, `square` or `rectangle`.
    pub fn kind(&self) -> &'static str {
        match self {
            LoopShape::Round { .. } => "round",
            LoopShape::Rect { square: true, .. } => "square",
            LoopShape::Rect { .. } => "rectangle",
        }
    }

    /// The size as printed: "Ø10 mm mean" or "8 × 8 mm".
    pub fn size_text(&self) -> String {
        match *self {
            LoopShape::Round { diameter } => format!("{} mm mean diameter", num(diameter)),
            LoopShape::Rect { width, height, .. } => {
                format!("{} × {} mm centreline", num(width), num(height))
            }
        }
    }

    /// Short size tag for silkscreen ("D10", "S8", "12X6").
    pub fn size_tag(&self) -> String {
        match *self {
            LoopShape::Round { diameter } => format!("D{}", num(diameter)),
            LoopShape::Rect {
                width,
                square: true,
                ..
            } => format!("S{}", num(width)),
            LoopShape::Rect { width, height, .. } => format!("{}X{}", num(width), num(height)),
        }
    }

    /// Half the centreline's width across the axis, mm: where a balanced loop's side gaps sit.
    pub fn half_width(&self) -> f64 {
        match *self {
            LoopShape::Round { diameter } => diameter / 2.0,
            LoopShape::Rect { width, .. } => width / 2.0,
        }
    }

    /// The spec field that sets the loop's width across the axis (`width_mm` for a rectangle,
    /// `size_mm` for the others): what a refusal of too narrow a loop names.
    pub fn width_field(&self) -> &'static str {
        match self {
            LoopShape::Rect { square: false, .. } => "width_mm",
            _ => "size_mm",
        }
    }

    /// Smallest centreline dimension, mm.
    pub fn min_dimension(&self) -> f64 {
        match *self {
            LoopShape::Round { diameter } => diameter,
            LoopShape::Rect { width, height, .. } => width.min(height),
        }
    }

    /// Area enclosed by the trace centreline, mm².
    pub fn centreline_area(&self) -> f64 {
        match *self {
            LoopShape::Round { diameter } => std::f64::consts::PI * diameter * diameter / 4.0,
            LoopShape::Rect {
                width,
                height,
                corner_radius: r,
                ..
            } => width * height - (4.0 - std::f64::consts::PI) * r * r,
        }
    }

    /// Length of the trace centreline, mm.
    pub fn circumference(&self) -> f64 {
        match *self {
            LoopShape::Round { diameter } => std::f64::consts::PI * diameter,
            LoopShape::Rect {
                width,
                height,
                corner_radius: r,
                ..
            } => 2.0 * (width + height) - (8.0 - 2.0 * std::f64::consts::PI) * r,
        }
    }
}

/// Trims a number for labels: 10 → "10", 2.5 → "2.5".
pub fn num(v: f64) -> String {
    crate::math::trimmed(v, 3)
}

/// Via settings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Vias {
    /// Finished drill, mm.
    pub drill: f64,
    /// Pad diameter, mm.
    pub pad: f64,
    /// Pitch rule N (pitch ≤ λ/N).
    pub pitch_n: f64,
    /// Highest frequency of interest, Hz.
    pub f_max_hz: f64,
}

/// Handle settings (mm).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Handle {
    /// Length from the loop's shield to the board edge.
    pub length: f64,
    /// Width.
    pub width: f64,
}

/// Edge-launch connector footprint (mm).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Connector {
    /// Centre pad width.
    pub centre_pad_width: f64,
    /// Centre pad length.
    pub centre_pad_length: f64,
    /// Ground pad width.
    pub ground_pad_width: f64,
    /// Ground pad length.
    pub ground_pad_length: f64,
    /// Axis to ground-pad centre.
    pub ground_pad_offset: f64,
    /// Ground-leg hole drill (0 = none).
    pub ground_hole_drill: f64,
    /// Worst return loss the launch may have up to f_max, dB.
    pub return_loss_limit_db: f64,
    /// Refuse a build whose launch exceeds the limit (false: warn).
    pub refuse_above_limit: bool,
}

impl Connector {
    /// Generic edge-launch numbers of our own (not any maker's part): 0.8 × 3.0 mm centre pad,
    /// 1.5 × 3.0 mm ground pads at ±2.5 mm on top and bottom, no ground holes.
    pub const GENERIC: Connector = Connector {
        centre_pad_width: 0.8,
        centre_pad_length: 3.0,
        ground_pad_width: 1.5,
        ground_pad_length: 3.0,
        ground_pad_offset: 2.5,
        ground_hole_drill: 0.0,
        return_loss_limit_db: defaults::RETURN_LOSS_LIMIT_DB,
        refuse_above_limit: false,
    };

    /// The land round a ground-leg hole, mm: the ring rule's least pad with at least a 0.15 mm
    /// ring, never wider than the ground pad (the geometry flashes it on every layer).
    pub fn ground_hole_land(&self, fab: &FabProfile) -> f64 {
        (fab.ring_hole(self.ground_hole_drill, true) + 2.0 * fab.min_annular_ring.max(0.15))
            .min(self.ground_pad_width)
    }

    /// Least distance between the centres of a balanced loop's two connectors, mm: room for
    /// two coupling nuts side by side (an SMA nut is 5/16 in, 7.94 mm, across its flats: from
    /// memory; 9 mm leaves a finger's play, common practice with no source).
    pub const PAIR_PITCH_MIN: f64 = 9.0;

    /// Half the distance between a balanced loop's two connector centres, mm: the footprints
    /// side by side with the fab's least space between their ground pads, and never nearer
    /// than [`Self::PAIR_PITCH_MIN`].
    pub fn pair_half_pitch(&self, min_space: f64) -> f64 {
        0.5 * Self::PAIR_PITCH_MIN
            .max(2.0 * (self.ground_pad_offset + self.ground_pad_width / 2.0) + min_space)
    }

    /// The least handle width that holds a balanced loop's two connectors side by side inside
    /// the copper-to-edge pullback, mm.
    pub fn pair_handle_width(&self, fab: &FabProfile) -> f64 {
        2.0 * (self.pair_half_pitch(fab.min_space)
            + self.ground_pad_offset
            + self.ground_pad_width / 2.0
            + fab.copper_to_edge)
    }
}

/// What sets the loop trace's width.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum WidthFrom {
    /// The field solution of the probe's own cross-section when it differs from the closed
    /// form by more than [`WidthFrom::AUTO_THRESHOLD`], the closed form otherwise.
    Auto,
    /// Always the field solution.
    Field,
    /// Always the closed form.
    ClosedForm,
}

impl WidthFrom {
    /// The difference (fraction) above which `auto` takes the field solution: 1 %.
    pub const AUTO_THRESHOLD: f64 = 0.01;

    /// The spec's spelling.
    pub fn name(self) -> &'static str {
        match self {
            WidthFrom::Auto => "auto",
            WidthFrom::Field => "field",
            WidthFrom::ClosedForm => "closed-form",
        }
    }
}

/// One validated probe.
#[derive(Debug, Clone, PartialEq)]
pub struct Probe {
    /// Name as given.
    pub name: String,
    /// Folder-safe name.
    pub folder: String,
    /// What the probe is.
    pub kind: ProbeKind,
    /// Turns of the loop.
    pub turns: u32,
    /// Loop shape; an electric probe's is its electrode's disc (round, of the electrode's
    /// diameter), which names and sizes it in the outputs.
    pub shape: LoopShape,
    /// Stackup.
    pub stackup: Stackup,
    /// Copper layer of the loop trace (1 = top).
    pub signal_layer: usize,
    /// Target Z0, Ω.
    pub target_z0: f64,
    /// Trace to coplanar ground clearance, mm.
    pub clearance: f64,
    /// Shield gap width, mm.
    pub gap: f64,
    /// Vias.
    pub vias: Vias,
    /// Handle.
    pub handle: Handle,
    /// Connector.
    pub connector: Connector,
    /// Fab profile.
    pub fab: FabProfile,
    /// Mill the loop interior.
    pub mill_interior: bool,
    /// What sets the trace width.
    pub width_from: WidthFrom,
    /// Extra silkscreen text.
    pub silk_text: String,
}

impl Probe {
    /// The copper layers the loop's turns stand on, first (the signal layer, which the feed
    /// reaches) to last; one layer for a single turn and for other kinds.
    pub fn turn_layers(&self) -> std::ops::RangeInclusive<usize> {
        self.signal_layer..=self.signal_layer + self.turns.max(1) as usize - 1
    }

    /// The copper layer under the last turn: the winding's lower shield.
    pub fn shield_below(&self) -> usize {
        self.signal_layer + self.turns.max(1) as usize
    }

    /// What a loop is, as printed before its shape: `balanced `, `2-turn `, or nothing for a
    /// single-turn, singly-loaded loop.
    pub fn loop_label(&self) -> String {
        if self.kind == ProbeKind::Balanced {
            "balanced ".to_string()
        } else if self.turns > 1 {
            format!("{}-turn ", self.turns)
        } else {
            String::new()
        }
    }

    /// The shape of what senses, as printed: the loop's (`round`, `square`, `rectangle`), or
    /// `disc` for an electric probe's electrode.
    pub fn shape_name(&self) -> &'static str {
        match self.kind {
            ProbeKind::Loop | ProbeKind::Balanced => self.shape.kind(),
            ProbeKind::Electric(_) => "disc",
        }
    }

    /// The size as printed: the loop's, or the electrode's diameter and clearance.
    pub fn size_text(&self) -> String {
        match self.kind {
            ProbeKind::Loop | ProbeKind::Balanced => self.shape.size_text(),
            ProbeKind::Electric(e) => format!(
                "Ø{} mm disc, {} mm clearance",
                num(e.diameter),
                num(e.clearance)
            ),
        }
    }
}

/// A validated family: one or more probes sharing stackup, handle and connector.
#[derive(Debug, Clone, PartialEq)]
pub struct Family {
    /// Family name.
    pub name: String,
    /// Its probes, in spec order.
    pub probes: Vec<Probe>,
}

/// Default settings (documented in docs/probe-spec.md).
pub mod defaults {
    /// Worst return loss a launch may have up to f_max, dB (below 0: −20 dB means
    /// |S11| ≤ 0.1). Common practice for a launch that is "good enough" for EMC probing; no
    /// single source.
    pub const RETURN_LOSS_LIMIT_DB: f64 = -20.0;
    /// Target Z0, Ω.
    pub const TARGET_Z0: f64 = 50.0;
    /// Trace to coplanar ground clearance, mm.
    pub const CLEARANCE: f64 = 0.2;
    /// Shield gap, mm.
    pub const GAP: f64 = 0.4;
    /// Via drill, mm.
    pub const VIA_DRILL: f64 = 0.3;
    /// Via pad, mm.
    pub const VIA_PAD: f64 = 0.6;
    /// Pitch rule λ/N with N = 20 (common practice; 10 is the looser bound).
    pub const PITCH_N: f64 = 20.0;
    /// Highest frequency of interest, Hz.
    pub const F_MAX_HZ: f64 = 3e9;
    /// Handle length, mm.
    pub const HANDLE_LENGTH: f64 = 40.0;
    /// Handle width, mm.
    pub const HANDLE_WIDTH: f64 = 8.0;
}

pub use super::text::{
    NAME_MAX, SILK_SIGNS, SILK_TEXT_MAX, check_name_length, check_text, sanitise,
};

/// The loop shape of a `[[probe]]`; fields that do not apply to its shape are refused, and a
/// check that depends on a size the user gave wrongly is left out (its message would blame a
/// field that is not at fault).
fn shape_from(out: &mut Vec<FieldError>, p: &str, l: &LoopSpec) -> LoopShape {
    let given = [
        ("size_mm", l.size_mm),
        ("width_mm", l.width_mm),
        ("height_mm", l.height_mm),
        ("corner_radius_mm", l.corner_radius_mm),
    ];
    let takes: &[&str] = match l.shape.as_deref() {
        Some("round") => &["size_mm"],
        Some("square") => &["size_mm", "corner_radius_mm"],
        Some("rectangle") => &["width_mm", "height_mm", "corner_radius_mm"],
        _ => &["size_mm", "width_mm", "height_mm", "corner_radius_mm"],
    };
    for (field, set) in given {
        if let Some(v) = set
            && !takes.contains(&field)
        {
            out.push(FieldError::new(
                format!("{p}.{field}"),
                crate::math::fmt_num(v),
                format!(
                    "does not apply to a {} loop, which takes {}; remove it",
                    l.shape.as_deref().unwrap_or_default(),
                    takes.join(" and ")
                ),
            ));
        }
    }
    let before = out.len();
    let mut get = |field: &str, v: Option<f64>| -> f64 {
        match v {
            Some(v) => {
                check_positive(out, &format!("{p}.{field}"), v, 200.0);
                v
            }
            None => {
                out.push(FieldError::new(
                    format!("{p}.{field}"),
                    "(missing)",
                    "a size in mm, greater than 0 and at most 200",
                ));
                10.0
            }
        }
    };
    match l.shape.as_deref() {
        Some("round") => LoopShape::Round {
            diameter: get("size_mm", l.size_mm),
        },
        Some(kind @ ("square" | "rectangle")) => {
            let (w, h) = if kind == "square" {
                let s = get("size_mm", l.size_mm);
                (s, s)
            } else {
                (get("width_mm", l.width_mm), get("height_mm", l.height_mm))
            };
            let r = l.corner_radius_mm.unwrap_or(0.2 * w.min(h));
            // The radius's range follows from the sizes: checked only when they are sound.
            if out.len() == before {
                check_range(
                    out,
                    &format!("{p}.corner_radius_mm"),
                    r,
                    0.0,
                    0.5 * w.min(h),
                );
            }
            LoopShape::Rect {
                width: w,
                height: h,
                corner_radius: r,
                square: kind == "square",
            }
        }
        Some(other) => {
            out.push(FieldError::new(
                format!("{p}.shape"),
                format!("\"{other}\""),
                "must be \"round\", \"square\" or \"rectangle\"",
            ));
            LoopShape::Round { diameter: 10.0 }
        }
        None => {
            out.push(FieldError::new(
                format!("{p}.shape"),
                "(missing)",
                "\"round\", \"square\" or \"rectangle\"",
            ));
            LoopShape::Round { diameter: 10.0 }
        }
    }
}

/// Resolves a stackup name (built-in, or a file relative to `base`); problems go to `out` under
/// `field` (the spec's field path of the stackup).
pub fn stackup_from_spec(
    field: &str,
    name: &str,
    base: &Path,
    out: &mut Vec<FieldError>,
) -> Option<crate::model::stackup::Stackup> {
    let stackup = if super::stackup::builtin(name).is_some() {
        load(name)
    } else {
        load(&base.join(name).to_string_lossy())
    };
    match stackup {
        Ok(s) => Some(s),
        Err(Error::Invalid(v)) => {
            out.extend(v.into_iter().map(|e| e.prefixed(&format!("{field}: "))));
            None
        }
        Err(e) => {
            out.push(FieldError::new(field, name, e.to_string()));
            None
        }
    }
}

/// The copper-to-edge rule against the edge-launch connector, on a probe's handle or a
/// fixture's port: along the connector edge the pour is pulled back too and must still reach
/// under the ground pads to join them, and the line leaving the centre pad at its inner end
/// (the pad's length from the edge) must keep the rule (1 µm in hand for the artwork's
/// rounding).
pub fn edge_rule_fits_connector(
    connector: &Connector,
    fab: &FabProfile,
    out: &mut Vec<FieldError>,
) {
    let along = connector.ground_pad_length - fab.min_trace;
    if fab.copper_to_edge > along + 1e-9 {
        out.push(FieldError::new(
            "fab.copper_to_edge_mm",
            crate::math::fmt_num(fab.copper_to_edge),
            format!(
                "less than the connector's ground pads are long ({} mm, less the fab's least \
                 trace {} mm: at most {} mm), so that the pour pulled back from the connector \
                 edge still joins them",
                crate::math::fmt_num(connector.ground_pad_length),
                crate::math::fmt_num(fab.min_trace),
                crate::math::sig_fig(along.max(0.0), 3)
            ),
        ));
    }
    // A ground-leg hole's land is flashed on every layer, the inner ones too, where no pad
    // exempts it: it must keep the rule from the connector edge (the land as `geom` draws it).
    if connector.ground_hole_drill > 0.0 {
        let land = connector.ground_hole_land(fab);
        let room = (connector.ground_pad_length - land) / 2.0;
        if fab.copper_to_edge > room + 1e-9 {
            out.push(FieldError::new(
                "fab.copper_to_edge_mm",
                crate::math::fmt_num(fab.copper_to_edge),
                format!(
                    "at most {} mm with ground-leg holes: their {} mm lands, centred on the {} mm \
                     ground pads, are flashed on the inner layers too and must keep the rule \
                     from the connector edge (or leave out connector.ground_hole_drill_mm)",
                    crate::math::sig_fig(room.max(0.0), 3),
                    crate::math::sig_fig(land, 3),
                    crate::math::fmt_num(connector.ground_pad_length)
                ),
            ));
        }
    }
    let line_from = connector.centre_pad_length - 1e-3;
    if fab.copper_to_edge > line_from + 1e-9 {
        out.push(FieldError::new(
            "fab.copper_to_edge_mm",
            crate::math::fmt_num(fab.copper_to_edge),
            format!(
                "less than the connector's centre pad is long ({} mm: at most {} mm), so that \
                 the line leaving its inner end keeps the rule from the edge",
                crate::math::fmt_num(connector.centre_pad_length),
                crate::math::trimmed(line_from.max(0.0), 3)
            ),
        ));
    }
}

/// Validates a via spec (defaults: the probe defaults) against the fab profile.
pub fn vias_from_spec(
    spec: Option<&crate::spec::probe::ViaSpec>,
    fab: &FabProfile,
    out: &mut Vec<FieldError>,
) -> Vias {
    let v = spec.cloned().unwrap_or_default();
    let vias = Vias {
        drill: v.drill_mm.unwrap_or(defaults::VIA_DRILL),
        pad: v.pad_mm.unwrap_or(defaults::VIA_PAD),
        pitch_n: v.pitch_n.unwrap_or(defaults::PITCH_N),
        f_max_hz: v.f_max_hz.unwrap_or(defaults::F_MAX_HZ),
    };
    check_range(out, "via.drill_mm", vias.drill, fab.min_drill, 3.0);
    let min_pad = fab.min_pad(vias.drill);
    check_range(out, "via.pad_mm", vias.pad, min_pad, 5.0);
    check_range(out, "via.pitch_n", vias.pitch_n, 4.0, 100.0);
    check_range(out, "via.f_max_hz", vias.f_max_hz, 1e6, 1e11);
    vias
}

/// Validates a connector footprint spec (defaults: [`Connector::GENERIC`]) against the fab's
/// spacing and mask rules.
pub fn connector_from_spec(
    spec: Option<&crate::spec::probe::ConnectorSpec>,
    fab: &FabProfile,
    out: &mut Vec<FieldError>,
) -> Connector {
    let c = spec.cloned().unwrap_or_default();
    let g = Connector::GENERIC;
    let connector = Connector {
        centre_pad_width: c.centre_pad_width_mm.unwrap_or(g.centre_pad_width),
        centre_pad_length: c.centre_pad_length_mm.unwrap_or(g.centre_pad_length),
        ground_pad_width: c.ground_pad_width_mm.unwrap_or(g.ground_pad_width),
        ground_pad_length: c.ground_pad_length_mm.unwrap_or(g.ground_pad_length),
        ground_pad_offset: c.ground_pad_offset_mm.unwrap_or(g.ground_pad_offset),
        ground_hole_drill: c.ground_hole_drill_mm.unwrap_or(g.ground_hole_drill),
        return_loss_limit_db: c.return_loss_limit_db.unwrap_or(g.return_loss_limit_db),
        refuse_above_limit: c.refuse_above_limit.unwrap_or(g.refuse_above_limit),
    };
    for (f, v) in [
        ("centre_pad_width_mm", connector.centre_pad_width),
        ("centre_pad_length_mm", connector.centre_pad_length),
        ("ground_pad_width_mm", connector.ground_pad_width),
        ("ground_pad_length_mm", connector.ground_pad_length),
        ("ground_pad_offset_mm", connector.ground_pad_offset),
    ] {
        check_positive(out, &format!("connector.{f}"), v, 20.0);
    }
    check_range(
        out,
        "connector.return_loss_limit_db",
        connector.return_loss_limit_db,
        -60.0,
        -3.0,
    );
    // A ground-leg hole's pad is at most the ground pad's width: the ring rule (on its basis)
    // bounds the hole.
    let hole_max = (connector.ground_pad_width - fab.min_pad(0.0)).clamp(0.0, 3.0);
    check_range(
        out,
        "connector.ground_hole_drill_mm",
        connector.ground_hole_drill,
        0.0,
        hole_max,
    );
    let pad_gap = connector.ground_pad_offset
        - 0.5 * (connector.ground_pad_width + connector.centre_pad_width);
    if pad_gap < fab.min_space.max(2.0 * fab.mask_expansion + fab.mask_web) {
        out.push(FieldError::new(
            "connector.ground_pad_offset_mm",
            connector.ground_pad_offset,
            format!(
                "leaves {:.3} mm between centre and ground pads; needs at least {:.3} mm \
                 (fab space, or mask expansion on both pads plus the mask web)",
                pad_gap,
                fab.min_space.max(2.0 * fab.mask_expansion + fab.mask_web)
            ),
        ));
    }
    connector
}

/// Validates a probe file spec. `base` is the folder of the spec file (stackup paths are
/// relative to it). Every problem is reported, with its field path.
pub fn family_from_spec(spec: &ProbeFileSpec, base: &Path) -> Result<Family, Error> {
    let mut out = Vec::new();
    let stackup_name = spec
        .stackup
        .clone()
        .unwrap_or_else(|| "common-4l-1.6".into());
    let stackup = stackup_from_spec("stackup", &stackup_name, base, &mut out);
    // Read as a signed number so that a negative layer is refused here with its range, not by
    // the TOML reader as "expected usize".
    let signal_raw = spec.signal_layer.unwrap_or(2);
    let signal_layer = usize::try_from(signal_raw).unwrap_or(0);
    if let Some(st) = &stackup {
        let n = st.copper_count();
        if n < 3 {
            out.push(FieldError::new(
                "stackup",
                &stackup_name,
                format!("has {n} copper layers; a shielded probe needs at least 3"),
            ));
        } else if signal_raw < 2 || signal_raw > n as i64 - 1 {
            out.push(FieldError::new(
                "signal_layer",
                signal_raw,
                format!(
                    "must be an inner layer, 2 to {} (the trace needs a shield layer on each side)",
                    n - 1
                ),
            ));
        }
    }
    let target = spec.target_z0_ohms.unwrap_or(defaults::TARGET_Z0);
    check_range(&mut out, "target_z0_ohms", target, 10.0, 200.0);
    let fab = FabProfile::from_spec(spec.fab.as_ref(), &mut out);
    let clearance = spec.clearance_mm.unwrap_or(defaults::CLEARANCE);
    check_range(&mut out, "clearance_mm", clearance, fab.min_space, 5.0);
    let gap = spec.gap_mm.unwrap_or(defaults::GAP);
    check_range(&mut out, "gap_mm", gap, fab.min_space, 10.0);
    let vias = vias_from_spec(spec.via.as_ref(), &fab, &mut out);
    let h = spec.handle.clone().unwrap_or_default();
    let handle = Handle {
        length: h.length_mm.unwrap_or(defaults::HANDLE_LENGTH),
        width: h.width_mm.unwrap_or(defaults::HANDLE_WIDTH),
    };
    check_range(&mut out, "handle.length_mm", handle.length, 5.0, 300.0);
    check_range(&mut out, "handle.width_mm", handle.width, 2.0, 100.0);
    let connector = connector_from_spec(spec.connector.as_ref(), &fab, &mut out);
    if 2.0 * connector.ground_pad_offset + connector.ground_pad_width > handle.width {
        out.push(FieldError::new(
            "handle.width_mm",
            handle.width,
            format!(
                "must hold the connector's ground pads: at least {:.3} mm",
                2.0 * connector.ground_pad_offset + connector.ground_pad_width
            ),
        ));
    } else {
        // The copper is pulled back from the handle's long edges by the fab's rule; what is
        // left must still hold the ground pads (the coplanar ground beside the centre pad).
        let most =
            handle.width / 2.0 - connector.ground_pad_offset - connector.ground_pad_width / 2.0;
        edge_rule_fits_connector(&connector, &fab, &mut out);
        if fab.copper_to_edge > most + 1e-9 {
            out.push(FieldError::new(
                "fab.copper_to_edge_mm",
                crate::math::fmt_num(fab.copper_to_edge),
                format!(
                    "at most {} mm on a {} mm handle: the copper left between the pullbacks \
                     must hold the connector's ground pads ({} mm apart, {} mm wide); widen \
                     handle.width_mm or lower the rule",
                    crate::math::sig_fig(most.max(0.0), 3),
                    crate::math::fmt_num(handle.width),
                    crate::math::fmt_num(2.0 * connector.ground_pad_offset),
                    crate::math::fmt_num(connector.ground_pad_width)
                ),
            ));
        }
    }
    let mill_interior = spec.mill_interior.unwrap_or(false);
    let width_from = match spec.width_from.as_deref() {
        None | Some("auto") => WidthFrom::Auto,
        Some("field") => WidthFrom::Field,
        Some("closed-form") => WidthFrom::ClosedForm,
        Some(other) => {
            out.push(FieldError::new(
                "width_from",
                format!("\"{other}\""),
                "must be \"auto\", \"field\" or \"closed-form\"",
            ));
            WidthFrom::Auto
        }
    };
    if spec.probe.is_empty() {
        out.push(FieldError::new(
            "probe",
            "(none)",
            "at least one [[probe]] table with name, shape and size",
        ));
    }
    let mut probes = Vec::new();
    let mut folders: Vec<String> = Vec::new();
    for (i, l) in spec.probe.iter().enumerate() {
        let p = format!("probe[{}]", i + 1);
        let name = l.name.clone().unwrap_or_default();
        let folder = match sanitise(&name) {
            Some(f) => f,
            None => {
                out.push(FieldError::new(
                    format!("{p}.name"),
                    format!("\"{name}\""),
                    "a name with at least one letter or digit (it names the output folder)",
                ));
                String::new()
            }
        };
        check_name_length(&mut out, &format!("{p}.name"), &name, &folder);
        check_text(&mut out, &format!("{p}.name"), &name, true);
        if let Some(t) = &l.silk_text {
            check_text(&mut out, &format!("{p}.silk_text"), t, true);
            if t.chars().count() > SILK_TEXT_MAX {
                out.push(FieldError::new(
                    format!("{p}.silk_text"),
                    format!("{t:?}"),
                    format!("at most {SILK_TEXT_MAX} characters (it must fit the handle)"),
                ));
            }
        }
        // Folders that differ only in case are one folder on Windows and macOS.
        if let Some(other) = folders
            .iter()
            .find(|f| !folder.is_empty() && f.to_lowercase() == folder.to_lowercase())
        {
            out.push(FieldError::new(
                format!("{p}.name"),
                format!("\"{name}\""),
                if *other == folder {
                    format!("names the same output folder \"{folder}\" as an earlier probe")
                } else {
                    format!(
                        "names the output folder \"{folder}\", the same as an earlier probe's \
                         \"{other}\" where case is ignored (as on Windows and macOS)"
                    )
                },
            ));
        }
        folders.push(folder.clone());
        let (kind, turns) = kind_from(&mut out, &p, l, &fab, vias.pad);
        let before = out.len();
        let shape = match kind {
            ProbeKind::Electric(e) => electrode_shape(&mut out, &p, l, e),
            ProbeKind::Loop | ProbeKind::Balanced => shape_from(&mut out, &p, l),
        };
        // The gap's limit follows from the loop's size: checked only when the size is sound.
        if kind.is_loop() && out.len() == before && gap >= 0.5 * shape.min_dimension() {
            out.push(FieldError::new(
                "gap_mm",
                gap,
                format!(
                    "is too wide for {p} ({}): must be less than half the loop's smallest size",
                    shape.size_text()
                ),
            ));
        }
        // A multi-turn loop's turns stand on successive inner layers from the signal layer, with
        // a shield layer below the last.
        if let Some(st) = &stackup
            && turns > 1
            && signal_layer >= 2
            && signal_layer < st.copper_count()
            && signal_layer + turns as usize > st.copper_count()
        {
            let n = st.copper_count();
            let most = n - signal_layer;
            out.push(FieldError::new(
            format!("{p}.turns"),
            turns,
            format!(
                "needs {turns} successive inner layers from signal_layer = {signal_layer} and a \
                 shield layer below the last: '{}' has {n} copper layers, so {} from layer \
                 {signal_layer}{}",
                st.name(),
                if most == 1 {
                    "one turn".to_string()
                } else {
                    format!("at most {most} turns")
                },
                if n >= turns as usize + 2 {
                    format!(
                        " (signal_layer = 2 to {} takes {turns})",
                        n - turns as usize
                    )
                } else {
                    " (a stackup with more copper layers, such as the built-in common-6l-1.6, \
                     takes up to 3)"
                        .to_string()
                }
            ),
        ));
        }
        let silk_text = l.silk_text.clone().unwrap_or_default();
        if silk_text.chars().count() > 40 {
            out.push(FieldError::new(
                format!("{p}.silk_text"),
                format!("\"{silk_text}\""),
                "at most 40 characters",
            ));
        }
        // A probe's own handle width, where it needs another than the family's (a balanced
        // loop's two connectors side by side).
        let mut handle = handle;
        if let Some(w) = l.handle_width_mm {
            let field = format!("{p}.handle_width_mm");
            let least = 2.0 * connector.ground_pad_offset + connector.ground_pad_width;
            check_range(&mut out, &field, w, 2.0, 100.0);
            if w < least {
                out.push(FieldError::new(
                    field,
                    crate::math::fmt_num(w),
                    format!("must hold the connector's ground pads: at least {least:.3} mm"),
                ));
            }
            handle.width = w;
        }
        if kind == ProbeKind::Balanced && handle.width < connector.pair_handle_width(&fab) - 1e-9 {
            out.push(FieldError::new(
                if l.handle_width_mm.is_some() {
                    format!("{p}.handle_width_mm")
                } else {
                    "handle.width_mm".to_string()
                },
                crate::math::fmt_num(handle.width),
                format!(
                    "is too narrow for {p}, a balanced loop: its two connectors stand side by side \
                     {} mm apart, which needs a handle at least {} mm wide (set \
                     {p}.handle_width_mm)",
                    crate::math::sig_fig(2.0 * connector.pair_half_pitch(fab.min_space), 4),
                    crate::math::trimmed(
                        (connector.pair_handle_width(&fab) * 1000.0).ceil() / 1000.0,
                        3
                    )
                ),
            ));
        }
        if let Some(st) = &stackup {
            probes.push(Probe {
                name,
                folder,
                kind,
                turns,
                shape,
                stackup: st.clone(),
                signal_layer,
                target_z0: target,
                clearance,
                gap,
                vias,
                handle,
                connector,
                fab,
                mill_interior,
                width_from,
                silk_text,
            });
        }
    }
    let family = spec.family.clone().unwrap_or_else(|| {
        probes
            .first()
            .map(|p| p.name.clone())
            .unwrap_or_else(|| "probe".into())
    });
    // The family's own files sit beside the probe folders: a probe may not take their names.
    let fam = sanitise(&family).unwrap_or_else(|| "family".into());
    check_name_length(&mut out, "family", &family, &fam);
    check_text(&mut out, "family", &family, false);
    let own = [
        format!("{fam}-summary.md"),
        format!("{fam}-report.html"),
        crate::output::MANIFEST.to_string(),
    ];
    for (i, folder) in folders.iter().enumerate() {
        if let Some(f) = own
            .iter()
            .find(|f| f.to_lowercase() == folder.to_lowercase())
        {
            out.push(FieldError::new(
                format!("probe[{}].name", i + 1),
                format!("\"{}\"", spec.probe[i].name.clone().unwrap_or_default()),
                format!(
                    "names its folder \"{folder}\" like the family's own file {f}; choose \
                     another name"
                ),
            ));
        }
    }
    if !out.is_empty() {
        return Err(Error::Invalid(out));
    }
    Ok(Family {
        name: family,
        probes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sanitise_blocks_path_tricks() {
        assert_eq!(sanitise("../../x").as_deref(), Some("-..-x"));
        assert_eq!(sanitise("..").as_deref(), None);
        assert_eq!(sanitise("/").as_deref(), None);
        assert_eq!(sanitise("R10 mm").as_deref(), Some("R10-mm"));
        assert!(!sanitise("a/b\\c").unwrap().contains(['/', '\\']));
    }

    #[test]
    fn shape_measures() {
        let r = LoopShape::Round { diameter: 10.0 };
        assert!((r.centreline_area() - 78.539_816_339_744_83).abs() < 1e-9);
        let s = LoopShape::Rect {
            width: 8.0,
            height: 8.0,
            corner_radius: 0.0,
            square: true,
        };
        assert_eq!(s.centreline_area(), 64.0);
        assert_eq!(s.circumference(), 32.0);
    }
}
