//! The electric probe's calibration on the demo's fixture, from the line voltage under it: a
//! file that carries the predicted S21 gives back the predicted factor, and the wrong data a
//! bench produces (a forgotten 10 dB pad, a loop's file, swapped frequency units) is refused
//! with nothing written.

mod common;

use loopwright::pipeline::calibrate::{Request, run};
use std::path::{Path, PathBuf};

const HEIGHT_MM: f64 = 1.0;

fn demo(name: &str) -> PathBuf {
    common::demo_data(name)
}

/// The predicted S21 of the demo's electric probe over the demo's fixture at 1 mm, from
/// `predict --fixture` (its JSON): (Hz, dB, degrees), with the predicted factor.
fn predicted() -> Vec<(f64, f64, f64, f64)> {
    let p = common::demo_probe_on_fixture("FM-E2", HEIGHT_MM);
    let ef = p["electric_factor"].as_array().unwrap();
    p["fixture_coupling"]["s21"]
        .as_array()
        .unwrap()
        .iter()
        .zip(ef)
        .map(|(s, e)| {
            (
                s["freq_hz"].as_f64().unwrap(),
                s["db"].as_f64().unwrap(),
                s["deg"].as_f64().unwrap(),
                e["db_per_m"].as_f64().unwrap(),
            )
        })
        .collect()
}

/// A two-port file in dB/angle, the line's input on port 1, the probe on port 2, S21 offset by
/// `pad_db` and its frequencies written in `unit`.
fn s2p(points: &[(f64, f64, f64, f64)], pad_db: f64, unit: (&str, f64)) -> PathBuf {
    let mut t = format!("! test data\n# {} S DB R 50\n", unit.0);
    for (f, db, deg, _) in points {
        let s21 = db - pad_db;
        t.push_str(&format!(
            "{} -40 0 {s21:.6} {deg:.4} {s21:.6} {deg:.4} -40 0\n",
            f / unit.1
        ));
    }
    common::tmp_file(&format!("e2-{pad_db}-{}.s2p", unit.0), &t)
}

fn request(touchstone: PathBuf) -> Request {
    Request {
        touchstone,
        line_port: None,
        probe_port: None,
        probes: demo("fenwick-marsh-probes.toml"),
        probe: Some("FM-E2".into()),
        fixture: demo("fenwick-marsh-fixture.toml"),
        height: HEIGHT_MM,
        uniform_line: false,
        second_port: None,
        accept_deviation: None,
    }
}

fn column(text: &str, name: &str) -> Vec<f64> {
    common::csv_column(text, name)
}

#[test]
fn the_predicted_s21_gives_back_the_predicted_factor() {
    let pts = predicted();
    let c = run(&request(s2p(&pts, 0.0, ("Hz", 1.0)))).unwrap();
    let file = |suffix: &str| {
        let (_, b) = c
            .files
            .iter()
            .find(|(n, _)| n.to_string_lossy().ends_with(suffix))
            .unwrap_or_else(|| panic!("no {suffix}"));
        String::from_utf8(b.clone()).unwrap()
    };
    let measured = column(&file("-ef-measured.csv"), "ef_db_per_m");
    assert_eq!(measured.len(), pts.len());
    for (m, p) in measured.iter().zip(&pts) {
        // The file's S21 is written to 1e-6 dB.
        assert!((m - p.3).abs() < 1e-3, "{} Hz: {m} vs {}", p.0, p.3);
    }
    let detail = file("-calibration.csv");
    assert!(
        column(&detail, "difference_db")
            .iter()
            .all(|d| d.abs() < 1e-3)
    );
    // The measured table feeds `convert`, which gives E from it: at the table's 10th frequency a
    // reading of −60 dBm with no preamp is E = −60 + 106.99 + EF dBµV/m.
    let table = common::tmp_file("e2-ef-measured.csv", &file("-ef-measured.csv"));
    let (f10, ef10) = (pts[10].0, measured[10]);
    let readings = common::tmp_file(
        "e2-readings.csv",
        &format!("freq_hz,level_dbm\n{f10},-60\n"),
    );
    let out = table.with_file_name("e2-field.csv");
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_loopwright"))
        .args(["convert", "--readings"])
        .arg(&readings)
        .arg("--factor")
        .arg(&table)
        .args(["--gain-db", "0", "--out"])
        .arg(&out)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let field = std::fs::read_to_string(&out).unwrap();
    let e = column(&field, "e_dbuv_per_m");
    assert!((e[0] - (-60.0 + 106.9897 + ef10)).abs() < 1e-3, "{field}");
    let notes = file("-calibration.md");
    assert!(notes.contains("E / V_probe") && notes.contains("SAFETY"));
    assert!(c.report[0].contains("FM-E2 (electric)"), "{:?}", c.report);
}

#[test]
fn wrong_data_is_refused() {
    let pts = predicted();
    // A forgotten 10 dB pad: the factor reads 10 dB high.
    let err = run(&request(s2p(&pts, 10.0, ("Hz", 1.0))))
        .unwrap_err()
        .to_string();
    assert!(err.contains("beyond the plausibility limits"), "{err}");
    // The frequencies written in MHz but declared in kHz: every point a thousand times too low,
    // where the predicted factor is 60 dB higher.
    let err = run(&request(s2p(&pts, 0.0, ("kHz", 1e6))))
        .unwrap_err()
        .to_string();
    assert!(err.contains("beyond the plausibility limits"), "{err}");
    // A loop's measurement (the demo's invented FM-R10 file) named as the electric probe's.
    let err = run(&request(demo("fm-r10-on-fixture-1mm.s2p")))
        .unwrap_err()
        .to_string();
    assert!(err.contains("beyond the plausibility limits"), "{err}");
}

// The face rests over any fixture line a user can build: on a grounded coplanar line too (its
// coplanar grounds on the surface under the face), the loops' predictions unaffected; a face
// lower than the coated line's solder mask is refused naming --height.
#[test]
fn the_electric_probe_couples_to_a_coplanar_fixture_and_the_coat_bounds_the_height() {
    let text = std::fs::read_to_string(demo("fenwick-marsh-fixture.toml"))
        .unwrap()
        .replace("structure = \"microstrip\"", "structure = \"cpwg\"");
    assert!(text.contains("\"cpwg\""));
    let cpwg = common::tmp_file("cpwg-fixture.toml", &text);
    let predict = |fixture: &Path, height: &str| {
        std::process::Command::new(env!("CARGO_BIN_EXE_loopwright"))
            .args([
                "predict",
                demo("fenwick-marsh-probes.toml").to_str().unwrap(),
            ])
            .arg("--fixture")
            .arg(fixture)
            .args(["--height", height, "--json"])
            .output()
            .unwrap()
    };
    let o = predict(&cpwg, "1");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    for p in v["probes"].as_array().unwrap() {
        let c = &p["fixture_coupling"];
        if p["kind"] == "electric" {
            let cc = c["coupling_capacitance_ff"].as_f64().unwrap();
            // Near the microstrip fixture's 36 fF: the coplanar grounds take some of the field.
            assert!(cc > 10.0 && cc < 40.0, "{cc} fF");
        } else {
            assert!(c["mutual_ph"].as_f64().unwrap() > 0.0);
        }
    }
    // The demo fixture's line is coated (the 2-layer stackup's mask, 0.02 mm over it).
    let o = predict(&demo("fenwick-marsh-fixture.toml"), "0.01");
    assert!(!o.status.success());
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("--height = 0.01") && err.contains("coat"),
        "{err}"
    );
}
