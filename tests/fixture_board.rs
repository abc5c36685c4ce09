//! The emitted test-line fixture (read back from its files, not the model): the line at the
//! solved width and impedance, continuous from connector to connector on its own net, ground
//! kept away from it, stitching vias in ground on every layer, and the probe-position marks.
//! Bad fixture specs are refused with their field and nothing is written.

mod common;

use common::{copper, read_drill, read_gerber, rect, tmp_file};
use geo::{BooleanOps, BoundingRect, Contains, Distance, Euclidean, Intersects};
use geo::{MultiPolygon, Polygon};
use loopwright::cli::demo::DEMO_FIXTURE;
use loopwright::spec::fixture::FixtureFileSpec;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::OnceLock;

struct Built {
    dir: PathBuf,
    fixture: loopwright::pipeline::BuiltFixture,
}

fn built() -> &'static Built {
    static B: OnceLock<Built> = OnceLock::new();
    B.get_or_init(|| {
        let dir = std::env::temp_dir().join(format!("loopwright-fixture-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        let spec: FixtureFileSpec = toml::from_str(DEMO_FIXTURE).unwrap();
        let fixture = loopwright::pipeline::build_fixture(&spec, Path::new("."), false)
            .expect("the demo fixture builds clean");
        loopwright::pipeline::write_atomically(
            &dir,
            &loopwright::pipeline::fixture_entries(&fixture),
        )
        .unwrap();
        Built { dir, fixture }
    })
}

fn file(suffix: &str) -> PathBuf {
    let b = built();
    let f = &b.fixture.fixture.folder;
    b.dir.join(f).join(format!("{f}-{suffix}"))
}

/// The copper component of L1 that holds the board's centre (the line).
fn line_part(l1: &MultiPolygon<f64>) -> Polygon<f64> {
    l1.0.iter()
        .find(|p| p.contains(&geo::Point::new(0.0, 0.0)))
        .cloned()
        .expect("copper at the line's centre")
}

#[test]
fn the_line_has_the_solved_width_and_impedance() {
    let b = built();
    let s = &b.fixture.solved;
    let l1 = copper(&read_gerber(&file("L1.gbr")), |_| true);
    let line = line_part(&l1);
    // Width across the line at its centre, from the file.
    let cut = MultiPolygon(vec![line.clone()]).intersection(&rect(-0.5, -10.0, 0.5, 10.0));
    let r = cut.bounding_rect().unwrap();
    let w = r.max().y - r.min().y;
    assert!((w - s.width).abs() < 2e-6, "{w} vs {}", s.width);
    // 50 Ω at that width by the 2-D field solver (checked against Cohn, scikit-rf and a
    // refinement study in the impedance tests) and by the closed form, within 1 %.
    let z_field = s.field_z0.expect("field solution");
    assert!((z_field / 50.0 - 1.0).abs() < 0.01, "{z_field}");
    assert!((s.solution.z0 - 50.0).abs() < 0.01);
    // The microstrip's dielectric is the stackup's core (common-2l-1.6: 1.53 mm).
    assert!((s.h - 1.53).abs() < 1e-12);
}

#[test]
fn the_line_runs_from_connector_to_connector_on_its_own_net() {
    let b = built();
    let f = &b.fixture.fixture;
    let g = read_gerber(&file("L1.gbr"));
    let l1 = copper(&g, |_| true);
    let line = line_part(&l1);
    let centres: Vec<_> = g
        .flashes
        .iter()
        .filter(|fl| fl.ap.function == "ConnectorPad" && fl.y.abs() < 1e-9)
        .collect();
    assert_eq!(centres.len(), 2, "two centre pads");
    for c in &centres {
        assert!(
            line.intersects(&geo::Point::new(c.x, c.y)),
            "line reaches {c:?}"
        );
        // Edge launch: the centre pad reaches the board edge.
        let outer = c.x.abs() + c.ap.a / 2.0;
        assert!((outer - f.length / 2.0).abs() < 1e-6, "{outer}");
    }
    // No ground pad or via touches the line's copper.
    for fl in &g.flashes {
        if fl.ap.function == "ViaPad" || (fl.ap.function == "ConnectorPad" && fl.y.abs() > 1e-9) {
            assert!(!line.intersects(&geo::Point::new(fl.x, fl.y)), "{fl:?}");
        }
    }
    // Nets: the line's objects are LINE, everything else GND; the plane layer is all GND.
    let t1 = std::fs::read_to_string(file("L1.gbr")).unwrap();
    let t2 = std::fs::read_to_string(file("L2.gbr")).unwrap();
    assert!(
        t1.matches("%TO.N,LINE*%").count() >= 3,
        "line region and two pads"
    );
    assert!(t1.contains("%TO.N,GND*%"));
    assert!(!t2.contains("%TO.N,LINE*%") && t2.contains("%TO.N,GND*%"));
}

#[test]
fn ground_keeps_its_distance_and_vias_stitch_it() {
    let b = built();
    let s = &b.fixture.solved;
    let f = &b.fixture.fixture;
    // Common practice (no single source): coplanar ground at least three dielectric heights
    // from a microstrip's edge; the demo takes that default.
    assert!((s.keepout - 3.0 * 1.53).abs() < 1e-9);
    let l1 = copper(&read_gerber(&file("L1.gbr")), |_| true);
    let line = line_part(&l1);
    let xu = b.fixture.board.uniform_half_length;
    let ground = MultiPolygon(
        l1.0.iter()
            .filter(|p| !p.intersects(&geo::Point::new(0.0, 0.0)))
            .cloned()
            .collect(),
    )
    // Strictly inside the uniform part: its ends meet the ports' tapers and their own gaps.
    .intersection(&rect(-xu + 1e-3, -f.width, xu - 1e-3, f.width));
    let line_poly = line.clone();
    let d = Euclidean.distance(&MultiPolygon(vec![line]), &ground);
    assert!(d >= s.keepout - 1e-3, "{d} < {}", s.keepout);
    // Every hole is a via with copper around it on both layers, outside the keepout band.
    let holes = read_drill(&file("PTH.drl"));
    assert_eq!(holes.len(), b.fixture.board.vias.len());
    assert!(holes.len() > 100);
    let l2 = copper(&read_gerber(&file("L2.gbr")), |_| true);
    for &(x, y, d) in &holes {
        assert!((d - f.vias.drill).abs() < 1e-6);
        let pt = geo::Point::new(x, y);
        assert!(
            l1.intersects(&pt) && l2.intersects(&pt),
            "via at ({x}, {y})"
        );
        assert!(
            Euclidean.distance(&line_poly, &pt) >= f.vias.pad / 2.0 + f.fab.min_space - 1e-6,
            "via at ({x}, {y}) in the line's way"
        );
    }
    // Stitching pitch: every via (those round the ports included) has a neighbour within λ/20
    // at 3 GHz in εr 4.5 (λ = c/(f√εr) = 47.1 mm, so 2.36 mm).
    let limit = 299_792_458.0 / (3e9 * 4.5f64.sqrt()) * 1e3 / 20.0;
    for (i, &(x, y, _)) in holes.iter().enumerate() {
        let nn = common::nearest_hole(&holes, i);
        assert!(
            nn <= limit + 1e-6,
            "via ({x}, {y}): nearest {nn} mm > {limit} mm"
        );
    }
}

#[test]
fn the_probe_position_is_marked_on_the_silkscreen() {
    let b = built();
    let w = b.fixture.solved.width;
    let g = read_gerber(&file("legend-top.gbr"));
    // A stroke on x = 0 pointing at the line from each side, and a tick every 5 mm.
    for side in [-1.0, 1.0] {
        let mark = g.strokes.iter().any(|(pts, _)| {
            pts.iter().all(|p| p.0.abs() < 1e-9)
                && pts
                    .iter()
                    .any(|p| (p.1 - side * (w / 2.0 + 0.5)).abs() < 1e-6)
        });
        assert!(mark, "centre mark on side {side}");
    }
    let ticks = g
        .strokes
        .iter()
        .filter(|(pts, _)| {
            pts.len() == 2 && pts[0].0 == pts[1].0 && (pts[0].0 / 5.0).fract() == 0.0
        })
        .count();
    assert!(ticks >= 20, "{ticks} ticks");
    // The other side carries no legend, and so has no legend file (an empty image is not a
    // file Gerber readers accept).
    assert!(!file("legend-bottom.gbr").exists());
}

#[test]
fn a_short_fixture_still_builds_clean() {
    // 30 mm: the tapers, the tabs and 10 mm of uniform line; the silkscreen shortens its text.
    let text = DEMO_FIXTURE.replace("length_mm = 80.0", "length_mm = 30.0");
    let spec: FixtureFileSpec = toml::from_str(&text).unwrap();
    let b = loopwright::pipeline::build_fixture(&spec, Path::new("."), false)
        .unwrap_or_else(|e| panic!("{e}"));
    assert!(b.violations.is_empty());
}

#[test]
fn the_narrowest_board_the_rules_allow_builds_clean() {
    // Across the board: line (2.82 mm), keepout (3 × 1.53 mm) and a via row (0.6 + 2 × 0.05 mm)
    // each side, copper-to-edge 0.3 mm: 2 × (1.41 + 4.59 + 0.7 + 0.3) = 14.0 mm.
    let build = |w: f64| {
        let text = DEMO_FIXTURE.replace("width_mm = 40.0", &format!("width_mm = {w}"));
        let spec: FixtureFileSpec = toml::from_str(&text).unwrap();
        loopwright::pipeline::build_fixture(&spec, Path::new("."), false)
    };
    let b = build(14.05).unwrap_or_else(|e| panic!("{e}"));
    assert!(b.violations.is_empty());
    let e = build(13.95).unwrap_err().to_string();
    assert!(e.contains("fixture.width_mm") && e.contains("14.0"), "{e}");
}

#[test]
fn bad_fixture_specs_are_refused_by_field_and_write_nothing() {
    let cases = [
        ("length_mm = 80.0", "length_mm = 15.0", "fixture.length_mm"),
        ("length_mm = 80.0", "length_mm = 21.0", "fixture.length_mm"),
        ("line_layer = 1", "line_layer = 3", "fixture.line_layer"),
        (
            "line_layer = 1",
            "line_layer = -1",
            "fixture.line_layer = -1",
        ),
        (
            "structure = \"microstrip\"",
            "structure = \"slotline\"",
            "fixture.structure",
        ),
        ("width_mm = 40.0", "width_mm = 8.0", "fixture.width_mm"),
        (
            "target_z0_ohms = 50.0",
            "target_z0_ohms = 500.0",
            "fixture.target_z0_ohms",
        ),
        ("drill_mm = 0.3", "drill_mm = 0.05", "via.drill_mm"),
    ];
    for (i, (from, to, field)) in cases.iter().enumerate() {
        assert!(DEMO_FIXTURE.contains(from));
        let spec = tmp_file(&format!("bad{i}.toml"), &DEMO_FIXTURE.replace(from, to));
        let out = spec.with_extension("out");
        let o = Command::new(env!("CARGO_BIN_EXE_loopwright"))
            .args([
                "build",
                spec.to_str().unwrap(),
                "--out",
                out.to_str().unwrap(),
            ])
            .output()
            .unwrap();
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{to}: {err}");
        assert!(err.contains(field), "{to}: {err}");
        assert!(!err.contains("panicked"));
        assert!(!out.exists(), "{to}: output written");
    }
}

// Bottom legend is written as seen from the top, as every Gerber layer is: a fixture with its
// line on the bottom gets its texts mirrored, so that seen from below (the layer flipped about
// the board's axis) the centred text reads exactly as the top-side fixture's does.
#[test]
fn bottom_legend_reads_right_from_below() {
    let build = |layer: usize| {
        let text = DEMO_FIXTURE.replace("line_layer = 1", &format!("line_layer = {layer}"));
        let spec = loopwright::spec::parse_toml(&text, "fixture").unwrap();
        loopwright::pipeline::build_fixture(&spec, std::path::Path::new("."), false).unwrap()
    };
    let (top, bottom) = (build(1), build(2));
    assert!(bottom.artwork.silk_top.is_empty() && !bottom.artwork.silk_bottom.is_empty());
    // The strokes of the text above the line (clear of the marks, ticks and port names).
    let y_min = top.solved.width / 2.0 + 0.5 + 3.5;
    let key = |p: &kurbo::Point| ((p.x * 1e4).round() as i64, (p.y * 1e4).round() as i64);
    let band =
        |strokes: &[Vec<kurbo::Point>], flip: bool| -> std::collections::BTreeSet<(i64, i64)> {
            strokes
                .iter()
                .flatten()
                .filter(|p| p.y > y_min)
                .map(|p| key(&kurbo::Point::new(if flip { -p.x } else { p.x }, p.y)))
                .collect()
        };
    let seen_on_top = band(&top.artwork.silk_top, false);
    let seen_from_below = band(&bottom.artwork.silk_bottom, true);
    assert!(seen_on_top.len() > 20, "{}", seen_on_top.len());
    assert_eq!(seen_on_top, seen_from_below);
    // Unflipped, the bottom text is the mirror image (it would print reversed otherwise).
    assert_ne!(seen_on_top, band(&bottom.artwork.silk_bottom, false));
}

/// The copper-to-edge rule against the fixture's connectors, as on a probe's handle: a rule
/// longer than the ground pads (the pulled-back pour would not join them) or reaching the
/// centre pad's inner end (the line leaves there) is refused naming the field and its limit.
#[test]
fn an_edge_rule_the_connectors_cannot_keep_is_refused() {
    for (cte, limit) in [
        ("3.5", "at most 2.87 mm"),
        ("3.5", "less than the connector's centre pad is long"),
    ] {
        let text = format!("{DEMO_FIXTURE}\n[fab]\ncopper_to_edge_mm = {cte}\n");
        let spec: FixtureFileSpec = toml::from_str(&text).unwrap();
        let e = loopwright::pipeline::build_fixture(&spec, Path::new("."), false)
            .expect_err("refused")
            .to_string();
        assert!(
            e.contains("fab.copper_to_edge_mm") && e.contains(limit),
            "{e}"
        );
    }
}
