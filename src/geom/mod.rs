//! The geometry core: from a probe and its solved values to the board model (paths, regions,
//! vias, pads, outline, silkscreen strokes), in millimetres.
//!
//! Coordinates: origin at the loop centre, loop axis along +y (tip up, connector down), outline
//! symmetric about x = 0. Everything is mirror-symmetric about x = 0 except the **feed** (the
//! line enters the loop at x = −e) and the **short** (the trace ends at x = +e and is tied to
//! the shield there), with e = half the fence offset, and the vias that follow them (the feed's
//! via fences and the short vias). The shield copper itself stays symmetric: vias sit inside
//! the pour, and the signal via is on the axis.

pub mod fixture;
pub mod font;
/// The loop centreline and its offsets (owned by the model; kept here under its old name).
pub use crate::model::centreline as shape;

use crate::model::probe::{LoopShape, Probe};
use crate::solve::probe::{SolvedProbe, VIA_WEB};
use geo::{BooleanOps, Coord, LineString, MultiPolygon, Polygon};
use kurbo::{Affine, Point, Vec2};
use shape::{arc_points, arclengths, closed, dist_to_polyline, left_half, mirror, point_at};

/// What a via is for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ViaRole {
    /// Stitching row inside the trace, around the loop.
    InnerRow,
    /// Stitching row outside the trace, around the loop.
    OuterRow,
    /// Fence along the feed line in the handle.
    Fence,
    /// Ties the trace's far end to the shield.
    Short,
    /// Carries the signal from the loop's layer to the connector's layer.
    Signal,
    /// Ground via around the signal via.
    SignalGround,
    /// Ground via beside a connector ground pad, joining its pad to the shield planes.
    PadGround,
}

/// A plated via (through all layers).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Via {
    /// Centre, mm.
    pub at: Point,
    /// Finished drill, mm.
    pub drill: f64,
    /// Pad diameter, mm.
    pub pad: f64,
    /// Role.
    pub role: ViaRole,
}

/// A rectangular pad on an outer layer.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Pad {
    /// Centre, mm.
    pub at: Point,
    /// Size along x, mm.
    pub w: f64,
    /// Size along y, mm.
    pub h: f64,
    /// On the top (true) or bottom (false) layer.
    pub top: bool,
    /// The connector's centre pad (false: a ground pad).
    pub centre: bool,
}

/// A plated hole that is not a via (connector ground legs).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Hole {
    /// Centre, mm.
    pub at: Point,
    /// Finished drill, mm.
    pub drill: f64,
    /// Pad diameter on the outer layers, mm.
    pub pad: f64,
}

/// The board model of one probe.
#[derive(Debug, Clone)]
pub struct Board {
    /// Signal-layer trace centreline: from the signal via, through the feed, around the loop, to
    /// the end of the short stub.
    pub trace_path: Vec<Point>,
    /// Index in `trace_path` of the loop exit E_out (the channel around the trace ends there).
    pub exit_index: usize,
    /// Index in `trace_path` of the loop entry E_in.
    pub entry_index: usize,
    /// Trace width, mm.
    pub trace_width: f64,
    /// Top-layer link centreline from the connector's centre pad to the signal via.
    pub top_path: Vec<Point>,
    /// Top-layer link width, mm.
    pub top_width: f64,
    /// Clearance from traces to coplanar ground, mm.
    pub clearance: f64,
    /// Gap from the connector's centre pad to the top-layer ground, mm.
    pub pad_gap: f64,
    /// Antipad diameter of the signal via's barrel, between layer 1 and the loop's layer, mm.
    pub barrel_antipad_d: f64,
    /// Antipad diameter of the signal via's stub below the loop's layer, mm.
    pub stub_antipad_d: f64,
    /// Copper layers with a relief under the centre pad (the pad grown by `pad_gap` across,
    /// from the board edge to the pad's inner end).
    pub relief_layers: Vec<usize>,
    /// Shield outline (ring ∪ handle) before the gap and clearances, pulled back from the edge.
    pub shield: MultiPolygon<f64>,
    /// The shield gap: x from −gap/2 to +gap/2, y from `gap_y.0` to `gap_y.1`.
    pub gap_y: (f64, f64),
    /// Gap width, mm.
    pub gap: f64,
    /// Every via.
    pub vias: Vec<Via>,
    /// Connector pads.
    pub pads: Vec<Pad>,
    /// Connector ground-leg holes.
    pub holes: Vec<Hole>,
    /// Board outline: exterior ring, and the milled interior if any (closed, counter-clockwise).
    pub outline: Polygon<f64>,
    /// Area inside the loop where no copper may be.
    pub interior: Polygon<f64>,
    /// Silkscreen strokes on the top side.
    pub silk_top: Vec<Vec<Point>>,
    /// Silkscreen strokes on the bottom side (as seen from the top).
    pub silk_bottom: Vec<Vec<Point>>,
    /// y of the board edge at the connector, mm.
    pub edge_y: f64,
    /// Board bounding box (min, max), mm.
    pub bbox: (Point, Point),
}

