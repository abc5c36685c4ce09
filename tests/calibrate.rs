//! `loopwright calibrate` end to end: Touchstone files written by the test from stated numbers
//! (the coupling model's S21 for a demo probe on the demo fixture) give back the probe factor
//! that made them; malformed files and bad flags are refused with their line or flag, and a
//! refused run writes nothing. The Touchstone layout follows the open version 1 specification.

mod common;

use common::tmp_file;
use loopwright::cli::demo::{DEMO_FIXTURE, DEMO_SPEC};
use loopwright::physics::coupling::{
    launch_current, line_to_uniform_db, probe_coupling, probe_s21,
};
use loopwright::spec::parse_toml;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

const PROBE: &str = "FM-R10";
const HEIGHT_MM: f64 = 1.5;

fn run(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_loopwright"))
        .args(args)
        .output()
        .expect("run loopwright")
}

/// The demo specs as files, and the model's predicted S21 and probe factor at `freqs`.
struct Model {
    probes: PathBuf,
    fixture: PathBuf,
    /// (Hz, S21 re, S21 im, predicted PF dB(S/m)).
    points: Vec<(f64, f64, f64, f64)>,
}

/// The demo's FM-R10 as predicted, and the demo fixture solved.
fn demo_probe_and_fixture() -> (
    loopwright::physics::predicted::Predicted,
    loopwright::model::fixture::Fixture,
    loopwright::solve::fixture::SolvedFixture,
) {
    let spec = parse_toml(DEMO_SPEC, "demo").unwrap();
    let all = loopwright::pipeline::predict::predict_spec(
        &spec,
        Path::new("."),
        &loopwright::physics::PredictOptions::default(),
    )
    .unwrap();
    let x = all.into_iter().find(|x| x.probe.name == PROBE).unwrap();
    let fx_spec = parse_toml(DEMO_FIXTURE, "fixture").unwrap();
    let fx = loopwright::model::fixture::fixture_from_spec(&fx_spec, Path::new(".")).unwrap();
    let fs = loopwright::solve::fixture::solve(&fx).unwrap();
    (x, fx, fs)
}

fn model() -> Model {
    let probes = tmp_file("probes.toml", DEMO_SPEC);
    let fixture = tmp_file("fixture.toml", DEMO_FIXTURE);
    let (x, fx, fs) = demo_probe_and_fixture();
    let line = fs.test_line(50.0);
    let c = probe_coupling(
        &x.probe,
        &x.solved,
        x.response.as_loop().unwrap(),
        HEIGHT_MM,
        &line,
    );
    let freqs: Vec<f64> = (0..25).map(|i| 1e6 * 10f64.powf(i as f64 / 8.0)).collect();
    // The line current under the probe: the fixture's launches (the default of calibrate).
    let secs = loopwright::solve::fixture::launch_sections(&fx, &fs).unwrap();
    let beyond: Vec<_> = secs.iter().rev().copied().collect();
    let points = probe_s21(
        &x.probe,
        &x.solved,
        x.response.as_loop().unwrap(),
        &c,
        &freqs,
    )
    .into_iter()
    .map(|(f, s)| {
        let s = s * launch_current(&secs, &beyond, 50.0, f);
        let (re, im) = (s.re, s.im);
        let pf = loopwright::physics::probe_factor_at(
            &x.probe,
            &x.solved,
            x.response.as_loop().unwrap(),
            f,
        );
        (f, re, im, pf)
    })
    .collect();
    Model {
        probes,
        fixture,
        points,
    }
}

/// A two-port file in one of the three formats, frequencies in `unit` (name, Hz per unit).
fn s2p(m: &Model, format: &str, unit: (&str, f64)) -> String {
    let mut o = format!(
        "! written by the calibrate test\n# {} S {format} R 50\n",
        unit.0
    );
    for &(f, re, im) in m
        .points
        .iter()
        .map(|(f, r, i, _)| (f, r, i))
        .collect::<Vec<_>>()
        .iter()
    {
        let (a, b) = match format {
            "RI" => (*re, *im),
            "MA" => (re.hypot(*im), im.atan2(*re).to_degrees()),
            _ => (20.0 * re.hypot(*im).log10(), im.atan2(*re).to_degrees()),
        };
        let s11 = match format {
            "DB" => "-26.0206 0".to_string(),
            _ => "0.05 0".to_string(),
        };
        o.push_str(&format!(
            "{:.12e} {s11} {a:.12e} {b:.12e} {a:.12e} {b:.12e} {s11}\n",
            f / unit.1
        ));
    }
    o
}

