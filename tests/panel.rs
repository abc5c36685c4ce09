//! The demo's fabrication panel, read back from its emitted files with the tests' own Gerber
//! and Excellon readers (independent of the writer): every board at the offset the panel notes
//! state with its copper unchanged, tabs clear of the keep-outs, boards a router bit apart,
//! fiducials and tooling holes clear of copper; refusals; and each panel rule firing.

mod common;

use geo::{Area, BoundingRect, Distance, Euclidean, LineString, MultiPolygon, Polygon};
use std::path::{Path, PathBuf};

const PANEL: &str = "fenwick-marsh-panel";
/// The demo's handle length and the connector's pad lengths (`data/demo` spec; the generic
/// connector's defaults, docs/probe-spec.md).
const HANDLE_MM: f64 = 40.0;
/// The generic edge-launch footprint's pad length along the board, mm (centre and ground pads,
/// docs/probe-spec.md's [connector] defaults): tabs stay a router bit beyond it.
const PAD_MM: f64 = 3.0;

fn panel_file(suffix: &str) -> PathBuf {
    common::demo_dir()
        .join(PANEL)
        .join(format!("{PANEL}-{suffix}"))
}

/// (board, offset) as the panel notes state them.
fn offsets() -> Vec<(String, f64, f64)> {
    let notes = std::fs::read_to_string(panel_file("panel-notes.md")).unwrap();
    notes
        .lines()
        .filter(|l| l.starts_with("| ") && l.matches('|').count() == 5)
        .filter_map(|l| {
            let cells: Vec<&str> = l.split('|').map(str::trim).collect();
            let (x, y) = cells[2].split_once(", ")?;
            Some((cells[1].to_string(), x.parse().ok()?, y.parse().ok()?))
        })
        .collect()
}

/// A board's own file: probes in `<name>/<name>-<suffix>`.
fn board_file(name: &str, suffix: &str) -> PathBuf {
    common::demo_dir()
        .join(name)
        .join(format!("{name}-{suffix}"))
}

fn bbox_of(profile: &common::ReadGerber) -> (f64, f64, f64, f64) {
    let mut b = (f64::MAX, f64::MAX, f64::MIN, f64::MIN);
    for (pts, _) in &profile.strokes {
        for &(x, y) in pts {
            b = (b.0.min(x), b.1.min(y), b.2.max(x), b.3.max(y));
        }
    }
    b
}

fn nm(v: f64) -> i64 {
    (v * 1e6).round() as i64
}

#[test]
fn every_board_sits_at_its_stated_offset_with_its_copper_unchanged() {
    let offs = offsets();
    assert_eq!(
        offs.len(),
        7,
        "six probes and the four-layer fixture: {offs:?}"
    );
    for n in 1..=4 {
        let panel = common::read_gerber(&panel_file(&format!("L{n}.gbr")));
        let mut matched_flashes = 0;
        for (name, dx, dy) in &offs {
            let own = common::read_gerber(&board_file(name, &format!("L{n}.gbr")));
            let (x0, y0, x1, y1) = bbox_of(&common::read_gerber(&board_file(name, "profile.gbr")));
            let inside = |x: f64, y: f64| {
                x >= x0 + dx - 1e-6
                    && x <= x1 + dx + 1e-6
                    && y >= y0 + dy - 1e-6
                    && y <= y1 + dy + 1e-6
            };
            // Flashes: the same set, moved by the offset, to the nanometre.
            let mut want: Vec<(i64, i64, String)> = own
                .flashes
                .iter()
                .map(|f| (nm(f.x + dx), nm(f.y + dy), format!("{:?}", f.ap)))
                .collect();
            let mut got: Vec<(i64, i64, String)> = panel
                .flashes
                .iter()
                .filter(|f| inside(f.x, f.y))
                .map(|f| (nm(f.x), nm(f.y), format!("{:?}", f.ap)))
                .collect();
            want.sort();
            got.sort();
            assert_eq!(got, want, "{name} L{n}: flashes");
            matched_flashes += got.len();
            // Regions: the same area inside the board's place.
            let area_in = |m: &MultiPolygon<f64>, sx: f64, sy: f64| -> f64 {
                m.0.iter()
                    .filter(|p| {
                        let r = p.bounding_rect().unwrap();
                        inside(r.min().x + sx, r.min().y + sy)
                            && inside(r.max().x + sx, r.max().y + sy)
                    })
                    .map(|p| p.unsigned_area())
                    .sum()
            };
            let a_own = area_in(&own.regions, *dx, *dy);
            let a_panel = area_in(&panel.regions, 0.0, 0.0);
            assert!(a_own > 10.0, "{name} L{n}: copper read");
            assert!(
                (a_panel - a_own).abs() < 1e-6 * a_own,
                "{name} L{n}: copper area {a_panel} on the panel, {a_own} on the board"
            );
        }
        // Beyond the boards' pads, only the fiducials (on the outer layers).
        let extra = panel.flashes.len() - matched_flashes;
        assert_eq!(extra, if n == 1 || n == 4 { 3 } else { 0 }, "L{n}");
    }
}

