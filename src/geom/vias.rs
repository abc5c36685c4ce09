//! Via placement: the stitching rows, the ring round the signal via, the connector pads' vias
//! and the feed's fences, each via checked against the construction rules.

use super::path::*;
use super::shape::{arclengths, dist_to_polyline, left_half, mirror, point_at};
use super::*;
use crate::model::probe::{LoopShape, Probe, ProbeKind};
use crate::solve::probe::{SolvedProbe, VIA_WEB};
use geo::MultiPolygon;
use kurbo::{Point, Vec2};

pub(super) struct ViaPlacer<'a> {
    pub(super) p: &'a Probe,
    pub(super) s: &'a SolvedProbe,
    pub(super) vias: Vec<Via>,
    pub(super) trace: Vec<Point>,
    pub(super) top_path: Vec<Point>,
    pub(super) shield: MultiPolygon<f64>,
    /// The shield's rings, bucketed for the rim's distance.
    shield_edges: super::near::SegmentGrid,
    pub(super) pads: Vec<Pad>,
    pub(super) sv: Point,
    /// A balanced loop: the line, its top link and signal via have a mirror image to keep
    /// clear too.
    pub(super) mirrored: bool,
    /// A balanced loop's side gaps `(x0, y0, x1, y1)` (empty: the loop's apex gap, or none).
    pub(super) gaps: Vec<(f64, f64, f64, f64)>,
    /// A multi-turn loop's other turns (their channelled parts), on other layers: every via
    /// goes through them too.
    pub(super) others: Vec<Vec<Point>>,
}

impl<'a> ViaPlacer<'a> {
    /// A placer along the line `trace` (its channel kept clear) and the top link, inside
    /// `shield`, clear of the connector's `pads`, starting with the signal via at `sv`.
    pub(super) fn new(
        p: &'a Probe,
        s: &'a SolvedProbe,
        trace: Vec<Point>,
        top_path: &[Point],
        shield: &MultiPolygon<f64>,
        pads: &[Pad],
        sv: Point,
    ) -> Self {
        ViaPlacer {
            p,
            s,
            vias: vec![Via {
                at: sv,
                drill: p.vias.drill,
                pad: p.vias.pad,
                role: ViaRole::Signal,
            }],
            trace,
            top_path: top_path.to_vec(),
            shield: shield.clone(),
            shield_edges: super::near::SegmentGrid::new(
                shield
                    .0
                    .iter()
                    .flat_map(|p| std::iter::once(p.exterior()).chain(p.interiors())),
            ),
            pads: pads.to_vec(),
            sv,
            mirrored: false,
            gaps: Vec::new(),
            others: Vec::new(),
        }
    }

    /// Makes this the placer of a balanced loop: the line has a mirror image, and the shield
    /// has the given gaps instead of the apex gap.
    pub(super) fn mirror_lines(&mut self, gaps: Vec<(f64, f64, f64, f64)>) {
        self.mirrored = true;
        self.gaps = gaps;
    }

    /// True when a via at `q` keeps every construction rule.
    pub(super) fn ok(&self, q: Point) -> bool {
        // A balanced loop's second line is the mirror image of the first: a via is clear of it
        // when its mirror image is clear of the first.
        self.clear_of_line(q)
            && (!self.mirrored || self.clear_of_line(mirror(q)))
            && self.ok_elsewhere(q)
    }

    /// Clear of the line's channel, its top link's channel and its signal via's antipad.
    fn clear_of_line(&self, q: Point) -> bool {
        let pad = self.p.vias.pad;
        let f = self.s.fence_offset;
        let c = self.p.clearance;
        // Clear of the loop trace and its channel, and of the top link's channel.
        if dist_to_polyline(q, &self.trace) < f - TOL {
            return false;
        }
        if self.others.iter().any(|t| dist_to_polyline(q, t) < f - TOL) {
            return false;
        }
        let f_top = self.s.top_width / 2.0 + c + pad / 2.0 + VIA_WEB;
        if dist_to_polyline(q, &self.top_path) < f_top - TOL {
            return false;
        }
        let l = &self.s.launch;
        let antipad = l.antipad_d.max(l.barrel_antipad_d).max(l.stub_antipad_d) / 2.0;
        (q - self.sv).hypot() >= antipad + pad / 2.0 + VIA_WEB - TOL
    }

