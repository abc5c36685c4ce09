//! The probe's connector launch, read back from the emitted files on every built-in stackup
//! that can hold a probe and on a user stackup: the ground-via ring around the signal via,
//! the vias beside the connector's ground pads within the stitching limit, the relief under
//! the centre pad on the layer below it, and the top-layer link at its solved width, whose
//! impedance the field solver confirms.

mod common;

use common::{ReadGerber, read_drill, read_gerber, rect};
use geo::{Area, BooleanOps, BoundingRect};
use loopwright::pipeline::build_to_dir;
use loopwright::solve::impedance::{Accuracy, Cpwg, Line, Method, analyse_with};
use loopwright::spec::probe::ProbeFileSpec;
use std::path::Path;

/// A user stackup: six layers, 1.2 mm, the loop on L3 (invented for this test).
const USER_STACKUP: &str = r#"
name = "user-6l-1.2"
description = "test-only six-layer build"
[mask_top]
thickness_mm = 0.02
er = 3.6
[[layer]]
type = "copper"
name = "L1"
thickness_oz = 1.0
[[layer]]
type = "dielectric"
name = "prepreg"
thickness_mm = 0.1
er = 3.9
loss_tangent = 0.02
[[layer]]
type = "copper"
name = "L2"
thickness_oz = 0.5
[[layer]]
type = "dielectric"
name = "core"
thickness_mm = 0.3
er = 4.3
loss_tangent = 0.02
[[layer]]
type = "copper"
name = "L3"
thickness_oz = 0.5
[[layer]]
type = "dielectric"
name = "prepreg"
thickness_mm = 0.3
er = 4.3
loss_tangent = 0.02
[[layer]]
type = "copper"
name = "L4"
thickness_oz = 0.5
[[layer]]
type = "dielectric"
name = "core"
thickness_mm = 0.3
er = 4.3
loss_tangent = 0.02
[[layer]]
type = "copper"
name = "L5"
thickness_oz = 0.5
[[layer]]
type = "dielectric"
name = "prepreg"
thickness_mm = 0.1
er = 3.9
loss_tangent = 0.02
[[layer]]
type = "copper"
name = "L6"
thickness_oz = 1.0
[mask_bottom]
thickness_mm = 0.02
er = 3.6
"#;

fn family(stackup: &str, signal_layer: usize) -> String {
    format!(
        r#"family = "launch-check"
stackup = "{stackup}"
signal_layer = {signal_layer}
target_z0_ohms = 50.0
clearance_mm = 0.2
gap_mm = 0.4
[via]
drill_mm = 0.3
pad_mm = 0.6
pitch_n = 20
f_max_hz = 3e9
[handle]
length_mm = 30.0
width_mm = 8.0
[[probe]]
name = "LC-R10"
shape = "round"
size_mm = 10.0
"#
    )
}

