//! The emitted probe boards (read back from the files, not the model) against the construction
//! rules of a split-shield loop probe. The demo family is built once into a temporary folder.

mod common;

use common::{ReadGerber, copper, demo_dir, read_drill, read_gerber, rect};
use geo::algorithm::buffer::Buffer;
use geo::{Area, BooleanOps, BoundingRect, Contains, Coord, LineString, MultiPolygon, Polygon};
use std::path::PathBuf;

const PROBES: [&str; 4] = ["FM-R20", "FM-R10", "FM-R5", "FM-T12x6"];
/// Gap width in the demo spec, mm.
const GAP: f64 = 0.4;
/// The demo's loop layer (its spec's `signal_layer`).
const SIGNAL: usize = 3;
/// A shield layer the signal via passes without joining (between L1 and the loop's layer).
const PASSED: usize = 2;
/// 1 µm.
const UM: f64 = 1e-3;

fn file(probe: &str, suffix: &str) -> PathBuf {
    demo_dir().join(probe).join(format!("{probe}-{suffix}"))
}

fn layer(probe: &str, n: usize) -> ReadGerber {
    read_gerber(&file(probe, &format!("L{n}.gbr")))
}

fn mirror(m: &MultiPolygon<f64>) -> MultiPolygon<f64> {
    use geo::MapCoords;
    let mut out = m.map_coords(|c| Coord { x: -c.x, y: c.y });
    // Mirroring flips orientation; rebuild so that booleans see proper rings.
    for p in &mut out.0 {
        *p = Polygon::new(p.exterior().clone(), p.interiors().to_vec());
    }
    out
}

/// The signal via: the via pad on the loop's layer with no land on L2 (it joins L1 and L3 only,
/// with an isolated land on L4).
fn signal_via(l2: &ReadGerber, l3: &ReadGerber) -> common::ReadFlash {
    l2.flashes
        .iter()
        .find(|f| {
            f.ap.function == "ViaPad"
                && !l3
                    .flashes
                    .iter()
                    .any(|h| (h.x - f.x).hypot(h.y - f.y) < 1e-4)
        })
        .cloned()
        .expect("signal via")
}

/// Pitch limit from first principles: λ/20 at 3 GHz in the highest εr around L3 (4.5, the
/// core of the built-in stackup): λ = c/(f·√εr).
fn pitch_limit() -> f64 {
    299_792_458.0 / (3e9 * 4.5_f64.sqrt()) * 1e3 / 20.0
}

/// The trace width the library solves for the demo's probes (L3, 50 Ω, set by the field
/// solution of the loop arm's cross-section): the files must carry exactly this width.
fn solved_width() -> f64 {
    let spec: loopwright::spec::probe::ProbeFileSpec =
        toml::from_str(loopwright::cli::DEMO_SPEC).unwrap();
    let fam = loopwright::model::probe::family_from_spec(&spec, std::path::Path::new(".")).unwrap();
    loopwright::solve::probe::solve(&fam.probes[0])
        .unwrap()
        .trace_width
}

#[test]
fn gap_is_centred_on_every_shield_layer_and_the_coplanar_ground() {
    for probe in PROBES {
        for n in 1..=4 {
            let c = copper(&layer(probe, n), |_| true);
            let top = c.bounding_rect().unwrap().max().y;
            // A band just inside the ring's outer edge at the apex (clear of the trace on L3).
            let band = c.intersection(&rect(-3.0, top - 0.3, 3.0, top - 0.1));
            let (mut left, mut right) = (f64::NEG_INFINITY, f64::INFINITY);
            for p in &band.0 {
                let r = p.bounding_rect().unwrap();
                if r.max().x <= 0.0 {
                    left = left.max(r.max().x);
                } else if r.min().x >= 0.0 {
                    right = right.min(r.min().x);
                } else {
                    panic!("{probe} L{n}: copper spans the axis at the apex: no gap");
                }
            }
            assert!(
                (left + right).abs() < UM,
                "{probe} L{n}: gap off centre {left} {right}"
            );
            assert!(
                (right - left - GAP).abs() < UM,
                "{probe} L{n}: gap {}",
                right - left
            );
        }
    }
}

#[test]
fn shield_layers_are_mirror_symmetric() {
    for probe in PROBES {
        for n in [1, 2, 4] {
            let c = copper(&layer(probe, n), |_| true);
            let asym = c.xor(&mirror(&c)).unsigned_area();
            assert!(
                asym < 1e-4,
                "{probe} L{n}: {asym} mm² differ from the mirror image"
            );
        }
    }
}