    /// Clear of the gaps and the connector's pads, inside the shield with a rim, and the fab's
    /// least pitch from every via placed.
    fn ok_elsewhere(&self, q: Point) -> bool {
        use geo::Contains;
        let pad = self.p.vias.pad;
        // Clear of the gap (a loop's; an electric probe's shield has none).
        if self.p.kind == ProbeKind::Loop
            && q.y > 0.0
            && q.x.abs() < self.p.gap / 2.0 + pad / 2.0 + 0.1
        {
            return false;
        }
        // Clear of a balanced loop's side gaps, by the same keep.
        for &(x0, y0, x1, y1) in &self.gaps {
            let dx = (x0 - q.x).max(q.x - x1).max(0.0);
            let dy = (y0 - q.y).max(q.y - y1).max(0.0);
            if dx.hypot(dy) < pad / 2.0 + 0.1 {
                return false;
            }
        }
        // Clear of the connector pads (the centre pad with its gap, which is also the
        // relief's extent on the layers below; that clearance runs one trace clearance past
        // the pad's inner end, towards the loop, as the artwork draws it: a via pad reaching
        // into it would leave a sliver of space at its corner).
        for pd in &self.pads {
            let (w, beyond) = if pd.centre {
                (pd.w + 2.0 * self.s.launch.pad_gap, self.p.clearance)
            } else {
                (pd.w, 0.0)
            };
            let keep = pad / 2.0 + 0.1;
            let (lo, hi) = (
                pd.at.y - pd.h / 2.0 - keep,
                pd.at.y + pd.h / 2.0 + beyond + keep,
            );
            if (q.x - pd.at.x).abs() < w / 2.0 + keep && q.y > lo && q.y < hi {
                return false;
            }
        }
        // Inside the shield with a rim.
        let pt = geo::Point::new(q.x, q.y);
        if !self.shield.contains(&pt) {
            return false;
        }
        // The rim: the distance to the shield's rings, looked up among the edges near q.
        let rim = pad / 2.0 + VIA_WEB - TOL;
        if self.shield_edges.distance_within(q, rim) < rim {
            return false;
        }
        // Fab via pitch; a join via's antipad (its pad and a clearance) and a web beyond it.
        let antipad = pad / 2.0 + self.p.clearance + pad / 2.0 + VIA_WEB;
        self.vias.iter().all(|v| {
            let d = (v.at - q).hypot();
            d >= self.s.pitch_min + offsets::PITCH_CHECK_SLACK
                && (v.role != ViaRole::Join || d >= antipad - TOL)
        })
    }

    pub(super) fn try_add(&mut self, q: Point, role: ViaRole) -> bool {
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
    pub(super) fn signal_ring(&mut self, rg: f64) {
        let spacing = self.s.pitch_min + offsets::PITCH_MARGIN;
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
    pub(super) fn pad_vias(&mut self) {
        let step = (0.5 * self.s.pitch_max).max(self.s.pitch_min + offsets::PITCH_MARGIN);
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
            if seen
                .iter()
                .any(|q| (*q - pd.at).hypot() < offsets::SAME_POINT)
            {
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
                t += offsets::SEARCH_STEP;
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
                        .filter(|o| (o.at - v.at).hypot() > offsets::SAME_POINT)
                        .all(|o| (o.at - v.at).hypot() > self.s.pitch_max)
            });
            let Some(i) = lonely else { break };
            let q = self.vias.remove(i).at;
            self.vias.retain(|v| {
                !(v.role == ViaRole::PadGround && (v.at - mirror(q)).hypot() < offsets::SAME_POINT)
            });
        }
    }

    /// The ring of ground vias round an electric probe's electrode, radius `r` about `c` (on
    /// the axis): equally spaced from the top, the fewest whose chord is within the stitching
    /// share of λ/N (and never under the fab's least pitch), in mirror pairs; those in the
    /// line's channel at the bottom are refused by [`Self::ok`].
    pub(super) fn face_ring(&mut self, c: Point, r: f64) {
        let d_max = offsets::PITCH_MAX_SHARE * self.s.pitch_max;
        let d_min = self.s.pitch_min + offsets::PITCH_MARGIN;
        let chord = |n: usize| 2.0 * r * (std::f64::consts::PI / n as f64).sin();
        let mut n = 4;
        while chord(n) > d_max && chord(n + 1) >= d_min {
            n += 1;
        }
        for k in 0..=n / 2 {
            let phi = std::f64::consts::TAU * k as f64 / n as f64;
            let q = c + Vec2::new(-phi.sin(), phi.cos()) * r;
            if q.x.abs() < 1e-9 {
                self.try_add(Point::new(c.x, q.y), ViaRole::FaceRing);
            } else if self.ok(q) && self.ok(mirror(q)) {
                self.try_add(q, ViaRole::FaceRing);
                if !self.try_add(mirror(q), ViaRole::FaceRing) {
                    self.vias.pop();
                }
            }
        }
    }

