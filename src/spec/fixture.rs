//! The test-line fixture spec format (TOML): a `[fixture]` table and the shared `[via]`,
//! `[connector]` and `[fab]` tables of the probe format. See `docs/fixture-spec.md`.

use super::probe::{ConnectorSpec, FabSpec, ViaSpec};
use serde::{Deserialize, Serialize};

/// A fixture spec file as written.
#[derive(Debug, Clone, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct FixtureFileSpec {
    /// The fixture itself.
    pub fixture: Option<FixtureSpec>,
    /// Stitching vias.
    pub via: Option<ViaSpec>,
    /// Coaxial edge-launch footprint (both ends).
    pub connector: Option<ConnectorSpec>,
    /// Fab capability overrides.
    pub fab: Option<FabSpec>,
}

/// The `[fixture]` table.
#[derive(Debug, Clone, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct FixtureSpec {
    /// Name; also names the output folder (sanitised).
    pub name: Option<String>,
    /// Stackup: a built-in name or a path to a stackup TOML file (relative to the spec file).
    pub stackup: Option<String>,
    /// Copper layer of the test line: an outer layer, 1 (top) or the last.
    pub line_layer: Option<i64>,
    /// `microstrip` (default; coated when the stackup has mask on that side) or `cpwg`.
    pub structure: Option<String>,
    /// Target Z0, Ω (default 50).
    pub target_z0_ohms: Option<f64>,
    /// Board length along the line, edge to edge, mm.
    pub length_mm: Option<f64>,
    /// Board width across the line, mm.
    pub width_mm: Option<f64>,
    /// Microstrip: distance from the line's edge to the ground pour on its layer, mm
    /// (default: three dielectric heights, and at least the line width).
    pub ground_keepout_mm: Option<f64>,
    /// Grounded coplanar: gap from the line's edge to the coplanar ground, mm.
    pub cpwg_gap_mm: Option<f64>,
    /// Extra silkscreen text.
    pub silk_text: Option<String>,
}
