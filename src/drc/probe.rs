//! The probe board's own rules: no copper inside the loop, the shield gap, via pitch and the
//! coverage of every required row of vias.

use super::board::check_board_with;
use super::kernel::{Coppers, nearest_neighbours};
use super::slack;
use super::{Rule, Violation};
use crate::artwork::Artwork;
use crate::geom::{Board, rect};
use crate::model::probe::Probe;
use crate::solve::probe::SolvedProbe;
use geo::{Area, BooleanOps, MultiPolygon};
use kurbo::Point;

/// Runs every check of a probe board: [`check_board`] and the probe's own rules (no copper
/// inside the loop, the shield gap, via pitch and stitching rows). Returns the violations.
pub fn check(p: &Probe, s: &SolvedProbe, b: &Board, art: &Artwork) -> Vec<Violation> {
    // Each layer's copper united once, for the board's rules, every gap's and the electrode's.
    let cu = Coppers::new(art);
    let mut out = check_board_with(&p.fab, art, &cu);
    if let Some(head) = &b.loop_head {
        for (k, &g) in art.gap_rects.iter().enumerate() {
            out.extend(loop_rules(p, b, head, art, &cu, g, k == 0));
        }
    }
    if let Some(e) = p.kind.electrode() {
        out.extend(electrode_rules(art, &cu, &e));
    }
    // Via pitch: every via has a neighbour within the pitch limit, none closer than the fab's.
    // An electric probe's electrode via stitches nothing (it is the line's), so it needs no
    // neighbour within the limit.
    let electrode_via =
        |q: Point| p.kind.electrode().is_some() && q.to_vec2().hypot() < slack::GRID;
    // A multi-turn loop's join vias are the winding's: they stitch nothing either (and are no
    // ground neighbour), but keep the fab's least pitch from every other via.
    let join_via = |q: Point| {
        b.joins
            .iter()
            .any(|j| (j.at - q).hypot() < 2.0 * slack::GRID)
    };
    let vias: Vec<Point> = art
        .drills
        .iter()
        .filter(|d| d.via && !electrode_via(d.at) && !join_via(d.at))
        .map(|d| d.at)
        .collect();
    let mut nearest = nearest_neighbours(&vias, s.pitch_max, &mut out);
    nearest.extend(
        art.drills
            .iter()
            .filter(|d| d.via && join_via(d.at))
            .map(|d| {
                let nn = art
                    .drills
                    .iter()
                    .filter(|o| o.via && (o.at - d.at).hypot() > 2.0 * slack::GRID)
                    .map(|o| (o.at - d.at).hypot())
                    .fold(f64::INFINITY, f64::min);
                (d.at, nn)
            }),
    );
    for (v, nn) in nearest {
        // 10 nm: what snapping both vias to the 1 nm grid can take off their distance.
        if nn < s.pitch_min - slack::PITCH {
            out.push(Violation {
                rule: Rule::ViaPitchBelowFab,
                layer: "drill".into(),
                at: v,
                detail: format!("nearest via {nn:.3} mm < {:.3} mm", s.pitch_min),
            });
        }
    }
    out.extend(row_coverage(p, s, b, &vias));
    out
}

