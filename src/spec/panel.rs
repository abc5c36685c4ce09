//! The `[panel]` table of a family spec: how the family's probes (and test-line fixtures on the
//! same stackup) are laid out on one fabrication panel. See `docs/panel.md`.

use serde::{Deserialize, Serialize};

/// The `[panel]` table.
#[derive(Debug, Clone, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct PanelSpec {
    /// Panel name; also names its output folder (default: the family's name with `-panel`).
    pub name: Option<String>,
    /// Test-line fixture specs (paths relative to this spec) to put on the panel; each must use
    /// the family's stackup.
    pub fixtures: Option<Vec<String>>,
    /// How many of each probe the panel carries (fixtures: one each).
    pub copies: Option<i64>,
    /// Largest panel the fab takes, along x, mm.
    pub max_width_mm: Option<f64>,
    /// Largest panel the fab takes, along y, mm.
    pub max_height_mm: Option<f64>,
    /// Rail width, mm.
    pub rail_mm: Option<f64>,
    /// Which sides carry a rail: `all` or `top-bottom`.
    pub rails: Option<String>,
    /// Space between boards, and between boards and rails, mm (default and least: the router
    /// bit's diameter, `fab.router_diameter_mm`).
    pub spacing_mm: Option<f64>,
    /// Three fiducials on the rails (default true).
    pub fiducials: Option<bool>,
    /// Tooling holes in the rails' corners, finished diameter, mm (0: none).
    pub tooling_hole_mm: Option<f64>,
    /// Breakaway tab width along the board edge, mm.
    pub tab_width_mm: Option<f64>,
    /// Perforation (break-out) hole diameter in each tab, mm.
    pub perforation_drill_mm: Option<f64>,
    /// Perforation hole pitch, mm.
    pub perforation_pitch_mm: Option<f64>,
}
