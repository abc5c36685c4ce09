//! The validated panel: the `[panel]` table with its defaults applied and every field checked.
//!
//! Defaults are common practice for small-board panels, with no single source: 5 mm rails on
//! all four sides, three 1 mm fiducials, 2 mm tooling holes, 3 mm breakaway tabs perforated
//! with 0.5 mm holes, boards one router bit apart.

use crate::error::{Error, FieldError, check_range};
use crate::model::fab::FabProfile;
use crate::spec::panel::PanelSpec;

/// Which sides of the panel carry a rail.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Rails {
    /// All four sides.
    All,
    /// Top and bottom only (the boards' outer sides reach the panel's routed edge).
    TopBottom,
}

impl Rails {
    /// The spec's name.
    pub fn name(self) -> &'static str {
        match self {
            Rails::All => "all",
            Rails::TopBottom => "top-bottom",
        }
    }
}

/// A panel's settings, all mm.
#[derive(Debug, Clone, PartialEq)]
pub struct Panel {
    /// Name.
    pub name: String,
    /// Output folder name (sanitised).
    pub folder: String,
    /// Fixture spec paths, as written (relative to the family spec).
    pub fixtures: Vec<String>,
    /// Copies of each probe.
    pub copies: usize,
    /// Largest panel size (x, y).
    pub max_size: (f64, f64),
    /// Rail width.
    pub rail: f64,
    /// Rail sides.
    pub rails: Rails,
    /// Board spacing (≥ the router bit).
    pub spacing: f64,
    /// Router bit diameter (from the family's fab profile).
    pub router: f64,
    /// Fiducials on.
    pub fiducials: bool,
    /// Tooling hole diameter (0: none).
    pub tooling_hole: f64,
    /// Tab width.
    pub tab_width: f64,
    /// Perforation hole diameter.
    pub perforation_drill: f64,
    /// Perforation pitch.
    pub perforation_pitch: f64,
}

/// Defaults (common practice, no source).
pub mod defaults {
    /// Largest panel, mm (many prototype fabs take up to about 250 × 200 mm at their base
    /// price).
    pub const MAX_SIZE: (f64, f64) = (250.0, 200.0);
    /// Rail width, mm.
    pub const RAIL: f64 = 5.0;
    /// Tooling hole, mm.
    pub const TOOLING_HOLE: f64 = 2.0;
    /// Tab width, mm.
    pub const TAB_WIDTH: f64 = 3.0;
    /// Perforation hole, mm.
    pub const PERFORATION_DRILL: f64 = 0.5;
    /// Perforation pitch, mm.
    pub const PERFORATION_PITCH: f64 = 0.8;
    /// Fiducial copper dot, mm.
    pub const FIDUCIAL_DOT: f64 = 1.0;
    /// Fiducial solder-mask opening, mm (twice the dot).
    pub const FIDUCIAL_OPENING: f64 = 2.0;
    /// Fiducial copper-free area, mm (three times the dot).
    pub const FIDUCIAL_CLEAR: f64 = 3.0;
    /// The least web between perforation holes, mm.
    pub const PERFORATION_WEB: f64 = 0.2;
}

