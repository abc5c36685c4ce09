//! The probe spec format (TOML): shared settings at the top level and one `[[probe]]` table per
//! loop. A single probe is a family of one. See `docs/probe-spec.md` for the commented format.

use serde::{Deserialize, Serialize};

/// A probe or family spec as written in a file. Every field is optional here; the model stage
/// applies defaults and reports every problem at once.
#[derive(Debug, Clone, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct ProbeFileSpec {
    /// Name of the family (used for the summary and report).
    pub family: Option<String>,
    /// Stackup: a built-in name or a path to a stackup TOML file (relative to the spec file).
    pub stackup: Option<String>,
    /// Copper layer carrying the loop trace, 1 = top; every other copper layer is shield.
    pub signal_layer: Option<i64>,
    /// Target characteristic impedance of the loop trace, Ω (default 50).
    pub target_z0_ohms: Option<f64>,
    /// Clearance from the trace to the coplanar ground on its layer, mm.
    pub clearance_mm: Option<f64>,
    /// Width of the shield gap at the apex, mm.
    pub gap_mm: Option<f64>,
    /// Stitching vias.
    pub via: Option<ViaSpec>,
    /// Handle (the straight part carrying the line to the connector).
    pub handle: Option<HandleSpec>,
    /// Coaxial edge-launch connector footprint.
    pub connector: Option<ConnectorSpec>,
    /// Fab capability profile: overrides of the built-in standard profile.
    pub fab: Option<FabSpec>,
    /// Mill out the laminate inside the loop (default false: keep it).
    pub mill_interior: Option<bool>,
    /// What sets the trace width: `auto` (the field solution of the probe's own cross-section
    /// when it differs from the closed form by more than 1 %), `field` or `closed-form`.
    pub width_from: Option<String>,
    /// The loops.
    #[serde(default)]
    pub probe: Vec<LoopSpec>,
    /// One fabrication panel of the family (and fixtures on its stackup).
    pub panel: Option<super::panel::PanelSpec>,
}

/// One loop of the family.
#[derive(Debug, Clone, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct LoopSpec {
    /// Probe name; also names its output folder (sanitised).
    pub name: Option<String>,
    /// `round`, `square` or `rectangle` (rectangle: flat tip edge).
    pub shape: Option<String>,
    /// Round: mean diameter of the trace centreline; square: side of the trace centreline, mm.
    pub size_mm: Option<f64>,
    /// Rectangle: width (across the axis) of the trace centreline, mm.
    pub width_mm: Option<f64>,
    /// Rectangle: height (along the axis) of the trace centreline, mm.
    pub height_mm: Option<f64>,
    /// Square and rectangle: corner radius of the trace centreline, mm.
    pub corner_radius_mm: Option<f64>,
    /// Extra silkscreen text (default: none).
    pub silk_text: Option<String>,
    /// What the probe is: `loop` (the default: a singly-loaded shielded loop), `balanced` (a
    /// doubly-loaded loop: a gap at each side, two lines, two connectors) or `electric` (an
    /// electric-field probe: a disc electrode at the tip).
    pub kind: Option<String>,
    /// This probe's handle width, mm, where it needs another than the family's `handle.width_mm`
    /// (a balanced loop's two connectors side by side).
    pub handle_width_mm: Option<f64>,
    /// Turns of the loop (default 1; more turns are planned and refused for now).
    pub turns: Option<i64>,
    /// Electric probe: diameter of the disc electrode on the outer layers, mm.
    pub electrode_diameter_mm: Option<f64>,
    /// Electric probe: how far every shield layer stands back from the electrode's edge, mm.
    pub electrode_clearance_mm: Option<f64>,
}

/// Stitching-via settings.
#[derive(Debug, Clone, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct ViaSpec {
    /// Finished drill diameter, mm.
    pub drill_mm: Option<f64>,
    /// Pad diameter, mm.
    pub pad_mm: Option<f64>,
    /// Pitch rule: at most λ/N in the dielectric at `f_max_hz`.
    pub pitch_n: Option<f64>,
    /// Highest frequency of interest for the pitch rule, Hz.
    pub f_max_hz: Option<f64>,
}

/// Handle settings.
#[derive(Debug, Clone, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct HandleSpec {
    /// Length from the loop's shield to the board edge at the connector, mm.
    pub length_mm: Option<f64>,
    /// Width, mm.
    pub width_mm: Option<f64>,
}

/// A generic coaxial edge-launch footprint (our own default numbers; check your connector's
/// data sheet).
#[derive(Debug, Clone, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct ConnectorSpec {
    /// Centre pad width (across), mm.
    pub centre_pad_width_mm: Option<f64>,
    /// Centre pad length (from the edge inward), mm.
    pub centre_pad_length_mm: Option<f64>,
    /// Ground pad width, mm.
    pub ground_pad_width_mm: Option<f64>,
    /// Ground pad length, mm.
    pub ground_pad_length_mm: Option<f64>,
    /// Centre-to-centre distance from the axis to each ground pad, mm.
    pub ground_pad_offset_mm: Option<f64>,
    /// Optional plated ground-leg holes through the ground pads: drill diameter, mm (0 = none).
    pub ground_hole_drill_mm: Option<f64>,
    /// Worst return loss the launch may have up to f_max, dB (default −20).
    pub return_loss_limit_db: Option<f64>,
    /// Refuse to build a probe whose launch exceeds the limit (default false: warn).
    pub refuse_above_limit: Option<bool>,
}

/// Fab capability overrides (mm).
#[derive(Debug, Clone, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct FabSpec {
    /// Minimum trace width.
    pub min_trace_mm: Option<f64>,
    /// Minimum copper-to-copper space.
    pub min_space_mm: Option<f64>,
    /// Minimum finished drill.
    pub min_drill_mm: Option<f64>,
    /// Minimum annular ring.
    pub min_annular_ring_mm: Option<f64>,
    /// Plating allowance: how much larger than finished a plated hole is drilled.
    pub drill_allowance_mm: Option<f64>,
    /// The hole the ring rule is measured from: `finished` (default) or `drilled`.
    pub annular_ring_basis: Option<String>,
    /// Minimum hole-edge to hole-edge distance.
    pub min_hole_gap_mm: Option<f64>,
    /// Minimum copper to board edge.
    pub copper_to_edge_mm: Option<f64>,
    /// Router bit diameter (internal outline corners are filleted to its radius).
    pub router_diameter_mm: Option<f64>,
    /// Solder-mask expansion per side.
    pub mask_expansion_mm: Option<f64>,
    /// Minimum solder-mask web between openings.
    pub mask_web_mm: Option<f64>,
    /// Silkscreen line width.
    pub silk_width_mm: Option<f64>,
    /// Silkscreen text height.
    pub silk_text_height_mm: Option<f64>,
    /// Silkscreen to pad-opening clearance.
    pub silk_to_pad_mm: Option<f64>,
    /// Surface finish: `enig` (default), `enepig`, `hasl-lead-free`, `immersion-silver`,
    /// `immersion-tin`, `osp`.
    pub finish: Option<String>,
    /// Solder-mask colour: `green` (default), `black`, `blue`, `red`, `white`, `yellow`,
    /// `purple`.
    pub mask_colour: Option<String>,
    /// Silkscreen colour: `white` (default), `black`, `yellow`.
    pub silk_colour: Option<String>,
    /// IPC-6012 performance class: 1, 2 (default) or 3.
    pub ipc_class: Option<f64>,
    /// Least glass-transition temperature of the laminate, °C (default 150).
    pub tg_c: Option<f64>,
}