/// Builds the one-probe family and checks its launch from the files.
fn check(stackup: &str, signal_layer: usize, dir: &Path) {
    let text = family(stackup, signal_layer);
    let spec: ProbeFileSpec = toml::from_str(&text).unwrap();
    let out = dir.join(format!("out-{}-{signal_layer}", stackup.replace('.', "_")));
    let (_, built) = build_to_dir(&spec, dir, &out, false, vec![]).unwrap();
    let b = &built[0];
    let s = &b.solved;
    let folder = out.join(&b.probe.folder);
    let name = &b.probe.name;
    let l1 = read_gerber(&folder.join(format!("{name}-L1.gbr")));
    let l2 = read_gerber(&folder.join(format!("{name}-L2.gbr")));
    let holes = read_drill(&folder.join(format!("{name}-PTH.drl")));
    let tag = format!("{stackup} (signal L{signal_layer})");

    // The signal via: the hole on the axis nearest above the centre pad.
    let centre = l1
        .flashes
        .iter()
        .find(|f| f.ap.function.contains("ConnectorPad") && f.x.abs() < 1e-6)
        .unwrap_or_else(|| panic!("{tag}: no centre pad on L1"));
    let (cw, ch) = (centre.ap.a, centre.ap.b);
    let pad_top = centre.y + ch / 2.0;
    let sv = holes
        .iter()
        .filter(|h| h.0.abs() < 1e-6 && h.1 > pad_top)
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .copied()
        .unwrap_or_else(|| panic!("{tag}: no signal via above the centre pad"));
    let grounds: Vec<(f64, f64)> = holes
        .iter()
        .filter(|h| (h.0 - sv.0).hypot(h.1 - sv.1) > 1e-6)
        .map(|h| (h.0, h.1))
        .collect();
    let pitch = s.pitch_max;

    // Ring: ground vias within the stitching limit of the signal via, on both sides, and
    // on the connector side of it (below it) on both sides.
    let near: Vec<_> = grounds
        .iter()
        .filter(|g| (g.0 - sv.0).hypot(g.1 - sv.1) <= pitch)
        .collect();
    for side in [-1.0, 1.0] {
        assert!(
            near.iter().any(|g| g.0 * side > 0.0 && g.1 < sv.1),
            "{tag}: no ground via within {pitch:.3} mm of the signal via on the connector side, \
             x {side:+}"
        );
    }
    assert!(near.len() >= 4, "{tag}: only {} ring vias", near.len());

    // Ground pads: every point of each ground pad's inner long side and inner end that lies
    // over shield copper is within the stitching limit of a ground via.
    let gpads: Vec<_> = l1
        .flashes
        .iter()
        .filter(|f| f.ap.function.contains("ConnectorPad") && f.x.abs() > 1e-6)
        .collect();
    assert_eq!(gpads.len(), 2, "{tag}: ground pads on L1");
    for g in &gpads {
        let (hw, hh) = (g.ap.a / 2.0, g.ap.b / 2.0);
        let inner_x = g.x - g.x.signum() * hw;
        let mut pts = Vec::new();
        for i in 0..=20 {
            let t = i as f64 / 20.0;
            pts.push((inner_x, g.y - hh + t * 2.0 * hh));
            pts.push((g.x - hw + t * 2.0 * hw, g.y + hh));
        }
        for (x, y) in pts {
            let d = grounds
                .iter()
                .map(|v| (v.0 - x).hypot(v.1 - y))
                .fold(f64::INFINITY, f64::min);
            assert!(
                d <= pitch,
                "{tag}: ground pad at x = {:.2}: point ({x:.3}, {y:.3}) is {d:.3} mm from the \
                 nearest ground via, beyond the stitching limit {pitch:.3} mm",
                g.x
            );
        }
    }

    // Relief: no copper on the layer below L1 under the centre pad and its gap.
    let l = &s.launch;
    if l.relief_depth > 0 {
        let under = rect(
            -cw / 2.0 - l.pad_gap + 1e-3,
            centre.y - ch / 2.0,
            cw / 2.0 + l.pad_gap - 1e-3,
            pad_top - 1e-3,
        );
        let cu = copper_of(&l2);
        let overlap = cu.intersection(&under).unsigned_area();
        assert!(
            overlap < 1e-6,
            "{tag}: {overlap:.4} mm² of L2 copper under the centre pad (relief expected)"
        );
        // And the relief is no wider than stated: L2 copper just beyond it.
        let beyond = rect(
            cw / 2.0 + l.pad_gap + 0.01,
            centre.y,
            cw / 2.0 + l.pad_gap + 0.05,
            centre.y + 0.1,
        );
        assert!(
            cu.intersection(&beyond).unsigned_area() > 0.9 * 0.04 * 0.1,
            "{tag}: no L2 copper beside the relief"
        );
    }

    // The link: its width on L1 midway between the pad and the signal via equals the solved
    // width, and the field solver gives the target for grounded CPW of that width.
    let y_mid = 0.5 * (pad_top + sv.1 - 0.3);
    let cut = rect(-2.0, y_mid - 1e-3, 2.0, y_mid + 1e-3);
    let pieces = copper_of(&l1).intersection(&cut);
    let link = pieces
        .0
        .iter()
        .find(|p| {
            let r = p.bounding_rect().unwrap();
            r.min().x < 0.0 && r.max().x > 0.0
        })
        .unwrap_or_else(|| panic!("{tag}: no link copper on the axis at y = {y_mid:.3}"));
    let r = link.bounding_rect().unwrap();
    let w = r.max().x - r.min().x;
    assert!(
        (w - l.link_width).abs() < 2e-3,
        "{tag}: link width on L1 {w:.4} mm, solved {:.4} mm",
        l.link_width
    );
    let st = &b.probe.stackup;
    let d1 = st.dielectric_below(1).unwrap();
    let line = Line::Cpwg(Cpwg {
        width: w,
        gap: b.probe.clearance,
        h: d1.thickness_mm,
        t: st.copper(1).unwrap().thickness_mm,
        er: d1.er,
    });
    let z = analyse_with(&line, Some(Method::Field), Accuracy::default())
        .unwrap()
        .z0;
    assert!(
        (z / 50.0 - 1.0).abs() < 0.02,
        "{tag}: link of {w:.4} mm is {z:.2} Ω by the field solver"
    );
    // The centre pad as laid out (gap measured on L1) is near 50 Ω by the field solver
    // whenever the solve reached it.
    let gap_cut = rect(0.0, centre.y - 1e-3, 3.0, centre.y + 1e-3);
    let gap_right = copper_of(&l1)
        .intersection(&gap_cut)
        .0
        .iter()
        .filter_map(|p| p.bounding_rect())
        .map(|r| r.min().x)
        .filter(|x| *x > cw / 2.0 + 1e-3)
        .fold(f64::INFINITY, f64::min)
        - cw / 2.0;
    assert!(
        (gap_right - l.pad_gap).abs() < 2e-3,
        "{tag}: centre-pad gap on L1 {gap_right:.4} mm, solved {:.4}",
        l.pad_gap
    );
    let zp = loopwright::field::solve(
        &loopwright::solve::launch::pad_cross_section(&b.probe, gap_right, l.relief_depth),
        Accuracy::default(),
    )
    .unwrap()
    .z0_ohms;
    assert!(
        (zp / 50.0 - 1.0).abs() < 0.02,
        "{tag}: centre pad {zp:.2} Ω as laid out"
    );
}

/// Copper of a layer: regions and flashes (pads and via lands).
fn copper_of(g: &ReadGerber) -> geo::MultiPolygon<f64> {
    common::copper(g, |_| true)
}

#[test]
fn launch_on_every_stackup() {
    let stackup = common::tmp_file("user-6l.toml", USER_STACKUP);
    let dir = stackup.parent().unwrap();
    for (st, layer) in [
        ("common-4l-1.6", 2),
        ("slim-4l-0.8", 2),
        ("slim-4l-0.8", 3),
        ("user-6l.toml", 3),
    ] {
        check(st, layer, dir);
    }
}
