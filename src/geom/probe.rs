//! The probe board builder: from a probe and its solved values to the `Board`.

use super::offsets;
use super::region::*;
use super::shape::{closed, left_half, mirror};
use super::silk::*;
use super::vias::*;
use super::*;
use crate::model::probe::Probe;
use crate::solve::probe::{SolvedProbe, VIA_WEB};
use geo::{BooleanOps, MultiPolygon, Polygon};
use kurbo::Point;

/// Builds the board of a probe.
pub fn build(p: &Probe, s: &SolvedProbe) -> Board {
    let w = s.trace_width;
    let c = p.clearance;
    let pad = p.vias.pad;
    let f = s.fence_offset;
    let hr = s.ring_half_width;
    let e = s.feed_offset;
    let cte = p.fab.copper_to_edge;
    let shape = &p.shape;

    // --- Loop part of the trace: E_in (x = −e, lower left) → top → E_out (x = +e).
    let left = left_half(shape, 0.0);
    // The last segment (from the top) where the left half crosses x = −e on its way back to the
    // axis at the bottom.
    let (k, _, e_in) = super::shape::crossing_down(&left, e)
        .expect("the loop is wider than the feed offset (checked in solve)");
    // Flattened-curve points very close to the entry or exit would make segments too short to
    // have a direction (the offset of such a segment is noise): skip them.
    let far = |q: &Point| (*q - e_in).hypot() > offsets::MIN_SEGMENT;
    let mut loop_part: Vec<Point> = vec![e_in];
    loop_part.extend(left[..=k].iter().rev().copied().filter(far));
    loop_part.extend(left[1..=k].iter().filter(|q| far(q)).map(|q| mirror(*q)));
    loop_part.push(mirror(e_in));
    dedup(&mut loop_part);

    // --- Board frame: connector edge and signal via.
    let bottom = left.last().unwrap().y; // centreline bottom (on the axis)
    let ring_bottom = bottom - hr;
    let edge_y = ring_bottom - p.handle.length;
    let cp_len = p.connector.centre_pad_length;
    let sv = Point::new(0.0, edge_y + cp_len + s.launch.link_length);
    let jog_y = sv.y + pad / 2.0 + c + pad;
    let feed = vec![sv, Point::new(0.0, jog_y), Point::new(-e, jog_y + e), e_in];
    let mut trace_path = feed.clone();
    let entry_index = trace_path.len() - 1;
    // A multi-turn loop's first turn leaves the ring at its own exit (`solve::winding`).
    let loop_part = match &s.winding {
        Some(wd) => super::multiturn::ring_part(&left, e, wd.junction.exits[0]),
        None => loop_part,
    };
    trace_path.extend(loop_part.iter().skip(1).copied());
    let mut exit_index = trace_path.len() - 1;
    let e_out = *trace_path.last().unwrap();
    // A multi-turn loop: the first turn goes on down to its join via, where the next begins on
    // the layer below; the last turn is shorted.
    let wound = s
        .winding
        .as_ref()
        .map(|wd| super::multiturn::turns(p, s, wd));
    if let Some(x) = &wound {
        trace_path.push(x.joins[0].at);
        exit_index = trace_path.len() - 1;
    } else {
        let stub_end = Point::new(e, e_out.y - (w / 2.0 + c + 2.0 * pad));
        trace_path.push(stub_end);
    }

    // --- Top-layer link: from the centre pad's inner end to the signal via.
    let top_path = vec![
        Point::new(
            0.0,
            edge_y + cp_len - 0.5 * p.connector.centre_pad_width.min(cp_len),
        ),
        sv,
    ];

    // --- Shield: ring ∪ handle, pulled back from the board edge. Where the handle meets the
    // ring the union can leave a sharp notch; a closing (grow, then shrink, by more than the fab
    // space) fills every notch narrower than that, and the loop interior is then taken out again.
    let hw = p.handle.width / 2.0;
    let interior = polygon(&closed(shape, -hr));
    let extent = head_and_handle(p, polygon(&closed(shape, hr)), edge_y, bottom);
    let shield =
        MultiPolygon(vec![extent.clone()]).difference(&MultiPolygon(vec![interior.clone()]));

    // --- Gap over the top of the ring.
    let top = left[0].y;
    let gap_y = (top - hr - 0.5, top + hr + 0.5);

    // --- Outline: the copper extent grown by the copper-to-edge rule, filleted for the router.
    let mut outline = outline_around(p, &extent, edge_y);
    if p.mill_interior {
        let cut = polygon(&closed(shape, -hr - cte - offsets::EDGE_MARGIN));
        // The solve refuses a loop whose cut is narrower than the bit (with the flattening in
        // hand), so the opened cut is never empty; were it, the cut is kept as drawn.
        let cut = router_cut(&cut, p.fab.router_diameter / 2.0).unwrap_or(cut);
        outline.interiors_push(cut.exterior().clone());
    }

    // --- Connector pads and holes.
    let (pads, holes) = connector_pads(p, edge_y);

    // --- Vias.
    let mut placer = ViaPlacer::new(
        p,
        s,
        trace_path[..=exit_index].to_vec(),
        &top_path,
        &shield,
        &pads,
        sv,
    );
    // Short vias on the stub, in solid ground below the channel (a multi-turn loop's on its
    // last turn's), and a multi-turn loop's join vias; the other turns are kept clear of.
    let short1 = Point::new(e, e_out.y - (w / 2.0 + c + pad / 2.0 + VIA_WEB));
    let mut shorts = [
        short1,
        Point::new(e, short1.y - s.pitch_min - offsets::PITCH_MARGIN),
    ];
    if let Some(x) = &wound {
        shorts = x.shorts;
        placer.others = x
            .turns
            .iter()
            .map(|t| t.path[..=t.channel_end].to_vec())
            .collect();
        for jn in &x.joins {
            placer.vias.push(Via {
                at: jn.at,
                drill: p.vias.drill,
                pad,
                role: ViaRole::Join,
            });
        }
    }
    for q in shorts {
        placer.vias.push(Via {
            at: q,
            drill: p.vias.drill,
            pad,
            role: ViaRole::Short,
        });
    }
    placer.rows(shape, -f, ViaRole::InnerRow);
    placer.rows(shape, f, ViaRole::OuterRow);
    // Ground vias around the signal via, then around the connector's ground pads.
    placer.signal_ring(crate::solve::launch::signal_ring_radius(p, &s.launch));
    placer.pad_vias();
    placer.fences(&feed);
    if wound.is_some() {
        placer.drop_lonely();
    }
    let vias = placer.vias;

    // --- Silkscreen.
    let (silk_top, silk_bottom) = silk(p, s, edge_y, bottom - hr, hw);

    Board {
        bbox: bbox(&outline),
        trace_path,
        exit_index,
        entry_index,
        trace_width: w,
        top_path,
        launch: LaunchCuts::of(p, s),
        shield,
        loop_head: Some(LoopHead {
            gaps: vec![(-p.gap / 2.0, gap_y.0, p.gap / 2.0, gap_y.1)],
            interior,
        }),
        mirrored: false,
        turns: wound.as_ref().map(|x| x.turns.clone()).unwrap_or_default(),
        joins: wound.as_ref().map(|x| x.joins.clone()).unwrap_or_default(),
        vias,
        pads,
        holes,
        outline,
        silk_top,
        silk_bottom,
        edge_y,
    }
}

