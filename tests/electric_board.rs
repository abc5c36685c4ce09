//! The electric-field probe's board, read back from the files it is written as (Gerber,
//! Excellon), independently of the writer: the electrode is whole, bare copper on both faces
//! under a mask opening, every shield layer keeps its clearance, the electrode's via joins the
//! discs and the line's end, the line runs from the signal via to it, the board is
//! mirror-symmetric, the face's ring of vias closes round the clearance, and the nets say the
//! electrode is open to the shield.

mod common;

use common::{ReadGerber, copper, read_drill, read_gerber};
use geo::{Area, BooleanOps, Intersects, MultiPolygon};
use std::path::{Path, PathBuf};
use std::sync::OnceLock;

/// Two electric probes on the demo's stackup: a small electrode with the default clearance and
/// a large one with a wider clearance (diameter mm, clearance mm).
const PROBES: [(&str, f64, f64); 2] = [("E2", 2.0, 0.3), ("E9", 9.0, 0.6)];
const N: usize = 4;
const SIGNAL: usize = 2;
const UM: f64 = 1e-3;

fn built() -> &'static Path {
    static DIR: OnceLock<PathBuf> = OnceLock::new();
    DIR.get_or_init(|| {
        let dir = std::env::temp_dir().join(format!("loopwright-electric-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        let mut text =
            String::from("family = \"EF\"\nstackup = \"common-4l-1.6\"\nsignal_layer = 2\n");
        for (name, d, c) in PROBES {
            text.push_str(&format!(
                "[[probe]]\nname = \"{name}\"\nkind = \"electric\"\nelectrode_diameter_mm = {d}\n\
                 electrode_clearance_mm = {c}\n"
            ));
        }
        let spec: loopwright::spec::probe::ProbeFileSpec = toml::from_str(&text).unwrap();
        loopwright::pipeline::build_to_dir(&spec, Path::new("."), &dir, false, Vec::new())
            .expect("the electric probes build clean");
        dir
    })
}

fn file(probe: &str, suffix: &str) -> PathBuf {
    built().join(probe).join(format!("{probe}-{suffix}"))
}

fn layer(probe: &str, n: usize) -> ReadGerber {
    read_gerber(&file(probe, &format!("L{n}.gbr")))
}

fn disc(r: f64) -> MultiPolygon<f64> {
    MultiPolygon(vec![loopwright::geom::circle(kurbo::Point::ZERO, r)])
}

#[test]
fn the_electrode_is_whole_bare_copper_on_both_faces() {
    for (probe, d, _) in PROBES {
        for (n, side) in [(1, "top"), (N, "bottom")] {
            let c = copper(&layer(probe, n), |_| true);
            // The disc drawn by the reader's own circle (flattened inside the true circle).
            let missing = disc(d / 2.0 - UM).difference(&c).unsigned_area();
            assert!(
                missing < 1e-6,
                "{probe} L{n}: {missing} mm² of the electrode missing"
            );
            let mask = read_gerber(&file(probe, &format!("mask-{side}.gbr")));
            let opening = mask
                .flashes
                .iter()
                .find(|f| f.ap.kind == 'C' && f.x.hypot(f.y) < UM)
                .unwrap_or_else(|| panic!("{probe}: no mask opening over the electrode, {side}"));
            // The opening covers the disc with the mask expansion (at most 0.1 mm) round it.
            let grow = (opening.ap.a - d) / 2.0;
            assert!((0.0..=0.1).contains(&grow), "{probe} {side}: {grow}");
        }
    }
}

#[test]
fn every_shield_layer_keeps_the_clearance() {
    for (probe, d, c) in PROBES {
        let r = d / 2.0;
        // The ring between the electrode and the shield, less a micrometre each side.
        let ring = disc(r + c - UM).difference(&disc(r + UM));
        for n in 1..=N {
            let g = layer(probe, n);
            let in_ring = copper(&g, |_| true).intersection(&ring).unsigned_area();
            if n == SIGNAL {
                // Only the line crosses it, on the axis below the electrode: a strip as wide as
                // the line across the whole clearance.
                use geo::BoundingRect;
                let b = copper(&g, |_| true)
                    .intersection(&ring)
                    .bounding_rect()
                    .expect("the line crosses the clearance");
                let w = b.max().x - b.min().x;
                assert!(
                    (b.min().x + b.max().x).abs() < UM && w < 0.5,
                    "{probe}: {b:?}"
                );
                // Its ends follow the two circles: their sagitta over half the line's width.
                let sag = (w / 2.0).powi(2) / r;
                assert!(b.max().y < -r + sag && b.min().y > -r - c, "{probe}: {b:?}");
                assert!(
                    (in_ring - w * c).abs() < w * sag + 1e-3 * in_ring,
                    "{probe} L{n}: {in_ring} mm² in the clearance, the line's strip {w} mm wide"
                );
            } else {
                assert!(
                    in_ring < 1e-6,
                    "{probe} L{n}: {in_ring} mm² in the clearance"
                );
            }
            if n != 1 && n != N && n != SIGNAL {
                // Inside an inner shield layer's clearance there is no copper at all.
                let inside = copper(&g, |_| true)
                    .intersection(&disc(r + c - UM))
                    .unsigned_area();
                assert!(inside < 1e-6, "{probe} L{n}: {inside} mm²");
            }
        }
    }
}

#[test]
fn the_electrode_via_joins_the_discs_and_the_line_and_the_line_reaches_the_signal_via() {
    for (probe, _, _) in PROBES {
        let holes = read_drill(&file(probe, "PTH.drl"));
        assert!(
            holes.iter().any(|h| h.0.hypot(h.1) < UM),
            "{probe}: no hole at the electrode's centre"
        );
        let lands: Vec<usize> = (1..=N)
            .filter(|&n| {
                layer(probe, n)
                    .flashes
                    .iter()
                    .any(|f| f.ap.function == "ViaPad" && f.x.hypot(f.y) < UM)
            })
            .collect();
        assert_eq!(lands, [1, SIGNAL, N], "{probe}: the electrode via's lands");
        // On the signal layer one piece of copper runs from the electrode's via to the signal
        // via (the via on the axis with lands on L1, L2 and L4 only, below the electrode).
        let l2 = layer(probe, SIGNAL);
        let l3 = layer(probe, 3);
        let sv = l2
            .flashes
            .iter()
            .filter(|f| f.ap.function == "ViaPad" && f.x.abs() < UM && f.y < -1.0)
            .find(|f| !l3.flashes.iter().any(|g| (g.x - f.x).hypot(g.y - f.y) < UM))
            .expect("the signal via on the axis");
        let c = copper(&l2, |_| true);
        let piece =
            c.0.iter()
                .find(|p| p.intersects(&geo::Point::new(0.0, 0.0)))
                .expect("copper at the electrode's via on the signal layer");
        assert!(
            piece.intersects(&geo::Point::new(sv.x, sv.y)),
            "{probe}: the line does not reach the signal via"
        );
        // And it is the line alone, not the shield: small.
        assert!(piece.unsigned_area() < 20.0, "{probe}");
    }
}

#[test]
fn every_layer_is_mirror_symmetric() {
    for (probe, _, _) in PROBES {
        for n in 1..=N {
            let c = copper(&layer(probe, n), |_| true);
            let m = MultiPolygon(
                c.0.iter()
                    .map(|p| {
                        use geo::MapCoords;
                        p.map_coords(|q| geo::Coord { x: -q.x, y: q.y })
                    })
                    .collect(),
            );
            let diff = c.xor(&m).unsigned_area();
            assert!(
                diff < 1e-4,
                "{probe} L{n}: {diff} mm² differ from the mirror image"
            );
        }
    }
}

#[test]
fn the_face_ring_closes_round_the_clearance_within_the_stitching_limit() {
    for (probe, d, c) in PROBES {
        let holes = read_drill(&file(probe, "PTH.drl"));
        let r = d / 2.0 + c;
        // The ring: holes within 2 mm beyond the clearance, above the line's channel.
        let ring: Vec<(f64, f64)> = holes
            .iter()
            .filter(|h| {
                let rr = h.0.hypot(h.1);
                rr > r && rr < r + 1.0 && h.1 > -r / 2.0
            })
            .map(|h| (h.0, h.1))
            .collect();
        assert!(ring.len() >= 3, "{probe}: {} ring vias", ring.len());
        // Walking the ring by angle from the left of the channel over the top to its right, no
        // step is longer than λ/20 at 3 GHz in εr 4.5 (the spec's defaults: 2.36 mm).
        let limit = 299.792_458 / (3.0 * 4.5f64.sqrt()) / 20.0;
        let mut by_angle = ring.clone();
        by_angle.sort_by(|a, b| a.0.atan2(a.1).total_cmp(&b.0.atan2(b.1)));
        for w in by_angle.windows(2) {
            let step = (w[1].0 - w[0].0).hypot(w[1].1 - w[0].1);
            assert!(step <= limit, "{probe}: {step} mm between ring vias");
        }
    }
}

#[test]
fn the_electrode_and_the_shield_are_two_nets() {
    for (probe, _, _) in PROBES {
        for n in 1..=N {
            let text = std::fs::read_to_string(file(probe, &format!("L{n}.gbr"))).unwrap();
            let electrode = text.contains("%TO.N,ELECTRODE*%");
            let shield = text.contains("%TO.N,SHIELD*%");
            assert!(shield, "{probe} L{n}");
            // The electrode's net is on the layers that carry its copper.
            assert_eq!(electrode, n != 3, "{probe} L{n}");
        }
        let notes = std::fs::read_to_string(file(probe, "fab-notes.md")).unwrap();
        assert!(notes.contains("**Two nets.**") && notes.contains("isolated from the shield"));
        assert!(notes.contains("SAFETY"));
    }
}