fn read_pf(path: &Path) -> Vec<(f64, f64)> {
    let text = std::fs::read_to_string(path).unwrap();
    // Comment lines (provenance, the gate's result) come first.
    let mut lines = text.lines().skip_while(|l| l.starts_with('#'));
    assert_eq!(
        lines.next(),
        Some("freq_hz,pf_db_s_per_m"),
        "{}",
        path.display()
    );
    lines
        .map(|l| {
            let (a, b) = l.split_once(',').unwrap();
            (a.parse().unwrap(), b.parse().unwrap())
        })
        .collect()
}

/// Calibrates the model's own MA/MHz file named `name`: (the Touchstone file, the measured
/// factor table written).
fn calibrated(m: &Model, name: &str) -> (PathBuf, PathBuf) {
    let ts = tmp_file(&format!("{name}.s2p"), &s2p(m, "MA", ("MHz", 1e6)));
    let out = ts.with_extension("cal");
    assert!(calibrate(m, &ts, &[], &out).status.success());
    let factor = out.join(format!("{PROBE}-pf-measured.csv"));
    (ts, factor)
}

fn calibrate(m: &Model, ts: &Path, extra: &[&str], out: &Path) -> Output {
    calibrate_probe(m, ts, PROBE, extra, out)
}

fn calibrate_probe(m: &Model, ts: &Path, probe: &str, extra: &[&str], out: &Path) -> Output {
    calibrate_with(m, ts, probe, &m.fixture, extra, out)
}

fn calibrate_with(
    m: &Model,
    ts: &Path,
    probe: &str,
    fixture: &Path,
    extra: &[&str],
    out: &Path,
) -> Output {
    let h = HEIGHT_MM.to_string();
    let mut args = vec![
        "calibrate",
        "--touchstone",
        ts.to_str().unwrap(),
        "--probes",
        m.probes.to_str().unwrap(),
        "--probe",
        probe,
        "--fixture",
        fixture.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ];
    // The files' own height unless the case states another.
    if !extra.contains(&"--height") {
        args.extend_from_slice(&["--height", &h]);
    }
    args.extend_from_slice(extra);
    run(&args)
}

#[test]
fn a_file_made_from_the_model_gives_back_its_probe_factor() {
    let m = model();
    let cases = [
        ("RI", ("MHz", 1e6)),
        ("MA", ("GHz", 1e9)),
        ("DB", ("Hz", 1.0)),
        ("MA", ("kHz", 1e3)),
    ];
    for (k, (format, unit)) in cases.iter().enumerate() {
        let ts = tmp_file(&format!("model{k}.s2p"), &s2p(&m, format, *unit));
        let out = ts.with_extension("cal");
        let o = calibrate(&m, &ts, &[], &out);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        let measured = read_pf(&out.join(format!("{PROBE}-pf-measured.csv")));
        let predicted = read_pf(&out.join(format!("{PROBE}-pf-predicted.csv")));
        assert_eq!(measured.len(), m.points.len());
        for ((f, pf), (&(f0, _, _, want), (_, pred))) in
            measured.iter().zip(m.points.iter().zip(&predicted))
        {
            assert!((f / f0 - 1.0).abs() < 1e-9);
            // The bound is 0.05 dB; the files carry 13 digits and the CSV 4 decimals.
            assert!((pf - want).abs() < 0.05, "{format} {f} Hz: {pf} vs {want}");
            assert!((pf - want).abs() < 1e-3, "{format} {f} Hz: {pf} vs {want}");
            assert!((pred - want).abs() < 1e-3);
        }
        for name in [
            "calibration.csv",
            "calibration.svg",
            "difference.svg",
            "calibration.md",
        ] {
            assert!(out.join(format!("{PROBE}-{name}")).is_file(), "{name}");
        }
        let notes = std::fs::read_to_string(out.join(format!("{PROBE}-calibration.md"))).unwrap();
        assert!(notes.contains("area-average"), "field reference stated");
    }
}

#[test]
fn a_three_port_file_uses_the_named_ports() {
    let m = model();
    // Port 1 on the line's far end (a bystander), port 2 on the line's input, port 3 on the
    // probe: only S32 carries the probe's response.
    let mut o = String::from("# MHz S RI R 50\n");
    for &(f, re, im, _) in &m.points {
        let z = "0.1 0 0.9 0 0.2 0";
        o.push_str(&format!(
            "{:.12e} {z}\n0.9 0 0.05 0 0.3 0\n0.2 0 {re:.12e} {im:.12e} 0.05 0\n",
            f / 1e6
        ));
    }
    let ts = tmp_file("three.s3p", &o);
    let out = ts.with_extension("cal");
    let r = calibrate(&m, &ts, &["--line-port", "2", "--probe-port", "3"], &out);
    assert!(r.status.success(), "{}", String::from_utf8_lossy(&r.stderr));
    let measured = read_pf(&out.join(format!("{PROBE}-pf-measured.csv")));
    for ((_, pf), &(_, _, _, want)) in measured.iter().zip(&m.points) {
        assert!((pf - want).abs() < 1e-3, "{pf} vs {want}");
    }
    // Without the ports named, a three-port file is refused.
    let out2 = ts.with_extension("cal2");
    let r = calibrate(&m, &ts, &[], &out2);
    assert_eq!(r.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&r.stderr).contains("--line-port"));
    assert!(!out2.exists());
}