/// A closed polygon from points (the ring is closed by geo).
pub fn polygon(pts: &[Point]) -> Polygon<f64> {
    Polygon::new(
        LineString::from(
            pts.iter()
                .map(|p| Coord { x: p.x, y: p.y })
                .collect::<Vec<_>>(),
        ),
        vec![],
    )
}

/// A circle polygon.
///
/// The vertices start at the top, so a circle on the axis is exactly its own mirror image.
pub fn circle(c: Point, r: f64) -> Polygon<f64> {
    let a0 = std::f64::consts::FRAC_PI_2;
    let mut pts = arc_points(c, r, a0, a0 + std::f64::consts::TAU);
    pts.pop();
    polygon(&pts)
}

/// An axis-aligned rectangle polygon.
pub fn rect(x0: f64, y0: f64, x1: f64, y1: f64) -> Polygon<f64> {
    polygon(&[
        Point::new(x0, y0),
        Point::new(x1, y0),
        Point::new(x1, y1),
        Point::new(x0, y1),
    ])
}

/// The region within `r` of a polyline, with flat (butt) ends and round joins.
pub fn stroke_butt(path: &[Point], r: f64) -> MultiPolygon<f64> {
    use geo::algorithm::buffer::{Buffer, BufferStyle, LineCap, LineJoin};
    let ls = LineString::from(
        path.iter()
            .map(|p| Coord { x: p.x, y: p.y })
            .collect::<Vec<_>>(),
    );
    let step = 2.0 * (1.0 - shape::ARC_TOLERANCE / r).clamp(-1.0, 1.0).acos();
    ls.buffer_with_style(
        BufferStyle::new(r)
            .line_cap(LineCap::Butt)
            .line_join(LineJoin::Round(step.max(0.01))),
    )
}

