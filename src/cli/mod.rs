//! The command-line interface: argument definitions (clap derive) and the glue that runs each
//! command. Only this module and `main.rs` print.

mod build;
mod demo;
pub use demo::{DEMO_SPEC, DEMO_SPEC_NAME};
mod impedance;
pub mod predict;
mod stackups;

use crate::error::Error;
use clap::{Parser, Subcommand};

/// Safety cautions shown in help text, the README and every report.
pub const CAUTIONS: &str = "\
SAFETY: probing live equipment can kill. The probe's shield is tied to the analyzer's \
protective earth; never touch mains-referenced or high-voltage nodes with it, and treat the \
solder-mask coat as no insulation at all. Respect the maximum input of the analyzer and any \
preamplifier (start with attenuation until levels are known; use a DC block where a DC path \
exists). Defer to local codes, the instrument makers' ratings and licensed practice.";

/// loopwright: design printed-circuit shielded H-field loop probes for near-field EMC work.
#[derive(Debug, Parser)]
#[command(
    name = "loopwright",
    version,
    about = "Design printed-circuit shielded H-field loop probes: trace impedance, \
             board layout, predicted response and calibration.",
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
    /// Build probe boards from a spec: Gerber X2, Excellon, SVG previews, fab notes.
    Build(build::BuildArgs),
    /// Build the built-in demo family into a folder.
    Demo(demo::DemoArgs),
    /// Predict what each probe of a spec measures: inductance, probe factor, band, resolution.
    Predict(predict::PredictArgs),
    /// List the built-in stackups, or print one as a TOML file to start from.
    Stackups(stackups::StackupsArgs),
}

/// Runs a parsed command line, writing results to stdout.
pub fn run(cli: Cli) -> Result<(), Error> {
    match cli.command {
        Command::Impedance(a) => impedance::run(&a),
        Command::Build(a) => build::run(&a),
        Command::Demo(a) => demo::run(&a),
        Command::Predict(a) => predict::run(&a),
        Command::Stackups(a) => stackups::run(&a),
    }
}
