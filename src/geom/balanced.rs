//! The balanced (doubly-loaded) loop's board: the shield ring split at both sides, midway
//! along each half-turn, and two shielded lines, mirror images of each other, each from its own
//! connector up the handle into the ring's lower part, up the side to its gap, across it and
//! shorted to the shield just past it.
//!
//! Why the gaps sit at the sides: the two loads of a doubly-loaded loop must be diametrically
//! opposite (the classical form; physics::balanced), and a board that is mirror-symmetric about
//! its axis (both lines and connectors included) can hold two such loads only as mirror
//! images, at the two ends of the diameter across the axis. Under the mirror the loop's
//! circulating (magnetic) current and an electric field across the axis are odd, an electric
//! field along the axis or normal to the board even: the two outputs' difference takes the
//! former, their sum the latter, whatever the frequency. A single gap at the apex with the
//! trace's two ends taken out (the other form one might draw) is symmetric too, but both its
//! outputs see one and the same gap voltage, so their sum and difference cannot tell a field
//! across the axis from a magnetic one.
//!
//! The board builds line A (the left one, x < 0) and marks itself `mirrored`: the artwork,
//! the via placer and the checks draw and test line B as the exact mirror image.

use super::probe::{bbox, connector_pads, head_and_handle, outline_around};
use super::region::*;
use super::shape::{arclengths, closed, left_half, mirror, point_at};
use super::silk::*;
use super::vias::*;
use super::*;
use crate::model::probe::Probe;
use crate::solve::probe::{SolvedProbe, VIA_WEB, channel_past_gap};
use geo::{BooleanOps, MultiPolygon};
use kurbo::Point;

/// The left gap of a balanced loop `(x0, y0, x1, y1)`: across the ring at its widest point
/// (x = −a, y = 0), the gap's width along the axis, reaching half a millimetre beyond the
/// ring's copper on both sides.
pub fn left_gap(a: f64, ring_half_width: f64, gap: f64) -> (f64, f64, f64, f64) {
    (
        -a - ring_half_width - 0.5,
        -gap / 2.0,
        -a + ring_half_width + 0.5,
        gap / 2.0,
    )
}

