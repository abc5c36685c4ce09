//! `loopwright calibrate` end to end: Touchstone files written by the test from stated numbers
//! (the coupling model's S21 for a demo probe on the demo fixture) give back the probe factor
//! that made them; malformed files and bad flags are refused with their line or flag, and a
//! refused run writes nothing. The Touchstone layout follows the open version 1 specification.

mod common;

use common::tmp_file;
use loopwright::cli::demo::{DEMO_FIXTURE, DEMO_SPEC};
use loopwright::physics::coupling::{probe_coupling, probe_s21};
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

fn model() -> Model {
    let probes = tmp_file("probes.toml", DEMO_SPEC);
    let fixture = tmp_file("fixture.toml", DEMO_FIXTURE);
    let spec = parse_toml(DEMO_SPEC, "demo").unwrap();
    let all = loopwright::cli::predict::predict_spec(
        &spec,
        Path::new("."),
        &loopwright::physics::PredictOptions::default(),
    )
    .unwrap();
    let x = all.into_iter().find(|x| x.probe.name == PROBE).unwrap();
    let fx_spec = parse_toml(DEMO_FIXTURE, "fixture").unwrap();
    let fx = loopwright::model::fixture::fixture_from_spec(&fx_spec, Path::new(".")).unwrap();
    let fs = loopwright::solve::fixture::solve(&fx).unwrap();
    let line = fs.test_line(50.0);
    let c = probe_coupling(&x.probe, &x.solved, &x.response, HEIGHT_MM, &line);
    let freqs: Vec<f64> = (0..25).map(|i| 1e6 * 10f64.powf(i as f64 / 8.0)).collect();
    let points = probe_s21(&x.probe, &x.solved, &x.response, &c, &freqs)
        .into_iter()
        .map(|(f, (re, im))| {
            let pf = loopwright::physics::probe_factor_at(&x.probe, &x.solved, &x.response, f);
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
    let mut lines = text.lines();
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
        "--height",
        &h,
        "--out",
        out.to_str().unwrap(),
    ];
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
    let ts = tmp_file("feed.s2p", &s2p(&m, "MA", ("MHz", 1e6)));
    let out = ts.with_extension("cal");
    assert!(calibrate(&m, &ts, &[], &out).status.success());
    let factor = out.join(format!("{PROBE}-pf-measured.csv"));
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
        let h_avg = c["h_avg_per_amp"].as_f64().unwrap();
        assert!(c["mutual_ph"].as_f64().unwrap() < c["mutual_filament_ph"].as_f64().unwrap());
        // The predicted S21 and the predicted probe factor are one model: PF =
        // 20·log10(H_avg/I) − 20·log10(50 Ω) − |S21|dB at every tabulated frequency.
        let pf = p["probe_factor"].as_array().unwrap();
        let s21 = c["s21"].as_array().unwrap();
        assert_eq!(pf.len(), s21.len());
        for (a, b) in pf.iter().zip(s21) {
            let from_s21 = 20.0 * h_avg.log10() - 20.0 * 50f64.log10() - b["db"].as_f64().unwrap();
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
