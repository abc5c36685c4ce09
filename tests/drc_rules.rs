//! Every design rule fires, and fires alone, on a board made to break it and nothing else.
//!
//! Each case starts from a clean demo board (probe FM-R10, or the demo fixture), makes one
//! change (a tighter fab limit, a piece of copper, a drill or a stroke added, vias removed) and
//! asserts that the set of rules the check reports is exactly the one the case is about. A rule
//! that could never fire would pass every other test; here it fails its own case. The table
//! covers `Rule::ALL` (checked). The rules and their sources are documented on `drc::Rule`.

use geo::{Coord, LineString, MultiPolygon, Polygon};
use kurbo::Point;
use loopwright::artwork::{Artwork, Drill};
use loopwright::drc::{Rule, Violation};
use loopwright::geom::{Board, ViaRole};
use loopwright::model::fixture::Fixture;
use loopwright::model::probe::{Probe, family_from_spec};
use loopwright::solve::fixture::SolvedFixture;
use loopwright::solve::probe::SolvedProbe;
use std::collections::BTreeSet;
use std::path::Path;

#[derive(Clone)]
struct ProbeCase {
    p: Probe,
    s: SolvedProbe,
    b: Board,
    art: Artwork,
}

fn probe_case() -> ProbeCase {
    let spec = loopwright::spec::parse_toml(loopwright::cli::DEMO_SPEC, "demo").unwrap();
    let p = family_from_spec(&spec, Path::new("."))
        .unwrap()
        .probes
        .into_iter()
        .find(|p| p.name == "FM-R10")
        .unwrap();
    let s = loopwright::solve::probe::solve(&p).unwrap();
    let b = loopwright::geom::build(&p, &s);
    let art = loopwright::artwork::compose(&p, &b);
    ProbeCase { p, s, b, art }
}

/// An electric probe on the demo's stackup: a 2 mm electrode, the default clearance.
fn electric_case() -> ProbeCase {
    let text = "stackup = \"common-4l-1.6\"\nsignal_layer = 2\n[[probe]]\nname = \"E2\"\n\
                kind = \"electric\"\nelectrode_diameter_mm = 2.0\n";
    let spec = loopwright::spec::parse_toml(text, "electric").unwrap();
    let p = family_from_spec(&spec, Path::new("."))
        .unwrap()
        .probes
        .remove(0);
    let s = loopwright::solve::probe::solve(&p).unwrap();
    let b = loopwright::geom::build(&p, &s);
    let art = loopwright::artwork::compose(&p, &b);
    ProbeCase { p, s, b, art }
}

/// A balanced loop on the demo's stackup: 12 mm round, its own 17 mm handle.
fn balanced_case() -> ProbeCase {
    let text = "stackup = \"common-4l-1.6\"\nsignal_layer = 3\n[[probe]]\nname = \"B12\"\n\
                kind = \"balanced\"\nshape = \"round\"\nsize_mm = 12.0\nhandle_width_mm = 17.0\n";
    let spec = loopwright::spec::parse_toml(text, "balanced").unwrap();
    let p = family_from_spec(&spec, Path::new("."))
        .unwrap()
        .probes
        .remove(0);
    let s = loopwright::solve::probe::solve(&p).unwrap();
    let b = loopwright::geom::build(&p, &s);
    let art = loopwright::artwork::compose(&p, &b);
    ProbeCase { p, s, b, art }
}

#[derive(Clone)]
struct FixtureCase {
    f: Fixture,
    s: SolvedFixture,
    b: loopwright::geom::fixture::FixtureBoard,
    art: Artwork,
}

fn fixture_case() -> FixtureCase {
    let spec =
        loopwright::spec::parse_toml(loopwright::cli::demo::DEMO_FIXTURE, "fixture").unwrap();
    let f = loopwright::model::fixture::fixture_from_spec(&spec, Path::new(".")).unwrap();
    let s = loopwright::solve::fixture::solve(&f).unwrap();
    let b = loopwright::geom::fixture::build(&f, &s);
    let art = loopwright::artwork::fixture::compose(&f, &b);
    FixtureCase { f, s, b, art }
}

fn fired(v: &[Violation]) -> BTreeSet<Rule> {
    v.iter().map(|x| x.rule).collect()
}

fn square(c: Point, half: f64) -> Polygon<f64> {
    loopwright::geom::rect(c.x - half, c.y - half, c.x + half, c.y + half)
}

fn poly(pts: &[(f64, f64)]) -> Polygon<f64> {
    Polygon::new(
        LineString::from(pts.iter().map(|&(x, y)| Coord { x, y }).collect::<Vec<_>>()),
        vec![],
    )
}