/// The region within `r` of a polyline, with round ends (a silkscreen stroke).
pub fn stroke_round(path: &[Point], r: f64) -> MultiPolygon<f64> {
    use geo::algorithm::buffer::{Buffer, BufferStyle, LineCap, LineJoin};
    if path.len() == 1 {
        return MultiPolygon(vec![circle(path[0], r)]);
    }
    let ls = LineString::from(
        path.iter()
            .map(|p| Coord { x: p.x, y: p.y })
            .collect::<Vec<_>>(),
    );
    let step = 2.0 * (1.0 - shape::ARC_TOLERANCE / r).clamp(-1.0, 1.0).acos();
    let a = step.max(0.01);
    ls.buffer_with_style(
        BufferStyle::new(r)
            .line_cap(LineCap::Round(a))
            .line_join(LineJoin::Round(a)),
    )
}

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
    let k = (0..left.len() - 1)
        .rev()
        .find(|&i| left[i].x <= -e && left[i + 1].x > -e)
        .expect("the loop is wider than the feed offset (checked in solve)");
    let (a, b) = (left[k], left[k + 1]);
    let t = (-e - a.x) / (b.x - a.x);
    let e_in = Point::new(-e, a.y + t * (b.y - a.y));
    // Flattened-curve points very close to the entry or exit would make segments too short to
    // have a direction (the offset of such a segment is noise): skip them.
    let far = |q: &Point| (*q - e_in).hypot() > 1e-3;
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
    trace_path.extend(loop_part.iter().skip(1).copied());
    let exit_index = trace_path.len() - 1;
    let e_out = *trace_path.last().unwrap();
    let stub_end = Point::new(e, e_out.y - (w / 2.0 + c + 2.0 * pad));
    trace_path.push(stub_end);

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
    let r_close = p.fab.min_space.max(p.clearance) + 0.05;
    let extent = MultiPolygon(vec![polygon(&closed(shape, hr))]).union(&MultiPolygon(vec![rect(
        -hw,
        edge_y + cte,
        hw,
        bottom,
    )]));
    let extent = largest(&symmetrise(&round_buffer(
        &round_buffer(&extent, r_close),
        -r_close,
    )));
    let shield =
        MultiPolygon(vec![extent.clone()]).difference(&MultiPolygon(vec![interior.clone()]));

    // --- Gap over the top of the ring.
    let top = left[0].y;
    let gap_y = (top - hr - 0.5, top + hr + 0.5);

    // --- Outline: the copper extent grown by the copper-to-edge rule (round joins), which puts
    // the connector edge at `edge_y`.
    let grown = largest(&symmetrise(&round_buffer(&MultiPolygon(vec![extent]), cte)));
    let mut outline = Polygon::new(grown.exterior().clone(), vec![]);
    if p.mill_interior {
        let cut = closed(shape, -hr - cte);
        outline.interiors_push(LineString::from(
            cut.iter()
                .map(|q| Coord { x: q.x, y: q.y })
                .collect::<Vec<_>>(),
        ));
    }

    // --- Connector pads and holes.
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
                pad: (con.ground_hole_drill + 2.0 * p.fab.min_annular_ring.max(0.15))
                    .min(con.ground_pad_width),
            });
        }
    }

    // --- Vias.
    let mut placer = ViaPlacer {
        p,
        s,
        vias: Vec::new(),
        trace: trace_path[..=exit_index].to_vec(),
        top_path: top_path.clone(),
        shield: shield.clone(),
        pads: pads.clone(),
        sv,
    };
    placer.vias.push(Via {
        at: sv,
        drill: p.vias.drill,
        pad,
        role: ViaRole::Signal,
    });
    // Short vias on the stub, in solid ground below the channel.
    let short1 = Point::new(e, e_out.y - (w / 2.0 + c + pad / 2.0 + VIA_WEB));
    for q in [short1, Point::new(e, short1.y - s.pitch_min - 1e-4)] {
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
    let vias = placer.vias;

    // --- Silkscreen.
    let (silk_top, silk_bottom) = silk(p, s, edge_y, bottom, hw);

    let (mut lo, mut hi) = (
        Point::new(f64::MAX, f64::MAX),
        Point::new(f64::MIN, f64::MIN),
    );
    for q in outline.exterior().coords() {
        lo = Point::new(lo.x.min(q.x), lo.y.min(q.y));
        hi = Point::new(hi.x.max(q.x), hi.y.max(q.y));
    }
    Board {
        trace_path,
        exit_index,
        entry_index,
        trace_width: w,
        top_path,
        top_width: s.top_width,
        clearance: c,
        pad_gap: s.launch.pad_gap,
        barrel_antipad_d: s.launch.barrel_antipad_d,
        stub_antipad_d: s.launch.stub_antipad_d,
        relief_layers: s.launch.relieved_layers().collect(),
        shield,
        gap_y,
        gap: p.gap,
        vias,
        pads,
        holes,
        outline,
        interior,
        silk_top,
        silk_bottom,
        edge_y,
        bbox: (lo, hi),
    }
}

