//! The copper-to-edge rule holds exactly after arc flattening, for rules from 0.2 to 3 mm: the
//! nearest approach of the copper (connector pads excepted: they reach the edge on purpose)
//! to the board's profile, measured here on the artwork with geo (the nearest approach of two
//! polylines is at a vertex of one of them), is never below the rule by more than the 1 nm
//! artwork grid. A rule that leaves the connector's ground pads no copper to join is refused
//! with its limit.

use geo::{BooleanOps, Coord, Distance, Euclidean, LineString, MultiPolygon};
use loopwright::artwork::PadFunction;
use std::path::Path;

/// The demo's settings with a 20 mm round loop and a 24 × 12 mm rectangle, interior milled,
/// on a handle wide enough for the rule (the ground pads' outer edges at 3.25 mm plus the rule).
fn spec(cte: f64, pads: Option<(f64, f64)>) -> loopwright::spec::probe::ProbeFileSpec {
    let head = loopwright::cli::DEMO_SPEC
        .split("[[probe]]")
        .next()
        .unwrap();
    let width = (2.0 * (3.25 + cte)).max(8.0);
    let head = head
        .replace("width_mm = 8.0", &format!("width_mm = {width}"))
        .replace("stackup = ", "mill_interior = true\nstackup = ");
    let connector = pads
        .map(|(g, c)| {
            format!("[connector]\nground_pad_length_mm = {g}\ncentre_pad_length_mm = {c}\n\n")
        })
        .unwrap_or_default();
    let text = format!(
        "{head}{connector}[fab]\ncopper_to_edge_mm = {cte}\n\n[[probe]]\nname = \"E\"\nshape = \
         \"round\"\nsize_mm = 20.0\n\n[[probe]]\nname = \"T\"\nshape = \"rectangle\"\nwidth_mm = \
         24.0\nheight_mm = 12.0\n"
    );
    loopwright::spec::parse_toml(&text, "edge.toml").unwrap()
}

fn ring(pts: &[kurbo::Point]) -> LineString<f64> {
    LineString::from(
        pts.iter()
            .map(|p| Coord { x: p.x, y: p.y })
            .collect::<Vec<_>>(),
    )
}

#[test]
fn copper_keeps_the_rule_from_the_edge_exactly() {
    for (cte, pads) in [
        (0.2, None),
        (0.3, None),
        (1.0, None),
        (2.0, None),
        (2.8, None),
        // 3 mm needs longer ground pads and a centre pad longer than the rule (below); with a
        // 3.2 mm centre pad the signal via's antipads below L1 come within a sliver of the
        // pullback, and they run on to the edge (asserted below; the build's design-rule check
        // refuses any neck narrower than a trace).
        (3.0, Some((4.0, 3.2))),
    ] {
        let built = loopwright::pipeline::build_family(&spec(cte, pads), Path::new("."), false)
            .unwrap_or_else(|e| panic!("{cte} mm: {e}"));
        for b in &built.probes {
            let art = &b.artwork;
            if pads.is_some() {
                // The antipad's run to the edge: no copper on the axis just above the pullback
                // on L2 and L4 (the via's barrel and stub layers); the link on L1 and the
                // ground on L3 (the loop's layer, where the via has no antipad run) stay.
                let at = geo::Point::new(0.0, b.board.edge_y + cte + 0.05);
                for l in &art.copper {
                    let has = geo::Contains::contains(&l.regions, &at);
                    assert_eq!(
                        has,
                        l.n == 1 || l.n == 3,
                        "{} L{}: copper at {at:?}: {has}",
                        b.probe.name,
                        l.n
                    );
                }
            }
            let profile: Vec<LineString<f64>> = art.profile.iter().map(|r| ring(r)).collect();
            for l in &art.copper {
                let (pads, others): (Vec<_>, Vec<_>) = l
                    .flashes
                    .iter()
                    .copied()
                    .partition(|f| f.function == PadFunction::Connector);
                let body = loopwright::drc::layer_copper(&l.regions, &others).difference(
                    &loopwright::drc::layer_copper(&MultiPolygon::<f64>(vec![]), &pads),
                );
                let mut nearest = f64::INFINITY;
                for poly in &body.0 {
                    let rings: Vec<&LineString<f64>> = std::iter::once(poly.exterior())
                        .chain(poly.interiors())
                        .collect();
                    for r in &rings {
                        for edge in &profile {
                            nearest = nearest.min(Euclidean.distance(*r, edge));
                        }
                    }
                }
                assert!(
                    nearest >= cte - 1e-6,
                    "{cte} mm, {} L{}: copper {nearest:.7} mm from the edge",
                    b.probe.name,
                    l.n
                );
            }
        }
    }
}

