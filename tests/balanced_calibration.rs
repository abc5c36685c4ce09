//! The balanced loop's calibration from a 3-port file (line in, both outputs): the outputs'
//! difference through an ideal hybrid is calibrated as the probe's output. A file whose two
//! outputs carry the predicted difference in antiphase (plus a common part, which the
//! difference must ignore) gives back the predicted probe factor (self-consistency: the file
//! is made from the prediction, so this checks the 3-port path's arithmetic, not the model);
//! a 2-port file, a second port that is the line's, and a file with no difference are refused.

mod common;

use loopwright::pipeline::calibrate::{Request, run};
use std::path::PathBuf;

const HEIGHT_MM: f64 = 1.0;

fn demo(name: &str) -> PathBuf {
    common::demo_data(name)
}

/// FM-B20's predicted S21 (its difference) over the demo's fixture at 1 mm and its predicted
/// probe factor, from `predict --fixture --json`: (Hz, dB, degrees, PF dB(S/m)).
fn predicted() -> Vec<(f64, f64, f64, f64)> {
    let p = common::demo_probe_on_fixture("FM-B20", HEIGHT_MM);
    assert!(p["e_response"].as_array().is_some_and(|a| !a.is_empty()));
    let pf = p["probe_factor"].as_array().unwrap();
    p["fixture_coupling"]["s21"]
        .as_array()
        .unwrap()
        .iter()
        .zip(pf)
        .map(|(s, e)| {
            (
                s["freq_hz"].as_f64().unwrap(),
                s["db"].as_f64().unwrap(),
                s["deg"].as_f64().unwrap(),
                e["db_s_per_m"].as_f64().unwrap(),
            )
        })
        .collect()
}

/// A 3-port file (real/imaginary), line on port 1, outputs a and b on 2 and 3: a = Δ/√2 + c,
/// b = −Δ/√2 + c, with Δ the given S21 and c a common part `common_db` below it.
fn s3p(points: &[(f64, f64, f64, f64)], common_db: Option<f64>, name: &str) -> PathBuf {
    let mut t = String::from("! test data\n# Hz S RI R 50\n");
    for (f, db, deg, _) in points {
        let m = 10f64.powf(db / 20.0);
        let (re, im) = (m * deg.to_radians().cos(), m * deg.to_radians().sin());
        let k = std::f64::consts::FRAC_1_SQRT_2;
        let c = common_db.map_or(0.0, |c| m * 10f64.powf(c / 20.0));
        let a = (re * k + c, im * k);
        let b = match common_db {
            // No difference at all: both outputs alike.
            Some(x) if x > 100.0 => a,
            _ => (-re * k + c, -im * k),
        };
        // Row 1: S11 S12 S13; row 2: S21 S22 S23; row 3: S31 S32 S33 (reciprocal).
        t.push_str(&format!(
            "{f} 0.01 0 {} {} {} {}\n {} {} 0 0 0 0\n {} {} 0 0 0 0\n",
            a.0, a.1, b.0, b.1, a.0, a.1, b.0, b.1
        ));
    }
    common::tmp_file(name, &t)
}

fn request(touchstone: PathBuf) -> Request {
    Request {
        touchstone,
        line_port: None,
        probe_port: None,
        second_port: None,
        probes: demo("fenwick-marsh-probes.toml"),
        probe: Some("FM-B20".into()),
        fixture: demo("fenwick-marsh-fixture.toml"),
        height: HEIGHT_MM,
        uniform_line: false,
        accept_deviation: None,
    }
}

fn column(text: &str, name: &str) -> Vec<f64> {
    common::csv_column(text, name)
}

#[test]
fn the_predicted_difference_gives_back_the_predicted_factor() {
    let pts = predicted();
    let c = run(&request(s3p(&pts, Some(-10.0), "b20-cal.s3p"))).unwrap();
    let file = |suffix: &str| {
        let (_, b) = c
            .files
            .iter()
            .find(|(n, _)| n.to_string_lossy().ends_with(suffix))
            .unwrap_or_else(|| panic!("no {suffix}"));
        String::from_utf8(b.clone()).unwrap()
    };
    let measured = column(&file("-pf-measured.csv"), "pf_db_s_per_m");
    assert_eq!(measured.len(), pts.len());
    for (m, p) in measured.iter().zip(&pts) {
        assert!((m - p.3).abs() < 1e-3, "{} Hz: {m} vs {}", p.0, p.3);
    }
    let detail = file("-calibration.csv");
    assert!(detail.contains("Δ = (S21 − S31)/√2"), "{detail}");
    // The common part, 10 dB below the difference at every point: Σ/Δ = −10 dB + 20·log10(√2·
    // ...) — a = Δ/√2 + c, b = −Δ/√2 + c give Σ = √2·c, so Σ/Δ = c·√2/|Δ| = −10 dB + 3.01 dB.
    assert!(detail.contains("median -7.0 dB"), "{detail}");
    assert!(c.field_reference.contains("difference"));
}

#[test]
fn wrong_files_for_a_balanced_loop_are_refused() {
    let pts = predicted();
    // A 2-port file: one output alone is neither the difference nor the sum.
    let mut t = String::from("# Hz S DB R 50\n");
    for (f, db, deg, _) in &pts {
        t.push_str(&format!("{f} -40 0 {db} {deg} {db} {deg} -40 0\n"));
    }
    let e = run(&request(common::tmp_file("b20-one.s2p", &t)))
        .unwrap_err()
        .to_string();
    assert!(e.contains("--touchstone") && e.contains("3-port"), "{e}");
    // The second output named as the line's port.
    let mut r = request(s3p(&pts, None, "b20-ports.s3p"));
    r.second_port = Some(1);
    let e = run(&r).unwrap_err().to_string();
    assert!(e.contains("--second-port = 1"), "{e}");
    // The line on port 2 alone named: the outputs default to the other two ports, and the file
    // (whose line is on port 1) then reads as no probe's: refused by the checks or the gate,
    // not for a port the user never named.
    let mut r = request(s3p(&pts, None, "b20-line2.s3p"));
    r.line_port = Some(2);
    let e = run(&r).unwrap_err().to_string();
    assert!(
        !e.contains("--probe-port = 2") && e.contains("disagrees with the prediction"),
        "{e}"
    );
    // Both outputs alike: no difference at all.
    let e = run(&request(s3p(&pts, Some(1000.0), "b20-alike.s3p")))
        .unwrap_err()
        .to_string();
    assert!(e.contains("non-zero transmission"), "{e}");
    // Any other probe's 3-port file still needs its ports named (no balanced defaults).
    let mut r = request(s3p(&pts, None, "e2-3port.s3p"));
    r.probe = Some("FM-E2".into());
    let e = run(&r).unwrap_err().to_string();
    assert!(
        e.contains("--line-port") && e.contains("3-port file needs both"),
        "{e}"
    );
    // A singly-loaded loop refuses --second-port.
    let mut r = request(s3p(&pts, None, "b20-loop.s3p"));
    r.probe = Some("FM-R20".into());
    r.line_port = Some(1);
    r.probe_port = Some(2);
    r.second_port = Some(3);
    let e = run(&r).unwrap_err().to_string();
    assert!(
        e.contains("--second-port = 3") && e.contains("balanced"),
        "{e}"
    );
}