/// The board outlines as placed: (name, outline rings moved by the offset).
fn placed_outlines() -> Vec<(String, Vec<LineString<f64>>)> {
    offsets()
        .into_iter()
        .map(|(name, dx, dy)| {
            let prof = common::read_gerber(&board_file(&name, "profile.gbr"));
            let rings = prof
                .strokes
                .iter()
                .map(|(pts, _)| {
                    LineString::from(
                        pts.iter()
                            .map(|&(x, y)| (x + dx, y + dy))
                            .collect::<Vec<_>>(),
                    )
                })
                .collect();
            (name, rings)
        })
        .collect()
}

#[test]
fn boards_are_a_router_bit_apart_and_tabs_avoid_the_keep_outs() {
    let placed = placed_outlines();
    // The fab's default router bit (docs/probe-spec.md, [fab] router_diameter_mm).
    let bit = 2.0;
    for i in 0..placed.len() {
        for j in i + 1..placed.len() {
            for a in &placed[i].1 {
                for b in &placed[j].1 {
                    let d = Euclidean.distance(a, b);
                    assert!(
                        d >= bit - 2e-6,
                        "{} to {}: {d} mm",
                        placed[i].0,
                        placed[j].0
                    );
                }
            }
        }
    }
    // Perforations (the 0.5 mm holes of the NPTH file) by the board they border.
    let holes: Vec<(f64, f64, f64)> = common::read_drill(&panel_file("NPTH.drl"))
        .into_iter()
        .filter(|h| (h.2 - 0.5).abs() < 1e-9)
        .collect();
    assert!(
        holes.len() >= 5 * 2 * 3,
        "{} perforation holes",
        holes.len()
    );
    let offs = offsets();
    let mut per_board = vec![0; offs.len()];
    for &(x, y, d) in &holes {
        let (k, dist) = placed
            .iter()
            .enumerate()
            .map(|(k, (_, rings))| {
                let p = geo::Point::new(x, y);
                (
                    k,
                    rings
                        .iter()
                        .map(|r| Euclidean.distance(&p, r))
                        .fold(f64::MAX, f64::min),
                )
            })
            .min_by(|a, b| a.1.total_cmp(&b.1))
            .unwrap();
        // Each hole touches its board's edge from outside (to the drill file's 0.1 µm).
        assert!(
            (dist - d / 2.0).abs() < 1e-4,
            "hole at ({x}, {y}) is {dist} mm from its board"
        );
        per_board[k] += 1;
        let (name, dx, dy) = &offs[k];
        let prof = common::read_gerber(&board_file(name, "profile.gbr"));
        let (x0, y0, x1, _) = bbox_of(&prof);
        let (bx, by) = (x - dx, y - dy);
        if name.starts_with("FM-") {
            // Probe: the connector edge is the lowest edge; the loop starts a handle above it.
            let ring_bottom = y0 + HANDLE_MM;
            assert!(
                by + d / 2.0 <= ring_bottom - bit,
                "{name}: a tab on the loop at y {by}"
            );
            assert!(
                by - d / 2.0 >= y0 + PAD_MM + bit,
                "{name}: a tab by the connector at y {by}"
            );
        } else {
            // Fixture: connectors at both ends along x.
            assert!(
                bx - d / 2.0 >= x0 + PAD_MM + bit && bx + d / 2.0 <= x1 - PAD_MM - bit,
                "{name}: {bx}"
            );
        }
    }
    for (k, n) in per_board.iter().enumerate() {
        assert!(
            *n >= 2 * 3,
            "{}: {n} perforation holes (two tabs at least)",
            offs[k].0
        );
    }
}

