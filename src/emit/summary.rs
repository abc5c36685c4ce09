//! The family summary (Markdown) written at the top of a family's output folder.

use crate::geom::Board;
use crate::model::probe::{Family, Probe};
use crate::physics::predicted::Predicted;
use crate::solve::probe::SolvedProbe;

/// One probe's line in the summary.
pub struct Row<'a> {
    /// The probe.
    pub probe: &'a Probe,
    /// Its solved values.
    pub solved: &'a SolvedProbe,
    /// Its board.
    pub board: &'a Board,
    /// How many design-rule violations it was written with (forced).
    pub violations: usize,
}

/// The family summary (Markdown) written at the top of the output folder.
pub fn summary(family: &Family, built: &[Row<'_>], predicted: &[Predicted]) -> String {
    let electric = if family.probes.iter().any(|p| p.kind.electrode().is_some()) {
        "; an electric probe's, its electrode's diameter and the shield's clearance round it"
    } else {
        ""
    };
    let mut o = format!(
        "# {}: probe family\n\nBuilt by loopwright {}. Size = mean diameter (round) or side \
         lengths (square, rectangle) of the loop trace's centreline{electric}.\n\n\
         | probe | shape | size | trace w (mm) | Z0 (Ω) | width from | board (mm) | vias | DRC |\n\
         |---|---|---|---|---|---|---|---|---|\n",
        family.name,
        env!("CARGO_PKG_VERSION")
    );
    for b in built {
        let (lo, hi) = b.board.bbox;
        o.push_str(&format!(
            "| {} | {} | {} | {:.3} | {:.2} | {} | {:.1} × {:.1} | {} | {} |\n",
            b.probe.name,
            b.probe.shape_name(),
            b.probe.size_text(),
            b.solved.trace_width,
            b.solved.solution.z0,
            b.solved.solution.method,
            hi.x - lo.x,
            hi.y - lo.y,
            b.board.vias.len(),
            if b.violations == 0 {
                "clean".to_string()
            } else {
                format!("{} VIOLATIONS (forced)", b.violations)
            }
        ));
    }
    o.push_str("\n## Predicted response\n\n");
    o.push_str(&crate::emit::report::comparison_markdown(predicted));
    o.push_str(&format!("\n{}\n", crate::emit::cautions::CAUTIONS));
    o
}
