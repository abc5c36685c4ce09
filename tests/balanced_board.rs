//! The balanced (doubly-loaded) loop's board, read back from the files it is written as
//! (Gerber, Excellon), independently of the writer: every layer (both lines and both
//! connectors included) is mirror-symmetric about the axis; the shield is cut at the two sides,
//! each gap centred on the loop's widest point (midway along its half-turn) and holding only
//! the trace on the signal layer; each line runs unbroken on the signal layer from its signal
//! via, under its own connector, to the short past its gap; the two connectors stand side by
//! side at the pair pitch. Spec checks: the kind is accepted, a handle too narrow for two
//! connectors is refused naming the field and the width it needs.

mod common;

use common::{ReadGerber, copper, read_drill, read_gerber, rect};
use geo::{Area, BooleanOps, Intersects, MultiPolygon};
use std::path::{Path, PathBuf};
use std::sync::OnceLock;

/// Balanced loops on the demo's stackup, loop trace on L3: round 20 mm and 6 mm, and the
/// flat-tipped 12 × 6 mm rectangle (name, shape fields).
const PROBES: [(&str, &str); 3] = [
    ("B20", "shape = \"round\"\nsize_mm = 20.0"),
    ("B6", "shape = \"round\"\nsize_mm = 6.0"),
    (
        "BT",
        "shape = \"rectangle\"\nwidth_mm = 12.0\nheight_mm = 6.0\ncorner_radius_mm = 1.5",
    ),
];
const N: usize = 4;
const SIGNAL: usize = 3;
const UM: f64 = 1e-3;
const GAP: f64 = 0.4;

fn spec_text() -> String {
    let mut text = String::from(
        "family = \"BAL\"\nstackup = \"common-4l-1.6\"\nsignal_layer = 3\ngap_mm = 0.4\n\
         [handle]\nwidth_mm = 8.0\n",
    );
    for (name, shape) in PROBES {
        text.push_str(&format!(
            "[[probe]]\nname = \"{name}\"\nkind = \"balanced\"\n{shape}\nhandle_width_mm = 17.0\n"
        ));
    }
    text
}