#[test]
fn fiducials_and_tooling_holes_are_clear_of_copper() {
    let mut fid = 0;
    for n in 1..=4 {
        let g = common::read_gerber(&panel_file(&format!("L{n}.gbr")));
        let pieces: Vec<Polygon<f64>> = g
            .regions
            .0
            .iter()
            .cloned()
            .chain(
                g.flashes
                    .iter()
                    .filter(|f| !f.ap.function.starts_with("FiducialPad"))
                    .map(common::flash_poly),
            )
            .collect();
        let near = |x: f64, y: f64| -> f64 {
            let p = geo::Point::new(x, y);
            pieces
                .iter()
                .map(|q| Euclidean.distance(&p, q))
                .fold(f64::MAX, f64::min)
        };
        for f in g
            .flashes
            .iter()
            .filter(|f| f.ap.function.starts_with("FiducialPad"))
        {
            fid += 1;
            // A clear area three times the 1 mm dot (common practice, no source).
            assert!(
                near(f.x, f.y) >= 1.5 - 1e-6,
                "L{n}: fiducial at ({}, {})",
                f.x,
                f.y
            );
        }
        for (x, y, d) in common::read_drill(&panel_file("NPTH.drl")) {
            if (d - 2.0).abs() < 1e-9 {
                // The fab's copper-to-edge rule (0.3 mm default) from the hole's edge.
                assert!(
                    near(x, y) - d / 2.0 >= 0.3 - 1e-6,
                    "L{n}: tooling hole at ({x}, {y})"
                );
            }
        }
    }
    assert_eq!(fid, 6, "three fiducials on each outer layer");
}

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("loopwright-panel-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn build(dir: &Path, spec: &str) -> std::process::Output {
    std::fs::write(dir.join("spec.toml"), spec).unwrap();
    std::process::Command::new(env!("CARGO_BIN_EXE_loopwright"))
        .arg("build")
        .arg(dir.join("spec.toml"))
        .arg("--out")
        .arg(dir.join("out"))
        .output()
        .unwrap()
}