#[test]
fn malformed_files_and_flags_are_refused_and_nothing_is_written() {
    let m = model();
    let good = s2p(&m, "RI", ("MHz", 1e6));
    let lines: Vec<&str> = good.lines().collect();
    let data = |ls: &[&str]| format!("{}\n", ls.join("\n"));
    let swapped = {
        let mut l = lines.clone();
        l.swap(3, 4);
        data(&l)
    };
    let duplicate = {
        let mut l = lines.clone();
        l[4] = l[3];
        data(&l)
    };
    let short = {
        let mut l: Vec<String> = lines.iter().map(|s| s.to_string()).collect();
        let cut: Vec<&str> = l[5].split(' ').collect();
        l[5] = cut[..cut.len() - 1].join(" ");
        format!("{}\n", l.join("\n"))
    };
    let nan = good.replacen("0.05 0", "NaN 0", 1);
    let cases: Vec<(String, &str, &str)> = vec![
        (
            good.replace("# MHz S RI R 50", "# MHz S XY R 50"),
            "line 2",
            "unknown option",
        ),
        (swapped, "line 5", "below the previous"),
        (duplicate, "line 5", "repeats"),
        (short, "line 6", "a missing or extra column"),
        (nan, "line 3", "not finite"),
        (String::new(), "line 1", "no data"),
        (
            "# MHz S RI R 50\n1 0 0 0 0 0 0 0 0 0 0 0 0 0 0 0 0 0 0\n".into(),
            "line 2",
            "wrong port count",
        ),
        (
            "# MHz S RI R 50\n[Version] 2.0\n".into(),
            "line 2",
            "version 2",
        ),
    ];
    for (k, (text, line, why)) in cases.iter().enumerate() {
        let ts = tmp_file(&format!("bad{k}.s2p"), text);
        let out = ts.with_extension("cal");
        let o = calibrate(&m, &ts, &[], &out);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "case {k}: {err}");
        assert!(!err.contains("panicked"), "case {k}: {err}");
        assert!(
            err.contains(&format!("bad{k}.s2p")) && err.contains(line) && err.contains(why),
            "case {k}: expected '{line}' and '{why}' in: {err}"
        );
        assert!(!out.exists(), "case {k}: output written");
    }
    let ts = tmp_file("ok.s2p", &good);
    let flag_cases: [(&[&str], &str); 3] = [
        (&["--line-port", "3"], "line-port"),
        (&["--probe-port", "1"], "must differ"),
        (&["--height", "-1"], "height"),
    ];
    for (k, (extra, want)) in flag_cases.iter().enumerate() {
        let out = ts.with_extension(format!("flag{k}"));
        let o = calibrate(&m, &ts, extra, &out);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{extra:?}: {err}");
        assert!(err.contains(want), "{extra:?}: {err}");
        assert!(!out.exists());
    }
    // An unknown probe name lists the spec's probes.
    let out = ts.with_extension("noprobe");
    let o = calibrate_probe(&m, &ts, "FM-X", &[], &out);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        err.contains("FM-X") && err.contains("FM-R10, FM-R5") || err.contains("FM-R10"),
        "{err}"
    );
    assert!(!out.exists());
}

