//! The validated model: what the spec says, checked across fields, in millimetres and SI,
//! with no optional value waiting for a default and no unresolved name.
//!
//! The model does no IO except through [`stackup::load`], which resolves a name or a path.

pub mod centreline;
pub mod fab;
pub mod fixture;
pub mod kind;
pub mod line;
pub mod panel;
pub mod probe;
pub mod stackup;
pub mod text;
pub mod units;
