//! The panel's geometry: boards placed in rows between rails, the router's channels round them,
//! breakaway tabs with their perforation holes placed by rule, fiducials and tooling holes.
//!
//! Panel coordinates: origin at the panel's lower-left corner, x to the right, y up; a board's
//! own coordinates map to the panel's by adding its offset (boards are never rotated, so that a
//! board's files and its place on the panel differ by a translation only).
//!
//! The rule for tabs: a tab sits on a straight stretch of a board's outer edge, clear (by a
//! router bit's diameter) of every board's keep-outs (a probe's loop, its tip and inside it; the
//! connector edges and the connector's footprint near them), and reaching across the router's
//! channel to panel material or to a neighbouring board. Each straight stretch that is long
//! enough gets one tab, or one per [`TAB_SPAN`] of its length; a board needs [`MIN_TABS`].

use crate::error::{Error, FieldError};
use crate::geom::{rect, round_buffer};
use crate::model::panel::{Panel, Rails, defaults};
use geo::{
    BooleanOps, BoundingRect, Contains, Coord, Intersects, LineString, MultiPolygon, Polygon,
};
use kurbo::{Point, Vec2};

/// The most board edge one tab holds, mm: a longer straight stretch gets more tabs (common
/// practice: a tab every 50 to 75 mm; no source).
pub const TAB_SPAN: f64 = 60.0;
/// Tabs every board needs: one tab lets a board swing and crack off in routing (common
/// practice, no source).
pub const MIN_TABS: usize = 2;
/// Step of the search for tab places along a straight stretch, mm.
const TAB_STEP: f64 = 0.25;
/// How far beyond the channel a tab's far end is tested for material, mm.
const REACH_PROBE: f64 = 0.05;

/// Rounds to the 1 nm grid the artwork uses.
fn snap_nm(v: f64) -> f64 {
    (v * 1e6).round() / 1e6
}

/// A board to be panelled, in its own coordinates.
#[derive(Debug, Clone)]
pub struct Blank {
    /// The board's name on the panel (with its copy number when there are copies).
    pub name: String,
    /// The board outline: exterior and milled interiors.
    pub outline: Polygon<f64>,
    /// Where no tab may touch, each with its reason.
    pub keep_outs: Vec<(Polygon<f64>, String)>,
}

/// A breakaway tab, in panel coordinates.
#[derive(Debug, Clone, PartialEq)]
pub struct Tab {
    /// Centre of the tab on the board's edge.
    pub at: Point,
    /// Unit vector along the edge.
    pub along: Vec2,
    /// Unit outward normal.
    pub out: Vec2,
    /// Width along the edge.
    pub width: f64,
    /// The uncut bridge: the tab's width across the router's channel.
    pub bridge: Polygon<f64>,
    /// Perforation hole centres.
    pub holes: Vec<Point>,
}

/// A board placed on the panel.
#[derive(Debug, Clone)]
pub struct Placed {
    /// Index into the blanks.
    pub blank: usize,
    /// Board coordinates + offset = panel coordinates.
    pub offset: Vec2,
    /// The outline in panel coordinates.
    pub outline: Polygon<f64>,
    /// The keep-outs in panel coordinates.
    pub keep_outs: Vec<(Polygon<f64>, String)>,
    /// Its tabs.
    pub tabs: Vec<Tab>,
}

/// The laid-out panel.
#[derive(Debug, Clone)]
pub struct PanelLayout {
    /// Panel size (x, y), mm.
    pub size: (f64, f64),
    /// The boards.
    pub placed: Vec<Placed>,
    /// The rails, as rectangles.
    pub rails: Vec<Polygon<f64>>,
    /// Fiducial centres.
    pub fiducials: Vec<Point>,
    /// Tooling hole centres.
    pub tooling: Vec<Point>,
    /// What the router removes: each board's channel less the tabs, and milled interiors.
    pub routed: MultiPolygon<f64>,
    /// Enclosed waste milled out as pockets (already in `routed`).
    pub pockets: Vec<Polygon<f64>>,
    /// The board edges the router cuts: each board's outline broken where its tabs are.
    pub cut_edges: Vec<Vec<Point>>,
}