/// An electric probe's own rules: the electrode whole and bare on both outer layers, and no
/// shield copper inside its clearance on any layer.
fn electrode_rules(
    art: &Artwork,
    cu: &Coppers,
    e: &crate::model::probe::Electrode,
) -> Vec<Violation> {
    use crate::geom::circle;
    let mut out = Vec::new();
    let r = e.diameter / 2.0;
    let disc = MultiPolygon(vec![circle(Point::ZERO, r)]);
    // The clearance, less the grid's rounding and the flattening of the drawn circles.
    let keep = MultiPolygon(vec![circle(
        Point::ZERO,
        r + e.clearance - crate::geom::TOL - slack::GRID,
    )]);
    let n_layers = art.copper.len();
    let electrode_area = art
        .nets
        .areas
        .iter()
        .find(|(name, _)| name == crate::artwork::ELECTRODE_NET)
        .map(|(_, a)| a.clone())
        .unwrap_or_else(|| MultiPolygon(vec![]));
    for (i, l) in art.copper.iter().enumerate() {
        let name = format!("L{}", l.n);
        let copper = cu.copper(i);
        if l.n == 1 || l.n == n_layers {
            let missing = disc.difference(copper).unsigned_area();
            if missing > slack::AREA {
                out.push(Violation {
                    rule: Rule::ElectrodeExposed,
                    layer: name.clone(),
                    at: Point::ZERO,
                    detail: format!("{missing:.4} mm² of the electrode's disc is not copper"),
                });
            }
        }
        // The electrode's own copper on this layer: its disc on the outer layers, the line and
        // the via's land on the signal layer, nothing on the others.
        let own = if l.n == 1 || l.n == n_layers {
            MultiPolygon(vec![circle(Point::ZERO, r + slack::GRID)])
        } else if l.signal {
            electrode_area.clone()
        } else {
            MultiPolygon(vec![])
        };
        let shield_in = copper.difference(&own).intersection(&keep).unsigned_area();
        if shield_in > slack::AREA {
            out.push(Violation {
                rule: Rule::ElectrodeClearance,
                layer: name,
                at: Point::ZERO,
                detail: format!(
                    "{shield_in:.4} mm² of shield copper within {} mm of the electrode's centre",
                    crate::math::fmt_num(r + e.clearance)
                ),
            });
        }
    }
    for (side, mask) in [
        ("top mask", &art.mask_top),
        ("bottom mask", &art.mask_bottom),
    ] {
        let opened = mask.iter().any(|f| {
            let reach = match f.shape {
                crate::artwork::Shape::Circle(d) => d / 2.0,
                crate::artwork::Shape::Rect(w, h) => w.min(h) / 2.0,
            } - f.at.to_vec2().hypot();
            reach >= r - slack::GRID
        });
        if !opened {
            out.push(Violation {
                rule: Rule::ElectrodeExposed,
                layer: side.into(),
                at: Point::ZERO,
                detail: format!(
                    "no mask opening covers the electrode (Ø{} mm)",
                    crate::math::fmt_num(e.diameter)
                ),
            });
        }
    }
    out
}

/// A loop's own rules: no copper inside the loop (when `interior_too`: once per board), the
/// shield gap holds only the trace and no via, the gap being `(x0, y0, x1, y1)` in the
/// artwork.
fn loop_rules(
    p: &Probe,
    b: &Board,
    head: &crate::geom::LoopHead,
    art: &Artwork,
    cu: &Coppers,
    g: (f64, f64, f64, f64),
    interior_too: bool,
) -> Vec<Violation> {
    let mut out = Vec::new();
    let (gx0, gy0, gx1, gy1) = g;
    let gap = MultiPolygon(vec![rect(gx0, gy0, gx1, gy1)]);
    let interior = MultiPolygon(vec![head.interior.clone()]);
    for (i, l) in art.copper.iter().enumerate() {
        let name = format!("L{}", l.n);
        let (copper, body) = (cu.copper(i), cu.body(i));
        // No copper inside the loop (checked once, with the first gap).
        let inside = if interior_too {
            body.intersection(&interior).unsigned_area()
        } else {
            0.0
        };
        if inside > slack::AREA {
            out.push(Violation {
                rule: Rule::CopperInsideLoop,
                layer: name.clone(),
                at: Point::ZERO,
                detail: format!("{inside:.4} mm² of copper where flux must pass"),
            });
        }
        // The gap.
        let in_gap = copper.intersection(&gap).unsigned_area();
        if l.signal {
            // The trace's own area in the gap: its width times the length of its centreline
            // (both lines' on a balanced loop) inside the gap's rectangle (a curved loop
            // crosses on a slant).
            // A multi-turn loop's later turn crosses the gap on its own layer.
            let (paths, width) = match b.turns.iter().find(|t| t.layer == l.n) {
                Some(t) => (vec![t.path.clone()], t.width),
                None => (line_paths(b), b.trace_width),
            };
            let len: f64 = paths
                .iter()
                .flat_map(|path| path.windows(2))
                .map(|w| clipped_length(w[0], w[1], g))
                .sum();
            let allowed = width * len * (1.0 + slack::GAP_AREA_SHARE) + slack::AREA;
            if in_gap > allowed || in_gap < 0.5 * allowed {
                out.push(Violation {
                    rule: Rule::GapHoldsOnlyTrace,
                    layer: name.clone(),
                    at: Point::new(0.5 * (gx0 + gx1), 0.5 * (gy0 + gy1)),
                    detail: format!(
                        "{in_gap:.5} mm² of copper in the gap; the trace alone is {:.5} mm²",
                        width * len
                    ),
                });
            }
        } else if in_gap > slack::GAP_AREA {
            out.push(Violation {
                rule: Rule::GapFreeOfCopper,
                layer: name.clone(),
                at: Point::new(0.5 * (gx0 + gx1), 0.5 * (gy0 + gy1)),
                detail: format!("{in_gap:.6} mm² of copper in the shield gap"),
            });
        }
    }
    for d in &art.drills {
        if d.via {
            let dx = (gx0 - d.at.x).max(d.at.x - gx1).max(0.0);
            let dy = (gy0 - d.at.y).max(d.at.y - gy1).max(0.0);
            if dx.hypot(dy) < p.vias.pad / 2.0 + slack::GRID {
                out.push(Violation {
                    rule: Rule::ViaInGap,
                    layer: "drill".into(),
                    at: d.at,
                    detail: "a via stands in or touches the shield gap".into(),
                });
            }
        }
    }
    out
}