/// A point of solid ground on L2, in the handle halfway between the connector edge and the
/// bottom of the loop's opening, 2 mm off the axis (between the feed's fence and the handle's
/// edge).
fn solid_l2(c: &ProbeCase) -> Point {
    use geo::BoundingRect;
    let opening_bottom =
        c.b.loop_head
            .as_ref()
            .unwrap()
            .interior
            .bounding_rect()
            .unwrap()
            .min()
            .y;
    Point::new(2.0, 0.5 * (c.b.edge_y + opening_bottom))
}

fn layer_mut(art: &mut Artwork, n: usize) -> &mut loopwright::artwork::CopperLayer {
    art.copper.iter_mut().find(|l| l.n == n).unwrap()
}

/// Copper added to a layer, united with what is there (as the artwork's regions always are).
fn add(art: &mut Artwork, n: usize, p: Polygon<f64>) {
    let l = layer_mut(art, n);
    l.regions = geo::BooleanOps::union(&l.regions, &MultiPolygon(vec![p]));
}

/// Copper removed from a layer.
fn cut(art: &mut Artwork, n: usize, p: Polygon<f64>) {
    let l = layer_mut(art, n);
    l.regions = geo::BooleanOps::difference(&l.regions, &MultiPolygon(vec![p]));
}

/// The probe board without a milled opening in the loop (if it has one), so that copper or a
/// hole put inside the loop is judged by the loop's own rules and not as off the board.
fn unmilled(c: &mut ProbeCase) {
    c.art.profile.truncate(1);
}

/// A case: the rule and the edit that should make it, alone, fire.
type Case<C> = (Rule, fn(&mut C));

fn probe_cases() -> Vec<Case<ProbeCase>> {
    vec![
        (Rule::RegionNotClosed, |c| {
            let q = solid_l2(c);
            let degenerate = poly(&[(q.x, q.y), (q.x + 0.1, q.y)]);
            layer_mut(&mut c.art, 2).regions.0.push(degenerate);
        }),
        (Rule::RegionNotSimple, |c| {
            let q = solid_l2(c);
            let bow = poly(&[
                (q.x, q.y),
                (q.x + 0.4, q.y + 0.4),
                (q.x + 0.4, q.y),
                (q.x, q.y + 0.4),
            ]);
            layer_mut(&mut c.art, 2).regions.0.push(bow);
        }),
        (Rule::MinTraceWidth, |c| {
            c.p.fab.min_trace = c.b.trace_width + 0.05
        }),
        (Rule::MinSpace, |c| c.p.fab.min_space = c.p.clearance + 0.05),
        (Rule::CopperToEdge, |c| c.p.fab.copper_to_edge += 0.1),
        (Rule::MinDrill, |c| {
            c.p.fab.min_drill = c.p.vias.drill + 0.05
        }),
        (Rule::AnnularRing, |c| {
            c.p.fab.min_annular_ring = (c.p.vias.pad - c.p.vias.drill) / 2.0 + 0.02
        }),
        (Rule::PlatedHoleWithoutPads, |c| {
            let at = c
                .art
                .drills
                .iter()
                .find(|d| d.via && d.plated && d.at.y > 0.0 && d.at.x < -2.0)
                .unwrap()
                .at;
            for l in &mut c.art.copper {
                l.flashes.retain(|f| (f.at - at).hypot() > 1e-6);
            }
        }),
        (Rule::HoleToHole, |c| {
            c.p.fab.min_hole_gap = c.s.pitch_min - c.p.vias.drill + 0.05
        }),
        (Rule::HoleInsideOutline, |c| {
            c.art.drills.push(Drill {
                at: Point::new(100.0, 100.0),
                d: 0.5,
                plated: false,
                via: false,
                mechanical: None,
            })
        }),
        (Rule::HoleInsideOutline, |c| {
            // On the board, but a hole's radius and the copper-to-edge rule do not fit between
            // it and the handle's side edge (the edge's distance, not the outline's interior).
            let y = c.b.edge_y + 0.5 * c.p.handle.length;
            let x_edge = c.art.profile[0]
                .windows(2)
                .filter(|w| (w[0].y - y) * (w[1].y - y) <= 0.0 && w[0].y != w[1].y)
                .map(|w| w[0].x + (w[1].x - w[0].x) * (y - w[0].y) / (w[1].y - w[0].y))
                .fold(f64::NEG_INFINITY, f64::max);
            c.art.drills.push(Drill {
                at: Point::new(x_edge - 0.2, y),
                d: 0.3,
                plated: false,
                via: false,
                mechanical: None,
            })
        }),
        (Rule::MaskWeb, |c| c.p.fab.mask_web = 2.0),
        (Rule::SilkOnPad, |c| {
            let o = c.art.mask_top[0].at;
            c.art.silk_top.push(vec![
                o - kurbo::Vec2::new(0.1, 0.0),
                o + kurbo::Vec2::new(0.1, 0.0),
            ]);
        }),
        (Rule::SilkOffBoard, |c| {
            c.art
                .silk_top
                .push(vec![Point::new(100.0, 100.0), Point::new(101.0, 100.0)])
        }),
        (Rule::CopperInsideLoop, |c| {
            unmilled(c);
            add(&mut c.art, 2, square(Point::ZERO, 0.5));
        }),
        (Rule::GapFreeOfCopper, |c| {
            let (x0, y0, x1, y1) = c.art.gap_rects[0];
            let (ya, yb) = (y0 + 0.4 * (y1 - y0), y0 + 0.6 * (y1 - y0));
            add(
                &mut c.art,
                2,
                loopwright::geom::rect(x0 - 0.3, ya, x1 + 0.3, yb),
            );
        }),
        (Rule::GapHoldsOnlyTrace, |c| {
            // The trace cut away where it crosses the gap: the gap no longer holds it.
            let (x0, y0, x1, y1) = c.art.gap_rects[0];
            let n = c.p.signal_layer;
            cut(&mut c.art, n, loopwright::geom::rect(x0, y0, x1, y1));
        }),
        (Rule::ViaInGap, |c| {
            let (x0, y0, x1, y1) = c.art.gap_rects[0];
            // An unplated hole: no pads (which would be copper in the gap), no fab pitch.
            c.s.pitch_min = 0.0;
            c.p.fab.min_hole_gap = 0.0;
            c.art.drills.push(Drill {
                at: Point::new(0.5 * (x0 + x1), 0.5 * (y0 + y1)),
                d: 0.3,
                plated: false,
                via: true,
                mechanical: None,
            });
        }),
        (Rule::ViaPitchBelowFab, |c| c.s.pitch_min += 0.2),
        (Rule::ViaPitchAboveLimit, |c| {
            // A lone (unplated) via in the middle of the loop, farther than λ/N from any.
            unmilled(c);
            c.art.drills.push(Drill {
                at: Point::ZERO,
                d: 0.3,
                plated: false,
                via: true,
                mechanical: None,
            });
        }),
        (Rule::StitchingRowPitch, |c| {
            c.b.vias.retain(|v| v.role != ViaRole::InnerRow);
            c.art = loopwright::artwork::compose(&c.p, &c.b);
        }),
    ]
}

