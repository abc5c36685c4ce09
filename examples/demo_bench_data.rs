//! Writes the demo's invented bench data (for the README's calibrate-and-convert walk-through):
//!
//! - `data/demo/fm-r10-on-fixture-1mm.s2p`: what a VNA might read with probe FM-R10 held 1 mm
//!   over the demo fixture's line. It is the coupling model's S21 (with the line current of the
//!   fixture's launch model under the probe) with invented deviations
//!   added (a +0.8 dB offset, 0.4 dB of loss per GHz, a 0.3 dB ripple every 150 MHz and a
//!   −100 dB noise floor), so the calibration differs from the prediction as a real one would;
//! - `data/demo/fm-clock-scan.csv`: an invented analyzer trace (dBµV, 30 MHz–1 GHz, 2 MHz
//!   steps) over the controller in the demo scenario: 48 MHz clock harmonics above a floor.
//!
//! None of this is measured. Run: `cargo run --example demo_bench_data`.

use loopwright::cli::demo::{DEMO_FIXTURE, DEMO_SPEC};
use loopwright::physics::coupling::{launch_current, probe_coupling, probe_s21};
use loopwright::spec::fixture::FixtureFileSpec;
use loopwright::spec::parse_toml;
use loopwright::spec::probe::ProbeFileSpec;
use std::f64::consts::PI;
use std::fmt::Write;
use std::path::Path;

fn main() {
    let spec: ProbeFileSpec = parse_toml(DEMO_SPEC, "demo").unwrap();
    let all = loopwright::pipeline::predict::predict_spec(
        &spec,
        Path::new("."),
        &loopwright::physics::PredictOptions::default(),
    )
    .unwrap();
    let x = all.iter().find(|x| x.probe.name == "FM-R10").unwrap();
    let fx_spec: FixtureFileSpec = parse_toml(DEMO_FIXTURE, "fixture").unwrap();
    let fx = loopwright::model::fixture::fixture_from_spec(&fx_spec, Path::new(".")).unwrap();
    let fs = loopwright::solve::fixture::solve(&fx).unwrap();
    let line = fs.test_line(50.0);
    let c = probe_coupling(
        &x.probe,
        &x.solved,
        x.response.as_loop().unwrap(),
        1.0,
        &line,
    );
    let n = 161;
    let freqs: Vec<f64> = (0..n)
        .map(|i| 1e6 * 10f64.powf(3.0 * i as f64 / (n - 1) as f64))
        .collect();
    let mut s2p = String::from(
        "! INVENTED demo data for loopwright's README (not a measurement): probe FM-R10, tip\n\
         ! 1 mm over the fenwick-marsh-fixture line, VNA port 1 on PORT 1, port 2 on the probe,\n\
         ! PORT 2 into 50 ohm. Written by examples/demo_bench_data.rs.\n\
         # Hz S DB R 50\n",
    );
    let secs = loopwright::solve::fixture::launch_sections(&fx, &fs).unwrap();
    let beyond: Vec<_> = secs.iter().rev().copied().collect();
    for (f, s) in probe_s21(
        &x.probe,
        &x.solved,
        x.response.as_loop().unwrap(),
        &c,
        &freqs,
    ) {
        let s = s * launch_current(&secs, &beyond, 50.0, f);
        let (re, im) = (s.re, s.im);
        let ghz = f / 1e9;
        let dev_db = 0.8 - 0.4 * ghz + 0.3 * (2.0 * PI * f / 150e6).sin();
        let p = (re * re + im * im) * 10f64.powf(dev_db / 10.0) + 1e-10;
        let mag_db = 10.0 * p.log10();
        // The launch current carries the line's delay up to the probe.
        let ang = im.atan2(re).to_degrees();
        let ang = (ang + 180.0).rem_euclid(360.0) - 180.0;
        let s11 = -28.0 + 6.0 * ghz;
        let _ = writeln!(
            s2p,
            "{f:.0} {s11:.3} 0.0 {mag_db:.4} {ang:.3} {mag_db:.4} {ang:.3} -35.000 0.0"
        );
    }
    std::fs::write("data/demo/fm-r10-on-fixture-1mm.s2p", s2p).unwrap();
    let mut scan = String::from("freq_hz,level_dbuv\n");
    let mut f: f64 = 30e6;
    while f <= 1e9 + 1.0 {
        let k = (f / 48e6).round();
        let near = (f - 48e6 * k).abs() < 1.0 && k >= 1.0;
        let floor = 8.0 + 2.0 * (f / 37e6).sin();
        let level = if near {
            // Odd harmonics stronger (a near-square clock), falling 20 dB per decade.
            let odd = if (k as i64) % 2 == 1 { 0.0 } else { -12.0 };
            58.0 - 20.0 * k.log10() + odd
        } else {
            floor
        };
        let _ = writeln!(scan, "{f:.0},{level:.2}");
        f += 2e6;
    }
    std::fs::write("data/demo/fm-clock-scan.csv", scan).unwrap();
    println!("wrote data/demo/fm-r10-on-fixture-1mm.s2p and data/demo/fm-clock-scan.csv");
}
