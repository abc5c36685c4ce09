//! The geometry core: from a probe and its solved values to the board model (paths, regions,
//! vias, pads, outline, silkscreen strokes), in millimetres.
//!
//! Coordinates: origin at the loop centre, loop axis along +y (tip up, connector down), outline
//! symmetric about x = 0. Everything is mirror-symmetric about x = 0 except the **feed** (the
//! line enters the loop at x = −e) and the **short** (the trace ends at x = +e and is tied to
//! the shield there), with e = half the fence offset, and the vias that follow them (the feed's
//! via fences and the short vias). The shield copper itself stays symmetric: vias sit inside
//! the pour, and the signal via is on the axis.

mod balanced;
mod electric;
pub mod fixture;
pub mod font;
mod multiturn;
mod near;
pub mod panel;
mod path;
mod probe;
mod region;
mod silk;
mod vias;

/// The loop centreline and its offsets (owned by the model; kept here under its old name).
pub use crate::model::centreline as shape;
pub use balanced::left_gap;
pub use electric::electrode_ring_radius;
pub(crate) use near::SegmentGrid;
pub(crate) use path::offset_round;
pub use vias::balanced_row_parts;

/// Builds the board of a probe, whatever its kind.
pub fn build(p: &crate::model::probe::Probe, s: &crate::solve::probe::SolvedProbe) -> Board {
    match p.kind {
        crate::model::probe::ProbeKind::Loop => probe::build(p, s),
        crate::model::probe::ProbeKind::Electric(e) => electric::build(p, s, e),
        crate::model::probe::ProbeKind::Balanced => balanced::build(p, s),
    }
}
pub use region::{
    circle, edge_distance, polygon, rect, round_buffer, stroke_butt, stroke_round, symmetrise,
};

use geo::{MultiPolygon, Polygon};
use kurbo::Point;

/// What a via is for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ViaRole {
    /// Stitching row inside the trace, around the loop.
    InnerRow,
    /// Stitching row outside the trace, around the loop.
    OuterRow,
    /// Fence along the feed line in the handle.
    Fence,
    /// Ties the trace's far end to the shield.
    Short,
    /// Carries the signal from the loop's layer to the connector's layer.
    Signal,
    /// Ground via around the signal via.
    SignalGround,
    /// Ground via beside a connector ground pad, joining its pad to the shield planes.
    PadGround,
    /// An electric probe's electrode via: joins the electrode's discs on the outer layers and
    /// the line's end on the signal layer.
    Electrode,
    /// An electric probe's ground via in the face round the electrode's clearance, joining the
    /// shield layers at the face's inner edge.
    FaceRing,
    /// A multi-turn loop's join via: ends one turn and starts the next on the layer below
    /// (`Board::joins` names its layers); isolated lands on the outer layers, antipads on the
    /// others.
    Join,
}

/// The line's clearances and the connector launch's cuts and widths, as the artwork draws them:
/// the probe's clearance and its solved launch, the same for every kind of board.
#[derive(Debug, Clone, PartialEq)]
pub struct LaunchCuts {
    /// Top-layer link width, mm.
    pub top_width: f64,
    /// Clearance from traces to coplanar ground, mm.
    pub clearance: f64,
    /// Gap from the connector's centre pad to the top-layer ground, mm.
    pub pad_gap: f64,
    /// Antipad diameter of the signal via's barrel, between layer 1 and the loop's layer, mm.
    pub barrel_antipad_d: f64,
    /// Antipad diameter of the signal via's stub below the loop's layer, mm.
    pub stub_antipad_d: f64,
    /// Copper layers with a relief under the centre pad (the pad grown by `pad_gap` across,
    /// from the board edge to the pad's inner end).
    pub relief_layers: Vec<usize>,
}

impl LaunchCuts {
    /// A probe's, from its clearance and its solved launch.
    pub fn of(p: &crate::model::probe::Probe, s: &crate::solve::probe::SolvedProbe) -> Self {
        LaunchCuts {
            top_width: s.top_width,
            clearance: p.clearance,
            pad_gap: s.launch.pad_gap,
            barrel_antipad_d: s.launch.barrel_antipad_d,
            stub_antipad_d: s.launch.stub_antipad_d,
            relief_layers: s.launch.relieved_layers().collect(),
        }
    }
}

/// A multi-turn loop's turn after the first, on its own layer.
#[derive(Debug, Clone, PartialEq)]
pub struct Turn {
    /// Copper layer, 1 = top.
    pub layer: usize,
    /// Centreline: from the join via it starts at, across the handle, round the loop, to the
    /// next join via (or, on the last turn, into solid shield past its exit).
    pub path: Vec<Point>,
    /// Index in `path` where the channel round the trace ends (the last turn's exit; the
    /// path's end otherwise).
    pub channel_end: usize,
    /// Trace width, mm.
    pub width: f64,
}

/// A multi-turn loop's join via and the two layers it joins (upper, lower).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Join {
    /// Centre, mm.
    pub at: Point,
    /// The layer whose turn ends here.
    pub upper: usize,
    /// The layer whose turn starts here.
    pub lower: usize,
}

/// A plated via (through all layers).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Via {
    /// Centre, mm.
    pub at: Point,
    /// Finished drill, mm.
    pub drill: f64,
    /// Pad diameter, mm.
    pub pad: f64,
    /// Role.
    pub role: ViaRole,
}

/// A rectangular pad on an outer layer.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Pad {
    /// Centre, mm.
    pub at: Point,
    /// Size along x, mm.
    pub w: f64,
    /// Size along y, mm.
    pub h: f64,
    /// On the top (true) or bottom (false) layer.
    pub top: bool,
    /// The connector's centre pad (false: a ground pad).
    pub centre: bool,
}

