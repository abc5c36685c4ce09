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

/// The check's tolerances (mm, or mm² where stated), each with its reason. A measurement
/// within a tolerance of its limit passes: the artwork snaps every coordinate to a 1 nm grid
/// and flattens arcs, so construction placed exactly at a limit may measure a hair past it.
pub mod slack {
    /// Float noise: lengths this close are equal.
    pub const NOISE: f64 = 1e-9;
    /// One step of the artwork's 1 nm grid (1e-6 mm): snapping moves a point by up to this.
    pub const GRID: f64 = 1e-6;
    /// Boundary segments of one region nearer than this cross or touch (the region is not
    /// simple); 100 nm, well above snapping noise and far below any feature.
    pub const TOUCH: f64 = 1e-7;
    /// Via pitch: the placement keeps 100 nm above the least pitch; a pair is refused only
    /// when it measures more than 10 nm under it.
    pub const PITCH: f64 = 1e-5;
    /// Fixture keepout and the ends of the band it is measured in: 1 µm, the pour being cut by
    /// polygons whose arcs are flattened.
    pub const KEEPOUT: f64 = 1e-3;
    /// Copper area that is Boolean-operation noise, mm² (a 10 µm square).
    pub const AREA: f64 = 1e-4;
    /// Copper in a shield gap that should hold none is reported above this area, mm² (a 1 µm
    /// square).
    pub const GAP_AREA: f64 = 1e-6;
    /// The trace's area in the shield gap may exceed width × length by this share (flattened
    /// arcs of the trace's edges).
    pub const GAP_AREA_SHARE: f64 = 0.01;
    /// A via within this distance of a row's path is on the row (10 µm).
    pub const ON_ROW: f64 = 0.01;
    /// Step of the walk that checks a via row's coverage from end to end (20 µm).
    pub const ROW_STEP: f64 = 0.02;
    /// Two boundary points of one ring nearer than this many spacings along the ring are
    /// neighbours on a curve, not a neck across it.
    pub const SAME_RING_SPANS: f64 = 2.5;
}

mod board;
mod fixture;
mod kernel;
pub mod panel;
mod probe;

pub use board::check_board;
pub use fixture::check_fixture;
pub use kernel::{flash_polygon, layer_copper};
pub use panel::{PanelRule, PanelViolation, check_panel};
pub use probe::check;

pub use crate::error::{Rule, Violation};