fn electric_cases() -> Vec<Case<ProbeCase>> {
    vec![
        (Rule::ElectrodeExposed, |c| {
            // The mask left whole over the bottom face's electrode.
            c.art.mask_bottom.retain(|f| f.at.to_vec2().hypot() > 1e-6);
        }),
        (Rule::ElectrodeExposed, |c| {
            // A notch bitten out of the bottom face's electrode at its rim.
            cut(&mut c.art, 4, square(Point::new(0.95, 0.0), 0.15));
        }),
        (Rule::ElectrodeClearance, |c| {
            // A tongue of the inner shield (L3) reaching half way into the clearance.
            let e = c.p.kind.electrode().unwrap();
            let r = e.diameter / 2.0 + e.clearance;
            add(
                &mut c.art,
                3,
                loopwright::geom::rect(r - e.clearance / 2.0, -0.2, r + 0.3, 0.2),
            );
        }),
        (Rule::StitchingRowPitch, |c| {
            c.b.vias.retain(|v| v.role != ViaRole::FaceRing);
            c.art = loopwright::artwork::compose(&c.p, &c.b);
        }),
    ]
}

/// The balanced loop's own places: its right-hand gap (the mirror image the board does not
/// draw itself), its second line's fences and the rows split by the gaps.
fn balanced_cases() -> Vec<Case<ProbeCase>> {
    vec![
        (Rule::GapFreeOfCopper, |c| {
            // A bridge across the ring's copper (the gap's rectangle reaches half a millimetre
            // past the ring on both sides).
            let (x0, y0, x1, y1) = c.art.gap_rects[1];
            let (ya, yb) = (y0 + 0.4 * (y1 - y0), y0 + 0.6 * (y1 - y0));
            add(
                &mut c.art,
                4,
                loopwright::geom::rect(x0 + 0.6, ya, x1 - 0.6, yb),
            );
        }),
        (Rule::GapHoldsOnlyTrace, |c| {
            // The second line cut away where it crosses its gap.
            let (x0, y0, x1, y1) = c.art.gap_rects[1];
            let n = c.p.signal_layer;
            cut(&mut c.art, n, loopwright::geom::rect(x0, y0, x1, y1));
        }),
        (Rule::ViaInGap, |c| {
            let (x0, y0, x1, y1) = c.art.gap_rects[1];
            c.s.pitch_min = 0.0;
            c.p.fab.min_hole_gap = 0.0;
            c.art.drills.push(Drill {
                at: Point::new(0.5 * (x0 + x1), 0.5 * (y0 + y1)),
                d: 0.3,
                plated: false,
                via: true,
                mechanical: None,
            });
        }),
        (Rule::StitchingRowPitch, |c| {
            // The outer row's vias above the right-hand gap.
            c.b.vias
                .retain(|v| !(v.role == ViaRole::OuterRow && v.at.x > 0.0 && v.at.y > 0.0));
            c.art = loopwright::artwork::compose(&c.p, &c.b);
        }),
        (Rule::StitchingRowPitch, |c| {
            // The second line's fences up the handle.
            c.b.vias
                .retain(|v| !(v.role == ViaRole::Fence && v.at.x > 0.0 && v.at.y < -20.0));
            c.art = loopwright::artwork::compose(&c.p, &c.b);
        }),
    ]
}

