//! The launches against a full-wave reference: the demo probe's connector transition and the
//! demo fixture's port, each simulated with openEMS (FDTD).
//!
//! References: `tests/data/launch_fdtd.toml` from `tests/reference/launch_fdtd.py` and
//! `tests/data/fixture_fdtd.toml` from `tests/reference/fixture_fdtd.py` (openEMS v0.0.35 /
//! CSXCAD 0.6.2, Debian packages; each script's header lists the model and every
//! simplification). Their input is the geometry JSON recorded beside them
//! (`tests/data/launch_fdtd_geometry.json`, `tests/data/fixture_fdtd_geometry.json`),
//! written by `cargo run --release --example launch_geometry [-- fixture]`. CI never runs the
//! FDTD; these tests read its recorded results and check that they still describe the boards
//! loopwright builds today (if the launch design changes, the geometry test fails and the
//! scripts must be run again).

mod common;
use common::{floats, refs};
#[path = "common/launch_json.rs"]
mod launch_json;

use serde_json::Value;

fn recorded_json(name: &str) -> Value {
    let path = format!("{}/tests/data/{name}", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{path}: {e}"))
}

/// Differences between two JSON trees (numbers within [`GEOMETRY_REL`] relative or, on a length,
/// 0.1 µm absolute: [`GEOMETRY_ABS_MM`] for keys in mm, [`GEOMETRY_ABS_M`] for those in metres;
/// a return loss in dB within [`MODEL_ABS_DB`]).
fn json_diff(a: &Value, b: &Value, path: &str, out: &mut Vec<String>) {
    match (a, b) {
        (Value::Number(x), Value::Number(y)) => {
            let (x, y) = (x.as_f64().unwrap(), y.as_f64().unwrap());
            // Lengths in metres are keyed `…_m` (the line-section model), every other length in mm.
            let key = path.rsplit('.').next().unwrap_or("");
            let key = key.split('[').next().unwrap_or(key);
            let abs = if key.ends_with("_db") {
                MODEL_ABS_DB
            } else if key.ends_with("_m") {
                GEOMETRY_ABS_M
            } else {
                GEOMETRY_ABS_MM
            };
            if (x - y).abs() > abs + GEOMETRY_REL * x.abs().max(y.abs()) {
                out.push(format!("{path}: {x} now, {y} recorded"));
            }
        }
        (Value::Array(x), Value::Array(y)) => {
            if x.len() != y.len() {
                out.push(format!(
                    "{path}: {} items now, {} recorded",
                    x.len(),
                    y.len()
                ));
            } else {
                for (i, (p, q)) in x.iter().zip(y).enumerate() {
                    json_diff(p, q, &format!("{path}[{i}]"), out);
                }
            }
        }
        (Value::Object(x), Value::Object(y)) => {
            for k in x.keys().chain(y.keys()) {
                match (x.get(k), y.get(k)) {
                    (Some(p), Some(q)) => {
                        if !out.iter().any(|s| s.starts_with(&format!("{path}.{k}:"))) {
                            json_diff(p, q, &format!("{path}.{k}"), out)
                        }
                    }
                    _ => out.push(format!("{path}.{k}: present on one side only")),
                }
            }
        }
        _ => {
            if a != b {
                out.push(format!("{path}: {a} now, {b} recorded"));
            }
        }
    }
}

/// What "the same design" allows: 0.1 µm on a length (the FDTD's cells are 150 µm) and 4e-5
/// relative on any number (Ω, εr, lengths): the field solution's width search stops within
/// 1 mΩ of 50 Ω (2e-5), so two equally good searches (the rough-then-polished one and the one
/// the records were made with) may land up to 2 mΩ (4e-5) apart, and every via placed from
/// the width a few nm apart.
const GEOMETRY_ABS_MM: f64 = 1e-4;
/// The line-section model's return loss recorded beside the geometry (keys `…_db`): 0.02 dB.
/// At its −38 dB (|S11| 0.013) a relative tolerance means nothing: the same 2 mΩ between two
/// equally good width searches moves |S11| by up to 2e-5, 0.014 dB there. (Every length must
/// still match; the full-wave comparisons themselves allow decibels.)
const MODEL_ABS_DB: f64 = 0.02;
const GEOMETRY_ABS_M: f64 = 1e-7;
const GEOMETRY_REL: f64 = 4e-5;

/// The recorded geometry is the one the library builds today, to [`GEOMETRY_ABS_MM`] (or
/// [`GEOMETRY_ABS_M`]) and [`GEOMETRY_REL`]: the FDTD results belong to the current design (probe FM-R10 on the demo
/// stackup, loop on L3; the demo fixture). Includes the line-section model the scripts compare
/// against.
#[test]
fn recorded_geometry_is_todays_design() {
    for (now, file) in [
        (
            launch_json::probe_json("FM-R10", None, None),
            "launch_fdtd_geometry.json",
        ),
        (launch_json::fixture_json(), "fixture_fdtd_geometry.json"),
    ] {
        let mut d = Vec::new();
        json_diff(&now, &recorded_json(file), "", &mut d);
        assert!(
            d.is_empty(),
            "{file} no longer describes the built launch (run the FDTD script again):\n{}",
            d.join("\n")
        );
    }
}

/// The launch's geometry in the frame of its connector edge (y measured from the edge), so
/// that the probes of a family can be compared.
fn edge_frame(mut j: Value) -> Value {
    let ey = j["edge_y"].as_f64().unwrap();
    let shift = |v: &mut Value| *v = Value::from(v.as_f64().unwrap() - ey);
    shift(&mut j["centre_pad"]["y"]);
    shift(&mut j["signal_via"]["y"]);
    shift(&mut j["link"]["from_y"]);
    shift(&mut j["link"]["to_y"]);
    for p in j["ground_pads"].as_array_mut().unwrap() {
        shift(&mut p["y"]);
    }
    for v in j["ground_vias"].as_array_mut().unwrap() {
        shift(&mut v[1]);
    }
    j["edge_y"] = Value::from(0.0);
    j["probe"] = Value::from("");
    j
}

/// The one transition simulated stands for every demo loop: the demo family's launches are
/// the same in the frame of the connector edge (pad, link, vias and their antipads, the
/// ground vias within 8 mm of the signal via, the line-section model). The demo's electric
/// probe shares the pad, the link, the signal via and its antipads, but not the rest: its line
/// runs on the axis (so its fence vias stand elsewhere) and is solved on the handle's section
/// (0.214 mm, not the loops' 0.216 mm): no full-wave run stands for its launch, and its
/// line-section model's worst return loss is within 0.1 dB of the loops'. Nor does one stand
/// for the balanced loop's two launches side by side (the same bound on its model).
#[test]
fn one_transition_stands_for_the_demo_family() {
    let reference = edge_frame(launch_json::probe_json("FM-R10", None, None));
    let spec: loopwright::spec::probe::ProbeFileSpec =
        toml::from_str(loopwright::cli::DEMO_SPEC).unwrap();
    let names: Vec<String> = spec.probe.iter().filter_map(|p| p.name.clone()).collect();
    assert_eq!(names.len(), spec.probe.len(), "every demo probe is named");
    assert!(names.len() >= 4, "{names:?}");
    let electric: Vec<&String> = spec
        .probe
        .iter()
        .filter(|p| p.kind.as_deref() == Some("electric"))
        .filter_map(|p| p.name.as_ref())
        .collect();
    let balanced: Vec<&String> = spec
        .probe
        .iter()
        .filter(|p| p.kind.as_deref() == Some("balanced"))
        .filter_map(|p| p.name.as_ref())
        .collect();
    let worst = |n: &str| {
        launch_json::probe_json(n, None, None)["model"]["worst_s11_db"]
            .as_f64()
            .unwrap()
    };
    for name in &names {
        if balanced.contains(&name) {
            // A balanced loop's launch is the same footprint moved off the axis beside its
            // mirror image: no full-wave run stands for it (its neighbour 9 mm away is not in
            // the FDTD); its line-section model's worst return loss is within 0.1 dB of the
            // loops' (its handle is wider, so its line's impedance differs a little).
            let gap = (worst(name) - worst("FM-R10")).abs();
            assert!(gap < 0.1, "{name}: {gap} dB from the loops' launch");
            continue;
        }
        let mut d = Vec::new();
        json_diff(
            &edge_frame(launch_json::probe_json(name, None, None)),
            &reference,
            "",
            &mut d,
        );
        if electric.contains(&name) {
            let allowed = [
                ".ground_vias[",
                ".model.worst_s11_db:",
                ".model.z_load:",
                ".trace.",
                ".z_line:",
            ];
            let other: Vec<&String> = d
                .iter()
                .filter(|l| !allowed.iter().any(|a| l.starts_with(a)))
                .collect();
            assert!(other.is_empty(), "{name}: {other:?}");
            let gap = (worst(name) - worst("FM-R10")).abs();
            assert!(gap < 0.1, "{name}: {gap} dB from the loops' launch");
            continue;
        }
        assert!(
            d.is_empty(),
            "{name}'s launch differs from FM-R10's:\n{}",
            d.join("\n")
        );
    }
}

/// One recorded FDTD run: (f, S11 dB) of the named mesh entry.
fn mesh_curve(top: &toml::Value, name: &str) -> (Vec<f64>, Vec<f64>) {
    let m = top["mesh"]
        .as_array()
        .unwrap()
        .iter()
        .find(|m| m["name"].as_str() == Some(name))
        .unwrap_or_else(|| panic!("no [[mesh]] {name}"));
    (floats(m, "f_hz"), floats(m, "s11_db"))
}

/// Worst S11 (dB) and its frequency over `lo..=hi`.
fn worst(f: &[f64], s: &[f64], lo: f64, hi: f64) -> (f64, f64) {
    f.iter()
        .zip(s)
        .filter(|(f, _)| **f >= lo * 0.999 && **f <= hi * 1.001)
        .fold(
            (f64::NEG_INFINITY, 0.0),
            |a, (&f, &s)| {
                if s > a.0 { (s, f) } else { a }
            },
        )
}

/// Checks common to both references: the runs ended by the energy criterion, the frequency
/// range reaches f_max, every mesh's S11 meets the limit to f_max, and the method's own floor
/// (the port check: the same feed and probes with no launch) sits well below the result.
fn check_reference(file: &str, geometry: &str, meshes: &[&str]) -> Vec<(String, f64, f64)> {
    let top = refs(file);
    let f_max = recorded_json(geometry)["f_max_hz"].as_f64().unwrap();
    let limit = loopwright::solve::network::DEFAULT_LIMIT_DB;
    let mut worsts = Vec::new();
    for &m in meshes {
        let meta = &top["meta"][m];
        for case in ["launch", "port_check"] {
            let e = meta[&format!("{case}_end_energy_db")].as_float().unwrap();
            assert!(
                e <= -45.0,
                "{file} {m} {case}: field energy only {e} dB down"
            );
            assert_eq!(
                meta[&format!("{case}_stopped_at_t_max")].as_bool(),
                Some(false),
                "{file} {m} {case} stopped at its time limit"
            );
        }
        let (f, s) = mesh_curve(&top, m);
        assert!(
            f.last().copied().unwrap_or(0.0) >= f_max * 0.999,
            "{file}: the FDTD stops at {:?} Hz, below f_max {f_max}",
            f.last()
        );
        let (w, wf) = worst(&f, &s, 100e6, f_max);
        assert!(
            w <= limit,
            "{file} {m}: S11 {w:.2} dB at {wf:.3e} Hz, above the {limit} dB limit"
        );
        let pc = if m == meshes[meshes.len() - 1] {
            "port_check".to_string()
        } else {
            format!("port_check_{m}")
        };
        let (pf, ps) = mesh_curve(&top, &pc);
        let (floor, _) = worst(&pf, &ps, 100e6, f_max);
        assert!(
            floor <= w - 10.0,
            "{file} {m}: the method's floor {floor:.1} dB is within 10 dB of the result {w:.1}"
        );
        worsts.push((m.to_string(), w, wf));
    }
    worsts
}

/// The demo probe's transition (pad, link, signal via with its stub, the stripline's start)
/// meets −20 dB return loss to f_max by the FDTD too, on both meshes.
#[test]
fn demo_probe_transition_meets_the_limit_by_fdtd() {
    let w = check_reference(
        "launch_fdtd.toml",
        "launch_fdtd_geometry.json",
        &["coarse", "fine"],
    );
    eprintln!("probe transition, FDTD worst S11 per mesh: {w:?}");
}

/// The demo fixture's port (pad, taper, uniform line) meets −20 dB return loss to f_max by
/// the FDTD too, on both meshes.
#[test]
fn demo_fixture_port_meets_the_limit_by_fdtd() {
    let w = check_reference(
        "fixture_fdtd.toml",
        "fixture_fdtd_geometry.json",
        &["coarse", "fine"],
    );
    eprintln!("fixture port, FDTD worst S11 per mesh: {w:?}");
}

/// How far the line-section budgets are from the FDTD (both recorded from the same geometry
/// JSON, whose model the geometry test ties to today's code).
///
/// - **Fixture port**: the model's worst (−37.8 dB at 3 GHz) within 3 dB of each mesh's
///   (coarse −37.6, fine −35.8 dB): the meshes themselves differ by 1.8 dB, and 3 dB is our
///   judgement of agreement at this level, no outside rule.
/// - **Probe transition**: the model is optimistic: −35.4 dB against the FDTD's −25.0 / −27.4
///   dB (coarse / fine) near 3 GHz. Part of that is each mesh's own stripline impedance
///   (46.6 Ω on the fine mesh against 49.9 Ω by the 2-D solver with real copper; the recorded
///   `line_step_db`), the rest (`worst_residual_db`, −27.4 dB on the fine mesh, rising about
///   6 dB per octave) is a reactance the sections leave out (via lands, the pad-to-link step).
///   Checked here: the FDTD is worse than the model on both meshes (so the notes' caveat
///   stands), and the left-out part stays at least 5 dB inside the −20 dB limit.
#[test]
fn budgets_against_the_fdtd() {
    let fx = refs("fixture_fdtd.toml");
    let model = fx["meta"]["model_worst_s11_db"].as_float().unwrap();
    for m in ["coarse", "fine"] {
        let w = fx["meta"][m]["worst_s11_db"].as_float().unwrap();
        assert!(
            (model - w).abs() <= 3.0,
            "fixture port: model {model:.2} dB, FDTD {m} {w:.2} dB"
        );
    }
    let pr = refs("launch_fdtd.toml");
    let model = pr["meta"]["model_worst_s11_db"].as_float().unwrap();
    for m in ["coarse", "fine"] {
        let meta = &pr["meta"][m];
        let w = meta["worst_s11_db"].as_float().unwrap();
        let residual = meta["worst_residual_db"].as_float().unwrap();
        assert!(
            w > model,
            "probe transition: FDTD {m} {w:.2} dB, model {model:.2} dB"
        );
        assert!(
            residual <= loopwright::solve::network::DEFAULT_LIMIT_DB - 5.0,
            "probe transition {m}: the part the model leaves out is {residual:.2} dB"
        );
    }
}
