//! Design-rule check on the artwork as emitted (nm-snapped regions, flashes, strokes, drills and
//! outline), against the fab profile and the probe's or fixture's own rules.
//!
//! `kernel` holds the geometry the rules share (copper unions, boundary segments, closest
//! points); `board` the rules every board gets; `probe` and `fixture` their own. Each rule is a
//! [`Rule`], documented with its source; every rule has a test in which it alone fires
//! (`tests/drc_rules.rs`).
//!
//! Width and spacing use one boundary test: for every pair of copper boundary segments closer
//! than the larger of the two limits (pairs on the same ring that are close *along* the ring are
//! corners, not features, and are skipped), the midpoint between their closest points is tested:
//! inside copper means a neck narrower than the minimum trace, outside means a space narrower
//! than the minimum space.

mod board;
mod fixture;
mod kernel;
mod probe;

pub use board::check_board;
pub use fixture::check_fixture;
pub use kernel::{flash_polygon, layer_copper};
pub use probe::check;

use kurbo::Point;
use std::fmt;

/// A design rule. The text each prints (`name`) is part of the messages and notes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Rule {
    /// Every copper contour is closed (first point = last): the Gerber format's region rule (Ucamco, *The Gerber Layer Format Specification*, regions).
    RegionNotClosed,
    /// No contour crosses or touches itself: a region's contour must be simple (same specification, regions).
    RegionNotSimple,
    /// No copper neck narrower than the fab's minimum trace width (`[fab] min_trace_mm`; the fab's own capability).
    MinTraceWidth,
    /// No gap between copper narrower than the fab's minimum space (`[fab] min_space_mm`; the fab's own capability).
    MinSpace,
    /// Copper (except the connector pads, which run to the launch edge) keeps `[fab] copper_to_edge_mm` from every board edge, so routing does not expose or tear it (the fab's own capability).
    CopperToEdge,
    /// No drill smaller than the fab's minimum (`[fab] min_drill_mm`; the fab's own capability).
    MinDrill,
    /// Every pad round a hole leaves at least `[fab] min_annular_ring_mm` of copper between hole and pad edge (IPC-2221 gives the usual minimum rings; here the fab's figure).
    AnnularRing,
    /// A plated hole has pads on at least two layers: a via joins layers (common practice, no single source).
    PlatedHoleWithoutPads,
    /// Holes keep `[fab] min_hole_gap_mm` between their edges (the fab's own capability: drill wander and web strength).
    HoleToHole,
    /// Every hole lies inside the board, its edge at least the copper-to-edge distance from the board edge (common practice).
    HoleInsideOutline,
    /// Solder-mask openings keep `[fab] mask_web_mm` between them, or the web between them breaks off (the fab's own capability).
    MaskWeb,
    /// Legend ink keeps `[fab] silk_to_pad_mm` from every mask opening: ink on a pad spoils soldering (common practice; fabs clip it).
    SilkOnPad,
    /// Legend strokes lie inside the outline (common practice).
    SilkOffBoard,
    /// No copper inside the loop on any layer: flux must pass through it (the probe's own rule, docs/probe-spec.md).
    CopperInsideLoop,
    /// On the signal layer the shield gap holds the trace and nothing else: any more copper there closes the shield's turn (the probe's own rule).
    GapHoldsOnlyTrace,
    /// On every other layer the shield gap is free of copper: a bridge closes the shield's turn and the loop stops sensing H (the probe's own rule).
    GapFreeOfCopper,
    /// No via stands in or touches the shield gap (the probe's own rule: a via there bridges the gap through the board).
    ViaInGap,
    /// No two vias nearer than the fab allows (pad + space, or drill + hole gap; the fab's own capability).
    ViaPitchBelowFab,
    /// Every via has a neighbour within the stitching limit λ/N at f_max (`[via] pitch_n`, `f_max_hz`; λ/20 is common practice, no single source).
    ViaPitchAboveLimit,
    /// Every required row of vias (the loop's inner and outer rows on both halves, the feed's two fences) is covered from end to end within the stitching limit, outside its stated exemptions (the probe's own rule, from the λ/N limit).
    StitchingRowPitch,
    /// The fixture's line runs in one piece of copper from port 1's centre pad to port 2's (the fixture's own rule).
    LineContinuity,
    /// The fixture's line touches no ground pad or via (the fixture's own rule).
    LineShortedToGround,
    /// Along the fixture's uniform line, ground copper keeps the solved keepout (or coplanar gap) from the line's edges, so the line keeps the impedance it was solved for (the fixture's own rule).
    GroundTooNearLine,
}

impl Rule {
    /// Every rule.
    pub const ALL: [Rule; 23] = [
        Rule::RegionNotClosed,
        Rule::RegionNotSimple,
        Rule::MinTraceWidth,
        Rule::MinSpace,
        Rule::CopperToEdge,
        Rule::MinDrill,
        Rule::AnnularRing,
        Rule::PlatedHoleWithoutPads,
        Rule::HoleToHole,
        Rule::HoleInsideOutline,
        Rule::MaskWeb,
        Rule::SilkOnPad,
        Rule::SilkOffBoard,
        Rule::CopperInsideLoop,
        Rule::GapHoldsOnlyTrace,
        Rule::GapFreeOfCopper,
        Rule::ViaInGap,
        Rule::ViaPitchBelowFab,
        Rule::ViaPitchAboveLimit,
        Rule::StitchingRowPitch,
        Rule::LineContinuity,
        Rule::LineShortedToGround,
        Rule::GroundTooNearLine,
    ];

    /// The rule's name as printed.
    pub fn name(self) -> &'static str {
        match self {
            Rule::RegionNotClosed => "region not closed",
            Rule::RegionNotSimple => "region not simple",
            Rule::MinTraceWidth => "minimum trace width",
            Rule::MinSpace => "minimum space",
            Rule::CopperToEdge => "copper to edge",
            Rule::MinDrill => "minimum drill",
            Rule::AnnularRing => "annular ring",
            Rule::PlatedHoleWithoutPads => "plated hole without pads",
            Rule::HoleToHole => "hole to hole",
            Rule::HoleInsideOutline => "hole inside the outline",
            Rule::MaskWeb => "mask web",
            Rule::SilkOnPad => "silkscreen on a pad",
            Rule::SilkOffBoard => "silkscreen off the board",
            Rule::CopperInsideLoop => "copper inside the loop",
            Rule::GapHoldsOnlyTrace => "gap must hold only the trace",
            Rule::GapFreeOfCopper => "gap free of copper",
            Rule::ViaInGap => "via in the gap",
            Rule::ViaPitchBelowFab => "via pitch below the fab minimum",
            Rule::ViaPitchAboveLimit => "via pitch above the limit",
            Rule::StitchingRowPitch => "stitching row pitch above the limit",
            Rule::LineContinuity => "line continuity",
            Rule::LineShortedToGround => "line shorted to ground",
            Rule::GroundTooNearLine => "ground too near the line",
        }
    }
}

impl fmt::Display for Rule {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// One rule violation.
#[derive(Debug, Clone, PartialEq)]
pub struct Violation {
    /// The rule broken.
    pub rule: Rule,
    /// The layer (file) where it is.
    pub layer: String,
    /// Where, mm.
    pub at: Point,
    /// What was measured against what was required.
    pub detail: String,
}

impl fmt::Display for Violation {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "{} on {} at ({:.3}, {:.3}) mm: {}",
            self.rule, self.layer, self.at.x, self.at.y, self.detail
        )
    }
}
