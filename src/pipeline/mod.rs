//! The pipeline: spec → model → solved values → geometry → artwork → design-rule check → files,
//! and the predictions and calibrations that read the model. Each job in its own file:
//! [`probe`] (probe boards and families), [`fixture`] (test-line fixtures), [`predict`]
//! (responses for a spec), [`calibrate`] (a probe factor from a measured Touchstone file) and
//! [`output`] (a board's files, written as one folder atomically).

pub mod calibrate;
pub mod fixture;
pub mod output;
pub mod panel;
pub mod predict;
pub mod probe;

pub use fixture::{BuiltFixture, build_fixture, fixture_entries, load_fixture};
pub use output::{FileEntry, artwork_files, write_atomically};
pub use panel::{BuiltPanel, build_panel, panel_entries};
pub use probe::{
    BuiltProbe, FamilyBuild, build_family, build_probe, build_to_dir, family_files,
    family_files_with, family_summary, launch_over_limit, predicted, probe_spec_copy,
};
