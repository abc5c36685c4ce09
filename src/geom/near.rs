//! Nearest distances to a fixed set of segments (a region's rings, an outline), through a
//! uniform grid of buckets: a query reads only the segments whose boxes meet its own box, not
//! every segment, so placing n vias inside an outline of m edges costs about n instead of n·m.
//!
//! Each distance is the one `geo` computes for a point and a segment
//! (`Euclidean.distance(&Point, &Line)`), so a minimum over the candidates is the same number
//! as the minimum over all segments whenever it lies within the query's reach.

use geo::{Coord, Distance, Euclidean, Line, LineString};
use kurbo::Point;

/// Segments bucketed on a uniform grid.
pub(crate) struct SegmentGrid {
    segs: Vec<Line<f64>>,
    /// Lower corner of the grid, mm.
    x0: f64,
    y0: f64,
    /// Side of a bucket, mm.
    cell: f64,
    nx: usize,
    ny: usize,
    /// Segment indices per bucket, row-major (`j·nx + i`).
    buckets: Vec<Vec<u32>>,
}

impl SegmentGrid {
    /// The segments of `rings` (each a closed or open polyline), on buckets about as many as
    /// the segments.
    pub(crate) fn new<'a>(rings: impl IntoIterator<Item = &'a LineString<f64>>) -> Self {
        let segs: Vec<Line<f64>> = rings.into_iter().flat_map(|r| r.lines()).collect();
        let (mut lo, mut hi) = (
            Coord {
                x: f64::INFINITY,
                y: f64::INFINITY,
            },
            Coord {
                x: f64::NEG_INFINITY,
                y: f64::NEG_INFINITY,
            },
        );
        for s in &segs {
            for c in [s.start, s.end] {
                lo.x = lo.x.min(c.x);
                lo.y = lo.y.min(c.y);
                hi.x = hi.x.max(c.x);
                hi.y = hi.y.max(c.y);
            }
        }
        if segs.is_empty() || !(lo.x.is_finite() && lo.y.is_finite()) {
            return SegmentGrid {
                segs,
                x0: 0.0,
                y0: 0.0,
                cell: 1.0,
                nx: 1,
                ny: 1,
                buckets: vec![Vec::new()],
            };
        }
        let (w, h) = ((hi.x - lo.x).max(1e-9), (hi.y - lo.y).max(1e-9));
        // About one bucket per segment, at most 4096 on a side.
        let cell = (w * h / segs.len() as f64).sqrt().max(w.max(h) / 4096.0);
        let nx = ((w / cell).floor() as usize + 1).min(4096);
        let ny = ((h / cell).floor() as usize + 1).min(4096);
        let mut g = SegmentGrid {
            segs: Vec::new(),
            x0: lo.x,
            y0: lo.y,
            cell,
            nx,
            ny,
            buckets: vec![Vec::new(); nx * ny],
        };
        for (k, s) in segs.iter().enumerate() {
            let (i0, j0, i1, j1) = g.span(
                s.start.x.min(s.end.x),
                s.start.y.min(s.end.y),
                s.start.x.max(s.end.x),
                s.start.y.max(s.end.y),
            );
            for j in j0..=j1 {
                for i in i0..=i1 {
                    g.buckets[j * nx + i].push(k as u32);
                }
            }
        }
        g.segs = segs;
        g
    }

    /// The buckets a box covers, clamped to the grid: (i0, j0, i1, j1).
    fn span(&self, x0: f64, y0: f64, x1: f64, y1: f64) -> (usize, usize, usize, usize) {
        let ix = |x: f64| (((x - self.x0) / self.cell).floor().max(0.0) as usize).min(self.nx - 1);
        let jy = |y: f64| (((y - self.y0) / self.cell).floor().max(0.0) as usize).min(self.ny - 1);
        (ix(x0), jy(y0), ix(x1), jy(y1))
    }

    /// The least distance from `q` to the segments, where it is at most `reach` (exactly the
    /// least over every segment); otherwise some value above `reach` (infinity when no
    /// segment's box comes within it).
    pub(crate) fn distance_within(&self, q: Point, reach: f64) -> f64 {
        if self.segs.is_empty() {
            return f64::INFINITY;
        }
        let r = reach.max(0.0);
        // A segment within `r` of q has a point in the disc, so its box meets the disc's box.
        let (i0, j0, i1, j1) = self.span(q.x - r, q.y - r, q.x + r, q.y + r);
        let pt = geo::Point::new(q.x, q.y);
        let mut best = f64::INFINITY;
        for j in j0..=j1 {
            for i in i0..=i1 {
                for &k in &self.buckets[j * self.nx + i] {
                    best = best.min(Euclidean.distance(&pt, &self.segs[k as usize]));
                }
            }
        }
        best
    }

    /// Whether the segment a–b crosses or touches any of the segments.
    pub(crate) fn crosses(&self, a: Coord<f64>, b: Coord<f64>) -> bool {
        use geo::Intersects;
        if self.segs.is_empty() {
            return false;
        }
        let l = Line::new(a, b);
        let (i0, j0, i1, j1) = self.span(a.x.min(b.x), a.y.min(b.y), a.x.max(b.x), a.y.max(b.y));
        (j0..=j1).any(|j| {
            (i0..=i1).any(|i| {
                self.buckets[j * self.nx + i]
                    .iter()
                    .any(|&k| self.segs[k as usize].intersects(&l))
            })
        })
    }
}