fn translate(p: &Polygon<f64>, v: Vec2) -> Polygon<f64> {
    use geo::Translate;
    p.translate(v.x, v.y)
}

fn pt(c: Coord<f64>) -> Point {
    Point::new(c.x, c.y)
}

/// Lays out `blanks` (in order, in rows) on a panel.
pub fn layout(panel: &Panel, blanks: &[Blank]) -> Result<PanelLayout, Error> {
    let s = panel.spacing;
    let side = match panel.rails {
        Rails::All => panel.rail,
        Rails::TopBottom => 0.0,
    };
    let x_start = side + s;
    let x_limit = panel.max_size.0 - side - s;
    let mut placed = Vec::new();
    let (mut x, mut y, mut row_h, mut width) = (x_start, panel.rail + s, 0.0_f64, 0.0_f64);
    for (i, b) in blanks.iter().enumerate() {
        let r = b.outline.bounding_rect().ok_or_else(|| {
            Error::Invalid(vec![FieldError::new(
                "panel",
                &b.name,
                "a board with an empty outline cannot be panelled",
            )])
        })?;
        let (w, h) = (r.width(), r.height());
        if x + w > x_limit + 1e-9 && x > x_start {
            x = x_start;
            y += row_h + s;
            row_h = 0.0;
        }
        if x + w > x_limit + 1e-9 {
            return Err(Error::Invalid(vec![FieldError::new(
                "panel.max_width_mm",
                crate::math::fmt_num(panel.max_size.0),
                format!(
                    "board '{}' is {w:.1} mm wide and needs a panel at least {:.1} mm wide \
                     (rails and spacing included)",
                    b.name,
                    w + 2.0 * (side + s)
                ),
            )]));
        }
        let offset = Vec2::new(snap_nm(x - r.min().x), snap_nm(y - r.min().y));
        placed.push(Placed {
            blank: i,
            offset,
            outline: translate(&b.outline, offset),
            keep_outs: b
                .keep_outs
                .iter()
                .map(|(k, why)| (translate(k, offset), why.clone()))
                .collect(),
            tabs: Vec::new(),
        });
        x += w + s;
        width = width.max(x);
        row_h = row_h.max(h);
    }
    let size = (width + side, y + row_h + s + panel.rail);
    if size.0 > panel.max_size.0 + 1e-9 || size.1 > panel.max_size.1 + 1e-9 {
        return Err(Error::Invalid(vec![FieldError::new(
            "panel.max_height_mm",
            crate::math::fmt_num(panel.max_size.1),
            format!(
                "the boards need a panel of {:.1} × {:.1} mm, above the largest allowed \
                 ({} × {} mm): fewer copies, a larger panel or a second panel",
                size.0,
                size.1,
                crate::math::fmt_num(panel.max_size.0),
                crate::math::fmt_num(panel.max_size.1)
            ),
        )]));
    }
    let (pw, ph) = size;
    let mut rails = vec![
        rect(0.0, 0.0, pw, panel.rail),
        rect(0.0, ph - panel.rail, pw, ph),
    ];
    if panel.rails == Rails::All {
        rails.push(rect(0.0, 0.0, panel.rail, ph));
        rails.push(rect(pw - panel.rail, 0.0, pw, ph));
    }
    let r2 = panel.rail / 2.0;
    let tooling = if panel.tooling_hole > 0.0 {
        vec![
            Point::new(r2, r2),
            Point::new(pw - r2, r2),
            Point::new(r2, ph - r2),
            Point::new(pw - r2, ph - r2),
        ]
    } else {
        Vec::new()
    };
    // Fiducials inboard of the corner holes, three of the four corners so that the panel's
    // orientation is unambiguous to a vision system.
    let fx = r2 + panel.tooling_hole / 2.0 + defaults::FIDUCIAL_CLEAR / 2.0 + 2.0;
    let fiducials = if panel.fiducials {
        vec![
            Point::new(fx, r2),
            Point::new(pw - fx, r2),
            Point::new(fx, ph - r2),
        ]
    } else {
        Vec::new()
    };
    // The router's channel round each board (a bit's diameter wide) and the milled interiors.
    // The channel's outer edge is grown from the outline simplified to the arc tolerance
    // (Ramer–Douglas–Peucker; its finely flattened arcs as runs of chords far shorter than
    // the bit, whose offset bands overlap by the dozen, cost the offset's overlay most of its
    // work): that edge comes in by at most the tolerance (0.5 µm); the inner edge is the
    // outline itself.
    let d = panel.router;
    let channels: Vec<MultiPolygon<f64>> = placed
        .iter()
        .map(|p| {
            use geo::Simplify;
            let ext = MultiPolygon(vec![Polygon::new(p.outline.exterior().clone(), vec![])]);
            round_buffer(&ext.simplify(crate::geom::shape::ARC_TOLERANCE), d).difference(&ext)
        })
        .collect();
    let interiors: Vec<Polygon<f64>> = placed
        .iter()
        .flat_map(|p| {
            p.outline
                .interiors()
                .iter()
                .map(|r| Polygon::new(r.clone(), vec![]))
        })
        .collect();
    let panel_rect = rect(0.0, 0.0, pw, ph);
    // Material a tab may reach: inside the panel, in no channel and no milled interior (or on
    // another board).
    // Each channel and interior with its bounding box, which settles most points without
    // walking the outline.
    let boxed = |m: Option<geo::Rect<f64>>| m.map(|r| (r.min(), r.max()));
    let channel_boxes: Vec<_> = channels.iter().map(|c| boxed(c.bounding_rect())).collect();
    let interior_boxes: Vec<_> = interiors.iter().map(|c| boxed(c.bounding_rect())).collect();
    let in_box = |b: &Option<(Coord<f64>, Coord<f64>)>, q: Point| {
        b.is_some_and(|(lo, hi)| q.x >= lo.x && q.x <= hi.x && q.y >= lo.y && q.y <= hi.y)
    };
    let reaches = |q: Point| -> bool {
        let g = geo::Point::new(q.x, q.y);
        panel_rect.contains(&g)
            && !channels
                .iter()
                .zip(&channel_boxes)
                .any(|(c, b)| in_box(b, q) && c.contains(&g))
            && !interiors
                .iter()
                .zip(&interior_boxes)
                .any(|(c, b)| in_box(b, q) && c.contains(&g))
    };
    // Every board's keep-outs: a tab may not land on a neighbour's loop or connector edge
    // either.
    let keep_outs: Vec<(Polygon<f64>, String)> = placed
        .iter()
        .flat_map(|p| p.keep_outs.iter().cloned())
        .collect();
    for i in 0..placed.len() {
        let tabs = tabs_of(panel, &placed[i], &keep_outs, &reaches);
        if tabs.len() < MIN_TABS {
            let why: Vec<String> = placed[i].keep_outs.iter().map(|k| k.1.clone()).collect();
            return Err(Error::Invalid(vec![FieldError::new(
                "panel",
                &blanks[placed[i].blank].name,
                format!(
                    "this board cannot be tabbed: {} place(s) on its straight edges are clear of \
                     {} by a router bit ({} mm) and face panel material across the channel, and \
                     a board needs {MIN_TABS}; a longer handle, a wider spacing_mm or rails on \
                     all sides give it room",
                    tabs.len(),
                    if why.is_empty() {
                        "nothing".to_string()
                    } else {
                        why.join(" and ")
                    },
                    crate::math::fmt_num(d)
                ),
            )]));
        }
        placed[i].tabs = tabs;
    }
    let bridges = MultiPolygon(
        placed
            .iter()
            .flat_map(|p| p.tabs.iter().map(|t| t.bridge.clone()))
            .collect(),
    );
    // The channels united in one overlay (not one board at a time).
    let mut routed = geo::unary_union(channels.iter().flat_map(|c| c.0.iter()));
    routed = routed
        .difference(&bridges)
        .union(&MultiPolygon(interiors))
        .intersection(&MultiPolygon(vec![panel_rect.clone()]));
    // Waste the channels enclose on every side (between two loops and a board above them,
    // say) would come loose and fly: it is milled out as a pocket.
    let material = MultiPolygon(vec![panel_rect.clone()]).difference(&routed);
    let body = (0..material.0.len()).max_by(|&a, &b| {
        use geo::Area;
        material.0[a]
            .unsigned_area()
            .total_cmp(&material.0[b].unsigned_area())
    });
    let board_points: Vec<geo::Point<f64>> = placed
        .iter()
        .filter_map(|p| geo::InteriorPoint::interior_point(&p.outline))
        .collect();
    let pockets: Vec<Polygon<f64>> = material
        .0
        .iter()
        .enumerate()
        .filter(|(k, m)| Some(*k) != body && !board_points.iter().any(|q| m.contains(q)))
        .map(|(_, m)| m.clone())
        .collect();
    if !pockets.is_empty() {
        routed = routed.union(&MultiPolygon(pockets.clone()));
    }
    let cut_edges = placed.iter().flat_map(cut_edges_of).collect();
    Ok(PanelLayout {
        size,
        placed,
        rails,
        fiducials,
        tooling,
        routed,
        pockets,
        cut_edges,
    })
}