#[test]
fn a_board_without_room_for_tabs_and_a_fixture_on_another_stackup_are_refused() {
    let d = scratch("refusals");
    let head = loopwright::cli::DEMO_SPEC
        .split("[[probe]]")
        .next()
        .unwrap();
    let short = head.replace("length_mm = 40.0", "length_mm = 6.0");
    let spec =
        format!("{short}[[probe]]\nname = \"S\"\nshape = \"round\"\nsize_mm = 10.0\n\n[panel]\n");
    let o = build(&d, &spec);
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(!o.status.success());
    assert!(
        err.contains("cannot be tabbed") && err.contains("the loop"),
        "{err}"
    );
    assert!(!d.join("out").exists(), "nothing written");
    std::fs::write(d.join("fx.toml"), loopwright::cli::demo::DEMO_FIXTURE).unwrap();
    let spec = format!(
        "{head}[[probe]]\nname = \"S\"\nshape = \"round\"\nsize_mm = 10.0\n\n[panel]\nfixtures = [\"fx.toml\"]\n"
    );
    let o = build(&d, &spec);
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(!o.status.success());
    assert!(
        err.contains("panel.fixtures[1]") && err.contains("one stackup"),
        "{err}"
    );
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn every_panel_rule_fires_alone() {
    use loopwright::drc::{PanelRule, check_panel};
    use loopwright::pipeline::build_panel;
    let spec = loopwright::spec::parse_toml::<loopwright::spec::probe::ProbeFileSpec>(
        loopwright::cli::DEMO_SPEC,
        "demo",
    )
    .unwrap();
    let fam = loopwright::pipeline::build_family(&spec, Path::new("data/demo"), false).unwrap();
    // Two probes keep the test short.
    let probes = &fam.probes[1..3];
    let mut ps = spec.panel.clone().unwrap();
    ps.fixtures = None;
    let load = |name: &str| -> Result<
        (loopwright::spec::fixture::FixtureFileSpec, PathBuf),
        loopwright::error::Error,
    > { panic!("no fixtures, asked for {name}") };
    let built = build_panel(&ps, "t", probes, &load, false).unwrap();
    assert!(built.violations.is_empty(), "{:?}", built.violations);
    let fab = probes[0].probe.fab;
    let fires = |edit: &dyn Fn(&mut loopwright::pipeline::BuiltPanel)| -> Vec<PanelRule> {
        let mut b = built.clone();
        edit(&mut b);
        let mut r: Vec<PanelRule> = check_panel(&b.panel, &b.layout, &b.artwork, &b.names, &fab)
            .into_iter()
            .map(|v| v.rule)
            .collect();
        r.sort();
        r.dedup();
        r
    };
    use geo::{BooleanOps, Translate};
    let disc = |x: f64, y: f64, r: f64| {
        MultiPolygon(vec![loopwright::geom::circle(kurbo::Point::new(x, y), r)])
    };
    // Boards moved together.
    assert_eq!(
        fires(&|b| b.layout.placed[1].outline = b.layout.placed[1].outline.translate(-1.0, 0.0)),
        vec![PanelRule::BoardSpacing]
    );
    // One tab only.
    assert_eq!(
        fires(&|b| {
            b.layout.placed[0].tabs.pop();
        }),
        vec![PanelRule::TabCount]
    );
    // A keep-out over a tab.
    assert_eq!(
        fires(&|b| {
            let t = b.layout.placed[0].tabs[0].bridge.clone();
            b.layout.placed[0].keep_outs.push((t, "a test zone".into()));
        }),
        vec![PanelRule::TabInKeepOut]
    );
    // Tabs routed through: the board hangs on nothing.
    assert_eq!(
        fires(&|b| {
            let bridges = MultiPolygon(
                b.layout.placed[0]
                    .tabs
                    .iter()
                    .map(|t| t.bridge.clone())
                    .collect(),
            );
            b.layout.routed = b.layout.routed.union(&bridges);
        }),
        vec![PanelRule::BoardDetached]
    );
    // A ring routed in the bottom rail: a loose piece inside it.
    assert_eq!(
        fires(&|b| {
            let (w, _) = b.layout.size;
            let ring = disc(w / 2.0, 2.5, 2.0).difference(&disc(w / 2.0, 2.5, 1.0));
            b.layout.routed = b.layout.routed.union(&ring);
        }),
        vec![PanelRule::LooseWaste]
    );
    // Copper by a fiducial.
    assert_eq!(
        fires(&|b| {
            let f = b.layout.fiducials[0];
            let pad = b.artwork.copper[0].flashes[0];
            b.artwork.copper[0]
                .flashes
                .push(loopwright::artwork::Flash {
                    at: kurbo::Point::new(f.x + 1.0, f.y),
                    ..pad
                });
        }),
        vec![PanelRule::FiducialClear]
    );
    // A tooling hole moved onto a board's copper.
    assert_eq!(
        fires(&|b| {
            let v = b.artwork.copper[1].flashes[0].at;
            let h = b
                .artwork
                .drills
                .iter_mut()
                .find(|d| d.mechanical.is_some())
                .unwrap();
            h.at = kurbo::Point::new(v.x, v.y);
        }),
        vec![PanelRule::HoleToCopper]
    );
}

#[test]
fn the_panel_job_file_lists_its_folder_and_the_probes_stay_symmetric() {
    use geo::BooleanOps;
    let dir = common::demo_dir().join(PANEL);
    let j: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(dir.join(format!("{PANEL}.gbrjob"))).unwrap(),
    )
    .unwrap();
    let (listed, in_folder) = common::job_listing(&j, &dir);
    assert_eq!(listed, in_folder);
    assert!(in_folder.contains(&format!("{PANEL}-NPTH.drl")));
    // The shield planes (L2, L4) of each probe, read back from the panel, are mirror images of
    // themselves about the probe's axis (x = 0 on the board, x = its offset on the panel): the
    // move kept them whole.
    for n in [2, 4] {
        let panel = common::read_gerber(&panel_file(&format!("L{n}.gbr")));
        for (name, dx, dy) in offsets().iter().filter(|o| o.0.starts_with("FM-")) {
            let (x0, y0, x1, y1) = bbox_of(&common::read_gerber(&board_file(name, "profile.gbr")));
            let mine = MultiPolygon(
                panel
                    .regions
                    .0
                    .iter()
                    .filter(|p| {
                        let r = p.bounding_rect().unwrap();
                        r.min().x >= x0 + dx - 1e-6
                            && r.max().x <= x1 + dx + 1e-6
                            && r.min().y >= y0 + dy - 1e-6
                            && r.max().y <= y1 + dy + 1e-6
                    })
                    .cloned()
                    .collect(),
            );
            let mirrored = MultiPolygon(
                mine.0
                    .iter()
                    .map(|p| {
                        let flip = |ls: &LineString<f64>| {
                            LineString::from(
                                ls.coords()
                                    .map(|c| (2.0 * dx - c.x, c.y))
                                    .collect::<Vec<_>>(),
                            )
                        };
                        Polygon::new(flip(p.exterior()), p.interiors().iter().map(flip).collect())
                    })
                    .collect(),
            );
            let area = mine.unsigned_area();
            let xor = mine.xor(&mirrored).unsigned_area();
            assert!(area > 10.0, "{name} L{n}");
            assert!(
                xor < 1e-4 * area,
                "{name} L{n}: {xor} mm² asymmetric of {area} mm²"
            );
        }
    }
}

