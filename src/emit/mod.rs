//! Emitters: they serialise the artwork and the model's numbers into files, and compute no
//! geometry of their own.

pub mod calibration;
pub mod cautions;
pub mod excellon;
pub mod gerber;
pub mod job;
pub mod json;
pub mod notes;
pub mod plot;
pub mod report;
pub mod summary;
pub mod svg;
pub mod tables;