/// The board outline round a shield extent: the extent grown by the copper-to-edge rule (round
/// joins), which puts the connector edge at `edge_y`, its internal corners filleted to the
/// router bit's radius, the connector edge cut straight.
pub(super) fn outline_around(p: &Probe, extent: &Polygon<f64>, edge_y: f64) -> Polygon<f64> {
    let cte = p.fab.copper_to_edge;
    // Round joins are flattened to chords that cut inside the true arcs by up to the arc
    // tolerance, and the artwork snaps to its grid: the outline is grown by that much more, so
    // that every point of it stays at least `cte` from the copper, and cut back to the
    // connector edge.
    // The flattening of the buffer's round joins is measured rather than trusted: should the
    // outline still come nearer than `cte`, it is grown again by the shortfall.
    let outline_at = |d: f64| {
        let g = largest(&symmetrise(&round_buffer(
            &MultiPolygon(vec![extent.clone()]),
            d,
        )));
        largest(
            &MultiPolygon(vec![g]).intersection(&MultiPolygon(vec![rect(-1e4, edge_y, 1e4, 1e4)])),
        )
    };
    let mut grown = outline_at(cte + offsets::EDGE_MARGIN);
    // The outlines' distance, exact wherever it decides (below the reach; segments bucketed,
    // where a pairwise search ran over every edge of both).
    let nearest = super::near::polylines_within(
        grown.exterior(),
        extent.exterior(),
        cte + offsets::EDGE_MARGIN,
    );
    if nearest < cte + offsets::EDGE_MARGIN / 2.0 {
        grown = outline_at(cte + 1.5 * offsets::EDGE_MARGIN + (cte - nearest).max(0.0));
    }
    // A router cannot cut a sharp internal corner (where the handle meets the ring): fillet
    // them to the bit's radius, which only adds board beyond the copper. The connector edge is
    // cut straight again.
    let r_bit = p.fab.router_diameter / 2.0;
    let filleted = fillet_internal(&grown, r_bit);
    let filleted = largest(
        &MultiPolygon(vec![filleted])
            .intersection(&MultiPolygon(vec![rect(-1e4, edge_y, 1e4, 1e4)])),
    );
    Polygon::new(filleted.exterior().clone(), vec![])
}