/// Whether the exterior ring runs counter-clockwise.
fn ccw(ls: &LineString<f64>) -> bool {
    let mut a = 0.0;
    for w in ls.0.windows(2) {
        a += w[0].x * w[1].y - w[1].x * w[0].y;
    }
    a > 0.0
}

/// The tabs of one placed board.
fn tabs_of(
    panel: &Panel,
    p: &Placed,
    keep_outs: &[(Polygon<f64>, String)],
    reaches: &dyn Fn(Point) -> bool,
) -> Vec<Tab> {
    let d = panel.router;
    let tw = panel.tab_width;
    let ring = p.outline.exterior();
    let turn = if ccw(ring) { 1.0 } else { -1.0 };
    let mut tabs = Vec::new();
    for w in ring.0.windows(2) {
        let (a, b) = (pt(w[0]), pt(w[1]));
        let len = (b - a).hypot();
        let margin = tw / 2.0 + d / 2.0;
        if len < 2.0 * margin {
            continue;
        }
        let along = (b - a) / len;
        // Outward normal: to the right of a counter-clockwise ring.
        let out = Vec2::new(along.y, -along.x) * turn;
        let fits = |s: f64| -> bool {
            let c = a + along * s;
            // The tab grown by half a bit all round must clear every board's keep-outs.
            let grown = quad(c, along, out, tw / 2.0 + d / 2.0, -d / 2.0, d * 1.5);
            if keep_outs.iter().any(|(k, _)| k.intersects(&grown)) {
                return false;
            }
            // Its far end, across the channel, must land on material or a board: tested at
            // its middle and near both ends.
            [-0.4, 0.0, 0.4]
                .iter()
                .all(|f| reaches(c + along * (f * tw) + out * (d + REACH_PROBE)))
        };
        // The longest run of places that fit.
        let n = ((len - 2.0 * margin) / TAB_STEP).floor() as usize;
        let (mut best, mut run_start) = ((0.0, -1.0), None::<f64>);
        for k in 0..=n + 1 {
            let s = margin + k as f64 * TAB_STEP;
            let ok = k <= n && fits(s);
            match (ok, run_start) {
                (true, None) => run_start = Some(s),
                (false, Some(s0)) => {
                    let s1 = s - TAB_STEP;
                    if s1 - s0 > best.1 - best.0 {
                        best = (s0, s1);
                    }
                    run_start = None;
                }
                _ => {}
            }
        }
        if best.1 < best.0 {
            continue;
        }
        let span = best.1 - best.0;
        let count = ((span + tw) / TAB_SPAN).ceil().max(1.0) as usize;
        for k in 0..count {
            let s = if count == 1 {
                0.5 * (best.0 + best.1)
            } else {
                best.0 + span * k as f64 / (count - 1) as f64
            };
            let c = a + along * s;
            tabs.push(tab(panel, c, along, out));
        }
    }
    tabs
}

