//! Fabrication notes (Markdown): `probe` for probe boards, `fixture` for test-line fixtures,
//! and the tables and banner they share.

use crate::artwork::Artwork;
use crate::drc::Violation;
use crate::model::stackup::Layer;
use std::fmt::Write;

mod fixture;
mod panel;
mod probe;
pub use panel::panel_notes;

pub use fixture::fixture_notes;
pub use probe::{electric_predictions, launch_line, notes, predictions};

/// The stackup table (Markdown), top to bottom; `role` names what each copper layer carries.
pub fn stackup_table(
    stackup: &crate::model::stackup::Stackup,
    role: impl Fn(usize) -> &'static str,
) -> String {
    let mut o = String::new();
    let _ = writeln!(o, "## Stackup (top to bottom)\n");
    let _ = writeln!(o, "| layer | material | thickness (mm) | εr | tan δ |");
    let _ = writeln!(o, "|---|---|---|---|---|");
    if let Some(m) = stackup.mask_top() {
        let _ = writeln!(
            o,
            "| mask top | solder mask | {:.3} | {:.2} | |",
            m.thickness_mm, m.er
        );
    }
    let mut n = 0;
    for l in stackup.layers() {
        match l {
            Layer::Copper(c) => {
                n += 1;
                let role = role(n);
                let _ = writeln!(o, "| L{n} | copper ({role}) | {:.4} | | |", c.thickness_mm);
            }
            Layer::Dielectric(d) => {
                let _ = writeln!(
                    o,
                    "| | {} | {:.3} | {:.2} | {:.3} |",
                    d.name, d.thickness_mm, d.er, d.loss_tangent
                );
            }
        }
    }
    if let Some(m) = stackup.mask_bottom() {
        let _ = writeln!(
            o,
            "| mask bottom | solder mask | {:.3} | {:.2} | |",
            m.thickness_mm, m.er
        );
    }
    o
}

/// The drill table (Markdown) of an artwork, with the ring rule's basis under `fab`.
pub fn drill_table(art: &Artwork, fab: &crate::model::fab::FabProfile) -> String {
    let mut o = String::new();
    let _ = writeln!(o, "## Drill table\n");
    let _ = writeln!(o, "| finished Ø (mm) | plated | use | count |");
    let _ = writeln!(o, "|---|---|---|---|");
    let mut kinds: Vec<(String, bool, bool, usize)> = Vec::new();
    for d in &art.drills {
        let key = format!("{:.3}", d.d);
        if let Some(k) = kinds
            .iter_mut()
            .find(|k| k.0 == key && k.1 == d.plated && k.2 == d.via)
        {
            k.3 += 1;
        } else {
            kinds.push((key, d.plated, d.via, 1));
        }
    }
    for (dia, plated, via, count) in &kinds {
        let _ = writeln!(
            o,
            "| {dia} | {} | {} | {count} |",
            if *plated { "yes" } else { "no" },
            if *via {
                "via (tented)"
            } else {
                "connector ground leg"
            }
        );
    }
    // The least ring round a plated hole, from the finished size, over every pad on it.
    let least = art
        .drills
        .iter()
        .filter(|d| d.plated)
        .flat_map(|d| {
            art.pads_round(d)
                .map(|(_, f)| (f.shape.least_width() - d.d) / 2.0)
        })
        .fold(f64::INFINITY, f64::min);
    if least.is_finite() {
        let _ = writeln!(o, "\n{}", fab.ring_statement(least));
    }
    o
}

/// Heights (mm) of the fixture's field table.
pub const FIELD_TABLE_HEIGHTS_MM: [f64; 7] = [0.5, 1.0, 2.0, 3.0, 5.0, 10.0, 20.0];

/// The warning at the top of the notes of a board written past a failed design-rule check
/// (empty when the check passed).
pub(super) fn forced_banner(violations: &[Violation]) -> String {
    let mut o = String::new();
    if !violations.is_empty() {
        let _ = writeln!(
            o,
            "> **DESIGN-RULE CHECK FAILED — WRITTEN ANYWAY AT THE USER'S REQUEST.** \
             Do not order this board before the {} violation(s) below are resolved.\n",
            violations.len()
        );
        for v in violations {
            let _ = writeln!(o, "- {v}");
        }
        o.push('\n');
    }
    o
}

/// The order's finish, colours, class and Tg, and the connector pads' exemption from pullback,
/// as note lines.
pub fn order_lines(fab: &crate::model::fab::FabProfile) -> String {
    let o = &fab.order;
    format!(
        "- Finish {}; solder mask {}, silkscreen {}; IPC-6012 class {}; laminate Tg at least \
         {} °C (also in the job file)\n- **Connector pads reach the board edge on purpose** (an \
         edge-launch connector straddles it): exempt them from copper pullback; everywhere else \
         copper stays {} mm from the edge\n- Outline drawn for a {} mm router bit: internal \
         corners are filleted to its radius\n",
        o.finish.1,
        o.mask_colour.0,
        o.silk_colour.0,
        o.ipc_class,
        crate::math::fmt_num(o.tg_c),
        crate::math::fmt_num(fab.copper_to_edge),
        crate::math::fmt_num(fab.router_diameter)
    )
}