/// The board's line centrelines on the signal layer: its one line, and on a balanced loop the
/// mirror image too.
fn line_paths(b: &Board) -> Vec<Vec<Point>> {
    let mut v = vec![b.trace_path.clone()];
    if b.mirrored {
        v.push(
            b.trace_path
                .iter()
                .map(|q| crate::geom::shape::mirror(*q))
                .collect(),
        );
    }
    v
}

/// Length of the segment a–c inside the rectangle `(x0, y0, x1, y1)` (Liang–Barsky clipping).
fn clipped_length(a: Point, c: Point, r: (f64, f64, f64, f64)) -> f64 {
    let (x0, y0, x1, y1) = r;
    let d = c - a;
    let (mut t0, mut t1) = (0.0_f64, 1.0_f64);
    for (pp, q) in [
        (-d.x, a.x - x0),
        (d.x, x1 - a.x),
        (-d.y, a.y - y0),
        (d.y, y1 - a.y),
    ] {
        if pp == 0.0 {
            if q < 0.0 {
                return 0.0;
            }
        } else {
            let t = q / pp;
            if pp < 0.0 {
                t0 = t0.max(t);
            } else {
                t1 = t1.min(t);
            }
        }
    }
    if t1 > t0 { d.hypot() * (t1 - t0) } else { 0.0 }
}

/// A required row of vias: the path it follows and the stretches it may leave bare.
struct Row {
    name: String,
    path: Vec<Point>,
    /// Arc positions where the row's coverage starts and ends.
    from: f64,
    to: f64,
    /// Points near which a gap is allowed (within the given radius): where the feed and the
    /// short cross the outer row, where the signal via's ring takes over from a fence.
    exempt: Vec<(Point, f64)>,
}