/// The quadrilateral of half-width `hw` along `along` about `c`, from `n0` to `n1` along
/// `out`.
fn quad(c: Point, along: Vec2, out: Vec2, hw: f64, n0: f64, n1: f64) -> Polygon<f64> {
    crate::geom::polygon(&[
        c - along * hw + out * n0,
        c + along * hw + out * n0,
        c + along * hw + out * n1,
        c - along * hw + out * n1,
    ])
}

/// A tab at `c` on the edge: its bridge across the channel and its perforation holes, a row
/// just outside the board's edge (each hole's edge touching it), so that the board's copper
/// keeps its edge clearance and the break runs along the edge; the nubs left are filed flush.
fn tab(panel: &Panel, c: Point, along: Vec2, out: Vec2) -> Tab {
    let d = panel.router;
    let tw = panel.tab_width;
    let (hd, pitch) = (panel.perforation_drill, panel.perforation_pitch);
    let count = ((tw - hd) / pitch).floor() as usize + 1;
    let first = -(count as f64 - 1.0) / 2.0 * pitch;
    let holes = (0..count)
        .map(|k| {
            let q = c + along * (first + k as f64 * pitch) + out * (hd / 2.0);
            Point::new(snap_nm(q.x), snap_nm(q.y))
        })
        .collect();
    Tab {
        at: c,
        along,
        out,
        width: tw,
        bridge: quad(c, along, out, tw / 2.0, -1e-3, d + 1e-3),
        holes,
    }
}

