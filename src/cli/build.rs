//! `loopwright build`: a probe or family spec to fabrication files.

use crate::error::Error;
use crate::pipeline::{
    BuiltFixture, BuiltProbe, build_fixture, build_to_dir, fixture_entries, write_atomically,
};
use crate::spec::fixture::FixtureFileSpec;
use crate::spec::probe::ProbeFileSpec;
use crate::spec::{parse_toml, with_lines};
use std::path::{Path, PathBuf};

/// Arguments of `loopwright build`.
#[derive(Debug, clap::Args)]
pub struct BuildArgs {
    /// The probe or family spec (TOML; see docs/probe-spec.md), or a test-line fixture spec
    /// (a file with a [fixture] table; see docs/fixture-spec.md).
    pub spec: PathBuf,
    /// Output folder: one sub-folder per probe, named from the probe's name.
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    /// Write the files even when the design-rule check fails (the notes say so in bold).
    #[arg(long)]
    pub force: bool,
}

/// Prints the one-line-per-probe summary of a build.
pub fn print_summary(out: &Path, built: &[BuiltProbe]) {
    outln!(
        "{:<12} {:<10} {:<28} {:>9} {:>8} {:>14} {:>5}  folder",
        "probe",
        "shape",
        "size",
        "trace mm",
        "Z0 Ω",
        "board mm",
        "vias"
    );
    for b in built {
        let (lo, hi) = b.board.bbox;
        outln!(
            "{:<12} {:<10} {:<28} {:>9.3} {:>8.2} {:>14} {:>5}  {}",
            b.probe.name,
            b.probe.shape_name(),
            b.probe.size_text(),
            b.solved.trace_width,
            b.solved.solution.z0,
            format!("{:.1} × {:.1}", hi.x - lo.x, hi.y - lo.y),
            b.board.vias.len(),
            out.join(&b.probe.folder).display()
        );
        if !b.violations.is_empty() {
            outln!(
                "  ! {} design-rule violation(s), written because of --force",
                b.violations.len()
            );
        }
        for w in &b.warnings {
            eprintln!("loopwright: warning: {w}");
        }
    }
}

/// Prints the summary of a fixture build.
pub fn print_fixture(out: &Path, b: &BuiltFixture) {
    let s = &b.solved;
    outln!(
        "fixture {}: {} Ω {} on L{} of {}, w {:.3} mm ({:.2} Ω by {}{}), {:.1} × {:.1} mm, {} vias
  folder {}",
        b.fixture.name,
        crate::model::probe::num(b.fixture.target_z0),
        s.line.structure().name(),
        b.fixture.line_layer,
        b.fixture.stackup.name(),
        s.width,
        s.solution.z0,
        s.solution.method,
        s.field_z0
            .map(|z| format!("; field solver {z:.2} Ω"))
            .unwrap_or_default(),
        b.fixture.length,
        b.fixture.width,
        b.board.vias.len(),
        out.join(&b.fixture.folder).display()
    );
    if !b.violations.is_empty() {
        outln!(
            "  ! {} design-rule violation(s), written because of --force",
            b.violations.len()
        );
    }
}

pub(super) fn run(a: &BuildArgs) -> Result<(), Error> {
    let text = std::fs::read_to_string(&a.spec).map_err(|e| Error::Io {
        path: a.spec.display().to_string(),
        source: e,
    })?;
    let path = a.spec.display().to_string();
    let base = a.spec.parent().unwrap_or(Path::new("."));
    // A folder in the way or a place that cannot be written is refused before the build.
    crate::output::preflight(&a.out)?;
    // A spec with a [fixture] table is a test-line fixture; anything else is a probe spec.
    let probe_or_fixture: toml::Value = parse_toml(&text, &path)?;
    if probe_or_fixture.get("fixture").is_some() {
        let spec: FixtureFileSpec = parse_toml(&text, &path)?;
        let built = build_fixture(&spec, base, a.force).map_err(|e| with_lines(&text, e))?;
        write_atomically(&a.out, &fixture_entries(&built))?;
        print_fixture(&a.out, &built);
        outln!("\n{}", super::CAL_CAUTIONS);
        return Ok(());
    }
    let spec: ProbeFileSpec = parse_toml(&text, &path)?;
    let (_, built) =
        build_to_dir(&spec, base, &a.out, a.force, Vec::new()).map_err(|e| with_lines(&text, e))?;
    print_summary(&a.out, &built);
    print_panel(&a.out);
    Ok(())
}

/// Names the panel folder a build wrote, if any (a folder holding panel notes).
pub fn print_panel(out: &Path) {
    let Ok(dir) = std::fs::read_dir(out) else {
        return;
    };
    let mut found: Vec<PathBuf> = dir
        .flatten()
        .map(|e| e.path())
        .filter(|p| {
            std::fs::read_dir(p).is_ok_and(|mut d| {
                d.any(|f| {
                    f.is_ok_and(|f| f.file_name().to_string_lossy().ends_with("-panel-notes.md"))
                })
            })
        })
        .collect();
    found.sort();
    for p in found {
        outln!(
            "\npanel: {} (one fabrication panel; its notes list every board's offset and tabs)",
            p.display()
        );
    }
}
