//! Entry points for fuzzing: each takes arbitrary bytes, runs one parser (or the whole
//! in-memory build) and must return without panicking, whatever the bytes. The cargo-fuzz
//! targets under `fuzz/` call these, and `tests/fuzz_replay.rs` replays every seed and every
//! input that ever failed through them in a plain `cargo test`.
//!
//! Nothing here writes files. Inputs that are not UTF-8 are passed through
//! `String::from_utf8_lossy`, as a text editor would show them.

use crate::error::Error;
use std::path::Path;

/// A fuzz entry point.
pub type Entry = fn(&[u8]);

/// The fuzz targets, by name: (name, entry point).
pub const TARGETS: [(&str, Entry); 7] = [
    ("probe_spec", probe_spec),
    ("fixture_spec", fixture_spec),
    ("stackup", stackup),
    ("touchstone", touchstone),
    ("table", table),
    ("band", band),
    ("full_build", full_build),
];

fn text(data: &[u8]) -> String {
    String::from_utf8_lossy(data).into_owned()
}

/// A probe or family spec: parsed, then turned into validated probes (no solving).
pub fn probe_spec(data: &[u8]) {
    let t = text(data);
    if let Ok(s) = crate::spec::parse_toml::<crate::spec::probe::ProbeFileSpec>(&t, "fuzz.toml") {
        let _ = crate::model::probe::family_from_spec(&s, Path::new("/nonexistent-fuzz-base"));
    }
}

/// A fixture spec: parsed, validated and, if valid, solved.
pub fn fixture_spec(data: &[u8]) {
    let t = text(data);
    if let Ok(s) = crate::spec::parse_toml::<crate::spec::fixture::FixtureFileSpec>(&t, "fuzz.toml")
        && let Ok(f) =
            crate::model::fixture::fixture_from_spec(&s, Path::new("/nonexistent-fuzz-base"))
    {
        let _ = crate::solve::fixture::solve(&f);
    }
}

/// A stackup file: parsed and validated.
pub fn stackup(data: &[u8]) {
    let t = text(data);
    if let Ok(s) = crate::spec::parse_toml::<crate::spec::stackup::StackupSpec>(&t, "fuzz.toml") {
        let _ = crate::model::stackup::Stackup::from_spec(&s);
    }
}

/// A Touchstone file, read as a 2-port and as a 3-port.
pub fn touchstone(data: &[u8]) {
    let t = text(data);
    let _ = crate::calib::touchstone::parse(&t, "fuzz.s2p", 2);
    let _ = crate::calib::touchstone::parse(&t, "fuzz.s3p", 3);
}

/// A frequency table (CSV) with the columns `convert` reads.
pub fn table(data: &[u8]) {
    let t = text(data);
    for cols in [
        &["level_dbuv", "level_dbm"][..],
        &["gain_db"][..],
        &["pf_db_s_per_m"][..],
    ] {
        let _ = crate::calib::convert::parse_table(&t, "fuzz.csv", cols);
    }
}

/// A calibration's band line.
pub fn band(data: &[u8]) {
    let _ = crate::calib::band::parse_band(&text(data));
}

/// The whole in-memory build of a probe or family spec: validation, solving, geometry,
/// artwork, design-rule check and every emitter; no file is written.
pub fn full_build(data: &[u8]) {
    let t = text(data);
    if let Ok(s) = crate::spec::parse_toml::<crate::spec::probe::ProbeFileSpec>(&t, "fuzz.toml") {
        let r: Result<_, Error> =
            crate::pipeline::build_family(&s, Path::new("/nonexistent-fuzz-base"), false);
        let _ = r;
    }
}
