//! Solved values: numbers computed from the validated model (impedance, and later via pitch).

pub mod elliptic;
pub mod fixture;
pub mod impedance;
pub mod launch;
pub mod network;
pub mod probe;
pub mod roots;
pub mod winding;