#[test]
fn the_measured_table_feeds_convert() {
    // The calibrate output is a valid --factor table for convert: a reading of 0 dBµV gives
    // the probe factor itself as dBµA/m (no gain, attenuation or cable loss).
    let m = model();
    let (ts, factor) = calibrated(&m, "feed");
    let pf = read_pf(&factor);
    let (f, want) = pf[12];
    let readings = tmp_file("feed-readings.csv", &format!("freq_hz,level_dbuv\n{f},0\n"));
    let field = ts.with_extension("field.csv");
    let o = run(&[
        "convert",
        "--readings",
        readings.to_str().unwrap(),
        "--factor",
        factor.to_str().unwrap(),
        "--gain-db",
        "0",
        "--out",
        field.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = std::fs::read_to_string(&field).unwrap();
    let row = text.lines().nth(1).unwrap();
    let h: f64 = row.split(',').nth(1).unwrap().parse().unwrap();
    assert!((h - want).abs() < 1e-3, "{h} vs {want}");
}

#[test]
fn predict_with_a_fixture_gives_the_coupling_and_the_s21_behind_its_probe_factor() {
    let m = model();
    let o = run(&[
        "predict",
        m.probes.to_str().unwrap(),
        "--fixture",
        m.fixture.to_str().unwrap(),
        "--height",
        &HEIGHT_MM.to_string(),
        "--json",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    for p in v["probes"].as_array().unwrap() {
        let c = &p["fixture_coupling"];
        if p["kind"] == "electric" {
            // The electric probe held flat over the line: its predicted S21 and its predicted
            // factor are one model, EF = 20·log10(E/V_line) + 20·log10|V_line/V_inc| − |S21|dB
            // less the line's own loading of the electrode, 20·log10(|1 + jωR(Cs + Cc)|/|1 +
            // jωR·Cs|) (docs/formulas.md §11), at every tabulated frequency.
            let e = c["e_per_volt_per_m"].as_f64().unwrap();
            let (cs, cc) = (
                p["self_capacitance_pf"].as_f64().unwrap() * 1e-12,
                c["coupling_capacitance_ff"].as_f64().unwrap() * 1e-15,
            );
            let ef = p["electric_factor"].as_array().unwrap();
            let s21 = c["s21"].as_array().unwrap();
            assert_eq!(ef.len(), s21.len());
            for (a, b) in ef.iter().zip(s21) {
                let f = a["freq_hz"].as_f64().unwrap();
                assert_eq!(f, b["freq_hz"].as_f64().unwrap());
                let w = 2.0 * std::f64::consts::PI * f * 50.0;
                let loading =
                    10.0 * ((1.0 + (w * (cs + cc)).powi(2)) / (1.0 + (w * cs).powi(2))).log10();
                assert!(loading < 0.5, "{f}: {loading}");
                let from_s21 = 20.0 * e.log10() + b["line_voltage_db"].as_f64().unwrap()
                    - b["db"].as_f64().unwrap()
                    - loading;
                let got = a["db_per_m"].as_f64().unwrap();
                assert!((from_s21 - got).abs() < 1e-6, "{f}: {from_s21} vs {got}");
            }
            continue;
        }
        let h_avg = c["h_avg_per_amp"].as_f64().unwrap();
        assert!(c["mutual_ph"].as_f64().unwrap() < c["mutual_filament_ph"].as_f64().unwrap());
        // The predicted S21 and the predicted probe factor are one model: PF =
        // 20·log10(H_avg/I) + 20·log10|k| − 20·log10(50 Ω) − |S21|dB + 20·log10|1 − ω²LC| −
        // 20·log10(1 + A_handle/A_eff) at
        // every tabulated frequency, k the line current under the probe per V_inc/50 Ω (the
        // launch model), then the line's transfer against a uniform field's (L the outer
        // inductance, C the gap capacitance), less 20·log10(1 + A_handle/A_eff).
        let pf = p["probe_factor"].as_array().unwrap();
        let s21 = c["s21"].as_array().unwrap();
        // The handle's share of a uniform field, which the test line does not see.
        let (handle_mm2, a_eff_mm2) = (
            p["handle_area_mm2"].as_f64().unwrap(),
            p["effective_area_mm2"].as_f64().unwrap(),
        );
        assert!(handle_mm2 > 0.0 && handle_mm2 < a_eff_mm2, "{handle_mm2}");
        let lc = p["outer_inductance_nh"].as_f64().unwrap()
            * 1e-9
            * p["gap_capacitance_pf"].as_f64().unwrap()
            * 1e-12;
        assert_eq!(pf.len(), s21.len());
        // A balanced loop's line term is 1: the line's EMF is not next to either gap
        // (physics::Response::line_factor).
        let lc = if p["kind"] == "balanced" { 0.0 } else { lc };
        for (a, b) in pf.iter().zip(s21) {
            let k_db = b["line_current_db"].as_f64().unwrap();
            assert!(k_db.abs() < 3.0, "{k_db}");
            let w = 2.0 * std::f64::consts::PI * b["freq_hz"].as_f64().unwrap();
            let from_s21 =
                20.0 * h_avg.log10() + k_db - 20.0 * 50f64.log10() - b["db"].as_f64().unwrap()
                    + 20.0 * (1.0 - w * w * lc).abs().log10()
                    - 20.0 * (1.0 + handle_mm2 / a_eff_mm2).log10();
            let want = a["db_s_per_m"].as_f64().unwrap();
            assert!((from_s21 - want).abs() < 1e-9, "{from_s21} vs {want}");
            // Below the corner the loop's output leads the line current by nearly 90°.
            let deg = b["deg"].as_f64().unwrap();
            assert!(deg > 0.0 && deg < 90.0, "{deg}");
        }
    }
}

#[test]
fn what_the_model_cannot_stand_behind_is_refused() {
    let m = model();
    let good = s2p(&m, "MA", ("MHz", 1e6));
    // A 75 Ω reference: the probe model's load is 50 Ω.
    let r75 = tmp_file("r75.s2p", &good.replace("R 50", "R 75"));
    let out = r75.with_extension("cal");
    let o = calibrate(&m, &r75, &[], &out);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("R 75") && err.contains("50 Ω"), "{err}");
    assert!(!out.exists());
    // A 75 Ω fixture measured in 50 Ω: the line is not matched.
    let fx75 = tmp_file(
        "fixture75.toml",
        &DEMO_FIXTURE.replace("target_z0_ohms = 50.0", "target_z0_ohms = 75.0"),
    );
    let ts = tmp_file("ok50.s2p", &good);
    let out = ts.with_extension("cal75");
    let o = calibrate_with(&m, &ts, PROBE, &fx75, &[], &out);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("fixture.target_z0_ohms = 75"), "{err}");
    assert!(!out.exists());
    // A frequency that overflows its unit, and a transmission above 0 dB.
    let mut lines: Vec<String> = good.lines().map(String::from).collect();
    let mut cols: Vec<String> = lines[4].split(' ').map(String::from).collect();
    cols[0] = "1e305".into();
    lines[4] = cols.join(" ");
    let huge = tmp_file("huge.s2p", &(lines.join("\n") + "\n"));
    let mut lines: Vec<String> = good.lines().map(String::from).collect();
    let mut cols: Vec<String> = lines[3].split(' ').map(String::from).collect();
    cols[3] = "1.5".into();
    lines[3] = cols.join(" ");
    let gain = tmp_file("gain.s2p", &(lines.join("\n") + "\n"));
    for (ts, line, why) in [
        (&huge, "line 5", "not a finite number of Hz"),
        (&gain, "line 4", "above 0 dB"),
    ] {
        let out = ts.with_extension("cal");
        let o = calibrate(&m, ts, &[], &out);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{err}");
        assert!(err.contains(line) && err.contains(why), "{err}");
        assert!(!out.exists());
    }
}

#[test]
fn a_four_port_file_uses_the_named_ports() {
    let m = model();
    // Line input on port 4, probe on port 1; every other entry 0.1 so a wrong pick shows.
    let mut o = String::from("# GHz S RI R 50\n");
    for &(f, re, im, _) in &m.points {
        let mut rows = vec![vec![(0.1, 0.0); 4]; 4];
        rows[0][3] = (re, im); // S14: port 1 (probe) from port 4 (line)
        for (r, row) in rows.iter().enumerate() {
            if r == 0 {
                o.push_str(&format!("{:.12e}", f / 1e9));
            }
            for (a, b) in row {
                o.push_str(&format!(" {a:.12e} {b:.12e}"));
            }
            o.push('\n');
        }
    }
    let ts = tmp_file("four.s4p", &o);
    let out = ts.with_extension("cal");
    let r = calibrate(&m, &ts, &["--line-port", "4", "--probe-port", "1"], &out);
    assert!(r.status.success(), "{}", String::from_utf8_lossy(&r.stderr));
    let measured = read_pf(&out.join(format!("{PROBE}-pf-measured.csv")));
    assert_eq!(measured.len(), m.points.len());
    for ((_, pf), &(_, _, _, want)) in measured.iter().zip(&m.points) {
        assert!((pf - want).abs() < 1e-3, "{pf} vs {want}");
    }
}

// The plausibility gate. Each wrong input is one the issue names, made from the model's own S21
// at HEIGHT_MM (so the stated setup is the only thing wrong); the first cause the diagnosis
// names must be the one that was put in.

/// A two-port RI file in MHz whose S21 is `s21(f, re, im)` (S11, S22 at −26 dB).
fn s2p_with(m: &Model, s21: impl Fn(f64, f64, f64) -> (f64, f64)) -> String {
    let mut o = String::from("! gate test\n# MHz S RI R 50\n");
    for &(f, re, im, _) in &m.points {
        let (a, b) = s21(f, re, im);
        o.push_str(&format!(
            "{:.12e} 0.05 0 {a:.12e} {b:.12e} {a:.12e} {b:.12e} 0.05 0\n",
            f / 1e6
        ));
    }
    o
}

/// Runs calibrate expecting a refusal; returns stderr, checking nothing was written.
fn refused(m: &Model, name: &str, text: &str, probe: &str, extra: &[&str]) -> String {
    let ts = tmp_file(name, text);
    let out = ts.with_extension("cal");
    let o = calibrate_probe(m, &ts, probe, extra, &out);
    let err = String::from_utf8_lossy(&o.stderr).to_string();
    assert_eq!(o.status.code(), Some(2), "{name}: {err}");
    assert!(!err.contains("panicked"), "{name}: {err}");
    assert!(err.contains("nothing was written"), "{name}: {err}");
    assert!(!out.exists(), "{name}: output written");
    err
}

/// The first cause the diagnosis names (the line after the header).
fn first_cause(err: &str) -> String {
    let mut lines = err.lines();
    lines
        .find(|l| l.contains("explain the data"))
        .unwrap_or_else(|| panic!("no diagnosis in: {err}"));
    lines.next().unwrap().to_string()
}

#[test]
fn the_gate_refuses_each_wrong_input_and_names_its_cause_first() {
    let m = model();
    let good = s2p_with(&m, |_, re, im| (re, im));
    // Height 50 mm for data taken at 1.5 mm.
    let err = refused(&m, "h50.s2p", &good, PROBE, &["--height", "50"]);
    let c = first_cause(&err);
    assert!(c.contains("1. height") && c.contains("1.50 mm"), "{err}");
    assert!(err.contains("level -"), "the level is negative: {err}");
    // The option line says kHz for data in MHz.
    let err = refused(&m, "khz.s2p", &good.replace("# MHz", "# kHz"), PROBE, &[]);
    let c = first_cause(&err);
    assert!(
        c.contains("frequency unit") && c.contains("MHz, not kHz"),
        "{err}"
    );
    // The wrong probe of the spec: a 20 mm and a 5 mm loop named for the 10 mm loop's data.
    for wrong in ["FM-R20", "FM-R5"] {
        let err = refused(&m, &format!("as-{wrong}.s2p"), &good, wrong, &[]);
        let c = first_cause(&err);
        assert!(
            c.contains("1. probe") && c.contains(&format!("{PROBE}'s, not {wrong}'s")),
            "{wrong}: {err}"
        );
    }
    // A 20 dB pad left between the probe and the VNA.
    let pad = s2p_with(&m, |_, re, im| (0.1 * re, 0.1 * im));
    let err = refused(&m, "pad.s2p", &pad, PROBE, &[]);
    let c = first_cause(&err);
    assert!(
        c.contains("attenuator of 20.0 dB") && c.contains("20 dB pad"),
        "{err}"
    );
    assert!(err.contains("level +20.00 dB"), "{err}");
}

#[test]
fn swapped_ports_are_named() {
    let m = model();
    // Two ports, the probe and the far-end load swapped: S21 is the line's through path
    // (−0.2 dB, the line's delay as phase).
    let through = s2p_with(&m, |f, _, _| {
        let a = 10f64.powf(-0.2 / 20.0);
        let ph = -2.0 * std::f64::consts::PI * f * 0.4e-9;
        (a * ph.cos(), a * ph.sin())
    });
    let err = refused(&m, "through.s2p", &through, PROBE, &[]);
    let c = first_cause(&err);
    assert!(
        c.contains("1. ports") && c.contains("through path"),
        "{err}"
    );
    // Three ports (line in 1, line out 2, probe 3) read as line 1 → probe 2.
    let mut o = String::from("# MHz S RI R 50\n");
    for &(f, re, im, _) in &m.points {
        o.push_str(&format!(
            "{:.12e} 0.05 0 0.97 0 {re:.12e} {im:.12e}\n0.97 0 0.05 0 {re:.12e} {im:.12e}\n\
             {re:.12e} {im:.12e} {re:.12e} {im:.12e} 0.3 0\n",
            f / 1e6
        ));
    }
    let err = refused(
        &m,
        "three-swapped.s3p",
        &o,
        PROBE,
        &["--line-port", "1", "--probe-port", "2"],
    );
    let c = first_cause(&err);
    assert!(
        c.contains("1. ports") && c.contains("--line-port 1 --probe-port 3"),
        "{err}"
    );
}

#[test]
fn a_correct_file_passes_the_gate_and_says_so() {
    let m = model();
    // Within the limits: the model's S21 with a 2 dB offset, 1 dB/decade of slope and 0.5 dB
    // of ripple (a measurement that differs as real ones do).
    let dev = |f: f64| 2.0 + 1.0 * (f / 3e7).log10() + 0.5 * (f / 1e7).log10().sin();
    let text = s2p_with(&m, |f, re, im| {
        let k = 10f64.powf(-dev(f) / 20.0);
        (k * re, k * im)
    });
    let ts = tmp_file("within.s2p", &text);
    let out = ts.with_extension("cal");
    let o = calibrate(&m, &ts, &[], &out);
    let stdout = String::from_utf8_lossy(&o.stdout);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(stdout.contains("plausibility gate passed"), "{stdout}");
    let notes = std::fs::read_to_string(out.join(format!("{PROBE}-calibration.md"))).unwrap();
    assert!(notes.contains("## Plausibility gate") && notes.contains("gate passed"));
    let csv = std::fs::read_to_string(out.join(format!("{PROBE}-pf-measured.csv"))).unwrap();
    assert!(
        csv.starts_with("# loopwright probe factor, measured\n"),
        "{csv}"
    );
    assert!(csv.contains("# plausibility gate passed"));
}

#[test]
fn accept_deviation_writes_and_records_it_only_when_it_covers_the_difference() {
    let m = model();
    let pad = s2p_with(&m, |_, re, im| (0.1 * re, 0.1 * im));
    // 20 dB off everywhere (to 4 decimals): 19.9 does not cover it, 20.5 does.
    let err = refused(
        &m,
        "pad-short.s2p",
        &pad,
        PROBE,
        &["--accept-deviation", "19.9"],
    );
    assert!(
        err.contains("--accept-deviation 19.9 does not cover"),
        "{err}"
    );
    let ts = tmp_file("pad-accepted.s2p", &pad);
    let out = ts.with_extension("cal");
    let o = calibrate(&m, &ts, &["--accept-deviation", "20.5"], &out);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let notes = std::fs::read_to_string(out.join(format!("{PROBE}-calibration.md"))).unwrap();
    assert!(
        notes.contains("gate FAILED") && notes.contains("--accept-deviation 20.5 dB"),
        "{notes}"
    );
    for name in ["pf-measured.csv", "calibration.csv"] {
        let csv = std::fs::read_to_string(out.join(format!("{PROBE}-{name}"))).unwrap();
        assert!(
            csv.contains("# written anyway: --accept-deviation 20.5 dB"),
            "{name}: {csv}"
        );
        assert!(csv.contains("attenuator of 20.0 dB"), "{name}");
    }
    // The measured table still reads as a probe factor, 20 dB above the prediction.
    let measured = read_pf(&out.join(format!("{PROBE}-pf-measured.csv")));
    for ((_, pf), &(_, _, _, want)) in measured.iter().zip(&m.points) {
        assert!((pf - want - 20.0).abs() < 1e-3, "{pf} vs {want} + 20");
    }
}

// The launch-aware line current, against scikit-rf: tests/reference/launch_refs.py states a
// line (the demo fixture with a 0.7457 mm centre pad: a 93 Ω neck at each port, a taper, the
// 50 Ω line), puts a probe of stated probe factor at its middle, and writes the 3-port file
// tests/data/launch_skrf.s3p (line in 1, line out 2, probe 3) and the current under the probe
// per V_inc/R (tests/data/launch_refs.toml), both by scikit-rf 2.2.0.

fn launch_refs() -> toml::Value {
    let p = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/launch_refs.toml");
    toml::from_str(&std::fs::read_to_string(p).unwrap()).unwrap()
}

/// The stated line's left half (port 1 to the middle) as sections.
fn stated_sections(refs: &toml::Value) -> Vec<loopwright::solve::network::Section> {
    refs["sections"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| {
            let v: Vec<f64> = x
                .as_array()
                .unwrap()
                .iter()
                .map(|y| y.as_float().unwrap())
                .collect();
            loopwright::solve::network::Section::Line {
                len_m: v[0],
                z0: v[1],
                eps_eff: v[2],
            }
        })
        .collect()
}

#[test]
fn a_line_with_a_93_ohm_neck_round_trips_through_the_launch_aware_current() {
    use loopwright::calib::calibrate::{LineCurrent, calibrate};
    let refs = launch_refs();
    let points = refs["point"].as_array().unwrap();
    let stated: Vec<(f64, f64, f64)> = points
        .iter()
        .map(|p| {
            (
                p["freq_hz"].as_float().unwrap(),
                p["pf_db_s_per_m"].as_float().unwrap(),
                p["current_db"].as_float().unwrap(),
            )
        })
        .collect();
    // Our cascade of the stated sections gives scikit-rf's current under the probe (0.01 dB).
    let secs = stated_sections(&refs);
    let beyond: Vec<_> = secs.iter().rev().copied().collect();
    let k = |f: f64| launch_current(&secs, &beyond, 50.0, f);
    let mut largest: f64 = 0.0;
    for (f, _, want) in &stated {
        let got = 20.0 * k(*f).abs().log10();
        assert!(
            (got - want).abs() < 0.01,
            "{f} Hz: {got} vs scikit-rf {want}"
        );
        largest = largest.max(want.abs());
    }
    assert!(largest > 2.5, "{largest}");
    // Calibrating the scikit-rf 3-port file with that current gives the stated probe factor
    // back within 0.1 dB to 3 GHz; with a uniform line's current it misses by scikit-rf's k.
    let (x, _, fs) = demo_probe_and_fixture();
    let ts = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/launch_skrf.s3p");
    let text = std::fs::read_to_string(&ts).unwrap();
    let net = loopwright::calib::touchstone::parse(&text, "launch_skrf.s3p", 3).unwrap();
    let uniform = |_: f64| loopwright::math::Cx::new(1.0, 0.0);
    for (name, ratio) in [
        ("launch", &k as &dyn Fn(f64) -> loopwright::math::Cx),
        ("uniform", &uniform),
    ] {
        let cal = calibrate(
            &x.probe,
            &x.solved,
            x.response.as_loop().unwrap(),
            fs.test_line(50.0),
            50.0,
            &net,
            "launch_skrf.s3p",
            (1, 3),
            1.0,
            &LineCurrent {
                source: name.into(),
                ratio,
            },
        )
        .unwrap();
        assert_eq!(cal.points.len(), stated.len());
        for (pt, (f0, want, kk)) in cal.points.iter().zip(&stated) {
            assert!((pt.f / f0 - 1.0).abs() < 1e-9);
            // The stated factor is the line's own (no gap capacitance): take off the
            // conversion to the uniform-field factor that the calibration adds.
            let miss = pt.pf_db - line_to_uniform_db(x.response.as_loop().unwrap(), pt.f) - want;
            if name == "launch" {
                assert!(miss.abs() < 0.1, "{f0} Hz: {} vs {want}", pt.pf_db);
            } else {
                assert!((miss + kk).abs() < 0.02, "{f0} Hz: {miss} vs −{kk}");
            }
        }
    }
}

#[test]
fn convert_warns_above_the_usable_band_and_extrapolates_past_it_only_when_told_twice() {
    // The model file's points run 1 MHz to 1 GHz at 8 per decade; FM-R10's upper usable
    // frequency is 954 MHz, so the band stated in the measured table ends at 10^(23/8) MHz.
    let m = model();
    let (ts, factor) = calibrated(&m, "band");
    let text = std::fs::read_to_string(&factor).unwrap();
    let hi = 1e6 * 10f64.powf(23.0 / 8.0);
    let band = text
        .lines()
        .find(|l| l.starts_with("# usable band: "))
        .unwrap();
    let lo_hi: Vec<f64> = band
        .split_whitespace()
        .filter_map(|w| w.parse().ok())
        .collect();
    assert!(
        (lo_hi[0] / 1e6 - 1.0).abs() < 1e-9 && (lo_hi[1] / hi - 1.0).abs() < 1e-9,
        "{band}"
    );
    for key in [
        "# probe: FM-R10",
        "# field reference: uniform H normal to the loop (from the test line's area-average H)",
        "# source: calibrated from band.s2p",
    ] {
        assert!(text.contains(key), "{key}: {text}");
    }
    let convert = |name: &str, rows: &str, extra: &[&str]| {
        let readings = tmp_file(
            &format!("{name}.csv"),
            &format!("freq_hz,level_dbuv\n{rows}"),
        );
        let field = ts.with_extension(format!("{name}.field.csv"));
        let mut args = vec![
            "convert",
            "--readings",
            readings.to_str().unwrap(),
            "--factor",
            factor.to_str().unwrap(),
            "--gain-db",
            "0",
            "--out",
            field.to_str().unwrap(),
        ];
        args.extend_from_slice(extra);
        (run(&args), field)
    };
    // Two of three readings above the band (inside the table): converted, warned, marked.
    let (o, field) = convert("above", "1e8,0\n8e8,0\n9e8,0\n", &[]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("2 reading(s) from 800000000 Hz to 900000000 Hz lie above"),
        "{err}"
    );
    let csv = std::fs::read_to_string(&field).unwrap();
    let flags: Vec<&str> = csv.lines().map(|l| l.rsplit(',').next().unwrap()).collect();
    assert_eq!(flags, ["above_band", "false", "true", "true"], "{csv}");
    // Past the table: --extrapolate alone is refused, naming --beyond-band; nothing written.
    let (o, field) = convert("past", "1e8,0\n2e9,0\n", &["--extrapolate"]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("--extrapolate") && err.contains("--beyond-band"),
        "{err}"
    );
    assert!(!field.exists());
    let (o, field) = convert(
        "past2",
        "1e8,0\n2e9,0\n",
        &["--extrapolate", "--beyond-band"],
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(String::from_utf8_lossy(&o.stderr).contains("1 reading(s) from 2000000000 Hz"));
    assert!(field.exists());
}