#[test]
fn two_copies_wrap_into_rows_and_enclosed_waste_is_pocketed() {
    let d = scratch("copies");
    std::fs::write(
        d.join("fenwick-marsh-fixture-4l.toml"),
        loopwright::cli::demo::DEMO_PANEL_FIXTURE,
    )
    .unwrap();
    // The demo without its balanced loop (whose wider board changes the rows this case
    // was laid out for).
    let start = loopwright::cli::DEMO_SPEC
        .find("[[probe]]\nname = \"FM-B20\"")
        .expect("the demo's balanced loop");
    let end = start + loopwright::cli::DEMO_SPEC[start..].find("\n\n").unwrap() + 2;
    let without = format!(
        "{}{}",
        &loopwright::cli::DEMO_SPEC[..start],
        &loopwright::cli::DEMO_SPEC[end..]
    );
    let spec = without.replace(
        "name = \"fenwick-marsh-panel\"",
        "name = \"fenwick-marsh-panel\"\ncopies = 2\nmax_width_mm = 160",
    );
    let o = build(&d, &spec);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let notes = std::fs::read_to_string(
        d.join("out")
            .join(PANEL)
            .join(format!("{PANEL}-panel-notes.md")),
    )
    .unwrap();
    // The fixture wraps to a second row over the two 20 mm loops; the waste the three enclose
    // is milled out, and the panel's own check is clean.
    assert!(notes.contains("2 × probe FM-R20"), "{notes}");
    assert!(notes.contains("1 pocket(s)"), "{notes}");
    assert!(notes.contains("Clean: 7 rules"), "{notes}");
    let _ = std::fs::remove_dir_all(&d);
}
