//! The command-line interface: argument definitions (clap derive) and the glue that runs each
//! command. Only this module and `main.rs` print.

/// Writes to standard output; a closed pipe (`loopwright … | head`) quietly ends the output,
/// any other write error is remembered for [`stdout_error`].
macro_rules! out {
    ($($t:tt)*) => { $crate::cli::write_out(&format!($($t)*)) };
}

/// [`out!`] with a newline.
macro_rules! outln {
    () => { $crate::cli::write_out("\n") };
    ($($t:tt)*) => { $crate::cli::write_out(&format!("{}\n", format_args!($($t)*))) };
}

mod build;
mod calibrate;
mod convert;
pub mod demo;
pub use demo::{DEMO_SPEC, DEMO_SPEC_NAME};
mod impedance;
pub mod predict;
mod stackups;

use crate::error::Error;
use clap::{Parser, Subcommand};

pub use crate::emit::cautions::{CAL_CAUTIONS, CAUTIONS};

/// loopwright: design printed-circuit shielded near-field probes (H-field loops, electric-field
/// probes) for EMC work.
#[derive(Debug, Parser)]
#[command(
    name = "loopwright",
    version,
    about = "Design printed-circuit shielded near-field probes (H-field loops, electric-field \
             probes): trace impedance, board layout, predicted response and calibration.",
    after_help = CAUTIONS,
    allow_negative_numbers = true
)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// The commands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Characteristic impedance of a trace, or the width for a target impedance.
    Impedance(Box<impedance::ImpedanceArgs>),
    /// Build probe boards, or a test-line fixture, from a spec: Gerber X2, Excellon, SVG
    /// previews, fab notes.
    Build(build::BuildArgs),
    /// Build the built-in demo (a probe family, its test-line fixture, invented bench data)
    /// into a folder.
    Demo(demo::DemoArgs),
    /// Predict what each probe of a spec measures: inductance, probe factor, band, resolution.
    Predict(predict::PredictArgs),
    /// Probe factor from a Touchstone file measured on the test-line fixture, beside the
    /// prediction.
    Calibrate(calibrate::CalibrateArgs),
    /// Convert spectrum-analyzer readings into field strength with a probe factor.
    Convert(convert::ConvertArgs),
    /// List the built-in stackups, or print one as a TOML file to start from.
    Stackups(stackups::StackupsArgs),
}

static STDOUT_ERROR: std::sync::Mutex<Option<String>> = std::sync::Mutex::new(None);

/// Writes text to standard output (see [`out!`]).
pub fn write_out(text: &str) {
    use std::io::Write;
    if let Ok(guard) = STDOUT_ERROR.lock()
        && guard.is_some()
    {
        return;
    }
    let mut o = std::io::stdout().lock();
    if let Err(e) = o.write_all(text.as_bytes()).and_then(|_| o.flush()) {
        let msg = if e.kind() == std::io::ErrorKind::BrokenPipe {
            String::new()
        } else {
            e.to_string()
        };
        if let Ok(mut g) = STDOUT_ERROR.lock() {
            *g = Some(msg);
        }
    }
}

/// A write error on standard output other than a closed pipe, if one happened.
pub fn stdout_error() -> Option<String> {
    STDOUT_ERROR
        .lock()
        .ok()
        .and_then(|g| g.clone())
        .filter(|m| !m.is_empty())
}

/// Runs a parsed command line, writing results to stdout.
pub fn run(cli: Cli) -> Result<(), Error> {
    match cli.command {
        Command::Impedance(a) => impedance::run(&a),
        Command::Build(a) => build::run(&a),
        Command::Demo(a) => demo::run(&a),
        Command::Predict(a) => predict::run(&a),
        Command::Calibrate(a) => calibrate::run(&a),
        Command::Convert(a) => convert::run(&a),
        Command::Stackups(a) => stackups::run(&a),
    }
}