/// The arc position, after `from`, of the first point at straight-line distance `d` from the
/// point at `from` (None when the path ends first).
fn next_at(path: &[Point], s: &[f64], from: f64, d: f64) -> Option<f64> {
    let total = *s.last().unwrap();
    let p0 = point_at(path, s, from).0;
    let dist = |t: f64| (point_at(path, s, t).0 - p0).hypot();
    // March in small steps to the first crossing, then bisect.
    let h = (d / 16.0).max(1e-4);
    let mut t = from;
    while t < total {
        let t1 = (t + h).min(total);
        if dist(t1) >= d {
            let (mut lo, mut hi) = (t, t1);
            for _ in 0..60 {
                let mid = 0.5 * (lo + hi);
                if dist(mid) >= d {
                    hi = mid;
                } else {
                    lo = mid;
                }
            }
            return Some(hi);
        }
        t = t1;
    }
    None
}

/// `n + 1` arc positions from `from`, each at straight-line distance `d` from the previous.
fn walk(path: &[Point], s: &[f64], from: f64, d: f64, n: usize) -> Vec<f64> {
    let mut out = vec![from];
    let mut t = from;
    for _ in 0..n {
        match next_at(path, s, t, d) {
            Some(t1) => {
                out.push(t1);
                t = t1;
            }
            None => break,
        }
    }
    // The last one lands on the end (within the bisection's precision): put it there.
    if let Some(last) = out.last_mut() {
        let total = *s.last().unwrap();
        if (total - *last).abs() < 1e-6 {
            *last = total;
        }
    }
    out
}

