//! The `loopwright` binary: parses the command line and reports errors.
//!
//! Exit codes: 0 success; 2 bad input or a request that cannot be met (the message names the
//! field, the value and the allowed range).

use clap::Parser;
use std::process::ExitCode;

fn main() -> ExitCode {
    keep_freed_memory();
    let cli = loopwright::cli::Cli::parse();
    match loopwright::cli::run(cli) {
        Ok(()) => match loopwright::cli::stdout_error() {
            None => ExitCode::SUCCESS,
            Some(e) => {
                eprintln!("loopwright: error: cannot write the output: {e}");
                ExitCode::from(2)
            }
        },
        Err(e) => {
            for line in e.to_string().lines() {
                eprintln!("loopwright: error: {line}");
            }
            ExitCode::from(2)
        }
    }
}

// `keep_freed_memory`, shared with the pipeline benchmarks (the library has no unsafe code, so
// it cannot offer it).
include!("keep_freed_memory.rs");
