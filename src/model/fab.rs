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
    /// Minimum annular ring ((pad − hole)/2, the hole on [`FabProfile::ring_basis`]).
    pub min_annular_ring: f64,
    /// How much larger than its finished size a plated hole is drilled (plating allowance).
    pub drill_allowance: f64,
    /// Which hole the ring rule is measured from.
    pub ring_basis: RingBasis,
    /// Minimum hole-edge to hole-edge distance.
    pub min_hole_gap: f64,
    /// Minimum copper to board edge (routed).
    pub copper_to_edge: f64,
    /// Router bit diameter: internal corners of the outline are filleted to its radius, and a
    /// milled cut-out is at least this wide.
    pub router_diameter: f64,
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

/// The hole an annular-ring rule is measured from. Hole sizes in the spec and the drill files
/// are finished sizes; a fab drills plated holes larger by its plating allowance, and states
/// its ring minimum on one basis or the other.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RingBasis {
    /// The finished (plated) hole: the spec's and drill files' sizes.
    Finished,
    /// The drilled hole: finished size plus the drill allowance (plated holes only).
    Drilled,
}

impl RingBasis {
    /// The spec's name of the basis.
    pub fn name(self) -> &'static str {
        match self {
            RingBasis::Finished => "finished",
            RingBasis::Drilled => "drilled",
        }
    }
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
    /// The hole a ring round a `finished` hole is measured from under this profile's basis.
    pub fn ring_hole(&self, finished: f64, plated: bool) -> f64 {
        match self.ring_basis {
            RingBasis::Drilled if plated => finished + self.drill_allowance,
            _ => finished,
        }
    }

    /// The smallest pad round a plated `finished` hole that keeps the ring rule.
    pub fn min_pad(&self, finished: f64) -> f64 {
        self.ring_hole(finished, true) + 2.0 * self.min_annular_ring
    }

    /// One sentence stating the ring rule's basis and, for the least ring `ring_finished`
    /// measured from a finished plated hole, its value on both bases.
    pub fn ring_statement(&self, ring_finished: f64) -> String {
        format!(
            "Hole sizes are finished sizes; plated holes are drilled about {} mm larger. The \
             annular-ring rule ({} mm) is measured from the {} hole: the least ring on a plated \
             hole here is {} mm from the finished hole, {} mm from the drilled hole.",
            crate::math::fmt_num(self.drill_allowance),
            crate::math::fmt_num(self.min_annular_ring),
            self.ring_basis.name(),
            crate::math::trimmed(ring_finished, 3),
            crate::math::trimmed(ring_finished - self.drill_allowance / 2.0, 3)
        )
    }

    /// A generic "standard" 4-layer prototype process: typical published limits of standard
    /// processes (ranges compiled from several capability tables, no vendor): 0.127 mm trace and
    /// space, 0.3 mm drill, 0.125 mm annular ring from the finished hole with plated holes
    /// drilled 0.1 mm over size, 0.25 mm hole gap, 0.3 mm copper to routed
    /// edge, 2.0 mm router bit, 0.05 mm mask expansion, 0.1 mm mask web, 0.15 mm silk line,
    /// 1.0 mm text, 0.15 mm silk to pad. Common practice, not a standard.
    pub const STANDARD: FabProfile = FabProfile {
        min_trace: 0.127,
        min_space: 0.127,
        min_drill: 0.3,
        min_annular_ring: 0.125,
        drill_allowance: 0.1,
        ring_basis: RingBasis::Finished,
        min_hole_gap: 0.25,
        copper_to_edge: 0.3,
        router_diameter: 2.0,
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
            "router_diameter_mm",
            s.router_diameter_mm,
            &mut p.router_diameter,
            0.5,
            3.2,
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
        set(
            "drill_allowance_mm",
            s.drill_allowance_mm,
            &mut p.drill_allowance,
            0.0,
            0.3,
        );
        if let Some(b) = &s.annular_ring_basis {
            match b.trim().to_ascii_lowercase().as_str() {
                "finished" => p.ring_basis = RingBasis::Finished,
                "drilled" => p.ring_basis = RingBasis::Drilled,
                _ => out.push(FieldError::new(
                    "fab.annular_ring_basis",
                    format!("{b:?}"),
                    "finished or drilled (the hole the ring rule is measured from)",
                )),
            }
        }
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