/// Via coverage of every required row from end to end: the loop's inner and outer stitching
/// rows on both halves (from the gap's keep-out to the axis), or an electric probe's ring round
/// its electrode (both halves, from the top to the line's channel), and the fences on both
/// sides of the feed (from the signal via to where the feed joins the loop or the ring). The vias standing on a row
/// (within 0.01 mm of its path) are taken in order along it, with the row's two ends, and no
/// step between consecutive ones may exceed the pitch limit (straight-line distance), outside
/// the row's stated exemptions. A row with missing vias, or none, fails: the nearest-neighbour
/// rule alone cannot see them.
fn row_coverage(p: &Probe, s: &SolvedProbe, b: &Board, vias: &[Point]) -> Vec<Violation> {
    use crate::geom::shape::{arclengths, gap_keep, left_half, point_at, row_start};
    let mut rows = Vec::new();
    let keep = gap_keep(p.gap, p.vias.pad);
    // Where the feed joins the loop (and a multi-turn loop's turns leave the ring and are
    // joined, two fence offsets apart per turn), rows and fences may leave gaps.
    let mut feed_zone = s.feed_offset + 2.0 * s.fence_offset * p.turns.max(1) as f64 + s.pitch_max;
    if let Some(e) = p.kind.electrode() {
        // An electric probe: the ring round the electrode's clearance, each half from the top
        // down to where the line's channel crosses it at the bottom (where the feed's fences
        // take over); the fences end where the ring begins.
        let r = crate::geom::electrode_ring_radius(p, &e);
        let f = s.fence_offset;
        let half: Vec<Point> = (0..=180)
            .map(|k| {
                let phi = std::f64::consts::PI * k as f64 / 180.0;
                Point::new(-r * phi.sin(), r * phi.cos())
            })
            .collect();
        let to = *arclengths(&half).last().unwrap();
        for (side, sign) in [("left", 1.0), ("right", -1.0)] {
            rows.push(Row {
                name: format!("ring round the electrode, {side} half"),
                path: half.iter().map(|q| Point::new(sign * q.x, q.y)).collect(),
                from: 0.0,
                to,
                exempt: vec![(Point::new(0.0, -r), f + s.pitch_min)],
            });
        }
        feed_zone = r + s.pitch_min;
    }
    let loop_rows = if p.kind.electrode().is_some() {
        Vec::new()
    } else {
        vec![(-s.fence_offset, "inner"), (s.fence_offset, "outer")]
    };
    let mirror_rows =
        |rows: &mut Vec<Row>, label: &str, path: Vec<Point>, exempt: Vec<(Point, f64)>| {
            let to = *arclengths(&path).last().unwrap();
            for (side, sign) in [("left", 1.0), ("right", -1.0)] {
                rows.push(Row {
                    name: format!("{label}, {side} half"),
                    path: path.iter().map(|q| Point::new(sign * q.x, q.y)).collect(),
                    from: 0.0,
                    to,
                    exempt: exempt
                        .iter()
                        .map(|(c, r)| (Point::new(sign * c.x, c.y), *r))
                        .collect(),
                });
            }
        };
    if p.kind == crate::model::probe::ProbeKind::Balanced {
        // A balanced loop's rows, split by the side gaps: each upper part from where it clears
        // the gap and the short vias to the top, each lower part from the gap to the bottom;
        // the outer row is crossed by the line where it enters the ring.
        let shorts: Vec<Point> = b
            .vias
            .iter()
            .filter(|v| v.role == crate::geom::ViaRole::Short)
            .map(|v| v.at)
            .collect();
        let join = b.trace_path[b.entry_index.min(b.trace_path.len() - 1)];
        for (off, label) in loop_rows {
            let [upper, lower] = crate::geom::balanced_row_parts(p, s, &p.shape, off, &shorts);
            mirror_rows(
                &mut rows,
                &format!("{label} stitching row above the gap"),
                upper,
                vec![],
            );
            let exempt = if off > 0.0 {
                vec![(join, feed_zone)]
            } else {
                vec![]
            };
            mirror_rows(
                &mut rows,
                &format!("{label} stitching row below the gap"),
                lower,
                exempt,
            );
        }
    } else {
        for (off, label) in loop_rows {
            let half = left_half(&p.shape, off);
            let sl = arclengths(&half);
            let from = row_start(&half, &sl, keep);
            let to = *sl.last().unwrap();
            let bottom = *half.last().unwrap();
            for (side, sign) in [("left", 1.0), ("right", -1.0)] {
                let path: Vec<Point> = half.iter().map(|q| Point::new(sign * q.x, q.y)).collect();
                // The outer row is crossed by the feed and the short at the bottom of the loop.
                let exempt = if off > 0.0 {
                    vec![(bottom, feed_zone)]
                } else {
                    Vec::new()
                };
                rows.push(Row {
                    name: format!("{label} stitching row, {side} half"),
                    path,
                    from,
                    to,
                    exempt,
                });
            }
        }
    }
    let feed = &b.trace_path[..=b.entry_index.min(b.trace_path.len() - 1)];
    if feed.len() >= 2 {
        let ring =
            s.launch.antipad_d.max(s.launch.barrel_antipad_d) / 2.0 + p.vias.pad + s.pitch_max;
        let mut feeds = vec![("", feed.to_vec())];
        if b.mirrored {
            feeds.push((
                "second line's ",
                feed.iter()
                    .map(|q| crate::geom::shape::mirror(*q))
                    .collect(),
            ));
        }
        for (which, feed) in feeds {
            let sv = feed[0];
            // Left and right as seen from the connector looking towards the loop (−x and +x).
            for (side, sign) in [("right", -1.0), ("left", 1.0)] {
                let path = crate::geom::offset_round(
                    &feed,
                    sign * s.fence_offset,
                    crate::geom::offsets::OFFSET_FLATNESS,
                );
                let to = *arclengths(&path).last().unwrap();
                // Where the feed joins the loop, the outer row's exemption zone continues.
                let join = *feed.last().unwrap();
                rows.push(Row {
                    name: format!("{which}feed fence, {side} side"),
                    path,
                    from: 0.0,
                    to,
                    exempt: vec![(sv, ring), (join, feed_zone)],
                });
            }
        }
    }
    let mut out = Vec::new();
    for row in &rows {
        let sl = arclengths(&row.path);
        let at: Vec<f64> = vias
            .iter()
            .filter_map(|v| {
                use kurbo::ParamCurveNearest;
                let mut best = (f64::INFINITY, 0.0);
                for (k, w) in row.path.windows(2).enumerate() {
                    let n = kurbo::Line::new(w[0], w[1]).nearest(*v, 1e-12);
                    let dd = n.distance_sq.sqrt();
                    if dd < best.0 {
                        best = (dd, sl[k] + n.t * (w[1] - w[0]).hypot());
                    }
                }
                (best.0 < slack::ON_ROW
                    && best.1 >= row.from - slack::NOISE
                    && best.1 <= row.to + slack::NOISE)
                    .then_some(best.1)
            })
            .collect();
        // The row's stretches outside its exemption zones, each checked from end to end.
        let exempt = |x: f64| {
            let q = point_at(&row.path, &sl, x).0;
            row.exempt.iter().any(|(c, r)| (q - *c).hypot() < *r)
        };
        let h = slack::ROW_STEP;
        let n = ((row.to - row.from) / h).ceil().max(1.0) as usize;
        let mut stretches: Vec<(f64, f64)> = Vec::new();
        let mut open: Option<f64> = None;
        for k in 0..=n {
            let x = row.from + (row.to - row.from) * k as f64 / n as f64;
            match (exempt(x), open) {
                (false, None) => open = Some(x),
                (true, Some(u)) => {
                    stretches.push((u, x));
                    open = None;
                }
                _ => {}
            }
        }
        if let Some(u) = open {
            stretches.push((u, row.to));
        }
        for (u, v) in stretches {
            let mut pos: Vec<f64> = at.iter().copied().filter(|x| *x > u && *x < v).collect();
            pos.push(u);
            pos.push(v);
            pos.sort_by(f64::total_cmp);
            for w in pos.windows(2) {
                let (p0, _) = point_at(&row.path, &sl, w[0]);
                let (q, _) = point_at(&row.path, &sl, w[1]);
                let step = (q - p0).hypot();
                if step > s.pitch_max + slack::GRID {
                    out.push(Violation {
                        rule: Rule::StitchingRowPitch,
                        layer: "drill".into(),
                        at: q,
                        detail: format!(
                            "{}: {step:.3} mm without a via (limit {:.3} mm), from ({:.2}, {:.2})",
                            row.name, s.pitch_max, p0.x, p0.y
                        ),
                    });
                }
            }
        }
    }
    out
}