#[test]
fn a_rule_that_leaves_the_ground_pads_no_copper_is_refused() {
    let e = loopwright::model::probe::family_from_spec(&spec(3.0, None), Path::new("."))
        .unwrap_err()
        .to_string();
    assert!(
        e.contains(
            "fab.copper_to_edge_mm = 3: less than the connector's ground pads are long (3 mm"
        ) && e.contains("at most 2.87 mm"),
        "{e}"
    );
    // The link on L1 leaves the 3 mm centre pad at its inner end: a 3 mm rule would put it on
    // the rule's line.
    assert!(
        e.contains("less than the connector's centre pad is long (3 mm: at most 2.999 mm)"),
        "{e}"
    );
}

/// Region grown (d > 0) or shrunk by `d` with round joins (geo's buffer).
fn buffered(m: &MultiPolygon<f64>, d: f64) -> MultiPolygon<f64> {
    use geo::algorithm::buffer::{Buffer, BufferStyle, LineCap, LineJoin};
    m.buffer_with_style(
        BufferStyle::new(d)
            .line_cap(LineCap::Round(0.02))
            .line_join(LineJoin::Round(0.02)),
    )
}

/// Internal corners of the profile are filleted to the router bit's radius (a bit cannot cut
/// a sharper one): a disc of 0.95 × that radius rolled round the outside of the board leaves
/// less than 0.01 mm² uncut (the closing of the outline adds no area but for the arcs'
/// flattening; one sharp corner would leave 0.1–0.5 mm²), and one rolled round the
/// inside of a milled cut-out reaches all of it to the same 0.01 mm². The same check with twice
/// the radius (four on the rectangle's cut-out) does find the fillets, so it can fail. Measured
/// on the emitted profile for a round loop and a rectangle, bits of 1, 2 and 3.2 mm.
#[test]
fn internal_outline_corners_are_filleted_to_the_router_radius() {
    use geo::{Area, BooleanOps, Polygon};
    for bit in [1.0, 2.0, 3.2] {
        let mut s = spec(0.3, None);
        s.fab.as_mut().unwrap().router_diameter_mm = Some(bit);
        let built = loopwright::pipeline::build_family(&s, Path::new("."), false)
            .unwrap_or_else(|e| panic!("{bit} mm bit: {e}"));
        for b in &built.probes {
            let prof = &b.artwork.profile;
            let board = MultiPolygon(vec![Polygon::new(ring(&prof[0]), vec![])]);
            let r = bit / 2.0;
            let uncut = |k: f64| {
                buffered(&buffered(&board, k * r), -k * r)
                    .difference(&board)
                    .unsigned_area()
            };
            assert!(
                uncut(0.95) < 1e-2,
                "{bit} mm bit, {}: {} mm² a bit cannot reach",
                b.probe.name,
                uncut(0.95)
            );
            assert!(uncut(2.0) > 5.0 * uncut(0.95).max(1e-3), "{}", b.probe.name);
            // Independently of any buffer (elementary geometry): at every internal (concave)
            // vertex of the profile the circle through it and its two neighbours is at least
            // 0.95 × the bit's radius (on a flattened fillet arc it is the arc's radius; at a
            // sharp corner it is tiny).
            let pts = &prof[0];
            let n = pts.len() - 1; // closed ring: last = first
            let area2: f64 = (0..n)
                .map(|i| pts[i].x * pts[i + 1].y - pts[i + 1].x * pts[i].y)
                .sum();
            let mut concave = 0;
            for i in 0..n {
                let (a, p0, c) = (pts[(i + n - 1) % n], pts[i], pts[(i + 1) % n]);
                let (u, v) = (p0 - a, c - p0);
                let turn = u.x * v.y - u.y * v.x;
                let (la, lb, lc) = (u.hypot(), v.hypot(), (c - a).hypot());
                // Concave, and deeper than 0.1 µm (the boolean operations leave notches of a few
                // nm where two flattenings of one arc cross; no fab resolves them).
                if turn * area2.signum() >= 0.0 || turn.abs() / lc < 1e-4 {
                    continue;
                }
                concave += 1;
                let circ = la * lb * lc / (2.0 * turn.abs());
                assert!(
                    circ >= 0.95 * r,
                    "{bit} mm bit, {}: a concave vertex at ({:.3}, {:.3}) turns on a {circ:.4} mm \
                     radius",
                    b.probe.name,
                    p0.x,
                    p0.y
                );
            }
            assert!(
                concave > 0,
                "{}: the handle meets the ring somewhere",
                b.probe.name
            );
            assert_eq!(prof.len(), 2, "{}: a milled cut-out", b.probe.name);
            let hole = MultiPolygon(vec![Polygon::new(ring(&prof[1]), vec![])]);
            let left = |k: f64| {
                hole.difference(&buffered(&buffered(&hole, -k * r), k * r))
                    .unsigned_area()
            };
            assert!(
                left(0.95) < 1e-2,
                "{bit} mm bit, {}: cut-out {} mm²",
                b.probe.name,
                left(0.95)
            );
            // The rectangle's cut-out has corners (a circle has none to find; its own are
            // already about 1 mm in radius, so a disc of four bit radii finds them).
            if b.probe.name == "T" {
                assert!(left(4.0) > 5.0 * left(0.95).max(1e-2), "{}", b.probe.name);
            }
        }
    }
}