/// The step length for which `n` equal straight-line steps from `from` end exactly at the end of
/// the path.
fn steps_to_end(path: &[Point], s: &[f64], from: f64, n: usize) -> Option<f64> {
    let total = *s.last().unwrap();
    let reach = |d: f64| -> f64 {
        let w = walk(path, s, from, d, n);
        if w.len() == n + 1 {
            w[n]
        } else {
            f64::INFINITY
        }
    };
    let (mut lo, mut hi) = (1e-4, total - from + 1e-9);
    if hi <= lo {
        return None;
    }
    if reach(hi) < total - 1e-6 {
        return None;
    }
    for _ in 0..50 {
        let mid = 0.5 * (lo + hi);
        if reach(mid) >= total - 1e-9 {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    Some(hi)
}

/// Grows (d > 0) or shrinks (d < 0) a region with round corners.
pub fn round_buffer(m: &MultiPolygon<f64>, d: f64) -> MultiPolygon<f64> {
    use geo::algorithm::buffer::{Buffer, BufferStyle, LineCap, LineJoin};
    let step = 2.0 * (1.0 - shape::ARC_TOLERANCE / d.abs().max(0.01)).acos();
    m.buffer_with_style(
        BufferStyle::new(d)
            .line_cap(LineCap::Round(step))
            .line_join(LineJoin::Round(step)),
    )
}

/// The left half of a region and its mirror image: offsetting re-flattens curves with vertices
/// that are not mirror images of each other, and this restores exact symmetry about x = 0.
pub fn symmetrise(m: &MultiPolygon<f64>) -> MultiPolygon<f64> {
    let (lo, hi) = match geo::BoundingRect::bounding_rect(m) {
        Some(r) => (r.min(), r.max()),
        None => return m.clone(),
    };
    let big = lo.x.abs().max(hi.x.abs()) + 1.0;
    let left = m.intersection(&MultiPolygon(vec![rect(-big, lo.y - 1.0, 0.0, hi.y + 1.0)]));
    let flip = |ls: &LineString<f64>| -> LineString<f64> {
        LineString::from(
            ls.coords()
                .rev()
                .map(|c| Coord { x: -c.x, y: c.y })
                .collect::<Vec<_>>(),
        )
    };
    let right = MultiPolygon(
        left.0
            .iter()
            .map(|p| Polygon::new(flip(p.exterior()), p.interiors().iter().map(flip).collect()))
            .collect(),
    );
    left.union(&right)
}

/// The largest polygon of a set.
fn largest(m: &MultiPolygon<f64>) -> Polygon<f64> {
    use geo::Area;
    m.0.iter()
        .max_by(|a, b| a.unsigned_area().total_cmp(&b.unsigned_area()))
        .cloned()
        .expect("a non-empty region")
}

fn dedup(v: &mut Vec<Point>) {
    v.dedup_by(|a, b| (*a - *b).hypot() < 1e-9);
}

/// Geometric tolerance of the construction rules, mm: twice the arc flattening tolerance.
pub const TOL: f64 = 2.0 * shape::ARC_TOLERANCE;

struct ViaPlacer<'a> {
    p: &'a Probe,
    s: &'a SolvedProbe,
    vias: Vec<Via>,
    trace: Vec<Point>,
    top_path: Vec<Point>,
    shield: MultiPolygon<f64>,
    pads: Vec<Pad>,
    sv: Point,
}

impl ViaPlacer<'_> {
    /// True when a via at `q` keeps every construction rule.
    fn ok(&self, q: Point) -> bool {
        use geo::{Contains, Distance, Euclidean};
        let pad = self.p.vias.pad;
        let f = self.s.fence_offset;
        let c = self.p.clearance;
        // Clear of the loop trace and its channel, and of the top link's channel.
        if dist_to_polyline(q, &self.trace) < f - TOL {
            return false;
        }
        let f_top = self.s.top_width / 2.0 + c + pad / 2.0 + VIA_WEB;
        if dist_to_polyline(q, &self.top_path) < f_top - TOL {
            return false;
        }
        let l = &self.s.launch;
        let antipad = l.antipad_d.max(l.barrel_antipad_d).max(l.stub_antipad_d) / 2.0;
        if (q - self.sv).hypot() < antipad + pad / 2.0 + VIA_WEB - TOL {
            return false;
        }
        // Clear of the gap.
        if q.y > 0.0 && q.x.abs() < self.p.gap / 2.0 + pad / 2.0 + 0.1 {
            return false;
        }
        // Clear of the connector pads (the centre pad with its gap, which is also the
        // relief's extent on the layers below).
        for pd in &self.pads {
            let w = if pd.centre {
                pd.w + 2.0 * self.s.launch.pad_gap
            } else {
                pd.w
            };
            if (q.x - pd.at.x).abs() < w / 2.0 + pad / 2.0 + 0.1
                && (q.y - pd.at.y).abs() < pd.h / 2.0 + pad / 2.0 + 0.1
            {
                return false;
            }
        }
        // Inside the shield with a rim.
        let pt = geo::Point::new(q.x, q.y);
        if !self.shield.contains(&pt) {
            return false;
        }
        let edge = self
            .shield
            .0
            .iter()
            .map(|poly| {
                std::iter::once(poly.exterior())
                    .chain(poly.interiors())
                    .map(|r| Euclidean.distance(&pt, r))
                    .fold(f64::INFINITY, f64::min)
            })
            .fold(f64::INFINITY, f64::min);
        if edge < pad / 2.0 + VIA_WEB - TOL {
            return false;
        }
        // Fab via pitch.
        self.vias
            .iter()
            .all(|v| (v.at - q).hypot() >= self.s.pitch_min + 1e-5)
    }

    fn try_add(&mut self, q: Point, role: ViaRole) -> bool {
        if self.ok(q) {
            self.vias.push(Via {
                at: q,
                drill: self.p.vias.drill,
                pad: self.p.vias.pad,
                role,
            });
            true
        } else {
            false
        }
    }

    /// The ring of ground vias around the signal via, radius `rg`, in mirror pairs: walking the
    /// circle from straight down (towards the connector) to straight up, a via goes at the
    /// first allowed place and then wherever it stands the fab's smallest pitch from the last
    /// one, so the ring is as dense as the fab allows where the two lines leave it free (the
    /// top link's channel below, the feed's channel above).
    fn signal_ring(&mut self, rg: f64) {
        let spacing = self.s.pitch_min + 1e-4;
        let steps = 720;
        let mut last: Option<Point> = None;
        for i in 0..=steps {
            let phi = std::f64::consts::PI * i as f64 / steps as f64;
            let q = self.sv + Vec2::new(phi.sin(), -phi.cos()) * rg;
            if last.is_some_and(|l| (q - l).hypot() < spacing) {
                continue;
            }
            if q.x < 1e-9 {
                // On the axis (straight down or up): one via, no mirror.
                let q = Point::new(0.0, q.y);
                if self.try_add(q, ViaRole::SignalGround) {
                    last = Some(q);
                }
                continue;
            }
            if self.ok(q) && self.ok(mirror(q)) && 2.0 * q.x >= spacing {
                self.try_add(q, ViaRole::SignalGround);
                if self.try_add(mirror(q), ViaRole::SignalGround) {
                    last = Some(q);
                } else {
                    self.vias.pop();
                }
            }
        }
    }

    /// Ground vias around each connector ground pad: a walk round the pad's keep-out (the pad
    /// grown by half a via pad and a 0.1 mm web), placing a via wherever it stands half the
    /// stitching limit from the last one there, with its mirror image. Places outside the shield (towards the board
    /// edge) or in a line's channel are refused by [`Self::ok`]. Top and bottom pads share
    /// their place, so one walk serves both.
    fn pad_vias(&mut self) {
        let step = (0.5 * self.s.pitch_max).max(self.s.pitch_min + 1e-4);
        let grow = self.p.vias.pad / 2.0 + 0.1 + 1e-3;
        let mut seen: Vec<Point> = Vec::new();
        // The right-hand pads; each via is placed with its mirror image (the board is
        // symmetric about its axis).
        let pads: Vec<Pad> = self
            .pads
            .iter()
            .filter(|pd| !pd.centre && pd.at.x > 0.0)
            .copied()
            .collect();
        for pd in pads {
            if seen.iter().any(|q| (*q - pd.at).hypot() < 1e-9) {
                continue;
            }
            seen.push(pd.at);
            let (hx, hy) = (pd.w / 2.0 + grow, pd.h / 2.0 + grow);
            // Anticlockwise from the inner end's middle (towards the loop).
            let (x0, y0) = (pd.at.x, pd.at.y);
            let ring = [
                Point::new(x0, y0 + hy),
                Point::new(x0 - hx, y0 + hy),
                Point::new(x0 - hx, y0 - hy),
                Point::new(x0 + hx, y0 - hy),
                Point::new(x0 + hx, y0 + hy),
                Point::new(x0, y0 + hy),
            ];
            let s = arclengths(&ring);
            let total = *s.last().unwrap();
            let mut first: Option<Point> = None;
            let mut last: Option<Point> = None;
            let mut t = 0.0;
            while t < total {
                let (q, _) = point_at(&ring, &s, t);
                let far_enough = last.is_none_or(|l| (q - l).hypot() >= step)
                    && first.is_none_or(|f| (q - f).hypot() >= step);
                if far_enough && self.ok(q) && self.ok(mirror(q)) {
                    self.try_add(q, ViaRole::PadGround);
                    if self.try_add(mirror(q), ViaRole::PadGround) {
                        first = first.or(Some(q));
                        last = Some(q);
                    } else {
                        self.vias.pop();
                    }
                }
                t += 0.01;
            }
        }
        // A via left alone by a blocked stretch (farther than the stitching limit from every
        // other via) stitches nothing: drop it with its mirror image, until none is left.
        loop {
            let lonely = self.vias.iter().position(|v| {
                v.role == ViaRole::PadGround
                    && self
                        .vias
                        .iter()
                        .filter(|o| (o.at - v.at).hypot() > 1e-9)
                        .all(|o| (o.at - v.at).hypot() > self.s.pitch_max)
            });
            let Some(i) = lonely else { break };
            let q = self.vias.remove(i).at;
            self.vias
                .retain(|v| !(v.role == ViaRole::PadGround && (v.at - mirror(q)).hypot() < 1e-9));
        }
    }

    /// A stitching row along the loop at offset `off`, in mirror pairs.
    fn rows(&mut self, shape: &LoopShape, off: f64, role: ViaRole) {
        let half = left_half(shape, off);
        let s = arclengths(&half);
        let keep = shape::gap_keep(self.p.gap, self.p.vias.pad);
        // Start where the row leaves the gap's keep-out.
        let s0 = shape::row_start(&half, &s, keep);
        // Equal straight-line spacing from the gap's edge to the axis, so that corners do not
        // bring two vias closer than the fab allows, with the fewest steps whose length is
        // within the pitch limit: one walk at the limit counts the whole steps that fit, and
        // one more (shortened) step ends on the axis. No ceiling on the count; should a
        // strange path need more, the next counts are tried, and the design-rule check's row
        // coverage refuses a row left with gaps.
        let d_max = 0.95 * self.s.pitch_max;
        let fit = walk(&half, &s, s0, d_max, usize::MAX).len() - 1;
        let positions = (fit.max(1)..=2 * fit + 8)
            .find_map(|n| {
                let d = steps_to_end(&half, &s, s0, n)?;
                (d <= d_max).then_some((n, d))
            })
            .map(|(n, d)| walk(&half, &s, s0, d, n))
            .unwrap_or_else(|| vec![s0]);
        for t in positions {
            let (q, _) = point_at(&half, &s, t);
            if q.x.abs() < 1e-6 {
                let q = Point::new(0.0, q.y);
                self.try_add(q, role);
                continue;
            }
            if self.ok(q) && self.ok(mirror(q)) {
                self.try_add(q, role);
                if !self.try_add(mirror(q), role) {
                    self.vias.pop();
                }
            }
        }
    }

    /// Fences on both sides of the feed line, up to where it joins the loop. Each side walks
    /// the feed's offset curve with round joins (so that the outside of a bend is covered) in
    /// fine steps and places a via as soon as it stands a step from the last one on that side:
    /// consecutive fence vias are a step apart, or the first allowed place after a blocked
    /// stretch.
    fn fences(&mut self, feed: &[Point]) {
        let f = self.s.fence_offset;
        // Half the pitch limit: a tight fence beside the feed, where the line leaves the loop.
        let step = (0.5 * self.s.pitch_max).max(self.s.pitch_min + 1e-4);
        // The walk's resolution: a via lands at most `dt` beyond `step` from the last one,
        // which keeps it within the limit even when the fab's pitch is close to it.
        let dt = (0.5 * (self.s.pitch_max - step)).clamp(0.002, 0.02);
        for side in [-1.0, 1.0] {
            let path = offset_round(feed, side * f, 0.05);
            let s = arclengths(&path);
            let total = *s.last().unwrap();
            let mut last: Option<Point> = None;
            let mut t = 0.0;
            while t <= total + 1e-9 {
                let (q, _) = point_at(&path, &s, t.min(total));
                if last.is_none_or(|l| (q - l).hypot() >= step) && self.try_add(q, ViaRole::Fence) {
                    last = Some(q);
                }
                t += dt;
            }
        }
    }
}

