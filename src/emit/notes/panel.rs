//! The panel notes: the board list with offsets and impedance requirements, the
//! panelisation, the panel's design-rule check, the files and the cautions.

use std::fmt::Write;

/// The panel notes (Markdown).
#[allow(clippy::too_many_arguments)]
pub fn panel_notes(
    p: &crate::model::panel::Panel,
    lay: &crate::geom::panel::PanelLayout,
    names: &[String],
    kinds: &[String],
    stackup: &crate::model::stackup::Stackup,
    fab: &crate::model::fab::FabProfile,
    violations: &[crate::drc::PanelViolation],
    files: &[String],
) -> String {
    let n = crate::math::fmt_num;
    let mut o = String::new();
    let _ = writeln!(o, "# Panel notes: {}\n", p.name);
    let _ = writeln!(
        o,
        "Panel {:.3} × {:.3} mm, {} copper layers on stackup `{}` ({:.3} mm), {} boards. Every \
         board is placed unrotated: its own files and its place here differ by the offset \
         below. Order: {} finish, {} solder mask, {} legend, IPC-6012 class {}, Tg ≥ {} °C; \
         impedance controlled (requirements per board below).\n",
        lay.size.0,
        lay.size.1,
        stackup.copper_count(),
        stackup.name(),
        stackup.thickness_mm(),
        names.len(),
        fab.order.finish.1,
        fab.order.mask_colour.1,
        fab.order.silk_colour.1,
        fab.order.ipc_class,
        n(fab.order.tg_c)
    );
    let _ = writeln!(o, "## Boards\n");
    let _ = writeln!(
        o,
        "| board | offset x, y (mm) | tabs | what, impedance requirement |"
    );
    let _ = writeln!(o, "|---|---|---|---|");
    for ((pl, name), kind) in lay.placed.iter().zip(names).zip(kinds) {
        let _ = writeln!(
            o,
            "| {name} | {:.6}, {:.6} | {} | {kind} |",
            pl.offset.x,
            pl.offset.y,
            pl.tabs.len()
        );
    }
    // Counts per design (copies share a name before their copy number).
    let mut counts: Vec<(String, usize)> = Vec::new();
    for (name, kind) in names.iter().zip(kinds) {
        let design = kind.split(',').next().unwrap_or("");
        let key = format!(
            "{design} {}",
            name.rsplit_once('-')
                .filter(|(_, k)| k.parse::<usize>().is_ok() && p.copies > 1)
                .map_or(name.as_str(), |(b, _)| b)
        );
        match counts.iter_mut().find(|c| c.0 == key) {
            Some(c) => c.1 += 1,
            None => counts.push((key, 1)),
        }
    }
    let _ = writeln!(
        o,
        "\nCounts: {}.",
        counts
            .iter()
            .map(|(k, c)| format!("{c} × {k}"))
            .collect::<Vec<_>>()
            .join(", ")
    );
    let _ = writeln!(
        o,
        "\nEach board's nets keep their names with the board's name in front \
         (`FM-R20/PROBE`): boards on a panel are not connected to each other. The fiducials \
         are not connected (`N/C`)."
    );
    let _ = writeln!(o, "\n## Panelisation\n");
    let _ = writeln!(
        o,
        "- Rails {} mm on {} sides; boards {} mm apart and from the rails; router bit {} mm \
         (every board edge is routed but for its tabs; the profile file shows the panel's \
         edge and the routed board edges, broken where the tabs are).",
        n(p.rail),
        p.rails.name(),
        n(p.spacing),
        n(p.router)
    );
    if !lay.pockets.is_empty() {
        let _ = writeln!(
            o,
            "- Waste enclosed by the routing on every side is milled out as a pocket, so that \
             nothing comes loose: {} pocket(s), at {}.",
            lay.pockets.len(),
            lay.pockets
                .iter()
                .filter_map(geo::InteriorPoint::interior_point)
                .map(|q| format!("({:.1}, {:.1})", q.x(), q.y()))
                .collect::<Vec<_>>()
                .join(", ")
        );
    }
    let _ = writeln!(
        o,
        "- Breakaway tabs {} mm wide across the router's channel, perforated by {} mm \
         non-plated holes at {} mm pitch, the row just outside the board's edge (each hole \
         touching it): file the nubs flush after breaking. Tabs sit on straight board edges \
         only, never on a probe's loop or near a connector edge; at least two per board.",
        n(p.tab_width),
        n(p.perforation_drill),
        n(p.perforation_pitch)
    );
    if !lay.fiducials.is_empty() {
        let _ = writeln!(
            o,
            "- Fiducials: {} mm copper dots on both outer layers, {} mm mask opening, {} mm \
             clear of copper, at {}.",
            n(crate::model::panel::defaults::FIDUCIAL_DOT),
            n(crate::model::panel::defaults::FIDUCIAL_OPENING),
            n(crate::model::panel::defaults::FIDUCIAL_CLEAR),
            lay.fiducials
                .iter()
                .map(|f| format!("({:.3}, {:.3})", f.x, f.y))
                .collect::<Vec<_>>()
                .join(", ")
        );
    }
    if !lay.tooling.is_empty() {
        let _ = writeln!(
            o,
            "- Tooling holes: {} mm non-plated in the rails' corners.",
            n(p.tooling_hole)
        );
    }
    let _ = writeln!(
        o,
        "- The connector pads of every board run to their board's routed edge on purpose (the \
         edge-launch connector sits on them): exempt them from copper pullback."
    );
    let _ = writeln!(
        o,
        "- Annular rings are checked on the {} hole (drill allowance {} mm); each board's own \
         notes give its least ring on both bases.",
        fab.ring_basis.name(),
        n(fab.drill_allowance)
    );
    let _ = writeln!(o, "\n## Panel design-rule check\n");
    if violations.is_empty() {
        let _ = writeln!(
            o,
            "Clean: {} rules (spacing, tabs, keep-outs, every board on the frame, no loose \
             waste, fiducial and hole clearances).",
            crate::drc::PanelRule::ALL.len()
        );
    } else {
        let _ = writeln!(
            o,
            "**{} violation(s), written because of --force:**\n",
            violations.len()
        );
        for v in violations {
            let _ = writeln!(o, "- {v}");
        }
    }
    let _ = writeln!(o, "\n## Files\n");
    for f in files {
        let _ = writeln!(o, "- `{f}`");
    }
    let _ = writeln!(o, "\n## Cautions\n\n{}", crate::emit::cautions::CAUTIONS);
    o
}
