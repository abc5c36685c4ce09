//! Calibration and use: reading frequency tables and converting analyzer readings into field
//! strength (issue 6; the test-line fixture and Touchstone calibration are still to come).

pub mod calibrate;
pub mod convert;
pub mod touchstone;