/// A plated hole that is not a via (connector ground legs).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Hole {
    /// Centre, mm.
    pub at: Point,
    /// Finished drill, mm.
    pub drill: f64,
    /// Pad diameter on the outer layers, mm.
    pub pad: f64,
}

/// A loop's own parts of its board.
#[derive(Debug, Clone)]
pub struct LoopHead {
    /// The shield gaps, each `(x0, y0, x1, y1)`: a singly-loaded loop's one at the apex, a
    /// balanced loop's two at the sides (left first).
    pub gaps: Vec<(f64, f64, f64, f64)>,
    /// Area inside the loop where no copper may be.
    pub interior: Polygon<f64>,
}

/// The board model of one probe.
#[derive(Debug, Clone)]
pub struct Board {
    /// Signal-layer trace centreline: from the signal via, through the feed, around the loop, to
    /// the end of the short stub (a multi-turn loop's first turn: to its join via).
    pub trace_path: Vec<Point>,
    /// Index in `trace_path` of the loop exit E_out (the channel around the trace ends there).
    pub exit_index: usize,
    /// Index in `trace_path` of the loop entry E_in.
    pub entry_index: usize,
    /// Trace width, mm.
    pub trace_width: f64,
    /// Top-layer link centreline from the connector's centre pad to the signal via.
    pub top_path: Vec<Point>,
    /// The line's clearances and the connector launch's cuts, as every builder takes them.
    pub launch: LaunchCuts,
    /// Shield outline (ring ∪ handle) before the gap and clearances, pulled back from the edge.
    pub shield: MultiPolygon<f64>,
    /// A loop's own parts (its shield gap and the opening inside it); None on an electric
    /// probe, which has neither.
    pub loop_head: Option<LoopHead>,
    /// A balanced loop: the line (`trace_path`, `top_path`), its signal via's place and its
    /// connector stand on the left, and the board carries their mirror image too (the second
    /// line); the artwork and the checks draw and test both.
    pub mirrored: bool,
    /// A multi-turn loop's turns after the first (empty otherwise).
    pub turns: Vec<Turn>,
    /// A multi-turn loop's join vias (empty otherwise).
    pub joins: Vec<Join>,
    /// Every via.
    pub vias: Vec<Via>,
    /// Connector pads.
    pub pads: Vec<Pad>,
    /// Connector ground-leg holes.
    pub holes: Vec<Hole>,
    /// Board outline: exterior ring, and the milled interior if any (closed, counter-clockwise).
    pub outline: Polygon<f64>,
    /// Silkscreen strokes on the top side.
    pub silk_top: Vec<Vec<Point>>,
    /// Silkscreen strokes on the bottom side (as seen from the top).
    pub silk_bottom: Vec<Vec<Point>>,
    /// y of the board edge at the connector, mm.
    pub edge_y: f64,
    /// Board bounding box (min, max), mm.
    pub bbox: (Point, Point),
}

/// Geometric tolerance of the construction rules, mm: twice the arc flattening tolerance.
pub const TOL: f64 = 2.0 * shape::ARC_TOLERANCE;

/// Construction offsets, mm, each with its reason. The artwork snaps every coordinate to a
/// 1 nm grid (1e-6 mm), so a feature placed exactly at a limit could measure past it.
pub mod offsets {
    /// Margin above the fab's least via pitch when vias are placed: a pair at exactly the
    /// minimum could measure under it after snapping.
    pub const PITCH_MARGIN: f64 = 1e-4;
    /// A candidate via is taken as far enough from the others at this much less than
    /// [`PITCH_MARGIN`] above the least pitch (walks accumulate float noise).
    pub const PITCH_CHECK_SLACK: f64 = 1e-5;
    /// Share of the stitching limit a via row aims at: 5 % in hand for snapping and for the
    /// chords of flattened arcs being shorter than the arcs.
    pub const PITCH_MAX_SHARE: f64 = 0.95;
    /// Share of the stitching limit of the fixture's pour grid (2 % in hand, as above; a grid
    /// has no arcs).
    pub const GRID_PITCH_SHARE: f64 = 0.98;
    /// The fixture's pour grid is never coarser than this, whatever the stitching limit: a
    /// test line's return current is kept near the line (common practice, no source).
    pub const GRID_PITCH_MAX: f64 = 5.0;
    /// Step of a search along a path for a free via site: 10 µm, finer than any fab places.
    pub const SEARCH_STEP: f64 = 0.01;
    /// A via's keep is grown by this much beyond the rule it keeps, so that rounding never
    /// puts its pad on the rule's edge (10 µm).
    pub const KEEP_MARGIN: f64 = 0.01;
    /// A position just past an exact tangent, which a containment test may refuse by rounding
    /// (1 µm).
    pub const PAST_TANGENT: f64 = 1e-3;
    /// Chord tolerance of round offsets of the feed (via fences, checks), mm.
    pub const OFFSET_FLATNESS: f64 = 0.05;
    /// Extra clearance kept round the loop's closing region beyond the fab's least space.
    pub const CLOSE_MARGIN: f64 = 0.05;
    /// Flattened-curve points nearer than this to the loop's entry are skipped: the segments
    /// they make are too short to have a direction.
    pub const MIN_SEGMENT: f64 = 1e-3;
    /// Two points this close are one (float noise).
    pub const SAME_POINT: f64 = 1e-9;
    /// The board outline stands this much beyond the copper-to-edge rule where it follows
    /// flattened arcs: twice the arc tolerance (the copper ring and the outline are each
    /// flattened; a chord cuts inside its arc by up to it) and two grid steps of snapping.
    pub const EDGE_MARGIN: f64 = 2.0 * super::shape::ARC_TOLERANCE + 2e-6;
}
