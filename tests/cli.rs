//! The `loopwright` binary: its documented interface, and its refusals of bad input.

mod common;

use std::path::PathBuf;
use std::process::{Command, Output};

fn run(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_loopwright"))
        .args(args)
        .output()
        .expect("run loopwright")
}

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn json(args: &[&str]) -> serde_json::Value {
    let o = run(args);
    assert!(o.status.success(), "{args:?}: {}", stderr(&o));
    serde_json::from_slice(&o.stdout).expect("JSON output")
}

/// A refusal: exit code 2, no panic, and a message naming every given fragment.
fn refused(args: &[&str], fragments: &[&str]) {
    let o = run(args);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "{args:?}: {err}");
    assert!(!err.contains("panicked"), "{args:?}: {err}");
    assert!(o.stdout.is_empty(), "{args:?} printed a result");
    for f in fragments {
        assert!(err.contains(f), "{args:?}: '{f}' not in: {err}");
    }
}

fn tmp_file(name: &str, text: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("loopwright-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join(name);
    common::write_atomically(&p, text);
    p
}

/// One everyday line of each structure, as `impedance` flags.
const STRUCTURE_CASES: [&[&str]; 4] = [
    &[
        "--structure",
        "microstrip",
        "--er",
        "4.3",
        "--h",
        "0.2",
        "--t",
        "0.035",
    ],
    &[
        "--structure",
        "coated-microstrip",
        "--er",
        "4.3",
        "--h",
        "0.2",
        "--mask-t",
        "0.02",
        "--mask-er",
        "3.5",
    ],
    &[
        "--structure",
        "stripline",
        "--er",
        "4.3",
        "--h1",
        "0.2",
        "--h2",
        "1.0",
        "--t",
        "0",
    ],
    &[
        "--structure",
        "cpwg",
        "--er",
        "4.3",
        "--h",
        "0.2",
        "--gap",
        "0.15",
        "--t",
        "0",
    ],
];

#[test]
fn json_has_the_documented_keys_for_every_structure() {
    let cases = STRUCTURE_CASES;
    for c in cases {
        for extra in [&["--width", "0.3"][..], &["--target", "50"][..]] {
            let mut args = vec!["impedance", "--json"];
            args.extend_from_slice(c);
            args.extend_from_slice(extra);
            let v = json(&args);
            for k in ["z0_ohms", "eps_eff", "width_mm"] {
                assert!(v[k].as_f64().unwrap() > 0.0, "{k} in {v}");
            }
            assert!(v["method"].is_string());
            assert!(v["warnings"].is_array());
            if extra[0] == "--target" {
                assert!((v["z0_ohms"].as_f64().unwrap() - 50.0).abs() < 0.05);
            } else {
                assert_eq!(v["width_mm"].as_f64().unwrap(), 0.3);
            }
        }
    }
}

// Cohn's exact value for w/b = 0.5, εr = 4.3: 48.4328 Ω (scipy, see tests/data).
#[test]
fn stripline_default_method_is_cohn_at_zero_thickness() {
    let v = json(&[
        "impedance",
        "--json",
        "--structure",
        "stripline",
        "--er",
        "4.3",
        "--h1",
        "0.5",
        "--h2",
        "0.5",
        "--t",
        "0",
        "--width",
        "0.5",
    ]);
    assert_eq!(v["method"], "cohn");
    assert!((v["z0_ohms"].as_f64().unwrap() - 48.4328).abs() < 1e-4);
}

#[test]
fn method_flag_selects_the_formula() {
    let v = json(&[
        "impedance",
        "--json",
        "--structure",
        "microstrip",
        "--er",
        "4.3",
        "--h",
        "1",
        "--t",
        "0",
        "--width",
        "1",
        "--method",
        "ipc-2141",
    ]);
    assert_eq!(v["method"], "ipc-2141");
    // IPC-2141 worked value at w/h = 1, t = 0, εr = 4.3: 73.238 Ω (tests/data).
    assert!((v["z0_ohms"].as_f64().unwrap() - 73.238).abs() < 1e-3);
}

#[test]
fn outside_validity_still_answers_with_a_warning() {
    let o = run(&[
        "impedance",
        "--json",
        "--structure",
        "microstrip",
        "--er",
        "4.3",
        "--h",
        "1",
        "--t",
        "0",
        "--width",
        "5",
        "--method",
        "ipc-2141",
    ]);
    assert!(o.status.success());
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let w = v["warnings"].as_array().unwrap();
    assert!(
        w.iter()
            .any(|x| x.as_str().unwrap().contains("validity range")),
        "{v}"
    );
}

#[test]
fn geometry_from_a_builtin_stackup() {
    let v = json(&[
        "impedance",
        "--json",
        "--stackup",
        "common-4l-1.6",
        "--layer",
        "2",
    ]);
    assert_eq!(v["structure"], "stripline");
    assert!((v["z0_ohms"].as_f64().unwrap() - 50.0).abs() < 0.05);
    assert_eq!(v["geometry"]["h1_mm"].as_f64().unwrap(), 0.21);
    assert_eq!(v["geometry"]["h2_mm"].as_f64().unwrap(), 1.065);
    let top = json(&[
        "impedance",
        "--json",
        "--stackup",
        "common-4l-1.6",
        "--layer",
        "1",
    ]);
    assert_eq!(top["structure"], "coated-microstrip");
}

#[test]
fn table_output_shows_z0_and_spread() {
    let o = run(&[
        "impedance",
        "--stackup",
        "slim-4l-0.8",
        "--layer",
        "2",
        "--target",
        "50",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let s = stdout(&o);
    assert!(
        s.contains("Z0") && s.contains("50.00 Ω") && s.contains("spread"),
        "{s}"
    );
}

#[test]
fn bad_numbers_are_refused_naming_field_value_and_range() {
    let base = [
        "impedance",
        "--structure",
        "microstrip",
        "--h",
        "0.2",
        "--width",
        "0.3",
    ];
    let with = |extra: &[&'static str]| {
        let mut v = base.to_vec();
        v.extend_from_slice(extra);
        v
    };
    refused(&with(&["--er", "-4"]), &["--er", "-4", "from 1 to 200"]);
    refused(&with(&["--er", "0"]), &["--er", "0", "from 1 to 200"]);
    refused(&with(&["--er", "NaN"]), &["--er", "NaN", "from 1 to 200"]);
    refused(
        &with(&["--er", "4", "--t", "-0.1"]),
        &[
            "--t",
            "-0.1",
            "must be 0 (zero thickness) or a finite number from 1e-9 to",
        ],
    );
    refused(
        &[
            "impedance",
            "--structure",
            "microstrip",
            "--er",
            "4",
            "--h",
            "0",
            "--width",
            "0.3",
        ],
        &["--h", "= 0", "from 0.0001 to 1000"],
    );
    refused(
        &[
            "impedance",
            "--structure",
            "microstrip",
            "--er",
            "4",
            "--h",
            "0.2",
            "--width",
            "-1",
        ],
        &["--width", "-1", "from 0.0001 to 1000"],
    );
    // Every problem at once.
    refused(
        &[
            "impedance",
            "--structure",
            "stripline",
            "--er",
            "0.5",
            "--h1",
            "-1",
            "--h2",
            "inf",
        ],
        &["--er = 0.5", "--h1 = -1", "--h2 = inf"],
    );
}

#[test]
fn missing_and_misplaced_flags_are_refused() {
    refused(
        &[
            "impedance",
            "--structure",
            "stripline",
            "--er",
            "4",
            "--h1",
            "0.2",
        ],
        &["--h2", "(missing)"],
    );
    refused(
        &[
            "impedance",
            "--structure",
            "microstrip",
            "--er",
            "4",
            "--h",
            "0.2",
            "--h1",
            "0.3",
        ],
        &["--h1", "not used by microstrip", "--h"],
    );
    refused(
        &["impedance", "--er", "4"],
        &["--structure", "(missing)", "microstrip"],
    );
}

#[test]
fn unreachable_target_is_refused() {
    refused(
        &[
            "impedance",
            "--structure",
            "microstrip",
            "--er",
            "4.3",
            "--h",
            "0.2",
            "--target",
            "600",
        ],
        &["target", "600", "out of reach", "Ω"],
    );
    refused(
        &[
            "impedance",
            "--structure",
            "microstrip",
            "--er",
            "4.3",
            "--h",
            "0.2",
            "--target",
            "5000",
        ],
        &["--target", "5000", "from 1 to 1000"],
    );
    refused(
        &[
            "impedance",
            "--structure",
            "stripline",
            "--er",
            "4.3",
            "--h1",
            "0.1",
            "--h2",
            "0.1",
        ],
        &["below the fab minimum trace", "0.127 mm"],
    );
}

#[test]
fn unknown_names_are_refused() {
    refused(
        &["impedance", "--structure", "coax", "--er", "4"],
        &[
            "structure",
            "'coax'",
            "microstrip, coated-microstrip, stripline, cpwg",
        ],
    );
    refused(
        &[
            "impedance",
            "--structure",
            "microstrip",
            "--er",
            "4",
            "--h",
            "0.2",
            "--method",
            "magic",
        ],
        &["method", "'magic'", "hammerstad-jensen"],
    );
    refused(
        &[
            "impedance",
            "--structure",
            "microstrip",
            "--er",
            "4",
            "--h",
            "0.2",
            "--method",
            "cohn",
        ],
        &["--method", "cohn", "hammerstad-jensen, ipc-2141"],
    );
    refused(
        &["impedance", "--stackup", "no-such-build", "--layer", "2"],
        &["stackup", "'no-such-build'", "common-4l-1.6"],
    );
    refused(
        &["impedance", "--stackup", "common-4l-1.6", "--layer", "7"],
        &["layer", "7", "1 to 4"],
    );
    refused(
        &[
            "impedance",
            "--stackup",
            "common-4l-1.6",
            "--layer",
            "2",
            "--structure",
            "microstrip",
        ],
        &["structure", "inner layer"],
    );
}

#[test]
fn malformed_stackup_files_are_refused() {
    let syntax = tmp_file("syntax.toml", "name = \"x\"\n[[layer]\ntype = \"copper\"\n");
    refused(
        &[
            "impedance",
            "--stackup",
            syntax.to_str().unwrap(),
            "--layer",
            "1",
        ],
        &["syntax.toml", "line 2"],
    );
    let values = tmp_file(
        "values.toml",
        "name = \"bad\"\n[[layer]]\ntype = \"copper\"\nname = \"L1\"\nthickness_oz = 1\n\
         [[layer]]\ntype = \"dielectric\"\nname = \"core\"\nthickness_mm = -0.2\ner = 4\n\
         [[layer]]\ntype = \"copper\"\nname = \"L2\"\nthickness_mm = 0.035\n\
         [[layer]]\ntype = \"glass\"\nname = \"x\"\n",
    );
    refused(
        &[
            "impedance",
            "--stackup",
            values.to_str().unwrap(),
            "--layer",
            "1",
        ],
        &[
            "layer[2].thickness_mm = -0.2",
            "from 0.01 to 10",
            "layer[4].type",
            "\"glass\"",
        ],
    );
    let unknown = tmp_file("unknown.toml", "name = \"x\"\ncolour = \"green\"\n");
    refused(
        &[
            "impedance",
            "--stackup",
            unknown.to_str().unwrap(),
            "--layer",
            "1",
        ],
        &["unknown.toml", "colour"],
    );
}

#[test]
fn width_and_target_together_are_refused() {
    let o = run(&[
        "impedance",
        "--structure",
        "microstrip",
        "--er",
        "4",
        "--h",
        "0.2",
        "--width",
        "0.3",
        "--target",
        "50",
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("--target"));
}

#[test]
fn demo_builds_its_family_and_shows_the_cautions() {
    let dir = std::env::temp_dir().join(format!("loopwright-cli-demo-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    let o = run(&["demo", "--out", dir.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    let s = stdout(&o);
    assert!(s.contains("50.00") && s.contains("SAFETY"), "{s}");
    // The spec is written beside the probes, and at least three round sizes plus one
    // flat-tipped loop are built.
    assert!(dir.join("fenwick-marsh-probes.toml").is_file());
    for name in ["FM-R20", "FM-R10", "FM-R5", "FM-T12x6"] {
        assert!(
            dir.join(name).join(format!("{name}-L2.gbr")).is_file(),
            "{name}"
        );
        assert!(
            dir.join(name).join(format!("{name}.toml")).is_file(),
            "{name}"
        );
    }
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn help_shows_the_cautions() {
    let o = run(&["--help"]);
    assert!(stdout(&o).contains("SAFETY"));
}

#[test]
fn stackups_lists_and_prints_builtins() {
    let o = run(&["stackups"]);
    assert!(stdout(&o).contains("common-4l-1.6") && stdout(&o).contains("slim-4l-0.8"));
    let o = run(&["stackups", "--show", "slim-4l-0.8"]);
    let text = stdout(&o);
    // What it prints is a valid stackup file.
    let p = tmp_file("roundtrip.toml", &text);
    let v = json(&[
        "impedance",
        "--json",
        "--stackup",
        p.to_str().unwrap(),
        "--layer",
        "2",
    ]);
    assert_eq!(v["stackup"]["name"], "slim-4l-0.8");
}

// The field method answers for every structure with the same flags and JSON, and solves
// widths. Reference: Cohn's exact 48.4328 Ω at w/b = 0.5, εr = 4.3 (scipy, tests/data); the
// field solver claims 0.06 % at its default accuracy.
#[test]
fn field_method_for_every_structure() {
    let cases = STRUCTURE_CASES;
    for c in cases {
        let mut args = vec!["impedance", "--json", "--method", "field", "--target", "50"];
        args.extend_from_slice(c);
        let v = json(&args);
        assert_eq!(v["method"], "field");
        assert!((v["z0_ohms"].as_f64().unwrap() - 50.0).abs() < 0.05, "{v}");
        assert!(v["width_mm"].as_f64().unwrap() > 0.0);
        assert_eq!(v["accuracy"], "standard");
        assert!(v["closed_form"]["difference_pct"].is_number(), "{v}");
    }
    let v = json(&[
        "impedance",
        "--json",
        "--method",
        "field",
        "--structure",
        "stripline",
        "--er",
        "4.3",
        "--h1",
        "0.5",
        "--h2",
        "0.5",
        "--t",
        "0",
        "--width",
        "0.5",
    ]);
    assert!(
        (v["z0_ohms"].as_f64().unwrap() / 48.4328 - 1.0).abs() < 0.002,
        "{v}"
    );
    refused(
        &[
            "impedance",
            "--method",
            "field",
            "--accuracy",
            "extreme",
            "--structure",
            "microstrip",
            "--er",
            "4",
            "--h",
            "0.2",
            "--width",
            "0.3",
        ],
        &["accuracy", "'extreme'", "draft, standard, fine"],
    );
}

#[test]
fn predict_json_has_the_documented_keys() {
    let spec = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/data/demo/fenwick-marsh-probes.toml"
    );
    let v = json(&["predict", spec, "--json"]);
    let probes = v["probes"].as_array().unwrap();
    assert_eq!(probes.len(), 6);
    for p in probes {
        for k in ["name", "shape"] {
            assert!(p[k].is_string(), "{k}");
        }
        assert_eq!(p["turns"], 1);
        if p["name"] == "FM-E2" {
            // The electric probe: its factor in dB(1/m) per point, none of a loop's keys.
            assert_eq!(p["kind"], "electric");
            let ef = p["electric_factor"].as_array().unwrap();
            assert!(ef.len() > 10);
            assert!(ef[0]["freq_hz"].as_f64().unwrap() > 0.0);
            assert!(ef[0]["db_per_m"].is_number());
            assert!(p["probe_factor"].is_null() && p["loop_area_mm2"].is_null());
            for k in [
                "corner_hz",
                "upper_hz",
                "resolution_mm",
                "coupling_capacitance_ff",
            ] {
                assert!(p[k].as_f64().unwrap() > 0.0, "{k}");
            }
            continue;
        }
        if p["name"] == "FM-B20" {
            // The balanced loop: a loop's keys (its outputs' difference) and the sum's
            // electric factor per point, on the probe factor's frequencies; its difference's
            // E-rejection is not predicted (null: no electric pickup to first order).
            assert_eq!(p["kind"], "balanced");
            let pf = p["probe_factor"].as_array().unwrap();
            let er = p["e_response"].as_array().unwrap();
            assert_eq!(er.len(), pf.len());
            for (a, b) in er.iter().zip(pf) {
                assert_eq!(a["freq_hz"], b["freq_hz"]);
                assert!(a["db_per_m"].as_f64().unwrap() > 0.0);
                assert!(b["e_rejection_db"].is_null());
            }
            assert!(p["outputs"].as_str().unwrap().contains("hybrid"));
            assert!(p["stub_mm"].as_f64().unwrap() > 0.0);
            continue;
        }
        // The loops give neither: today's meaning, a single-turn singly-loaded loop.
        assert_eq!(p["kind"], "loop");
        assert_eq!(p["turns"], 1);
        assert!(p.get("e_response").is_none());
        for k in [
            "loop_area_mm2",
            "inductance_nh",
            "corner_hz",
            "upper_hz",
            "resolution_mm",
            "resolution_height_mm",
        ] {
            assert!(p[k].as_f64().unwrap() > 0.0, "{k}");
        }
        let pf = p["probe_factor"].as_array().unwrap();
        assert!(pf.len() > 10);
        assert!(pf[0]["freq_hz"].as_f64().unwrap() > 0.0);
        assert!(pf[0]["db_s_per_m"].is_number());
        // The added keys: the effective area, and the E-rejection per frequency point
        // (in each probe-factor point and as its own list on the same frequencies), falling
        // 20 dB per decade (2ka·(E/H)/η0).
        let ae = p["effective_area_mm2"].as_f64().unwrap();
        assert!(ae > 0.0 && ae < p["loop_area_mm2"].as_f64().unwrap());
        let er = p["e_rejection_db"].as_array().unwrap();
        assert_eq!(er.len(), pf.len());
        for (a, b) in er.iter().zip(pf) {
            assert_eq!(a["freq_hz"], b["freq_hz"]);
            assert_eq!(a["db"], b["e_rejection_db"]);
        }
        let (f0, e0) = (
            er[0]["freq_hz"].as_f64().unwrap(),
            er[0]["db"].as_f64().unwrap(),
        );
        let last = er.last().unwrap();
        let (f1, e1) = (
            last["freq_hz"].as_f64().unwrap(),
            last["db"].as_f64().unwrap(),
        );
        assert!(((e0 - e1) - 20.0 * (f1 / f0).log10()).abs() < 1e-6);
        assert!(p["upper_quoted_limits"].as_array().unwrap().len() == 2);
    }
    refused(&["predict", spec, "--height", "-2"], &["--height", "-2"]);
    refused(
        &["predict", spec, "--f-min", "1e9", "--f-max", "1e8"],
        &["--f-max", "empty"],
    );
}

// The family report carries the same numbers as `predict --json` (its embedded data is
// compared value for value), and the summary and report are written beside the probes.
#[test]
fn report_numbers_equal_predict_json() {
    let dir = std::env::temp_dir().join(format!("loopwright-report-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    let o = run(&["demo", "--out", dir.to_str().unwrap()]);
    assert!(o.status.success());
    let html = std::fs::read_to_string(dir.join("fenwick-marsh-probes-report.html")).unwrap();
    let start = html.find("id=\"predictions\">").unwrap() + "id=\"predictions\">".len();
    let end = start + html[start..].find("</script>").unwrap();
    let embedded: serde_json::Value =
        serde_json::from_str(&html[start..end].replace("<\\/", "</")).unwrap();
    let spec = dir.join("fenwick-marsh-probes.toml");
    let predicted = json(&["predict", spec.to_str().unwrap(), "--json"]);
    assert_eq!(embedded["probes"], predicted["probes"]);
    // The table shows them rounded: the 10 mm loop's corner, as printed by predict.
    let r10 = &predicted["probes"][1];
    let corner = format!("{:.1}", r10["corner_hz"].as_f64().unwrap() / 1e6);
    assert!(html.contains(&format!("<td>{corner}</td>")), "{corner}");
    assert!(html.contains("SAFETY") && html.contains("area-average"));
    for p in ["FM-R20", "FM-R10", "FM-R5", "FM-T12x6"] {
        assert!(dir.join(p).join(format!("{p}-response.svg")).is_file());
        let notes = std::fs::read_to_string(dir.join(p).join(format!("{p}-fab-notes.md"))).unwrap();
        assert!(notes.contains("## Predicted response"));
    }
    let _ = std::fs::remove_dir_all(&dir);
}

// Output into a closed pipe ends quietly; an unwritable stdout is an error (exit 2), never a
// panic.
#[test]
fn stdout_trouble_is_not_a_panic() {
    use std::io::Read;
    let spec = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/data/demo/fenwick-marsh-probes.toml"
    );
    let mut child = Command::new(env!("CARGO_BIN_EXE_loopwright"))
        .args(["predict", spec])
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    drop(child.stdout.take());
    let status = child.wait().unwrap();
    let mut err = String::new();
    child
        .stderr
        .take()
        .unwrap()
        .read_to_string(&mut err)
        .unwrap();
    assert!(!err.contains("panicked"), "{err}");
    assert_eq!(status.code(), Some(0), "{err}");
    if std::path::Path::new("/dev/full").exists() {
        let full = std::fs::OpenOptions::new()
            .write(true)
            .open("/dev/full")
            .unwrap();
        let o = Command::new(env!("CARGO_BIN_EXE_loopwright"))
            .args(["stackups"])
            .stdout(full)
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(2));
        assert!(String::from_utf8_lossy(&o.stderr).contains("cannot write the output"));
    }
}

/// `impedance` of a microstrip (h 0.2 mm, εr 4.3) with `extra` flags.
fn microstrip_with(extra: &[&'static str]) -> Vec<&'static str> {
    let mut v = vec![
        "impedance",
        "--structure",
        "microstrip",
        "--h",
        "0.2",
        "--er",
        "4.3",
    ];
    v.extend_from_slice(extra);
    v
}

/// A copper thickness must be 0 (the idealisation) or a real length: 1e-200 mm once passed and
/// printed "Z0 runs from NaN Ω".
#[test]
fn a_vanishing_copper_thickness_is_refused_naming_the_flag() {
    refused(
        &microstrip_with(&["--t", "1e-200"]),
        &["--t = 1e-200", "must be 0 (zero thickness) or"],
    );
}

/// A value the user never typed (the width plus its etch tolerance, 1000.025 mm from
/// `--width 1000`) is explained as a corner of the tolerance spread.
#[test]
fn a_tolerance_corner_out_of_range_is_explained() {
    refused(
        &microstrip_with(&["--width", "1000"]),
        &["--width = 1000.025", "corner of the fab-tolerance spread"],
    );
}

// Outside a closed form's stated validity (Wheeler's stripline formula: W′/(b−t) < 10, from
// Wheeler, IEEE Trans. MTT 1978) the default answer comes from the field solver, with the
// closed form shown beside it; a method the user names is kept.
#[test]
fn the_field_solver_answers_where_the_default_closed_form_is_out_of_range() {
    let args = [
        "impedance",
        "--structure",
        "stripline",
        "--h1",
        "0.1",
        "--h2",
        "0.1",
        "--er",
        "4.3",
        "--width",
        "3",
        "--json",
    ];
    let v = json(&args);
    assert_eq!(v["method"], "field", "{v}");
    let w = v["warnings"].to_string();
    assert!(
        w.contains("wheeler is out of its depth here") && w.contains("W′/(b−t)"),
        "{w}"
    );
    let mut named = args.to_vec();
    named.extend(["--method", "wheeler"]);
    let v = json(&named);
    assert_eq!(v["method"], "wheeler");
    // Inside the range the closed form stays the default.
    let v = json(&[
        "impedance",
        "--structure",
        "stripline",
        "--h1",
        "0.2",
        "--h2",
        "0.2",
        "--er",
        "4.3",
        "--width",
        "0.2",
        "--json",
    ]);
    assert_eq!(v["method"], "wheeler");
}