#[test]
fn trace_crosses_the_gap_on_the_signal_layer_only() {
    let w = solved_width();
    for probe in PROBES {
        let c = copper(&layer(probe, SIGNAL), |_| true);
        let top = c.bounding_rect().unwrap().max().y;
        let strip = c.intersection(&rect(-GAP / 2.0 + UM, top - 2.5, GAP / 2.0 - UM, top + 1.0));
        // Only the trace: one piece, as wide as the trace, crossing the whole gap.
        assert_eq!(strip.0.len(), 1, "{probe}");
        let area = strip.unsigned_area();
        assert!(
            (area / ((GAP - 2.0 * UM) * w) - 1.0).abs() < 0.01,
            "{probe}: {area}"
        );
    }
}

#[test]
fn vias_keep_the_pitch_limit_and_stay_out_of_the_gap() {
    let limit = pitch_limit();
    for probe in PROBES {
        let holes = read_drill(&file(probe, "PTH.drl"));
        assert!(holes.len() > 20, "{probe}");
        for (i, &(x, y, _)) in holes.iter().enumerate() {
            let nn = common::nearest_hole(&holes, i);
            assert!(
                nn <= limit + UM,
                "{probe}: via at ({x}, {y}) has no neighbour within {limit}"
            );
            // Pad radius 0.3 mm: a via touching the gap would have |x| < gap/2 + 0.3.
            if y > 0.0 {
                assert!(
                    x.abs() >= GAP / 2.0 + 0.3,
                    "{probe}: via at ({x}, {y}) in the gap"
                );
            }
        }
    }
}

// Round loops: the inner stitching row runs all the way round (but for the gap) with arc
// spacing within the limit.
#[test]
fn inner_stitching_rows_are_continuous() {
    let limit = pitch_limit();
    for (probe, d) in [("FM-R20", 20.0), ("FM-R10", 10.0), ("FM-R5", 5.0)] {
        let r_mean: f64 = d / 2.0;
        let holes = read_drill(&file(probe, "PTH.drl"));
        let mut row: Vec<(f64, f64)> = holes
            .iter()
            .map(|h| (h.0.hypot(h.1), h.1.atan2(h.0)))
            .filter(|(r, _)| *r < r_mean && *r > r_mean - 1.5)
            .collect();
        assert!(row.len() >= 4, "{probe}");
        let radius = row[0].0;
        assert!(
            row.iter().all(|(r, _)| (r - radius).abs() < UM),
            "{probe}: one row"
        );
        // Angles measured from the apex (+y), clockwise positive, in (−π, π].
        let mut a: Vec<f64> = row
            .iter_mut()
            .map(|(_, t)| {
                let mut x = std::f64::consts::FRAC_PI_2 - *t;
                if x > std::f64::consts::PI {
                    x -= std::f64::consts::TAU;
                }
                x
            })
            .collect();
        a.sort_by(|p, q| p.partial_cmp(q).unwrap());
        for w in a.windows(2) {
            if w[0] < 0.0 && w[1] > 0.0 {
                continue; // across the gap
            }
            assert!((w[1] - w[0]) * radius <= limit * 1.001, "{probe}: {:?}", w);
        }
        // The first vias on each side of the gap are mirror images.
        let (l, r) = (
            a.iter()
                .copied()
                .filter(|x| *x < 0.0)
                .fold(f64::MIN, f64::max),
            a[a.iter().position(|x| *x > 0.0).unwrap()],
        );
        assert!((l + r).abs() * radius < UM, "{probe}");
    }
}

#[test]
fn every_via_has_pads_on_the_layers_it_joins_and_matches_the_drill_file() {
    for probe in PROBES {
        let holes = read_drill(&file(probe, "PTH.drl"));
        let layers: Vec<ReadGerber> = (1..=4).map(|n| layer(probe, n)).collect();
        let mut pad_sites: Vec<(f64, f64)> = Vec::new();
        for g in &layers {
            for f in g.flashes.iter().filter(|f| f.ap.function == "ViaPad") {
                if !pad_sites
                    .iter()
                    .any(|p| (p.0 - f.x).hypot(p.1 - f.y) < 1e-4)
                {
                    pad_sites.push((f.x, f.y));
                }
            }
        }
        // One for one: every via pad site has a hole and every hole a pad site.
        assert_eq!(pad_sites.len(), holes.len(), "{probe}");
        let mut signal_vias = 0;
        for &(x, y, d) in &holes {
            assert!(
                pad_sites.iter().any(|p| (p.0 - x).hypot(p.1 - y) < 1e-4),
                "{probe}"
            );
            let on: Vec<usize> = layers
                .iter()
                .enumerate()
                .filter(|(_, g)| {
                    g.flashes.iter().any(|f| {
                        f.ap.function == "ViaPad"
                            && (f.x - x).hypot(f.y - y) < 1e-4
                            && f.ap.a >= d + 2.0 * 0.125 - 1e-9
                    })
                })
                .map(|(i, _)| i + 1)
                .collect();
            if on == [1, SIGNAL, 4] {
                // The transition from the loop's layer to the connector's, with an isolated
                // land on the bottom layer.
                signal_vias += 1;
            } else {
                assert_eq!(on, [1, 2, 3, 4], "{probe}: via at ({x}, {y})");
            }
        }
        assert_eq!(signal_vias, 1, "{probe}");
    }
}