/// The polyline `pts` offset by `d` to its left (negative: right), with round joins of
/// angular step about `max_seg`/|d| on the outside of each bend.
pub(crate) fn offset_round(pts: &[Point], d: f64, max_seg: f64) -> Vec<Point> {
    let mut out = Vec::new();
    let normal = |a: Point, b: Point| {
        let v = b - a;
        let l = v.hypot().max(1e-12);
        Vec2::new(-v.y / l, v.x / l)
    };
    for i in 0..pts.len().saturating_sub(1) {
        let n = normal(pts[i], pts[i + 1]);
        if i > 0 {
            let n0 = normal(pts[i - 1], pts[i]);
            let (a0, a1) = (n0.y.atan2(n0.x), n.y.atan2(n.x));
            let mut da = a1 - a0;
            while da > std::f64::consts::PI {
                da -= std::f64::consts::TAU;
            }
            while da < -std::f64::consts::PI {
                da += std::f64::consts::TAU;
            }
            let k = ((da.abs() * d.abs() / max_seg).ceil() as usize).clamp(1, 64);
            for j in 1..k {
                let a = a0 + da * j as f64 / k as f64;
                out.push(pts[i] + Vec2::new(a.cos(), a.sin()) * d);
            }
        }
        out.push(pts[i] + n * d);
        out.push(pts[i + 1] + n * d);
    }
    out.dedup_by(|a, b| (*a - *b).hypot() < 1e-9);
    out
}

