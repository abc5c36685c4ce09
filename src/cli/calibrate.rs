//! `loopwright calibrate`: the probe factor from a Touchstone file measured on the test-line
//! fixture, beside the prediction.

use crate::error::Error;
use crate::pipeline::calibrate::Request;
use std::path::PathBuf;

/// Arguments of `loopwright calibrate`.
#[derive(Debug, clap::Args)]
#[command(after_help = super::CAL_CAUTIONS, allow_negative_numbers = true)]
pub struct CalibrateArgs {
    /// Touchstone version 1 file measured on the fixture (`.s2p`, or `.s3p`/`.s4p` with
    /// --line-port and --probe-port).
    #[arg(long, value_name = "FILE.sNp")]
    pub touchstone: PathBuf,
    /// VNA port on the line's input (default 1 for a two-port file).
    #[arg(long = "line-port", value_name = "N")]
    pub line_port: Option<usize>,
    /// VNA port on the probe's output (default 2 for a two-port file).
    #[arg(long = "probe-port", value_name = "N")]
    pub probe_port: Option<usize>,
    /// A balanced loop's second output: its VNA port in a 3-port file (default: the port that
    /// is neither --line-port nor --probe-port; a balanced loop's defaults are 1, 2 and 3).
    /// Its outputs' difference, (S(probe, line) − S(second, line))/√2, is calibrated.
    #[arg(long = "second-port", value_name = "N")]
    pub second_port: Option<usize>,
    /// The probe or family spec the probe was built from.
    #[arg(long, value_name = "SPEC.toml")]
    pub probes: PathBuf,
    /// The probe's name in that spec (may be left out when the spec has one probe).
    #[arg(long, value_name = "NAME")]
    pub probe: Option<String>,
    /// The fixture spec the test line was built from.
    #[arg(long, value_name = "FIXTURE.toml")]
    pub fixture: PathBuf,
    /// Height of the probe's tip above the line's copper, mm (an electric probe, held flat: its
    /// face's).
    #[arg(long, value_name = "MM")]
    pub height: f64,
    /// Output folder (written whole or not at all).
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    /// Take the line current under the probe as V_inc/R_ref (a uniform matched line), ignoring
    /// the fixture's launches (for comparison).
    #[arg(long = "uniform-line")]
    pub uniform_line: bool,
    /// Write even when the measured factor fails the plausibility gate, provided its largest
    /// in-band |measured − predicted| is at most DB dB; the notes and the CSV headers record it.
    #[arg(long = "accept-deviation", value_name = "DB")]
    pub accept_deviation: Option<f64>,
}

pub(super) fn run(a: &CalibrateArgs) -> Result<(), Error> {
    // A folder in the way or a place that cannot be written is refused before any work.
    crate::output::preflight(&a.out)?;
    let done = crate::pipeline::calibrate::run(&Request {
        touchstone: a.touchstone.clone(),
        line_port: a.line_port,
        probe_port: a.probe_port,
        probes: a.probes.clone(),
        probe: a.probe.clone(),
        fixture: a.fixture.clone(),
        height: a.height,
        uniform_line: a.uniform_line,
        second_port: a.second_port,
        accept_deviation: a.accept_deviation,
    })?;
    crate::pipeline::write_atomically(&a.out, &done.files)?;
    for l in &done.report {
        outln!("{l}");
    }
    outln!(
        "wrote {} (field reference: {})",
        a.out.display(),
        done.field_reference
    );
    outln!("\n{}", super::CAL_CAUTIONS);
    Ok(())
}