    /// A stitching row along the loop at offset `off`, in mirror pairs.
    pub(super) fn rows(&mut self, shape: &LoopShape, off: f64, role: ViaRole) {
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
        self.walk_row(&half, &s, s0, role);
    }

    /// Fences on both sides of the feed line, up to where it joins the loop. Each side walks
    /// the feed's offset curve with round joins (so that the outside of a bend is covered) in
    /// fine steps and places a via as soon as it stands a step from the last one on that side:
    /// consecutive fence vias are a step apart, or the first allowed place after a blocked
    /// stretch.
    pub(super) fn fences(&mut self, feed: &[Point]) {
        let f = self.s.fence_offset;
        // Half the pitch limit: a tight fence beside the feed, where the line leaves the loop.
        let step = (0.5 * self.s.pitch_max).max(self.s.pitch_min + offsets::PITCH_MARGIN);
        // The walk's resolution: a via lands at most `dt` beyond `step` from the last one,
        // which keeps it within the limit even when the fab's pitch is close to it.
        let dt = (0.5 * (self.s.pitch_max - step)).clamp(0.002, 0.02);
        for side in [-1.0, 1.0] {
            let path = offset_round(feed, side * f, offsets::OFFSET_FLATNESS);
            let s = arclengths(&path);
            let total = *s.last().unwrap();
            let mut last: Option<Point> = None;
            let mut t = 0.0;
            while t <= total + 1e-9 {
                let (q, _) = point_at(&path, &s, t.min(total));
                // A balanced loop's fence via goes with its mirror image beside the other line.
                if last.is_none_or(|l| (q - l).hypot() >= step)
                    && (!self.mirrored || self.ok(mirror(q)))
                    && self.try_add(q, ViaRole::Fence)
                {
                    if !self.mirrored || self.try_add(mirror(q), ViaRole::Fence) {
                        last = Some(q);
                    } else {
                        self.vias.pop();
                    }
                }
                t += dt;
            }
        }
    }

    /// A balanced loop's stitching rows at offset `off`: the left half of the ring split by
    /// its side gap into an upper part (from the gap's keep-out, or from where the row clears
    /// the short vias, to the top of the axis) and a lower part (from the gap's keep-out to
    /// the bottom of the axis), each walked in equal steps within the pitch limit and placed
    /// with its mirror image.
    pub(super) fn split_rows(
        &mut self,
        shape: &LoopShape,
        off: f64,
        role: ViaRole,
        shorts: &[Point],
    ) {
        for part in balanced_row_parts(self.p, self.s, shape, off, shorts) {
            if part.len() < 2 {
                continue;
            }
            let s = arclengths(&part);
            self.walk_row(&part, &s, 0.0, role);
        }
    }

    /// Equal straight-line steps from `s0` to the end of `half` (the fewest within the pitch
    /// limit), each via placed with its mirror image; one on the axis alone.
    fn walk_row(&mut self, half: &[Point], s: &[f64], s0: f64, role: ViaRole) {
        let d_max = offsets::PITCH_MAX_SHARE * self.s.pitch_max;
        let fit = walk(half, s, s0, d_max, usize::MAX).len() - 1;
        let positions = (fit.max(1)..=2 * fit + 8)
            .find_map(|n| {
                let d = steps_to_end(half, s, s0, n)?;
                (d <= d_max).then_some((n, d))
            })
            .map(|(n, d)| walk(half, s, s0, d, n))
            .unwrap_or_else(|| vec![s0]);
        for t in positions {
            let (q, _) = point_at(half, s, t);
            if q.x.abs() < 1e-6 {
                self.try_add(Point::new(0.0, q.y), role);
                continue;
            }
            if !self.others.is_empty() {
                // A multi-turn loop's board is not symmetric at its junction: each side's via
                // goes where that side allows.
                self.try_add(q, role);
                self.try_add(mirror(q), role);
            } else if self.ok(q) && self.ok(mirror(q)) {
                self.try_add(q, role);
                if !self.try_add(mirror(q), role) {
                    self.vias.pop();
                }
            }
        }
    }

