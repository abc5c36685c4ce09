//! Layer artwork of a test-line fixture: the line and the ground pour on the line's layer,
//! planes on every other layer, connector pads, via lands, mask openings over the pads, the
//! legend on the line's side, the outline and the drills. Two nets: `LINE` and `GND`.

use super::{
    Artwork, CopperLayer, Flash, Nets, PadFunction, Shape, Side, mask_opening, pad_flash,
    ring_points, snap, snap_pt, snap_regions, via_drills,
};
use crate::geom::fixture::FixtureBoard;
use crate::geom::{Pad, rect};
use crate::model::fixture::Fixture;
use geo::{BooleanOps, MultiPolygon};
use kurbo::Point;

/// The test line's net.
pub const LINE_NET: &str = "LINE";
/// The ground net.
pub const GND_NET: &str = "GND";

/// Turns the fixture board into layer artwork.
pub fn compose(f: &Fixture, b: &FixtureBoard) -> Artwork {
    let n_layers = f.stackup.copper_count();
    let line_side_top = f.on_top();
    let mut copper = Vec::new();
    for n in 1..=n_layers {
        let side = Side::of(n, n_layers);
        let is_line = n == f.line_layer;
        let mut regions = if is_line {
            b.pour.union(&MultiPolygon(vec![b.line.clone()]))
        } else {
            b.plane.clone()
        };
        regions = snap_regions(&regions);
        let mut flashes: Vec<Flash> = b
            .vias
            .iter()
            .map(|v| Flash {
                at: snap_pt(v.at),
                shape: Shape::Circle(snap(v.pad)),
                function: PadFunction::Via,
            })
            .collect();
        let on_this_side = |pd: &Pad| (pd.top && n == 1) || (!pd.top && n == n_layers);
        flashes.extend(b.pads.iter().filter(|pd| on_this_side(pd)).map(pad_flash));
        copper.push(CopperLayer {
            n,
            side,
            signal: is_line,
            mixed: is_line,
            regions,
            flashes,
        });
    }
    let exp = f.fab.mask_expansion;
    let opening = |pd: &Pad| mask_opening(pd, exp);
    let mask_top = b.pads.iter().filter(|pd| pd.top).map(opening).collect();
    let mask_bottom = b.pads.iter().filter(|pd| !pd.top).map(opening).collect();
    let silk: Vec<Vec<Point>> = b
        .silk
        .iter()
        .map(|st| {
            let mut st: Vec<Point> = st.iter().map(|q| snap_pt(*q)).collect();
            st.dedup();
            st
        })
        .collect();
    let (silk_top, silk_bottom) = if line_side_top {
        (silk, Vec::new())
    } else {
        (Vec::new(), silk)
    };
    let drills = via_drills(&b.vias);
    // The LINE net's area: the line and the centre pads, grown by a hair.
    let centre_pads: Vec<_> = b
        .pads
        .iter()
        .filter(|pd| pd.centre)
        .map(|pd| {
            rect(
                pd.at.x - pd.w / 2.0 - 1e-3,
                pd.at.y - pd.h / 2.0 - 1e-3,
                pd.at.x + pd.w / 2.0 + 1e-3,
                pd.at.y + pd.h / 2.0 + 1e-3,
            )
        })
        .collect();
    let signal_area = crate::geom::round_buffer(&MultiPolygon(vec![b.line.clone()]), 1e-3)
        .union(&MultiPolygon(centre_pads));
    Artwork {
        copper,
        mask_top,
        mask_bottom,
        silk_top,
        silk_bottom,
        silk_width: snap(f.fab.silk_width),
        profile: vec![ring_points(b.outline.exterior())],
        drills,
        gap_rects: Vec::new(),
        nets: Nets {
            default: Some(GND_NET.to_string()),
            areas: vec![(LINE_NET.to_string(), signal_area)],
        },
        layer_roles: ("test line", "ground"),
    }
}
