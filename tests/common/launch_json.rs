//! The geometry of a demo launch as JSON (shared by `examples/launch_geometry.rs`, which
//! writes it for the full-wave reference scripts `tests/reference/launch_fdtd.py` and
//! `tests/reference/fixture_fdtd.py`, and by `tests/launch_fdtd.rs`, which checks that the
//! geometry recorded with their results is still the one loopwright builds). Coordinates in
//! mm, the board's own (probe: origin at the loop centre, connector edge at `edge_y`).
#![allow(dead_code)]

use loopwright::cli::demo::DEMO_SPEC;
use loopwright::geom::ViaRole;
use loopwright::model::stackup::Layer;
use loopwright::pipeline::build_family;
use loopwright::spec::parse_toml;
use loopwright::spec::probe::ProbeFileSpec;
use serde_json::json;
use std::path::Path;

/// A stackup's layers as JSON, top first.
fn layers_json(st: &loopwright::model::stackup::Stackup) -> Vec<serde_json::Value> {
    st.layers()
        .iter()
        .map(|x| match x {
            Layer::Copper(c) => json!({"type": "copper", "name": c.name, "t": c.thickness_mm}),
            Layer::Dielectric(d) => json!({
                "type": "dielectric", "t": d.thickness_mm, "er": d.er, "tan_d": d.loss_tangent
            }),
        })
        .collect()
}

/// A section as JSON.
fn section_json(x: &loopwright::solve::network::Section) -> serde_json::Value {
    use loopwright::solve::network::Section;
    match *x {
        Section::Line { z0, eps_eff, len_m } => {
            json!({"kind": "line", "z0": z0, "eps_eff": eps_eff, "len_m": len_m})
        }
        Section::OpenStub { z0, eps_eff, len_m } => {
            json!({"kind": "open_stub", "z0": z0, "eps_eff": eps_eff, "len_m": len_m})
        }
        Section::LossyLine {
            z0,
            eps_eff,
            len_m,
            alpha_c_1ghz,
            alpha_d_1ghz,
        } => json!({"kind": "lossy_line", "z0": z0, "eps_eff": eps_eff, "len_m": len_m,
                    "alpha_c_1ghz": alpha_c_1ghz, "alpha_d_1ghz": alpha_d_1ghz}),
    }
}

/// The demo fixture's ports and network.
pub fn fixture_json() -> serde_json::Value {
    use loopwright::cli::demo::DEMO_FIXTURE;
    use loopwright::spec::fixture::FixtureFileSpec;
    let spec: FixtureFileSpec = parse_toml(DEMO_FIXTURE, "fixture").unwrap();
    let b = loopwright::pipeline::build_fixture(&spec, Path::new("."), false).unwrap();
    let (f, s, board) = (&b.fixture, &b.solved, &b.board);
    let layers = layers_json(&f.stackup);
    let x_port = f.length / 2.0;
    let vias: Vec<_> = board
        .vias
        .iter()
        .filter(|v| v.at.x > x_port - 12.0)
        .map(|v| json!([v.at.x, v.at.y]))
        .collect();
    let pads: Vec<_> = board
        .pads
        .iter()
        .filter(|pd| pd.at.x > 0.0)
        .map(|pd| json!({"x": pd.at.x, "y": pd.at.y, "w": pd.w, "h": pd.h, "top": pd.top, "centre": pd.centre}))
        .collect();
    let st = |v: &[loopwright::solve::fixture::Station]| -> Vec<serde_json::Value> {
        v.iter()
            .map(|x| {
                // The field solver's check of each station (the build solves only the steps'
                // middles).
                let (z0_field, eps_field) = loopwright::solve::fixture::station_field(
                    f,
                    s.port_dielectric(),
                    x.width,
                    x.gap,
                    true,
                )
                .unwrap();
                json!({"x": x.x, "width": x.width, "gap": x.gap, "z0_conformal": x.z0,
                             "z0_field": z0_field, "eps_field": eps_field})
            })
            .collect()
    };
    let port_secs: Vec<_> = loopwright::solve::fixture::port_sections(f, &s.port, s.taper)
        .iter()
        .map(section_json)
        .collect();
    let all: Vec<_> = loopwright::physics::launch::fixture_sections(f, s)
        .iter()
        .map(section_json)
        .collect();
    let out = json!({
        "fixture": f.name,
        "stackup": f.stackup.name(),
        "layers": layers,
        "line_layer": f.line_layer,
        "length": f.length,
        "width": f.width,
        "copper_to_edge": f.fab.copper_to_edge,
        "mask": f.stackup.mask_top().map(|m| json!({"t": m.thickness_mm, "er": m.er})),
        "line_width": s.width,
        "keepout": s.keepout,
        "taper": s.taper,
        "pad_gap": s.port.pad_gap,
        "stations": st(&s.port.stations),
        "pads_port2": pads,
        "vias_port2": vias,
        "via": {"drill": f.vias.drill, "pad": f.vias.pad},
        "model": {"port_sections": port_secs, "z_ref": 50.0, "z_load": s.port.line_field.0,
                  "worst_s11_db": s.port_s11.0, "worst_s11_hz": s.port_s11.1,
                  "fixture_sections": all},
        "f_max_hz": f.vias.f_max_hz,
    });
    out
}

