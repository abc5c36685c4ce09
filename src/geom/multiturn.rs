//! A multi-turn loop's turns after the first: each on its own layer, stacked on the loop's
//! centreline, joined by through vias in the handle just below the ring (the construction is
//! stated in `solve::winding` and docs/probe-spec.md; the first turn is the probe's own trace,
//! built by `geom::probe`).

use super::offsets;
use super::region::dedup;
use super::shape::{left_half, mirror};
use super::{Join, Turn};
use crate::model::probe::Probe;
use crate::solve::probe::{SolvedProbe, VIA_WEB};
use crate::solve::winding::Winding;
use kurbo::Point;

/// The turns after the first, the join vias and the last turn's two short vias.
pub(super) struct Wound {
    pub turns: Vec<Turn>,
    pub joins: Vec<Join>,
    pub shorts: [Point; 2],
}

/// The last segment of the left half (from the top) that crosses x = −x on its way back to the
/// axis at the bottom, and the crossing point.
fn cross(left: &[Point], x: f64) -> (usize, Point) {
    let (k, _, q) = super::shape::crossing_down(left, x)
        .expect("the loop is wider than the last turn's exit (checked in solve)");
    (k, q)
}

/// A turn's part on the ring: from its entry at x = −`e_in` up the left half, across the apex,
/// down the right half to its exit at x = +`e_out`.
pub(super) fn ring_part(left: &[Point], e_in: f64, e_out: f64) -> Vec<Point> {
    let (ki, p_in) = cross(left, e_in);
    let (ko, p_out) = cross(left, e_out);
    // Flattened-curve points very close to an end would make segments too short to have a
    // direction: skip them.
    let far = |q: &Point, end: Point| (*q - end).hypot() > offsets::MIN_SEGMENT;
    let mut v = vec![p_in];
    v.extend(left[..=ki].iter().rev().copied().filter(|q| far(q, p_in)));
    v.extend(
        left[1..=ko]
            .iter()
            .filter(|q| far(q, p_out))
            .map(|q| mirror(*q)),
    );
    v.push(mirror(p_out));
    dedup(&mut v);
    v
}

/// Builds the turns after the first.
pub(super) fn turns(p: &Probe, s: &SolvedProbe, wd: &Winding) -> Wound {
    let left = left_half(&p.shape, 0.0);
    let j = &wd.junction;
    let pad = p.vias.pad;
    let layers: Vec<usize> = p.turn_layers().collect();
    let n = layers.len();
    let joins: Vec<Join> = j
        .joins
        .iter()
        .enumerate()
        .map(|(k, at)| Join {
            at: *at,
            upper: layers[k],
            lower: layers[k + 1],
        })
        .collect();
    let mut turns = Vec::new();
    let mut shorts = [Point::ZERO; 2];
    for (k, &layer) in layers.iter().enumerate().skip(1) {
        let w = wd.lines[k - 1].width;
        let v = j.joins[k - 1];
        let ring = ring_part(&left, j.entry, j.exits[k]);
        let mut path = vec![v, Point::new(-j.entry, v.y)];
        path.extend(ring);
        dedup(&mut path);
        let channel_end;
        if k + 1 < n {
            path.push(j.joins[k]);
            channel_end = path.len() - 1;
        } else {
            // The last turn: on past its exit into solid shield, shorted there by two vias (as
            // a single turn's end is).
            let e_out = *path.last().unwrap();
            channel_end = path.len() - 1;
            // The first short as far down as the other turns, on along the ring on their own
            // layers, leave room for (`solve::winding::short_drop`); the stub on past it as a
            // single turn's.
            let drop = crate::solve::winding::short_drop(p, e_out.x, w, s.fence_offset);
            let first = Point::new(e_out.x, e_out.y - drop);
            path.push(Point::new(
                e_out.x,
                first.y - (1.5 * pad - VIA_WEB).max(pad / 2.0),
            ));
            shorts = [
                first,
                Point::new(e_out.x, first.y - s.pitch_min - offsets::PITCH_MARGIN),
            ];
        }
        turns.push(Turn {
            layer,
            path,
            channel_end,
            width: w,
        });
    }
    Wound {
        turns,
        joins,
        shorts,
    }
}
