//! The copper-to-edge rule holds exactly after arc flattening, for rules from 0.2 to 3 mm: the
//! nearest approach of the copper (connector pads excepted: they reach the edge on purpose)
//! to the board's profile, measured here on the artwork with geo (the nearest approach of two
//! polylines is at a vertex of one of them), is never below the rule by more than the 1 nm
//! artwork grid. A rule that leaves the connector's ground pads no copper to join is refused
//! with its limit.

use geo::{BooleanOps, Coord, Distance, Euclidean, LineString, MultiPolygon};
use loopwright::artwork::PadFunction;
use std::path::Path;

/// The demo's settings with a 20 mm round loop and a 24 × 10 mm rectangle, interior milled,
/// on a handle wide enough for the rule (the ground pads' outer edges at 3.25 mm plus the rule).
fn spec(cte: f64, pad_length: Option<f64>) -> loopwright::spec::probe::ProbeFileSpec {
    let head = loopwright::cli::DEMO_SPEC
        .split("[[probe]]")
        .next()
        .unwrap();
    let width = (2.0 * (3.25 + cte)).max(8.0);
    let head = head
        .replace("width_mm = 8.0", &format!("width_mm = {width}"))
        .replace("stackup = ", "mill_interior = true\nstackup = ");
    let connector = pad_length
        .map(|l| format!("[connector]\nground_pad_length_mm = {l}\n\n"))
        .unwrap_or_default();
    let text = format!(
        "{head}{connector}[fab]\ncopper_to_edge_mm = {cte}\n\n[[probe]]\nname = \"E\"\nshape = \
         \"round\"\nsize_mm = 20.0\n\n[[probe]]\nname = \"T\"\nshape = \"rectangle\"\nwidth_mm = \
         24.0\nheight_mm = 10.0\n"
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
    for (cte, pad_length) in [
        (0.2, None),
        (0.3, None),
        (1.0, None),
        (2.0, None),
        (2.8, None),
        // 3 mm needs longer ground pads (below); with them the signal via's antipad on the
        // bottom layer comes within a sliver of the pullback, and the antipad runs on to the
        // edge (the design-rule check of the build refuses any neck narrower than a trace).
        (3.0, Some(4.0)),
    ] {
        let built =
            loopwright::pipeline::build_family(&spec(cte, pad_length), Path::new("."), false)
                .unwrap_or_else(|e| panic!("{cte} mm: {e}"));
        for b in &built.probes {
            let art = &b.artwork;
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
}