/// A demo probe's launch (`stackup`, `layer`: replace the demo's own stackup or signal layer).
pub fn probe_json(name: &str, stackup: Option<&str>, layer: Option<&str>) -> serde_json::Value {
    let mut text = DEMO_SPEC.to_string();
    if let Some(st) = stackup {
        text = text.replace(
            "stackup = \"common-4l-1.6\"",
            &format!("stackup = \"{st}\""),
        );
    }
    if let Some(n) = layer {
        text = text.replace("signal_layer = 3", &format!("signal_layer = {n}"));
    }
    let spec: ProbeFileSpec = parse_toml(&text, "demo").unwrap();
    let fam = build_family(&spec, Path::new("."), false).unwrap();
    let b = fam
        .probes
        .iter()
        .find(|b| b.probe.name == name)
        .expect("probe name in the demo family");
    let (p, s, board) = (&b.probe, &b.solved, &b.board);
    let l = &s.launch;
    let layers = layers_json(&p.stackup);
    let sv = board
        .vias
        .iter()
        .find(|v| v.role == ViaRole::Signal)
        .unwrap()
        .at;
    // Ground vias within 8 mm of the signal via (the launch's neighbourhood).
    let grounds: Vec<_> = board
        .vias
        .iter()
        .filter(|v| v.role != ViaRole::Signal && (v.at - sv).hypot() < 8.0)
        .map(|v| json!([v.at.x, v.at.y]))
        .collect();
    let centre = board.pads.iter().find(|pd| pd.centre).unwrap();
    let ground_pads: Vec<_> = board
        .pads
        .iter()
        .filter(|pd| !pd.centre)
        .map(|pd| json!({"x": pd.at.x, "y": pd.at.y, "w": pd.w, "h": pd.h, "top": pd.top}))
        .collect();
    let sections: Vec<_> = loopwright::solve::launch::sections(p, l)
        .iter()
        .map(section_json)
        .collect();
    let out = json!({
        "probe": name,
        "stackup": p.stackup.name(),
        "layers": layers,
        "signal_layer": p.signal_layer,
        "edge_y": board.edge_y,
        "copper_to_edge": p.fab.copper_to_edge,
        "handle_width": p.handle.width,
        "centre_pad": {"x": centre.at.x, "y": centre.at.y, "w": centre.w, "h": centre.h},
        "ground_pads": ground_pads,
        "pad_gap": l.pad_gap,
        "relief_layers": board.launch.relief_layers,
        "link": {"width": l.link_width, "gap": p.clearance, "from_y": centre.at.y + centre.h / 2.0, "to_y": sv.y},
        "signal_via": {"x": sv.x, "y": sv.y, "drill": p.vias.drill, "pad": p.vias.pad,
                        "antipad_d": l.antipad_d, "barrel_antipad_d": l.barrel_antipad_d,
                        "stub_antipad_d": l.stub_antipad_d},
        "ground_via": {"drill": p.vias.drill, "pad": p.vias.pad},
        "ground_vias": grounds,
        "trace": {"width": s.trace_width, "gap": p.clearance, "fence_offset": s.fence_offset},
        "z_line": s.handle_z0,
        "model": {"sections": sections, "z_ref": 50.0, "z_load": s.handle_z0.unwrap_or(s.solution.z0),
                  "worst_s11_db": l.worst_s11.0, "worst_s11_hz": l.worst_s11.1},
        "f_max_hz": p.vias.f_max_hz,
    });
    out
}
