//! `loopwright demo`: the built-in scenario.
//!
//! The scenario (invented): the bench team at "Fenwick Marsh Instruments" has a motor-drive
//! controller whose 48 MHz clock harmonics fail a radiated-emissions pre-scan. They want a set
//! of printed loop probes on the usual 1.6 mm four-layer build, loop trace on L2, and a test
//! line on L1 to calibrate them. Until the board layout lands, the demo solves the
//! impedance-controlled traces the set needs.

use super::impedance::{ImpedanceArgs, evaluate};
use crate::error::Error;

/// Arguments of `loopwright demo`.
#[derive(Debug, clap::Args)]
pub struct DemoArgs {
    /// Print the results as a JSON array.
    #[arg(long)]
    pub json: bool,
}

/// The demo's traces: (what it is, stackup, layer).
const DEMO_TRACES: [(&str, &str, usize); 3] = [
    (
        "probe loop and handle line, L2 between L1 and L3",
        "common-4l-1.6",
        2,
    ),
    (
        "calibration test line, coated microstrip on L1 over L2",
        "common-4l-1.6",
        1,
    ),
    (
        "small-probe variant on the 0.8 mm build, L2",
        "slim-4l-0.8",
        2,
    ),
];

pub(super) fn run(a: &DemoArgs) -> Result<(), Error> {
    let mut all = Vec::new();
    if !a.json {
        println!(
            "loopwright demo: Fenwick Marsh Instruments' probe set (invented scenario)\n\
             50 Ω traces for the probe family and its test-line fixture.\n"
        );
    }
    for (what, stackup, layer) in DEMO_TRACES {
        let args = ImpedanceArgs {
            stackup: Some(stackup.to_string()),
            layer: Some(layer),
            target: Some(50.0),
            etch_tol: 0.025,
            er_tol: 0.2,
            h_tol_pct: 10.0,
            min_trace: 0.1,
            ..Default::default()
        };
        let r = evaluate(&args)?;
        if a.json {
            let mut v = r.to_json();
            v["purpose"] = serde_json::json!(what);
            all.push(v);
        } else {
            println!("== {what}");
            println!("{}", r.to_table());
        }
    }
    if a.json {
        println!(
            "{}",
            serde_json::to_string_pretty(&all).expect("plain JSON")
        );
    } else {
        println!("{}", super::CAUTIONS);
    }
    Ok(())
}