fn built() -> &'static Path {
    static DIR: OnceLock<PathBuf> = OnceLock::new();
    DIR.get_or_init(|| {
        let dir = std::env::temp_dir().join(format!("loopwright-balanced-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        let spec: loopwright::spec::probe::ProbeFileSpec = toml::from_str(&spec_text()).unwrap();
        loopwright::pipeline::build_to_dir(&spec, Path::new("."), &dir, false, Vec::new())
            .expect("the balanced loops build clean");
        dir
    })
}

fn file(probe: &str, suffix: &str) -> PathBuf {
    built().join(probe).join(format!("{probe}-{suffix}"))
}

fn layer(probe: &str, n: usize) -> ReadGerber {
    read_gerber(&file(probe, &format!("L{n}.gbr")))
}

fn mirrored(c: &MultiPolygon<f64>) -> MultiPolygon<f64> {
    MultiPolygon(
        c.0.iter()
            .map(|p| {
                use geo::MapCoords;
                p.map_coords(|q| geo::Coord { x: -q.x, y: q.y })
            })
            .collect(),
    )
}

/// Half the loop's width across the axis (where the gaps are), mm.
fn half_width(probe: &str) -> f64 {
    match probe {
        "B20" => 10.0,
        "B6" => 3.0,
        _ => 6.0,
    }
}

#[test]
fn every_layer_with_both_lines_and_connectors_is_mirror_symmetric() {
    for (probe, _) in PROBES {
        for n in 1..=N {
            let g = layer(probe, n);
            let c = copper(&g, |_| true);
            let diff = c.xor(&mirrored(&c)).unsigned_area();
            assert!(
                diff < 1e-4,
                "{probe} L{n}: {diff} mm² differ from the mirror image"
            );
        }
        // The connectors' pads (top and bottom) and the holes are mirror pairs too.
        for side in [1, N] {
            let g = layer(probe, side);
            for f in g.flashes.iter().filter(|f| f.ap.function != "ViaPad") {
                assert!(
                    g.flashes
                        .iter()
                        .any(|o| (o.x + f.x).abs() < UM && (o.y - f.y).abs() < UM && o.ap == f.ap),
                    "{probe} L{side}: the pad at ({}, {}) has no mirror image",
                    f.x,
                    f.y
                );
            }
        }
        let holes = read_drill(&file(probe, "PTH.drl"));
        for h in &holes {
            assert!(
                holes
                    .iter()
                    .any(|o| (o.0 + h.0).abs() < UM && (o.1 - h.1).abs() < UM && o.2 == h.2),
                "{probe}: the hole at ({}, {}) has no mirror image",
                h.0,
                h.1
            );
        }
    }
}

#[test]
fn each_side_gap_is_centred_on_the_widest_point_and_cuts_every_layer() {
    for (probe, _) in PROBES {
        let a = half_width(probe);
        for n in 1..=N {
            let c = copper(&layer(probe, n), |_| true);
            for sign in [-1.0, 1.0] {
                // A band across the ring at the gap's middle, half the gap tall, and the two
                // bands of the same height just outside the gap on either side.
                let (x0, x1) = (sign * a - 3.0, sign * a + 3.0);
                let (x0, x1) = (x0.min(x1), x0.max(x1));
                let inside = c
                    .intersection(&rect(x0, -GAP / 4.0, x1, GAP / 4.0))
                    .unsigned_area();
                let above = c
                    .intersection(&rect(x0, GAP / 2.0 + 0.05, x1, GAP / 2.0 + 0.15))
                    .unsigned_area();
                let below = c
                    .intersection(&rect(x0, -GAP / 2.0 - 0.15, x1, -GAP / 2.0 - 0.05))
                    .unsigned_area();
                // The shield is there just above and below the gap, equally (centred) ...
                assert!(
                    above > 0.05 && below > 0.05,
                    "{probe} L{n}: {above} {below}"
                );
                assert!(
                    (above - below).abs() < 0.02 * above,
                    "{probe} L{n}: {above} {below}"
                );
                // ... and inside it only the trace (on its layer) or nothing: the trace's
                // width times the band's height at most.
                let allowed = if n == SIGNAL { 0.3 * GAP / 2.0 } else { 1e-6 };
                assert!(inside <= allowed, "{probe} L{n} side {sign}: {inside} mm²");
                if n == SIGNAL {
                    assert!(inside > 0.1 * GAP / 2.0, "{probe}: no trace across the gap");
                }
            }
            // No gap at the apex: the shield is whole across the top.
            let top = c.intersection(&rect(-0.3, 0.0, 0.3, 100.0)).unsigned_area();
            assert!(top > 0.5, "{probe} L{n}: {top} mm² across the apex");
        }
    }
}

#[test]
fn each_line_runs_from_its_signal_via_past_its_gap_and_is_shorted_there() {
    for (probe, _) in PROBES {
        let a = half_width(probe);
        let l3 = layer(probe, SIGNAL);
        let l2 = layer(probe, 2);
        let c3 = copper(&l3, |_| true);
        let holes = read_drill(&file(probe, "PTH.drl"));
        // The two signal vias: lands on L1 and L3, none on L2 (the barrel's antipad).
        let svs: Vec<&common::ReadFlash> = l3
            .flashes
            .iter()
            .filter(|f| f.ap.function == "ViaPad" && f.y < -20.0)
            .filter(|f| !l2.flashes.iter().any(|g| (g.x - f.x).hypot(g.y - f.y) < UM))
            .collect();
        assert_eq!(svs.len(), 2, "{probe}: signal vias");
        assert!(
            (svs[0].x + svs[1].x).abs() < UM,
            "{probe}: not a mirror pair"
        );
        // Side by side at the pair pitch (9 mm for the generic footprint).
        assert!(
            ((svs[0].x - svs[1].x).abs() - 9.0).abs() < UM,
            "{probe}: connectors {} mm apart",
            (svs[0].x - svs[1].x).abs()
        );
        for sv in svs {
            let sign = sv.x.signum();
            // The line's copper on the signal layer: the piece of L3 at the signal via, less
            // the shield, is one run reaching across its own gap (y = 0 at x = ±a).
            let shield_free = c3.difference(
                &rect(-100.0, -100.0, 100.0, 100.0).difference(&MultiPolygon(
                    c3.0.iter()
                        .filter(|p| p.intersects(&geo::Point::new(sv.x, sv.y)))
                        .cloned()
                        .collect(),
                )),
            );
            let piece = shield_free
                .0
                .iter()
                .find(|p| p.intersects(&geo::Point::new(sv.x, sv.y)))
                .expect("copper at the signal via");
            assert!(
                piece.intersects(&geo::Point::new(sign * a, 0.0)),
                "{probe}: the line from the signal via at x = {} does not cross its gap",
                sv.x
            );
            // Past its gap it is shorted: a via whose land is on the signal layer within the
            // ring, above the gap, on the line's side, and the line's copper runs on into the
            // shield there (one piece with the top of the ring).
            let shorted = holes.iter().any(|h| {
                h.0 * sign > a - 0.3
                    && h.0 * sign < a + 0.3
                    && h.1 > GAP / 2.0
                    && h.1 < 3.0
                    && piece.intersects(&geo::Point::new(h.0, h.1))
            });
            assert!(
                shorted,
                "{probe}: no short via on the line past the gap at x = {}",
                sv.x
            );
            assert!(
                piece.intersects(&geo::Point::new(
                    0.0,
                    match probe {
                        "B20" => 10.0,
                        _ => 3.0,
                    }
                )),
                "{probe}: the short does not join the top of the ring"
            );
        }
    }
}

#[test]
fn a_balanced_loop_needs_room_for_two_connectors() {
    let text = "stackup = \"common-4l-1.6\"\nsignal_layer = 3\n[[probe]]\nname = \"B\"\n\
                kind = \"balanced\"\nshape = \"round\"\nsize_mm = 20.0\nhandle_width_mm = 12.0\n";
    let spec: loopwright::spec::probe::ProbeFileSpec = toml::from_str(text).unwrap();
    let err = loopwright::model::probe::family_from_spec(&spec, Path::new("."))
        .expect_err("a 12 mm handle cannot hold two connectors 9 mm apart");
    let msg = err.to_string();
    assert!(
        msg.contains("probe[0].handle_width_mm") || msg.contains("handle_width_mm"),
        "{msg}"
    );
    assert!(msg.contains("12") && msg.contains("16.1"), "{msg}");
    // Room round the side gaps and in the handle: a gap whose keep-out leaves the inner row no
    // room (3.6 mm loop, 1.6 mm gap) and a handle too short for the lines' jogs are refused
    // naming the field and the least value, never built into a failing board.
    for (extra, want) in [
        (
            "gap_mm = 1.6
",
            "gap_mm = 1.6: is too wide",
        ),
        (
            "[handle]
length_mm = 8
",
            "handle.length_mm = 8: is too short",
        ),
    ] {
        let (top, shape) = if extra.starts_with("gap") {
            (extra, "size_mm = 3.6")
        } else {
            ("", "size_mm = 6.0")
        };
        let text = format!(
            "stackup = \"common-4l-1.6\"\nsignal_layer = 3\n{top}{}[[probe]]\nname = \"B\"\n\
             kind = \"balanced\"\nshape = \"round\"\n{shape}\nhandle_width_mm = 17.0\n",
            if top.is_empty() { extra } else { "" }
        );
        let spec: loopwright::spec::probe::ProbeFileSpec = toml::from_str(&text).unwrap();
        let err = loopwright::pipeline::build_to_dir(
            &spec,
            Path::new("."),
            &std::env::temp_dir().join(format!("loopwright-bal-room-{}", std::process::id())),
            false,
            Vec::new(),
        )
        .expect_err("refused");
        let msg = err.to_string();
        assert!(msg.contains(want) && msg.contains("at least"), "{msg}");
    }
    // And a loop of kind "loop" keeps today's meaning with the same spec fields.
    let ok = text.replace("kind = \"balanced\"", "kind = \"loop\"");
    let spec: loopwright::spec::probe::ProbeFileSpec = toml::from_str(&ok).unwrap();
    loopwright::model::probe::family_from_spec(&spec, Path::new(".")).unwrap();
}