/// The distance between two polylines where it is at most `reach` (exactly `geo`'s distance
/// between them: 0 where they cross, else the least from a vertex of either to a segment of
/// the other); otherwise some value above `reach`.
pub(crate) fn polylines_within(a: &LineString<f64>, b: &LineString<f64>, reach: f64) -> f64 {
    let (ga, gb) = (SegmentGrid::new([a]), SegmentGrid::new([b]));
    if a.lines().any(|l| gb.crosses(l.start, l.end)) {
        return 0.0;
    }
    let from = |pts: &LineString<f64>, g: &SegmentGrid| {
        pts.0
            .iter()
            .map(|c| g.distance_within(Point::new(c.x, c.y), reach))
            .fold(f64::INFINITY, f64::min)
    };
    from(a, &gb).min(from(b, &ga))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::geom::{circle, edge_distance, rect};
    use geo::MultiPolygon;

    /// A region with many edges and a hole: a flattened ring on a handle.
    fn region() -> MultiPolygon<f64> {
        use geo::BooleanOps;
        let outer = MultiPolygon(vec![circle(Point::new(0.0, 10.0), 8.0)])
            .union(&MultiPolygon(vec![rect(-3.0, -25.0, 3.0, 4.0)]));
        outer.difference(&MultiPolygon(vec![circle(Point::new(0.0, 10.0), 5.0)]))
    }

    // Against the brute force over every ring (`geom::edge_distance`, geo's distances): the
    // same number wherever it is within the reach, and above the reach elsewhere.
    #[test]
    fn the_grid_gives_the_brute_force_distance_within_its_reach() {
        let m = region();
        let g = SegmentGrid::new(
            m.0.iter()
                .flat_map(|p| std::iter::once(p.exterior()).chain(p.interiors())),
        );
        let mut checked = 0;
        for i in -60..=60 {
            for j in -90..=60 {
                let q = Point::new(0.19 * i as f64, 0.31 * j as f64);
                let exact = edge_distance(&m, q);
                for reach in [0.05, 0.4, 2.0] {
                    let d = g.distance_within(q, reach);
                    if exact <= reach {
                        assert_eq!(d, exact, "{q:?} reach {reach}");
                        checked += 1;
                    } else {
                        assert!(d > reach, "{q:?} reach {reach}: {d} for {exact}");
                    }
                }
            }
        }
        assert!(checked > 1000, "{checked} points near the edges");
    }

    // Against geo's distance between line strings: apart, touching and crossing.
    #[test]
    fn polyline_distances_match_geo() {
        let ring = |r: f64, dy: f64| circle(Point::new(0.0, dy), r).exterior().clone();
        let big = ring(6.0, 0.0);
        for (other, reach) in [
            (ring(5.7, 0.0), 1.0),
            (ring(5.7, 0.2), 1.0),
            (ring(5.0, 1.5), 1.0),
            (ring(3.0, 0.0), 1.0),
            (ring(3.0, 0.0), 5.0),
        ] {
            let want = Euclidean.distance(&big, &other);
            let got = polylines_within(&big, &other, reach);
            if want <= reach {
                assert_eq!(got, want, "reach {reach}");
            } else {
                assert!(got > reach, "{got} for {want}");
            }
        }
    }
}
