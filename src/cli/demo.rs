//! `loopwright demo`: the built-in scenario.
//!
//! The scenario (invented): the bench team at "Fenwick Marsh Instruments" has a motor-drive
//! controller whose 48 MHz clock harmonics fail a radiated-emissions pre-scan. They order a
//! family of printed loop probes on the usual 1.6 mm four-layer build, loop trace on L3:
//! round loops of 20, 10 and 5 mm and a flat-tipped 12 × 6 mm loop, and a 50 Ω test-line
//! fixture on a two-layer board to calibrate them; the probes and a second test line on their
//! own four-layer build come as one fabrication panel. The demo also writes invented bench data (a
//! VNA file of FM-R10 on the fixture and an analyzer scan of the controller) for the README's
//! calibrate-and-convert walk-through; `examples/demo_bench_data.rs` made them.

use super::build::{print_fixture, print_summary};
use crate::error::Error;
use crate::output::Edited;
use crate::pipeline::{build_fixture, family_files_with, fixture_entries};
use crate::spec::fixture::FixtureFileSpec;
use crate::spec::parse_toml;
use crate::spec::probe::ProbeFileSpec;
use std::path::{Path, PathBuf};

/// The demo family spec, also written into the output folder.
pub const DEMO_SPEC: &str = include_str!("../../data/demo/fenwick-marsh-probes.toml");
/// Its file name.
pub const DEMO_SPEC_NAME: &str = "fenwick-marsh-probes.toml";
/// The demo fixture spec, also written into the output folder.
pub const DEMO_FIXTURE: &str = include_str!("../../data/demo/fenwick-marsh-fixture.toml");
/// Its file name.
pub const DEMO_FIXTURE_NAME: &str = "fenwick-marsh-fixture.toml";
/// The demo panel's fixture spec (the test line on the probes' own stackup), also written into
/// the output folder.
pub const DEMO_PANEL_FIXTURE: &str = include_str!("../../data/demo/fenwick-marsh-fixture-4l.toml");
/// Its file name, as the family spec's `[panel]` table names it.
pub const DEMO_PANEL_FIXTURE_NAME: &str = "fenwick-marsh-fixture-4l.toml";
/// Invented bench data: (file name, content).
pub const DEMO_BENCH: [(&str, &str); 2] = [
    (
        "fm-r10-on-fixture-1mm.s2p",
        include_str!("../../data/demo/fm-r10-on-fixture-1mm.s2p"),
    ),
    (
        "fm-clock-scan.csv",
        include_str!("../../data/demo/fm-clock-scan.csv"),
    ),
];

/// Arguments of `loopwright demo`.
#[derive(Debug, clap::Args)]
pub struct DemoArgs {
    /// Output folder (its spec file is written there too).
    #[arg(long, value_name = "DIR", default_value = "loopwright-demo")]
    pub out: PathBuf,
    /// Replace the demo's own files in DIR even where they were edited since (an edited spec
    /// is otherwise refused, so that a user's changes are never lost unasked). Files the demo
    /// did not write are refused all the same.
    #[arg(long)]
    pub force: bool,
}

pub(super) fn run(a: &DemoArgs) -> Result<(), Error> {
    // A folder in the way or a place that cannot be written is refused before the build.
    let edited = if a.force {
        Edited::Replace
    } else {
        Edited::Refuse
    };
    crate::output::preflight_edited(&a.out, edited).map_err(hint_force(&a.out))?;
    let spec: ProbeFileSpec = parse_toml(DEMO_SPEC, DEMO_SPEC_NAME)?;
    let fx_spec: FixtureFileSpec = parse_toml(DEMO_FIXTURE, DEMO_FIXTURE_NAME)?;
    let mut extra = vec![
        (PathBuf::from(DEMO_SPEC_NAME), DEMO_SPEC.as_bytes().to_vec()),
        (
            PathBuf::from(DEMO_FIXTURE_NAME),
            DEMO_FIXTURE.as_bytes().to_vec(),
        ),
        (
            PathBuf::from(DEMO_PANEL_FIXTURE_NAME),
            DEMO_PANEL_FIXTURE.as_bytes().to_vec(),
        ),
    ];
    extra.extend(
        DEMO_BENCH
            .iter()
            .map(|(n, t)| (PathBuf::from(n), t.as_bytes().to_vec())),
    );
    // The fixture and the family are built at once (on separate cores where there are).
    let (fixture, family) = rayon::join(
        || build_fixture(&fx_spec, Path::new("."), false),
        || family_files_with(&spec, Path::new("."), false, extra, &demo_fixture),
    );
    let fixture = fixture?;
    let (_, built, mut entries) = family?;
    entries.extend(fixture_entries(&fixture));
    crate::output::write_output_edited(&a.out, &entries, edited).map_err(hint_force(&a.out))?;
    outln!(
        "loopwright demo: Fenwick Marsh Instruments' probe family (an invented scenario)\n\
         spec written to {}\n",
        a.out.join(DEMO_SPEC_NAME).display()
    );
    print_summary(&a.out, &built);
    super::build::print_panel(&a.out);
    outln!();
    print_fixture(&a.out, &fixture);
    outln!(
        "\ninvented bench data for the calibrate-and-convert walk-through in README.md: {}",
        DEMO_BENCH
            .iter()
            .map(|(n, _)| a.out.join(n).display().to_string())
            .collect::<Vec<_>>()
            .join(", ")
    );
    outln!("\n{}\n\n{}", super::CAL_CAUTIONS, super::CAUTIONS);
    Ok(())
}

/// The demo panel's fixture spec, from the built-in copy.
fn demo_fixture(name: &str) -> Result<(FixtureFileSpec, PathBuf), Error> {
    if name != DEMO_PANEL_FIXTURE_NAME {
        return Err(Error::Invalid(vec![crate::error::FieldError::new(
            "panel.fixtures",
            name,
            format!("the demo carries only {DEMO_PANEL_FIXTURE_NAME}"),
        )]));
    }
    Ok((
        parse_toml(DEMO_PANEL_FIXTURE, DEMO_PANEL_FIXTURE_NAME)?,
        PathBuf::from("."),
    ))
}

/// A refusal that `--force` would lift (the folder fails the usual check but passes the one
/// that replaces edited files: its only fault is demo files the user edited) gains that way
/// out.
fn hint_force(out: &Path) -> impl Fn(Error) -> Error + '_ {
    move |e| match e {
        Error::Invalid(mut errs)
            if crate::output::check_folder(out).is_err()
                && crate::output::check_folder_edited(out, Edited::Replace).is_ok() =>
        {
            for f in errs.iter_mut().filter(|f| f.field == "--out") {
                f.allowed.push_str(
                    "; or run `loopwright demo --force` to replace the demo's files with fresh \
                     ones (your edits to them are lost; copy an edited spec elsewhere first)",
                );
            }
            Error::Invalid(errs)
        }
        e => e,
    }
}
