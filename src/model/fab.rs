//! Fab capability profile: the limits every board is checked against.

use crate::error::{FieldError, check_range};
use crate::spec::probe::FabSpec;

/// What the fab can make (all mm).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FabProfile {
    /// Minimum trace width.
    pub min_trace: f64,
    /// Minimum copper-to-copper space.
    pub min_space: f64,
    /// Minimum finished drill.
    pub min_drill: f64,
    /// Minimum annular ring ((pad − drill)/2).
    pub min_annular_ring: f64,
    /// Minimum hole-edge to hole-edge distance.
    pub min_hole_gap: f64,
    /// Minimum copper to board edge (routed).
    pub copper_to_edge: f64,
    /// Solder-mask opening expansion per side.
    pub mask_expansion: f64,
    /// Minimum solder-mask web between openings.
    pub mask_web: f64,
    /// Silkscreen line width.
    pub silk_width: f64,
    /// Silkscreen text height.
    pub silk_text_height: f64,
    /// Silkscreen to pad-opening clearance.
    pub silk_to_pad: f64,
}

impl FabProfile {
    /// A generic "standard" 4-layer prototype process: typical published limits of standard
    /// processes (ranges compiled from several capability tables, no vendor): 0.127 mm trace and
    /// space, 0.3 mm drill, 0.125 mm annular ring, 0.25 mm hole gap, 0.3 mm copper to routed
    /// edge, 0.05 mm mask expansion, 0.1 mm mask web, 0.15 mm silk line, 1.0 mm text,
    /// 0.15 mm silk to pad. Common practice, not a standard.
    pub const STANDARD: FabProfile = FabProfile {
        min_trace: 0.127,
        min_space: 0.127,
        min_drill: 0.3,
        min_annular_ring: 0.125,
        min_hole_gap: 0.25,
        copper_to_edge: 0.3,
        mask_expansion: 0.05,
        mask_web: 0.1,
        silk_width: 0.15,
        silk_text_height: 1.0,
        silk_to_pad: 0.15,
    };

    /// The standard profile with the spec's overrides, checked.
    pub fn from_spec(spec: Option<&FabSpec>, out: &mut Vec<FieldError>) -> FabProfile {
        let mut p = FabProfile::STANDARD;
        let Some(s) = spec else { return p };
        let mut set = |field: &str, v: Option<f64>, target: &mut f64, lo: f64, hi: f64| {
            if let Some(v) = v {
                check_range(out, &format!("fab.{field}"), v, lo, hi);
                *target = v;
            }
        };
        set("min_trace_mm", s.min_trace_mm, &mut p.min_trace, 0.01, 5.0);
        set("min_space_mm", s.min_space_mm, &mut p.min_space, 0.01, 5.0);
        set("min_drill_mm", s.min_drill_mm, &mut p.min_drill, 0.05, 5.0);
        set(
            "min_annular_ring_mm",
            s.min_annular_ring_mm,
            &mut p.min_annular_ring,
            0.0,
            2.0,
        );
        set(
            "min_hole_gap_mm",
            s.min_hole_gap_mm,
            &mut p.min_hole_gap,
            0.0,
            5.0,
        );
        set(
            "copper_to_edge_mm",
            s.copper_to_edge_mm,
            &mut p.copper_to_edge,
            0.0,
            5.0,
        );
        set(
            "mask_expansion_mm",
            s.mask_expansion_mm,
            &mut p.mask_expansion,
            0.0,
            1.0,
        );
        set("mask_web_mm", s.mask_web_mm, &mut p.mask_web, 0.0, 2.0);
        set(
            "silk_width_mm",
            s.silk_width_mm,
            &mut p.silk_width,
            0.05,
            1.0,
        );
        set(
            "silk_text_height_mm",
            s.silk_text_height_mm,
            &mut p.silk_text_height,
            0.3,
            10.0,
        );
        set(
            "silk_to_pad_mm",
            s.silk_to_pad_mm,
            &mut p.silk_to_pad,
            0.0,
            2.0,
        );
        p
    }
}
