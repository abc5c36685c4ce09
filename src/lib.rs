//! loopwright: design printed-circuit shielded H-field loop probes, from a stackup and a loop
//! size to fabrication files and predicted response.
//!
//! The crate is a pipeline (see `docs/architecture.md`): [`spec`] (TOML, serde) →
//! [`model`] (validated stackup and probe) → [`solve`] (impedance and other solved values) →
//! geometry → artwork → emitters. The command-line program in `src/main.rs` is a thin layer
//! over [`cli`].

#![forbid(unsafe_code)]
#![warn(missing_docs)]

pub mod artwork;
pub mod calib;
pub mod cli;
pub mod drc;
pub mod emit;
pub mod error;
pub mod field;
pub mod fuzzing;
pub mod geom;
pub mod math;
pub mod model;
pub mod output;
pub mod physics;
pub mod pipeline;
pub mod solve;
pub mod spec;

pub use error::{Error, FieldError};