/// Validates a `[panel]` table against the family's fab profile; `family` names the default.
pub fn panel_from_spec(s: &PanelSpec, family: &str, fab: &FabProfile) -> Result<Panel, Error> {
    let mut out: Vec<FieldError> = Vec::new();
    let name = s.name.clone().unwrap_or_else(|| format!("{family}-panel"));
    let folder = crate::model::text::sanitise(&name).unwrap_or_default();
    if folder.is_empty() {
        out.push(FieldError::new(
            "panel.name",
            &name,
            "must contain a letter or digit (it names the panel's folder)",
        ));
    }
    let copies = s.copies.unwrap_or(1);
    if !(1..=20).contains(&copies) {
        out.push(FieldError::new(
            "panel.copies",
            copies,
            "must be a whole number from 1 to 20",
        ));
    }
    let num = |v: Option<f64>, d: f64| v.unwrap_or(d);
    let mut range = |field: &str, v: f64, lo: f64, hi: f64| {
        check_range(&mut out, &format!("panel.{field}"), v, lo, hi);
        v
    };
    let max_w = range(
        "max_width_mm",
        num(s.max_width_mm, defaults::MAX_SIZE.0),
        20.0,
        1000.0,
    );
    let max_h = range(
        "max_height_mm",
        num(s.max_height_mm, defaults::MAX_SIZE.1),
        20.0,
        1000.0,
    );
    let rail = range("rail_mm", num(s.rail_mm, defaults::RAIL), 3.0, 30.0);
    let router = fab.router_diameter;
    let spacing = range("spacing_mm", num(s.spacing_mm, router), router, 50.0);
    let tooling_hole = num(s.tooling_hole_mm, defaults::TOOLING_HOLE);
    if tooling_hole != 0.0 {
        range("tooling_hole_mm", tooling_hole, 1.0, 4.0);
    }
    let tab_width = range(
        "tab_width_mm",
        num(s.tab_width_mm, defaults::TAB_WIDTH),
        1.5,
        10.0,
    );
    let perforation_drill = range(
        "perforation_drill_mm",
        num(s.perforation_drill_mm, defaults::PERFORATION_DRILL),
        fab.min_drill.max(0.2),
        1.0,
    );
    let perforation_pitch = range(
        "perforation_pitch_mm",
        num(s.perforation_pitch_mm, defaults::PERFORATION_PITCH),
        0.3,
        2.0,
    );
    let rails = match s.rails.as_deref().unwrap_or("all") {
        "all" => Rails::All,
        "top-bottom" => Rails::TopBottom,
        other => {
            out.push(FieldError::new(
                "panel.rails",
                other,
                "must be `all` or `top-bottom`",
            ));
            Rails::All
        }
    };
    // A rail must hold its tooling hole and its fiducial's copper-free area with a router
    // bit's edge clearance on both sides.
    let held = tooling_hole.max(defaults::FIDUCIAL_CLEAR) + 2.0 * fab.copper_to_edge;
    if rail.is_finite() && rail < held {
        out.push(FieldError::new(
            "panel.rail_mm",
            crate::math::fmt_num(rail),
            format!(
                "must be at least {} mm: the tooling hole or fiducial area ({} mm) and the \
                 copper-to-edge clearance on both sides",
                crate::math::fmt_num(held),
                crate::math::fmt_num(tooling_hole.max(defaults::FIDUCIAL_CLEAR))
            ),
        ));
    }
    if perforation_pitch.is_finite()
        && perforation_drill.is_finite()
        && perforation_pitch < perforation_drill + defaults::PERFORATION_WEB
    {
        out.push(FieldError::new(
            "panel.perforation_pitch_mm",
            crate::math::fmt_num(perforation_pitch),
            format!(
                "must be at least the perforation drill plus a {} mm web ({} mm)",
                defaults::PERFORATION_WEB,
                crate::math::fmt_num(perforation_drill + defaults::PERFORATION_WEB)
            ),
        ));
    }
    if tab_width.is_finite() && perforation_drill.is_finite() && tab_width < 2.0 * perforation_drill
    {
        out.push(FieldError::new(
            "panel.tab_width_mm",
            crate::math::fmt_num(tab_width),
            format!(
                "must hold at least two perforation holes ({} mm or more)",
                crate::math::fmt_num(2.0 * perforation_drill)
            ),
        ));
    }
    let fixtures = s.fixtures.clone().unwrap_or_default();
    if fixtures.len() > 8 {
        out.push(FieldError::new(
            "panel.fixtures",
            fixtures.len(),
            "must list at most 8 fixture specs",
        ));
    }
    if !out.is_empty() {
        return Err(Error::Invalid(out));
    }
    Ok(Panel {
        name,
        folder,
        fixtures,
        copies: copies as usize,
        max_size: (max_w, max_h),
        rail,
        rails,
        spacing,
        router,
        fiducials: s.fiducials.unwrap_or(true),
        tooling_hole,
        tab_width,
        perforation_drill,
        perforation_pitch,
    })
}