#[test]
fn trace_runs_from_the_signal_via_to_the_short_with_the_solved_width() {
    let w = solved_width();
    for probe in PROBES {
        let g = layer(probe, SIGNAL);
        let c = copper(&g, |_| true);
        // Remove everything at least 2r wide: what remains is the narrow trace.
        let r = w / 2.0 + 0.03;
        let opened = c.buffer(-r).buffer(r);
        let narrow = c.difference(&opened);
        let trace = narrow
            .0
            .iter()
            .max_by(|a, b| a.unsigned_area().partial_cmp(&b.unsigned_area()).unwrap())
            .unwrap()
            .clone();
        let trace = MultiPolygon(vec![trace]);
        // It starts at the signal via...
        let signal = signal_via(&g, &layer(probe, PASSED));
        let near = |m: &MultiPolygon<f64>, x: f64, y: f64, d: f64| {
            m.intersection(&rect(x - d, y - d, x + d, y + d))
                .unsigned_area()
                > 0.0
        };
        assert!(
            near(&trace, signal.x, signal.y, 0.3 + 0.05),
            "{probe}: not at the signal via"
        );
        // ...crosses the apex...
        let top = c.bounding_rect().unwrap().max().y;
        assert!(
            trace
                .intersection(&rect(-0.01, top - 5.0, 0.01, top))
                .unsigned_area()
                > 0.0,
            "{probe}: does not reach the apex"
        );
        // ...and ends at the short: a via within a millimetre of its end on the far side of the
        // axis from the feed.
        let holes = read_drill(&file(probe, "PTH.drl"));
        assert!(
            holes
                .iter()
                .any(|h| h.0 > 0.0 && h.1 < 0.0 && near(&trace, h.0, h.1, 1.0) && h.0 < 1.0),
            "{probe}: no short via at the end of the trace"
        );
        // Width, along the loop's upper half (away from the via and the short, where the trace
        // joins wider copper): it survives an erosion by just under w/2 and vanishes just over.
        let upper = trace.intersection(&rect(-50.0, 0.0, 50.0, 50.0));
        assert!(
            upper.buffer(-(w / 2.0 - 0.005)).unsigned_area() > 0.0,
            "{probe}"
        );
        assert!(
            upper.buffer(-(w / 2.0 + 0.005)).unsigned_area() < 1e-6,
            "{probe}"
        );
    }
}

#[test]
fn mask_covers_all_copper_but_the_connector_pads() {
    for probe in PROBES {
        for (n, side) in [(1, "top"), (4, "bottom")] {
            let mask = read_gerber(&file(probe, &format!("mask-{side}.gbr")));
            assert!(mask.file_attrs.iter().any(|a| a == "FilePolarity,Negative"));
            let pads: Vec<_> = layer(probe, n)
                .flashes
                .into_iter()
                .filter(|f| f.ap.function == "ConnectorPad")
                .collect();
            assert_eq!(mask.flashes.len(), pads.len(), "{probe} {side}");
            for o in &mask.flashes {
                let pad = pads
                    .iter()
                    .find(|p| (p.x - o.x).abs() < UM && (p.y - o.y).abs() < UM)
                    .expect("every opening is over a connector pad");
                // Opening = pad + expansion on each side, the expansion at most 0.1 mm.
                let (ex, ey) = ((o.ap.a - pad.ap.a) / 2.0, (o.ap.b - pad.ap.b) / 2.0);
                assert!((0.0..=0.1).contains(&ex) && (ex - ey).abs() < UM, "{probe}");
            }
        }
    }
}

