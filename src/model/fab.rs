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
    /// What the order states beside the limits: finish, colours, class, Tg.
    pub order: Order,
}

/// What a fab order states beside the geometric limits; written to the notes and the Gerber
/// job file.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Order {
    /// Surface finish (spec name, job-file name).
    pub finish: (&'static str, &'static str),
    /// Solder-mask colour (spec name, job-file name).
    pub mask_colour: (&'static str, &'static str),
    /// Silkscreen colour (spec name, job-file name).
    pub silk_colour: (&'static str, &'static str),
    /// IPC-6012 performance class (1, 2 or 3).
    pub ipc_class: u8,
    /// Least glass-transition temperature, °C.
    pub tg_c: f64,
}

/// Surface finishes: (spec name, the job file's name). ENIG is the default: flat pads for the
/// edge-launch connector and a surface that does not tarnish on a bench tool (common practice,
/// no source). The job-file names follow the Gerber job format's examples (from memory).
pub const FINISHES: [(&str, &str); 6] = [
    ("enig", "ENIG"),
    ("enepig", "ENEPIG"),
    ("hasl-lead-free", "HAL PbFree"),
    ("immersion-silver", "Immersion Ag"),
    ("immersion-tin", "Immersion Sn"),
    ("osp", "OSP"),
];

/// Solder-mask colours (spec name, job-file name).
pub const MASK_COLOURS: [(&str, &str); 7] = [
    ("green", "Green"),
    ("black", "Black"),
    ("blue", "Blue"),
    ("red", "Red"),
    ("white", "White"),
    ("yellow", "Yellow"),
    ("purple", "Purple"),
];

/// Silkscreen colours (spec name, job-file name).
pub const SILK_COLOURS: [(&str, &str); 3] =
    [("white", "White"), ("black", "Black"), ("yellow", "Yellow")];

impl Order {
    /// ENIG, green mask, white silkscreen, IPC-6012 class 2 (dedicated service, the usual class
    /// for test equipment; from memory), Tg ≥ 150 °C (a mid-Tg FR-4 that stands lead-free
    /// reflow; common practice, no source).
    pub const STANDARD: Order = Order {
        finish: FINISHES[0],
        mask_colour: MASK_COLOURS[0],
        silk_colour: SILK_COLOURS[0],
        ipc_class: 2,
        tg_c: 150.0,
    };
}

/// The entry of `table` named `v`, or an error listing the names.
fn pick(
    out: &mut Vec<FieldError>,
    field: &str,
    v: Option<&String>,
    table: &[(&'static str, &'static str)],
    default: (&'static str, &'static str),
) -> (&'static str, &'static str) {
    let Some(v) = v else { return default };
    match table
        .iter()
        .find(|(n, _)| *n == v.trim().to_ascii_lowercase())
    {
        Some(e) => *e,
        None => {
            out.push(FieldError::new(
                field,
                format!("{v:?}"),
                format!(
                    "one of {}",
                    table.iter().map(|(n, _)| *n).collect::<Vec<_>>().join(", ")
                ),
            ));
            default
        }
    }
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
        order: Order::STANDARD,
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
        let o = &mut p.order;
        o.finish = pick(out, "fab.finish", s.finish.as_ref(), &FINISHES, o.finish);
        o.mask_colour = pick(
            out,
            "fab.mask_colour",
            s.mask_colour.as_ref(),
            &MASK_COLOURS,
            o.mask_colour,
        );
        o.silk_colour = pick(
            out,
            "fab.silk_colour",
            s.silk_colour.as_ref(),
            &SILK_COLOURS,
            o.silk_colour,
        );
        if let Some(c) = s.ipc_class {
            if [1.0, 2.0, 3.0].contains(&c) {
                o.ipc_class = c as u8;
            } else {
                out.push(FieldError::new(
                    "fab.ipc_class",
                    crate::math::fmt_num(c),
                    "1, 2 or 3 (IPC-6012 performance class)",
                ));
            }
        }
        if let Some(t) = s.tg_c {
            check_range(out, "fab.tg_c", t, 100.0, 300.0);
            o.tg_c = t;
        }
        p
    }
}