fn fixture_cases() -> Vec<Case<FixtureCase>> {
    vec![
        (Rule::LineContinuity, |c| {
            // Cut the line in the middle of the board.
            let n = c.f.line_layer;
            cut(&mut c.art, n, loopwright::geom::rect(-0.5, -5.0, 0.5, 5.0));
        }),
        (Rule::LineShortedToGround, |c| {
            // A strap from the line across its keepout into the ground pour.
            let n = c.f.line_layer;
            let reach = c.s.width / 2.0 + c.s.keepout + 1.0;
            add(&mut c.art, n, loopwright::geom::rect(-0.5, 0.0, 0.5, reach));
        }),
        (Rule::GroundTooNearLine, |c| c.s.keepout += 0.5),
    ]
}

/// Applies each case's edit to a copy of `base` and records the rules that fire when they are
/// not exactly the case's own.
fn run<C: Clone>(
    base: &C,
    cases: Vec<Case<C>>,
    check: impl Fn(&C) -> Vec<Violation>,
    covered: &mut BTreeSet<Rule>,
    failures: &mut Vec<String>,
) {
    for (rule, edit) in cases {
        let mut c = base.clone();
        edit(&mut c);
        let v = check(&c);
        if fired(&v) != BTreeSet::from([rule]) {
            let shown: Vec<String> = v.iter().take(4).map(|x| x.to_string()).collect();
            failures.push(format!(
                "{rule:?}: fired {:?}\n  {}",
                fired(&v),
                shown.join("\n  ")
            ));
        }
        covered.insert(rule);
    }
}

#[test]
fn every_rule_fires_alone() {
    let base = probe_case();
    let clean = loopwright::drc::check(&base.p, &base.s, &base.b, &base.art);
    assert!(clean.is_empty(), "the demo probe is not clean: {clean:?}");
    let ebase = electric_case();
    let clean = loopwright::drc::check(&ebase.p, &ebase.s, &ebase.b, &ebase.art);
    assert!(
        clean.is_empty(),
        "the electric probe is not clean: {clean:?}"
    );
    let bbase = balanced_case();
    let clean = loopwright::drc::check(&bbase.p, &bbase.s, &bbase.b, &bbase.art);
    assert!(
        clean.is_empty(),
        "the balanced loop is not clean: {clean:?}"
    );
    let fbase = fixture_case();
    let clean = loopwright::drc::check_fixture(&fbase.f, &fbase.s, &fbase.b, &fbase.art);
    assert!(clean.is_empty(), "the demo fixture is not clean: {clean:?}");

    let mut covered = BTreeSet::new();
    let mut failures = Vec::new();
    run(
        &base,
        probe_cases(),
        |c| loopwright::drc::check(&c.p, &c.s, &c.b, &c.art),
        &mut covered,
        &mut failures,
    );
    run(
        &ebase,
        electric_cases(),
        |c| loopwright::drc::check(&c.p, &c.s, &c.b, &c.art),
        &mut covered,
        &mut failures,
    );
    run(
        &bbase,
        balanced_cases(),
        |c| loopwright::drc::check(&c.p, &c.s, &c.b, &c.art),
        &mut covered,
        &mut failures,
    );
    run(
        &fbase,
        fixture_cases(),
        |c| loopwright::drc::check_fixture(&c.f, &c.s, &c.b, &c.art),
        &mut covered,
        &mut failures,
    );
    assert!(failures.is_empty(), "{}", failures.join("\n"));
    let all: BTreeSet<Rule> = Rule::ALL.into_iter().collect();
    assert_eq!(covered, all, "rules without a case");
}