/// A milled interior at the smallest loop the solve accepts still gets its cut (the bit fits
/// the flattened cut drawn inside the pull-back): the size printed by the refusal of a smaller
/// loop builds with a cut-out, for bits of 1, 2 and 3.2 mm.
#[test]
fn a_milled_interior_at_the_printed_limit_is_cut() {
    for bit in [1.0, 2.0, 3.2] {
        let mut s = spec(0.3, None);
        s.fab.as_mut().unwrap().router_diameter_mm = Some(bit);
        s.probe.truncate(1);
        s.probe[0].size_mm = Some(3.0);
        let e = loopwright::pipeline::build_family(&s, Path::new("."), false)
            .expect_err("a 3 mm loop is too small")
            .to_string();
        let limit: f64 = e
            .split("must be at least ")
            .nth(1)
            .and_then(|t| t.split(" mm").next())
            .and_then(|t| t.parse().ok())
            .unwrap_or_else(|| panic!("{e}"));
        s.probe[0].size_mm = Some(limit);
        let built = loopwright::pipeline::build_family(&s, Path::new("."), false)
            .unwrap_or_else(|e| panic!("{bit} mm bit at {limit} mm: {e}"));
        let prof = &built.probes[0].artwork.profile;
        assert_eq!(prof.len(), 2, "{bit} mm bit at {limit} mm: no cut-out");
        // The bit fits: the round cut-out is at least as wide as the bit across both axes.
        let span = |f: fn(&kurbo::Point) -> f64| {
            let v: Vec<f64> = prof[1].iter().map(f).collect();
            v.iter().cloned().fold(f64::NEG_INFINITY, f64::max)
                - v.iter().cloned().fold(f64::INFINITY, f64::min)
        };
        let (wx, wy) = (span(|q| q.x), span(|q| q.y));
        assert!(
            wx >= bit - 1e-6 && wy >= bit - 1e-6,
            "{bit} mm bit at {limit} mm: cut-out {wx} × {wy} mm"
        );
    }
}