/// Silkscreen: name, size and stackup along the handle, and the sensitive-direction mark.
fn silk(
    p: &Probe,
    s: &SolvedProbe,
    edge_y: f64,
    loop_bottom: f64,
    hw: f64,
) -> (Vec<Vec<Point>>, Vec<Vec<Point>>) {
    let h = p.fab.silk_text_height;
    let right = format!(
        "{} {} {}",
        p.name,
        p.shape.kind().to_uppercase(),
        p.shape.size_tag()
    );
    let mut left = p.stackup.name().to_uppercase();
    if !p.silk_text.is_empty() {
        left = format!("{left} {}", p.silk_text);
    }
    // Text runs up the handle (rotated 90°: the glyphs' tops face −x), one column on each side
    // of the feed's via fences.
    let clear = s.fence_offset + p.vias.pad / 2.0 + 0.3;
    let y_start = edge_y + p.connector.ground_pad_length + p.fab.silk_to_pad + 1.0;
    let y_end = loop_bottom - s.ring_half_width - 1.0;
    let mark_c = Point::new(-hw + 0.6 + h, y_end - h);
    let mut top = Vec::new();
    let columns = [
        (s.feed_offset + clear + h, right, y_end - y_start),
        (
            -s.feed_offset - clear,
            left,
            mark_c.y - 2.5 * h - 0.5 - y_start,
        ),
    ];
    for (x, text, room) in columns {
        // The column must fit between the fences and the handle's copper edge.
        if x - h < -hw + 0.3 || x > hw - 0.3 || room <= 0.0 {
            continue;
        }
        let mut t = text;
        while !t.is_empty() && font::text_width(&t, h) > room {
            t.pop();
        }
        let place =
            Affine::translate(Vec2::new(x, y_start)) * Affine::rotate(std::f64::consts::FRAC_PI_2);
        top.extend(font::text_strokes(t.trim_end(), h, place));
    }
    // Sensitive-direction mark on the left of the handle: ⊙ (the probe responds to the field
    // component normal to the board), with "H" below it.
    let r = 0.5 * h;
    let mut bottom: Vec<Vec<Point>> = Vec::new();
    // Only where the handle leaves room above the connector's pads.
    if mark_c.y - r - 0.4 - h - p.fab.silk_width > y_start - 1.0 {
        top.push(arc_points(mark_c, r, 0.0, std::f64::consts::TAU));
        top.push(vec![mark_c, mark_c + Vec2::new(0.01, 0.0)]);
        let place = Affine::translate(Vec2::new(
            mark_c.x - 2.0 / 3.0 * h / 2.0,
            mark_c.y - r - 0.4 - h,
        ));
        top.extend(font::text_strokes("H", h, place));
        // Bottom: the same mark, seen from the top (mirrored).
        bottom.push(arc_points(mirror(mark_c), r, 0.0, std::f64::consts::TAU));
    }
    (top, bottom)
}
