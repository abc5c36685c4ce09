//! `loopwright build`: a probe or family spec to fabrication files.

use crate::error::Error;
use crate::pipeline::{BuiltProbe, build_to_dir};
use crate::spec::parse_toml;
use crate::spec::probe::ProbeFileSpec;
use std::path::{Path, PathBuf};

/// Arguments of `loopwright build`.
#[derive(Debug, clap::Args)]
pub struct BuildArgs {
    /// The probe or family spec (TOML; see docs/probe-spec.md).
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
            b.probe.shape.kind(),
            b.probe.shape.size_text(),
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
    }
}

pub(super) fn run(a: &BuildArgs) -> Result<(), Error> {
    let text = std::fs::read_to_string(&a.spec).map_err(|e| Error::Io {
        path: a.spec.display().to_string(),
        source: e,
    })?;
    let spec: ProbeFileSpec = parse_toml(&text, &a.spec.display().to_string())?;
    let base = a.spec.parent().unwrap_or(Path::new("."));
    let (_, built) = build_to_dir(&spec, base, &a.out, a.force, Vec::new())?;
    print_summary(&a.out, &built);
    Ok(())
}
