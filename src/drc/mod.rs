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

pub use crate::error::{Rule, Violation};