/// The edge-launch connector's pads (centre on top, ground on both sides, top and bottom) and
/// its ground-leg holes, the connector edge at `edge_y`.
pub(super) fn connector_pads(p: &Probe, edge_y: f64) -> (Vec<Pad>, Vec<Hole>) {
    let cp_len = p.connector.centre_pad_length;
    let con = &p.connector;
    let mut pads = vec![Pad {
        at: Point::new(0.0, edge_y + cp_len / 2.0),
        w: con.centre_pad_width,
        h: cp_len,
        top: true,
        centre: true,
    }];
    let mut holes = Vec::new();
    for side in [-1.0, 1.0] {
        for top_side in [true, false] {
            pads.push(Pad {
                at: Point::new(
                    side * con.ground_pad_offset,
                    edge_y + con.ground_pad_length / 2.0,
                ),
                w: con.ground_pad_width,
                h: con.ground_pad_length,
                top: top_side,
                centre: false,
            });
        }
        if con.ground_hole_drill > 0.0 {
            holes.push(Hole {
                at: Point::new(
                    side * con.ground_pad_offset,
                    edge_y + con.ground_pad_length / 2.0,
                ),
                drill: con.ground_hole_drill,
                pad: con.ground_hole_land(&p.fab),
            });
        }
    }

    (pads, holes)
}

/// The copper extent of a probe: its head (the loop's ring, the electric probe's face) ∪ the
/// handle from the connector edge's pullback up to `handle_top`, closed where they meet (grow,
/// then shrink, by more than the fab space, filling every notch narrower than that),
/// symmetrised, and cut back to the copper-to-edge rule at the connector edge.
pub(super) fn head_and_handle(
    p: &Probe,
    head: Polygon<f64>,
    edge_y: f64,
    handle_top: f64,
) -> Polygon<f64> {
    let cte = p.fab.copper_to_edge;
    let hw = p.handle.width / 2.0;
    let r_close = p.fab.min_space.max(p.clearance) + offsets::CLOSE_MARGIN;
    let extent = MultiPolygon(vec![head]).union(&MultiPolygon(vec![rect(
        -hw,
        edge_y + cte,
        hw,
        handle_top,
    )]));
    let extent = largest(&symmetrise(&round_buffer(
        &round_buffer(&extent, r_close),
        -r_close,
    )));
    // The closing's flattened arcs can move the straight pullback at the connector edge by a
    // fraction of a micrometre, and snapping by a nanometre: cut it back to `cte` from that
    // edge and the margin beyond.
    largest(
        &MultiPolygon(vec![extent]).intersection(&MultiPolygon(vec![rect(
            -1e4,
            edge_y + cte + offsets::EDGE_MARGIN,
            1e4,
            1e4,
        )])),
    )
}

/// The bounding box (min, max) of an outline's exterior, mm.
pub(super) fn bbox(outline: &Polygon<f64>) -> (Point, Point) {
    let (mut lo, mut hi) = (
        Point::new(f64::MAX, f64::MAX),
        Point::new(f64::MIN, f64::MIN),
    );
    for q in outline.exterior().coords() {
        lo = Point::new(lo.x.min(q.x), lo.y.min(q.y));
        hi = Point::new(hi.x.max(q.x), hi.y.max(q.y));
    }
    (lo, hi)
}