#[test]
fn copper_is_inside_the_outline_with_the_edge_clearance() {
    for probe in PROBES {
        let prof = read_gerber(&file(probe, "profile.gbr"));
        assert!(
            prof.file_attrs
                .iter()
                .any(|a| a == "FileFunction,Profile,NP")
        );
        let ring = &prof.strokes[0].0;
        assert!(
            (ring[0].0 - ring.last().unwrap().0).abs() < 1e-9,
            "closed outline"
        );
        let outline = MultiPolygon(vec![Polygon::new(
            LineString::from(
                ring.iter()
                    .map(|&(x, y)| Coord { x, y })
                    .collect::<Vec<_>>(),
            ),
            vec![],
        )]);
        // Outline symmetric about x = 0.
        assert!(
            outline.xor(&mirror(&outline)).unsigned_area() < 1e-3,
            "{probe}"
        );
        for n in 1..=4 {
            let g = layer(probe, n);
            let body = copper(&g, |f| f.ap.function != "ConnectorPad");
            // Grown by the 0.3 mm copper-to-edge rule (less 1 µm of arc flattening), the copper
            // still fits inside the outline.
            let grown = body.buffer(0.3 - UM);
            let outside = grown.difference(&outline).unsigned_area();
            assert!(
                outside < 1e-6,
                "{probe} L{n}: {outside} mm² too near the edge"
            );
            for f in g.flashes.iter().filter(|f| f.ap.function == "ConnectorPad") {
                let p = geo::Point::new(f.x, f.y);
                assert!(outline.contains(&p), "{probe}: connector pad off the board");
            }
        }
    }
}

#[test]
fn files_carry_their_x2_attributes() {
    for probe in PROBES {
        for (suffix, function) in [
            // L1 holds the centre pad and the top link inside its ground, L3 the loop trace
            // inside the shield: both Mixed (the Gerber format's copper types Plane, Signal,
            // Mixed; a layer labelled Plane is taken for ground only).
            ("L1.gbr", "FileFunction,Copper,L1,Top,Mixed"),
            ("L2.gbr", "FileFunction,Copper,L2,Inr,Plane"),
            ("L3.gbr", "FileFunction,Copper,L3,Inr,Mixed"),
            ("L4.gbr", "FileFunction,Copper,L4,Bot,Plane"),
            ("mask-top.gbr", "FileFunction,Soldermask,Top"),
            ("legend-top.gbr", "FileFunction,Legend,Top"),
            ("profile.gbr", "FileFunction,Profile,NP"),
        ] {
            let g = read_gerber(&file(probe, suffix));
            assert!(
                g.file_attrs.iter().any(|a| a == function),
                "{probe} {suffix}"
            );
            assert!(
                g.file_attrs
                    .iter()
                    .any(|a| a.starts_with("SameCoordinates,"))
            );
            assert!(
                g.file_attrs
                    .iter()
                    .any(|a| a.starts_with("GenerationSoftware,"))
            );
            assert!(g.file_attrs.iter().any(|a| a == "Part,Single"));
        }
        let text = std::fs::read_to_string(file(probe, "L3.gbr")).unwrap();
        assert!(text.contains("%TO.N,PROBE*%"));
        // Every aperture definition is preceded by its function.
        let lines: Vec<&str> = text.lines().collect();
        for (i, l) in lines.iter().enumerate() {
            if l.starts_with("%ADD") {
                assert!(
                    lines[i - 1].starts_with("%TA.AperFunction,"),
                    "{probe}: {l}"
                );
            }
        }
        let job: serde_json::Value = serde_json::from_str(
            &std::fs::read_to_string(demo_dir().join(probe).join(format!("{probe}.gbrjob")))
                .unwrap(),
        )
        .unwrap();
        assert_eq!(job["GeneralSpecs"]["LayerNumber"], 4);
        let notes = std::fs::read_to_string(file(probe, "fab-notes.md")).unwrap();
        assert!(
            notes.contains("50 Ω ± 10 %, referenced to L2 and L4"),
            "{probe}"
        );
        assert!(notes.contains("SAFETY"));
    }
}

// On the connector's layer the link joins the centre pad to the signal via and touches no ground.
#[test]
fn connector_centre_pad_is_linked_to_the_signal_via_and_isolated_from_ground() {
    use geo::Intersects;
    for probe in PROBES {
        let g = layer(probe, 1);
        let c = copper(&g, |_| true);
        let centre = g
            .flashes
            .iter()
            .filter(|f| f.ap.function == "ConnectorPad")
            .min_by(|a, b| a.x.abs().partial_cmp(&b.x.abs()).unwrap())
            .unwrap();
        assert!(centre.x.abs() < UM, "{probe}: centre pad on the axis");
        let piece =
            c.0.iter()
                .find(|p| p.intersects(&geo::Point::new(centre.x, centre.y)))
                .expect("centre pad copper");
        let signal = signal_via(&g, &layer(probe, PASSED));
        assert!(
            piece.intersects(&geo::Point::new(signal.x, signal.y)),
            "{probe}: link broken"
        );
        for f in g
            .flashes
            .iter()
            .filter(|f| f.ap.function == "ConnectorPad" && f.x.abs() > UM)
        {
            assert!(
                !piece.intersects(&geo::Point::new(f.x, f.y)),
                "{probe}: centre pad shorted to a ground pad on L1"
            );
        }
        // And small: the link island is far smaller than the ground pour.
        assert!(piece.unsigned_area() < 10.0, "{probe}");
    }
}
