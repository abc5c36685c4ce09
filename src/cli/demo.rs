//! `loopwright demo`: the built-in scenario.
//!
//! The scenario (invented): the bench team at "Fenwick Marsh Instruments" has a motor-drive
//! controller whose 48 MHz clock harmonics fail a radiated-emissions pre-scan. They order a
//! family of printed loop probes on the usual 1.6 mm four-layer build, loop trace on L2:
//! round loops of 20, 10 and 5 mm and a flat-tipped 12 × 6 mm loop.

use super::build::print_summary;
use crate::error::Error;
use crate::pipeline::build_to_dir;
use crate::spec::parse_toml;
use crate::spec::probe::ProbeFileSpec;
use std::path::{Path, PathBuf};

/// The demo family spec, also written into the output folder.
pub const DEMO_SPEC: &str = include_str!("../../data/demo/fenwick-marsh-probes.toml");
/// Its file name.
pub const DEMO_SPEC_NAME: &str = "fenwick-marsh-probes.toml";

/// Arguments of `loopwright demo`.
#[derive(Debug, clap::Args)]
pub struct DemoArgs {
    /// Output folder (its spec file is written there too).
    #[arg(long, value_name = "DIR", default_value = "loopwright-demo")]
    pub out: PathBuf,
}

pub(super) fn run(a: &DemoArgs) -> Result<(), Error> {
    let spec: ProbeFileSpec = parse_toml(DEMO_SPEC, DEMO_SPEC_NAME)?;
    let extra = vec![(PathBuf::from(DEMO_SPEC_NAME), DEMO_SPEC.as_bytes().to_vec())];
    let (_, built) = build_to_dir(&spec, Path::new("."), &a.out, false, extra)?;
    outln!(
        "loopwright demo: Fenwick Marsh Instruments' probe family (an invented scenario)\n\
         spec written to {}\n",
        a.out.join(DEMO_SPEC_NAME).display()
    );
    print_summary(&a.out, &built);
    outln!("\n{}", super::CAUTIONS);
    Ok(())
}