/// Builds the board of a balanced loop.
pub(super) fn build(p: &Probe, s: &SolvedProbe) -> Board {
    let w = s.trace_width;
    let c = p.clearance;
    let pad = p.vias.pad;
    let f = s.fence_offset;
    let hr = s.ring_half_width;
    let shape = &p.shape;
    let a = shape.half_width();
    let e_b = crate::solve::probe::balanced_entry(p, s);
    let x_c = p.connector.pair_half_pitch(p.fab.min_space);

    // --- Line A along the ring: from the entry E_in (x = −e_b, the ring's lower left) up the
    // left side, across the gap (midway along the half-turn) to the channel's end, then the
    // stub on into solid shield where the short vias stand.
    let left = left_half(shape, 0.0);
    let sl = arclengths(&left);
    let total = *sl.last().unwrap();
    let s_gap = 0.5 * total;
    let (k, t, e_in) = super::shape::crossing_down(&left, e_b)
        .expect("the loop is wider than the entry offset (checked in solve)");
    let s_in = sl[k] + t * (sl[k + 1] - sl[k]);
    let s_exit = s_gap - channel_past_gap(p, w);
    let stub = w / 2.0 + c + 2.0 * pad;
    let s_end = s_exit - stub;
    let exit = point_at(&left, &sl, s_exit).0;
    let stub_end = point_at(&left, &sl, s_end).0;
    let far = |q: &Point| {
        (*q - e_in).hypot() > offsets::MIN_SEGMENT && (*q - exit).hypot() > offsets::MIN_SEGMENT
    };
    let mut loop_part: Vec<Point> = vec![e_in];
    loop_part.extend(
        (0..left.len())
            .rev()
            .filter(|&i| sl[i] < s_in && sl[i] > s_exit)
            .map(|i| left[i])
            .filter(far),
    );
    loop_part.push(exit);

    // --- Board frame: connector edge, signal via on the connector's axis at x = −x_c, the line
    // straight up the handle and a 45° jog to the entry's x below the ring.
    let bottom = left.last().unwrap().y;
    let ring_bottom = bottom - hr;
    let edge_y = ring_bottom - p.handle.length;
    let cp_len = p.connector.centre_pad_length;
    let sv = Point::new(-x_c, edge_y + cp_len + s.launch.link_length);
    let jog_end_y = ring_bottom - 2.0 * f - pad;
    let jog_start_y = jog_end_y - (x_c - e_b);
    let mut feed = vec![sv];
    if x_c - e_b > offsets::MIN_SEGMENT {
        feed.push(Point::new(-x_c, jog_start_y));
    }
    feed.push(Point::new(-e_b, jog_end_y));
    feed.push(e_in);
    let mut trace_path = feed.clone();
    let entry_index = trace_path.len() - 1;
    trace_path.extend(loop_part.iter().skip(1).copied());
    let exit_index = trace_path.len() - 1;
    // The stub follows the ring past the channel's end.
    trace_path.extend(
        (0..left.len())
            .rev()
            .filter(|&i| sl[i] < s_exit && sl[i] > s_end)
            .map(|i| left[i])
            .filter(|q| {
                (*q - exit).hypot() > offsets::MIN_SEGMENT
                    && (*q - stub_end).hypot() > offsets::MIN_SEGMENT
            }),
    );
    trace_path.push(stub_end);

    // --- Top-layer link: from the centre pad's inner end to the signal via.
    let top_path = vec![
        Point::new(
            -x_c,
            edge_y + cp_len - 0.5 * p.connector.centre_pad_width.min(cp_len),
        ),
        sv,
    ];

    // --- Shield: ring ∪ handle, the loop's opening taken out; the two side gaps.
    let hw = p.handle.width / 2.0;
    let interior = polygon(&closed(shape, -hr));
    let extent = head_and_handle(p, polygon(&closed(shape, hr)), edge_y, bottom);
    let shield =
        MultiPolygon(vec![extent.clone()]).difference(&MultiPolygon(vec![interior.clone()]));
    let g = left_gap(a, hr, p.gap);
    let gaps = vec![g, (-g.2, g.1, -g.0, g.3)];

    // --- Outline.
    let cte = p.fab.copper_to_edge;
    let mut outline = outline_around(p, &extent, edge_y);
    if p.mill_interior {
        let cut = polygon(&closed(shape, -hr - cte - offsets::EDGE_MARGIN));
        let cut = router_cut(&cut, p.fab.router_diameter / 2.0).unwrap_or(cut);
        outline.interiors_push(cut.exterior().clone());
    }

    // --- Connector pads and holes: one footprint at x = −x_c and its mirror image.
    let (pads_a, holes_a) = connector_pads(p, edge_y);
    let pads = paired(&pads_a, x_c, |pd| pd.at, |pd, at| Pad { at, ..*pd });
    let holes = paired(&holes_a, x_c, |h| h.at, |h, at| Hole { at, ..*h });

    // --- Vias: both lines' channels kept clear; every via placed with its mirror image.
    let mut placer = ViaPlacer::new(
        p,
        s,
        trace_path[..=exit_index].to_vec(),
        &top_path,
        &shield,
        &pads,
        sv,
    );
    placer.mirror_lines(gaps.clone());
    placer.vias.push(Via {
        at: mirror(sv),
        drill: p.vias.drill,
        pad,
        role: ViaRole::Signal,
    });
    // Short vias on the stub, in the ring's solid copper past the channel's end.
    // The first at the stub's length from the gap's centre (`solve::probe::balanced_stub`).
    let d1 = w / 2.0 + c + pad / 2.0 + VIA_WEB;
    let short1 = point_at(&left, &sl, s_exit - d1).0;
    // The second a straight pitch on (the ring curves: its arc is longer than the chord).
    let mut d2 = d1 + s.pitch_min + offsets::PITCH_MARGIN;
    while (point_at(&left, &sl, s_exit - d2).0 - short1).hypot()
        < s.pitch_min + offsets::PITCH_MARGIN
    {
        d2 += offsets::SEARCH_STEP / 10.0;
    }
    for d in [d1, d2] {
        let q = point_at(&left, &sl, s_exit - d).0;
        for at in [q, mirror(q)] {
            placer.vias.push(Via {
                at,
                drill: p.vias.drill,
                pad,
                role: ViaRole::Short,
            });
        }
    }
    let shorts: Vec<Point> = placer
        .vias
        .iter()
        .filter(|v| v.role == ViaRole::Short)
        .map(|v| v.at)
        .collect();
    placer.split_rows(shape, -f, ViaRole::InnerRow, &shorts);
    placer.split_rows(shape, f, ViaRole::OuterRow, &shorts);
    placer.signal_ring_pair(crate::solve::launch::signal_ring_radius(p, &s.launch));
    placer.pad_vias();
    placer.fences(&feed);
    let vias = placer.vias;

    // --- Silkscreen: the text between the two lines, below their jogs.
    let (silk_top, silk_bottom) = silk(p, s, edge_y, jog_start_y.min(bottom - hr), hw);

    Board {
        bbox: bbox(&outline),
        trace_path,
        exit_index,
        entry_index,
        trace_width: w,
        top_path,
        launch: LaunchCuts::of(p, s),
        shield,
        loop_head: Some(LoopHead { gaps, interior }),
        mirrored: true,
        turns: Vec::new(),
        joins: Vec::new(),
        vias,
        pads,
        holes,
        outline,
        silk_top,
        silk_bottom,
        edge_y,
    }
}

/// Items of a footprint centred on the axis, moved to x = −`x_c`, followed by their mirror
/// images about the axis (centred on x = +`x_c`).
fn paired<T>(
    items: &[T],
    x_c: f64,
    at: impl Fn(&T) -> Point,
    with: impl Fn(&T, Point) -> T,
) -> Vec<T> {
    let left = |t: &T| Point::new(at(t).x - x_c, at(t).y);
    let mut out: Vec<T> = items.iter().map(|t| with(t, left(t))).collect();
    out.extend(items.iter().map(|t| with(t, mirror(left(t)))));
    out
}
