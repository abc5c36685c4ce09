//! The fixture board's own rules: the line's continuity without touching ground, the keepout
//! along the uniform line, and the stitching pitch.

use super::board::check_board_with;
use super::kernel::{Coppers, nearest_neighbours};
use super::slack;
use super::{Rule, Violation};
use crate::artwork::Artwork;
use crate::geom::rect;
use geo::{BooleanOps, Distance, Euclidean, MultiPolygon};
use kurbo::Point;

/// Runs every check of a fixture board: [`check_board`], the line's continuity from port to
/// port without touching ground, the keepout (or coplanar gap) along the uniform line, and the
/// stitching pitch. Returns the violations.
pub fn check_fixture(
    f: &crate::model::fixture::Fixture,
    s: &crate::solve::fixture::SolvedFixture,
    b: &crate::geom::fixture::FixtureBoard,
    art: &Artwork,
) -> Vec<Violation> {
    use geo::Intersects;
    let cu = Coppers::new(art);
    let mut out = check_board_with(&f.fab, art, &cu);
    let Some((i, l)) = art
        .copper
        .iter()
        .enumerate()
        .find(|(_, l)| l.n == f.line_layer)
    else {
        return out;
    };
    let name = format!("L{}", l.n);
    let copper = cu.copper(i);
    let centres: Vec<Point> = b.pads.iter().filter(|p| p.centre).map(|p| p.at).collect();
    let at = |q: Point| geo::Point::new(q.x, q.y);
    let line_part = copper
        .0
        .iter()
        .find(|poly| poly.intersects(&at(centres[0])));
    match line_part {
        None => out.push(Violation {
            rule: Rule::LineContinuity,
            layer: name.clone(),
            at: centres[0],
            detail: "no copper at port 1's centre pad".into(),
        }),
        Some(part) => {
            if !part.intersects(&at(centres[1])) {
                out.push(Violation {
                    rule: Rule::LineContinuity,
                    layer: name.clone(),
                    at: centres[1],
                    detail: "the line from port 1 does not reach port 2".into(),
                });
            }
            let ground_hit = b
                .vias
                .iter()
                .map(|v| v.at)
                .chain(b.pads.iter().filter(|p| !p.centre).map(|p| p.at))
                .find(|q| part.intersects(&at(*q)));
            if let Some(q) = ground_hit {
                out.push(Violation {
                    rule: Rule::LineShortedToGround,
                    layer: name.clone(),
                    at: q,
                    detail: "the line's copper reaches a ground pad or via".into(),
                });
            }
            // Keepout along the uniform line.
            let xu = b.uniform_half_length;
            // Strictly inside the uniform part: its ends meet the tapers' own gaps.
            let band = MultiPolygon(vec![rect(
                -xu + slack::KEEPOUT,
                -f.width,
                xu - slack::KEEPOUT,
                f.width,
            )]);
            let ground = MultiPolygon(
                copper
                    .0
                    .iter()
                    // Not the line: neither of its pieces (a line cut in two is the
                    // continuity rule's finding, not ground beside the line).
                    .filter(|poly| !centres.iter().any(|q| poly.intersects(&at(*q))))
                    .cloned()
                    .collect(),
            )
            .intersection(&band);
            let uniform = rect(-xu, -s.width / 2.0, xu, s.width / 2.0);
            let d = Euclidean.distance(&MultiPolygon(vec![uniform]), &ground);
            if !ground.0.is_empty() && d < s.keepout - slack::KEEPOUT {
                out.push(Violation {
                    rule: Rule::GroundTooNearLine,
                    layer: name.clone(),
                    at: Point::ZERO,
                    detail: format!("{d:.4} mm < {:.4} mm", s.keepout),
                });
            }
        }
    }
    // Stitching pitch: every stitching via has a neighbour within the limit.
    let stitch: Vec<Point> = b
        .vias
        .iter()
        .filter(|v| v.role == crate::geom::ViaRole::OuterRow)
        .map(|v| v.at)
        .collect();
    nearest_neighbours(&stitch, s.pitch_max, &mut out);
    out
}
