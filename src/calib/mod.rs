//! Calibration and use: the probe factor from a Touchstone file measured on the test-line
//! fixture (with its plausibility gate), reading frequency tables and converting analyzer
//! readings into field strength.

pub mod balanced;
pub mod band;
pub mod calibrate;
pub mod convert;
pub mod electric;
pub mod export;
pub mod gate;
pub mod touchstone;