/// A board's outline as the router cuts it: the exterior broken at each tab, the milled
/// interiors whole.
fn cut_edges_of(p: &Placed) -> Vec<Vec<Point>> {
    let ring: Vec<Point> = p.outline.exterior().coords().map(|c| pt(*c)).collect();
    // Cut points: (segment index, distance along it) of each tab's ends.
    let mut gaps: Vec<(usize, f64, f64)> = Vec::new();
    for t in &p.tabs {
        for (i, w) in ring.windows(2).enumerate() {
            let (a, b) = (w[0], w[1]);
            let len = (b - a).hypot();
            if len == 0.0 {
                continue;
            }
            let s = (t.at - a).dot((b - a) / len);
            let off = (t.at - (a + (b - a) / len * s)).hypot();
            if off < 1e-6 && s > 0.0 && s < len {
                gaps.push((i, s - t.width / 2.0, s + t.width / 2.0));
                break;
            }
        }
    }
    gaps.sort_by(|x, y| x.0.cmp(&y.0).then(x.1.total_cmp(&y.1)));
    let mut out: Vec<Vec<Point>> = Vec::new();
    let mut cur: Vec<Point> = vec![ring[0]];
    for (i, w) in ring.windows(2).enumerate() {
        let (a, b) = (w[0], w[1]);
        let len = (b - a).hypot();
        for g in gaps.iter().filter(|g| g.0 == i) {
            let u = (b - a) / len;
            cur.push(a + u * g.1);
            out.push(std::mem::take(&mut cur));
            cur.push(a + u * g.2);
        }
        cur.push(b);
    }
    // The last piece runs on into the first where the ring was not broken at its start.
    if !gaps.is_empty() && !out.is_empty() {
        let first = out.remove(0);
        cur.extend(first.into_iter().skip(1));
    }
    out.push(cur);
    for r in p.outline.interiors() {
        out.push(r.coords().map(|c| pt(*c)).collect());
    }
    out.into_iter()
        .map(|v| {
            v.into_iter()
                .map(|q| Point::new(snap_nm(q.x), snap_nm(q.y)))
                .collect()
        })
        .collect()
}