    /// A multi-turn loop: drops every ground via left alone by the lines at the junction
    /// (none of the shield's vias within the stitching limit: it stitches nothing), until none
    /// is left. Vias that carry or end a line stay.
    pub(super) fn drop_lonely(&mut self) {
        let ground = |r: ViaRole| !matches!(r, ViaRole::Signal | ViaRole::Join | ViaRole::Short);
        loop {
            let lonely = self.vias.iter().position(|v| {
                ground(v.role)
                    && self
                        .vias
                        .iter()
                        .filter(|o| ground(o.role) || o.role == ViaRole::Short)
                        .filter(|o| (o.at - v.at).hypot() > offsets::SAME_POINT)
                        .all(|o| (o.at - v.at).hypot() > self.s.pitch_max)
            });
            let Some(i) = lonely else { break };
            self.vias.remove(i);
        }
    }

    /// A balanced loop's rings of ground vias round its two signal vias: a walk once round the
    /// left one (radius `rg`), a via wherever it stands the fab's least pitch from the last,
    /// each with its mirror image round the right one.
    pub(super) fn signal_ring_pair(&mut self, rg: f64) {
        let spacing = self.s.pitch_min + offsets::PITCH_MARGIN;
        let steps = 1440;
        let mut last: Option<Point> = None;
        let mut first: Option<Point> = None;
        for i in 0..steps {
            let phi = std::f64::consts::TAU * i as f64 / steps as f64;
            let q = self.sv + Vec2::new(phi.sin(), -phi.cos()) * rg;
            if last.is_some_and(|l| (q - l).hypot() < spacing)
                || first.is_some_and(|f| (q - f).hypot() < spacing)
            {
                continue;
            }
            if self.ok(q) && self.ok(mirror(q)) {
                self.try_add(q, ViaRole::SignalGround);
                if self.try_add(mirror(q), ViaRole::SignalGround) {
                    last = Some(q);
                    first = first.or(Some(q));
                } else {
                    self.vias.pop();
                }
            }
        }
    }
}

/// A balanced loop's row at offset `off` as the parts its vias are walked along (left half):
/// the upper part from its gap end to the top of the axis, the lower part from its gap end to
/// the bottom of the axis. The upper part begins past the short vias (`shorts`, on the
/// centreline past the gap, which join the shield's layers there), where the row stands the
/// fab's least pitch from them and clear of the gap's keep-out; the lower where it leaves the
/// gap's keep-out. Shared with the design-rule check.
pub fn balanced_row_parts(
    p: &Probe,
    s: &SolvedProbe,
    shape: &LoopShape,
    off: f64,
    shorts: &[Point],
) -> [Vec<Point>; 2] {
    let half = left_half(shape, off);
    let sl = arclengths(&half);
    let total = *sl.last().unwrap();
    let keep = shape::gap_keep(p.gap, p.vias.pad);
    let clear_of_shorts = |q: Point| {
        shorts
            .iter()
            .all(|v| (q - *v).hypot() >= s.pitch_min + offsets::PITCH_MARGIN)
    };
    let step = offsets::SEARCH_STEP;
    // Upper part: from the gap, or from beside the short via nearest the top, towards the top.
    let beside = |v: Point| {
        (0..half.len())
            .min_by(|&i, &j| (half[i] - v).hypot().total_cmp(&(half[j] - v).hypot()))
            .map(|i| sl[i])
            .unwrap_or(0.5 * total)
    };
    let mut t_up = shorts
        .iter()
        .filter(|v| v.x < 0.0)
        .map(|v| beside(*v))
        .fold(0.5 * total, f64::min);
    while t_up > 0.0 {
        let q = point_at(&half, &sl, t_up).0;
        if q.y >= keep && clear_of_shorts(q) {
            break;
        }
        t_up -= step;
    }
    let mut t_lo = 0.5 * total;
    while t_lo < total {
        let q = point_at(&half, &sl, t_lo).0;
        if q.y <= -keep {
            break;
        }
        t_lo += step;
    }
    let cut = |from: f64, to: f64| -> Vec<Point> {
        // The part of `half` from arc position `from` to `to` (either way round).
        let (lo, hi) = (from.min(to), from.max(to));
        let mut v = vec![point_at(&half, &sl, lo).0];
        v.extend(
            (0..half.len())
                .filter(|&i| sl[i] > lo + 1e-9 && sl[i] < hi - 1e-9)
                .map(|i| half[i]),
        );
        v.push(point_at(&half, &sl, hi).0);
        if from > to {
            v.reverse();
        }
        v.dedup_by(|a, b| (*a - *b).hypot() < offsets::SAME_POINT);
        v
    };
    [cut(t_up.max(0.0), 0.0), cut(t_lo.min(total), total)]
}
