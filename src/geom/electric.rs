//! The electric-field probe's board: the shielded line up the handle to a disc electrode at the
//! tip, exposed on both outer layers and joined through the board by a via, every shield layer
//! standing a clearance back from it, a ring of ground vias round that clearance.
//!
//! Coordinates: origin at the electrode's centre, the handle along −y (tip up, connector down),
//! everything mirror-symmetric about x = 0 (the line runs on the axis).

use super::offsets;
use super::probe::{bbox, connector_pads, head_and_handle, outline_around};
use super::region::*;
use super::silk::*;
use super::vias::*;
use super::*;
use crate::model::probe::{Electrode, Probe};
use crate::solve::probe::{RING_RIM, SolvedProbe, VIA_WEB};
use geo::{BooleanOps, MultiPolygon};
use kurbo::Point;

/// Radius of the ring of ground vias round the electrode, mm: the clearance's edge, half a via
/// pad, the via web and the keep margin.
pub fn electrode_ring_radius(p: &Probe, e: &Electrode) -> f64 {
    e.diameter / 2.0 + e.clearance + p.vias.pad / 2.0 + VIA_WEB + offsets::KEEP_MARGIN
}

/// Radius of the probe's face (the tip's copper), mm: the via ring with its pads and rim, and
/// never narrower than the handle.
pub fn face_radius(p: &Probe, e: &Electrode) -> f64 {
    (electrode_ring_radius(p, e) + p.vias.pad / 2.0 + RING_RIM).max(p.handle.width / 2.0)
}

/// Builds the board of an electric probe.
pub(super) fn build(p: &Probe, s: &SolvedProbe, e: Electrode) -> Board {
    let w = s.trace_width;
    let pad = p.vias.pad;
    let hw = p.handle.width / 2.0;
    let r_clear = e.diameter / 2.0 + e.clearance;
    let r_face = face_radius(p, &e);

    // --- Board frame: the handle's length runs from the face to the connector edge.
    let edge_y = -r_face - p.handle.length;
    let cp_len = p.connector.centre_pad_length;
    let sv = Point::new(0.0, edge_y + cp_len + s.launch.link_length);
    let centre = Point::ZERO;
    // The line: from the signal via straight up the axis to the electrode's via.
    let trace_path = vec![sv, centre];
    let top_path = vec![
        Point::new(
            0.0,
            edge_y + cp_len - 0.5 * p.connector.centre_pad_width.min(cp_len),
        ),
        sv,
    ];

    // --- Shield: the face (a disc) ∪ the handle, pulled back from the board edge, closed where
    // they meet (as the loop's ring and handle are), the clearance round the electrode taken
    // out on every layer.
    let extent = head_and_handle(p, circle(centre, r_face), edge_y, 0.0);
    let clearance = circle(centre, r_clear);
    let shield = MultiPolygon(vec![extent.clone()]).difference(&MultiPolygon(vec![clearance]));

    let outline = outline_around(p, &extent, edge_y);
    let (pads, holes) = connector_pads(p, edge_y);

    // --- Vias: the signal via, the electrode's via, the face ring, then as on a loop's handle.
    let mut placer = ViaPlacer::new(p, s, trace_path.clone(), &top_path, &shield, &pads, sv);
    placer.vias.push(Via {
        at: centre,
        drill: p.vias.drill,
        pad,
        role: ViaRole::Electrode,
    });
    placer.face_ring(centre, electrode_ring_radius(p, &e));
    placer.signal_ring(crate::solve::launch::signal_ring_radius(p, &s.launch));
    placer.pad_vias();
    placer.fences(&trace_path);
    let vias = placer.vias;

    let (silk_top, silk_bottom) = silk(p, s, edge_y, -r_face, hw);
    Board {
        bbox: bbox(&outline),
        exit_index: trace_path.len() - 1,
        entry_index: trace_path.len() - 1,
        trace_path,
        trace_width: w,
        top_path,
        launch: LaunchCuts::of(p, s),
        shield,
        loop_head: None,
        mirrored: false,
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
