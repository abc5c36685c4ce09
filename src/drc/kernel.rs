//! The geometry the design rules share: copper as polygons, boundary segments and their
//! closest points, near pairs by a sweep, nearest neighbours.

use super::slack;
use super::{Rule, Violation};
use crate::artwork::{Flash, PadFunction, Shape};
use crate::geom::{circle, rect};
use geo::{Coord, LineString, MultiPolygon};
use kurbo::Point;

/// A flash as a polygon.
pub fn flash_polygon(fl: &Flash) -> geo::Polygon<f64> {
    match fl.shape {
        Shape::Circle(d) => circle(fl.at, d / 2.0),
        Shape::Rect(w, h) => rect(
            fl.at.x - w / 2.0,
            fl.at.y - h / 2.0,
            fl.at.x + w / 2.0,
            fl.at.y + h / 2.0,
        ),
    }
}

/// Every copper layer's copper ([`layer_copper`]) and body ([`body_copper`]) for one check of
/// an artwork, each united once, when a rule first asks for it, and shared by every rule that
/// reads it (a probe's board, gap and electrode rules read each layer's several times).
pub(super) struct Coppers<'a> {
    layers: &'a [crate::artwork::CopperLayer],
    copper: Vec<std::sync::OnceLock<MultiPolygon<f64>>>,
    body: Vec<std::sync::OnceLock<MultiPolygon<f64>>>,
}

impl<'a> Coppers<'a> {
    pub(super) fn new(art: &'a crate::artwork::Artwork) -> Self {
        let n = art.copper.len();
        Coppers {
            layers: &art.copper,
            copper: (0..n).map(|_| Default::default()).collect(),
            body: (0..n).map(|_| Default::default()).collect(),
        }
    }

    /// The copper of `art.copper[i]`.
    pub(super) fn copper(&self, i: usize) -> &MultiPolygon<f64> {
        let l = &self.layers[i];
        self.copper[i].get_or_init(|| layer_copper(&l.regions, &l.flashes))
    }

    /// The body of `art.copper[i]`: its copper itself where it has no connector pad.
    pub(super) fn body(&self, i: usize) -> &MultiPolygon<f64> {
        let l = &self.layers[i];
        if l.flashes
            .iter()
            .all(|f| f.function != PadFunction::Connector)
        {
            return self.copper(i);
        }
        self.body[i].get_or_init(|| body_copper(l))
    }
}

/// A layer's copper without its connector pads (which may reach the board edge).
pub(super) fn body_copper(l: &crate::artwork::CopperLayer) -> MultiPolygon<f64> {
    let others: Vec<Flash> = l
        .flashes
        .iter()
        .filter(|f| f.function != PadFunction::Connector)
        .copied()
        .collect();
    layer_copper(&l.regions, &others)
}

/// A layer's copper: regions ∪ flashes, united in one pass (a sweep over every ring at once,
/// `geo::unary_union`, with each polygon oriented the same way first), not pad by pad, which
/// grew about as the square of the number of vias.
pub fn layer_copper(regions: &MultiPolygon<f64>, flashes: &[Flash]) -> MultiPolygon<f64> {
    use geo::orient::{Direction, Orient};
    if flashes.is_empty() {
        return regions.clone();
    }
    // Still a union when every pad is left out: the regions come out of it as they did with
    // their pads (snapped to the union's grid, in its order).
    let inside = Inside::new(regions);
    let flashes: Vec<&Flash> = flashes.iter().filter(|f| !inside.holds(f)).collect();
    let polys: Vec<geo::Polygon<f64>> = regions
        .0
        .iter()
        .cloned()
        .chain(flashes.iter().map(|f| flash_polygon(f)))
        .map(|p| p.orient(Direction::Default))
        .collect();
    geo::unary_union(&polys)
}

/// Which flashes lie wholly inside a region's copper, clear of its every edge by
/// [`INSIDE_CLEAR`] (a via's pad in the ground pour, most of a probe's): they add nothing to the
/// union, so [`layer_copper`] leaves them out (its cost is in the number of edges it sorts).
/// The union of the rest is the same polygons: byte for byte on the demo's boards; in general
/// up to the union's own rounding where a kept pad crossed a left-out one (under a nanometre).
struct Inside {
    /// Each region polygon's rings (closed point lists) and bounding box.
    polys: Vec<(Rings, geo::Rect<f64>)>,
}

/// How far a left-out pad keeps from every edge of its region, mm: ten steps of the artwork's
/// grid, far beyond the union's own rounding (tens of picometres on these boards).
const INSIDE_CLEAR: f64 = 10.0 * super::slack::GRID;

/// A polygon's rings, exterior first, each closed.
type Rings = Vec<Vec<Coord<f64>>>;

impl Inside {
    fn new(regions: &MultiPolygon<f64>) -> Self {
        use geo::BoundingRect;
        let polys = regions
            .0
            .iter()
            .filter_map(|p| {
                let rings = std::iter::once(p.exterior())
                    .chain(p.interiors())
                    .map(|r| r.0.clone())
                    .collect();
                p.bounding_rect().map(|b| (rings, b))
            })
            .collect();
        Inside { polys }
    }

    /// Whether the flash's polygon lies inside one region polygon, clear of its every edge:
    /// its centre inside (even-odd over the rings) and every edge farther than the flash's
    /// reach (its polygon's vertices lie on its circle, or its rectangle's corners).
    fn holds(&self, fl: &Flash) -> bool {
        let reach = match fl.shape {
            Shape::Circle(d) => d / 2.0,
            Shape::Rect(w, h) => 0.5 * w.hypot(h),
        };
        let (c, need) = (fl.at, reach + INSIDE_CLEAR);
        self.polys.iter().any(|(rings, b)| {
            if c.x - need < b.min().x
                || c.x + need > b.max().x
                || c.y - need < b.min().y
                || c.y + need > b.max().y
            {
                return false;
            }
            let mut odd = false;
            for r in rings {
                for w in r.windows(2) {
                    let (a, e) = (Point::new(w[0].x, w[0].y), Point::new(w[1].x, w[1].y));
                    if point_segment_distance(c, a, e) <= need {
                        return false;
                    }
                    if (a.y > c.y) != (e.y > c.y)
                        && c.x < (e.x - a.x) * (c.y - a.y) / (e.y - a.y) + a.x
                    {
                        odd = !odd;
                    }
                }
            }
            odd
        })
    }
}

/// Distance from `p` to the segment `a`–`b`.
fn point_segment_distance(p: Point, a: Point, b: Point) -> f64 {
    let ab = b - a;
    let l2 = ab.hypot2();
    let t = if l2 == 0.0 {
        0.0
    } else {
        ((p - a).dot(ab) / l2).clamp(0.0, 1.0)
    };
    (p - (a + ab * t)).hypot()
}

pub(super) struct Seg {
    pub(super) a: Point,
    pub(super) b: Point,
    pub(super) ring: usize,
    pub(super) s0: f64,
    pub(super) k: usize,
    pub(super) nseg: usize,
}

pub(super) fn rings_of(m: &MultiPolygon<f64>) -> Vec<Vec<Point>> {
    let mut out = Vec::new();
    for p in &m.0 {
        for r in std::iter::once(p.exterior()).chain(p.interiors()) {
            out.push(r.coords().map(|c| Point::new(c.x, c.y)).collect());
        }
    }
    out
}

pub(super) fn segments(rings: &[Vec<Point>]) -> (Vec<Seg>, Vec<f64>) {
    let mut segs = Vec::new();
    let mut lens = Vec::new();
    for (ri, r) in rings.iter().enumerate() {
        let mut s = 0.0;
        let nseg = r.len().saturating_sub(1);
        for (k, w) in r.windows(2).enumerate() {
            segs.push(Seg {
                a: w[0],
                b: w[1],
                ring: ri,
                s0: s,
                k,
                nseg,
            });
            s += (w[1] - w[0]).hypot();
        }
        lens.push(s);
    }
    (segs, lens)
}

/// Closest points between two segments: (distance, t on first, u on second).
pub(super) fn seg_seg(a: Point, b: Point, c: Point, d: Point) -> (f64, f64, f64) {
    let mut best = (f64::INFINITY, 0.0, 0.0);
    let proj = |p: Point, a: Point, b: Point| -> f64 {
        let ab = b - a;
        let l2 = ab.hypot2();
        if l2 == 0.0 {
            0.0
        } else {
            ((p - a).dot(ab) / l2).clamp(0.0, 1.0)
        }
    };
    for (t, u) in [
        (0.0, proj(a, c, d)),
        (1.0, proj(b, c, d)),
        (proj(c, a, b), 0.0),
        (proj(d, a, b), 1.0),
    ] {
        let p = a + (b - a) * t;
        let q = c + (d - c) * u;
        let dist = (p - q).hypot();
        if dist < best.0 {
            best = (dist, t, u);
        }
    }
    // Proper crossing.
    let cross = |o: Point, p: Point, q: Point| (p - o).cross(q - o);
    let (d1, d2) = (cross(a, b, c), cross(a, b, d));
    let (d3, d4) = (cross(c, d, a), cross(c, d, b));
    if d1 * d2 < 0.0 && d3 * d4 < 0.0 {
        let t = d3 / (d3 - d4);
        let u = d1 / (d1 - d2);
        return (0.0, t, u);
    }
    best
}

/// Pairs of segments whose bounding boxes, grown by `grow`, overlap (sweep over x).
pub(super) fn near_pairs(segs: &[Seg], grow: f64) -> Vec<(usize, usize)> {
    // Each segment's box and index side by side, in x order (ties in index order), so that the
    // scan reads memory in order rather than each segment through an index.
    let mut boxes: Vec<([f64; 4], usize)> = segs
        .iter()
        .enumerate()
        .map(|(i, s)| {
            let b = [
                s.a.x.min(s.b.x),
                s.a.x.max(s.b.x),
                s.a.y.min(s.b.y),
                s.a.y.max(s.b.y),
            ];
            (b, i)
        })
        .collect();
    boxes.sort_by(|p, q| p.0[0].total_cmp(&q.0[0]));
    let mut out = Vec::new();
    for (k, &([_, xmax, ymin, ymax], i)) in boxes.iter().enumerate() {
        let (xlim, ylo, yhi) = (xmax + grow, ymin - grow, ymax + grow);
        for &([bx0, _, by0, by1], j) in &boxes[k + 1..] {
            if bx0 > xlim {
                break;
            }
            if by1 < ylo || by0 > yhi {
                continue;
            }
            out.push((i.min(j), i.max(j)));
        }
    }
    out
}

pub(super) fn ring_ls(pts: &[Point]) -> LineString<f64> {
    LineString::from(
        pts.iter()
            .map(|p| Coord { x: p.x, y: p.y })
            .collect::<Vec<_>>(),
    )
}

/// Each via with its nearest neighbour's distance; a via whose nearest neighbour is farther than
/// `pitch_max` is reported as a violation.
pub(super) fn nearest_neighbours(
    vias: &[Point],
    pitch_max: f64,
    out: &mut Vec<Violation>,
) -> Vec<(Point, f64)> {
    let mut all = Vec::with_capacity(vias.len());
    for (i, v) in vias.iter().enumerate() {
        let nn = vias
            .iter()
            .enumerate()
            .filter(|(j, _)| *j != i)
            .map(|(_, w)| (*w - *v).hypot())
            .fold(f64::INFINITY, f64::min);
        if nn > pitch_max + slack::GRID {
            out.push(Violation {
                rule: Rule::ViaPitchAboveLimit,
                layer: "drill".into(),
                at: *v,
                detail: format!("nearest via {nn:.3} mm > {pitch_max:.3} mm (λ/N)"),
            });
        }
        all.push((*v, nn));
    }
    all
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::artwork::PadFunction;
    use geo::{Area, BooleanOps};

    // The sweep finds exactly the pairs whose grown boxes overlap (against every pair tested
    // directly), each once, on rings of many short segments and a few long ones, with ties in x.
    #[test]
    fn near_pairs_are_every_overlapping_pair_once() {
        let mut rings = Vec::new();
        let mut s = 0x2545_f491_4f6c_dd1d_u64;
        let mut next = || {
            s ^= s << 13;
            s ^= s >> 7;
            s ^= s << 17;
            (s >> 11) as f64 / (1u64 << 53) as f64
        };
        for _ in 0..6 {
            let (cx, cy, r) = (10.0 * next(), 30.0 * next(), 0.5 + 3.0 * next());
            let n = 8 + (40.0 * next()) as usize;
            let mut ring: Vec<Point> = (0..n)
                .map(|k| {
                    let t = std::f64::consts::TAU * k as f64 / n as f64;
                    // Rounded to a 0.1 mm grid: many boxes start at the same x.
                    let round = |v: f64| (v * 10.0).round() / 10.0;
                    Point::new(round(cx + r * t.cos()), round(cy + r * t.sin()))
                })
                .collect();
            ring.push(ring[0]);
            rings.push(ring);
        }
        let (segs, _) = segments(&rings);
        for grow in [0.0, 0.3, 2.0] {
            let pairs = near_pairs(&segs, grow);
            let mut sorted = pairs.clone();
            sorted.sort_unstable();
            sorted.dedup();
            assert_eq!(sorted.len(), pairs.len(), "each pair once");
            let bx = |s: &Seg| {
                (
                    s.a.x.min(s.b.x),
                    s.a.x.max(s.b.x),
                    s.a.y.min(s.b.y),
                    s.a.y.max(s.b.y),
                )
            };
            let mut direct = Vec::new();
            for i in 0..segs.len() {
                for j in i + 1..segs.len() {
                    let (p, q) = (bx(&segs[i]), bx(&segs[j]));
                    let x = p.0 <= q.1 + grow && q.0 <= p.1 + grow;
                    let y = p.2 <= q.3 + grow && q.2 <= p.3 + grow;
                    if x && y {
                        direct.push((i, j));
                    }
                }
            }
            assert_eq!(sorted, direct, "grow {grow}");
        }
    }

    fn via(x: f64, y: f64, d: f64) -> Flash {
        Flash {
            at: Point::new(x, y),
            shape: Shape::Circle(d),
            function: PadFunction::Via,
        }
    }

    // A pour with a hole: pads well inside it are left out of the union, pads that cross its
    // edge, sit in its hole, touch the hole's edge or stand outside are kept; and the copper
    // is the union of everything (its area and its difference from the whole union are the
    // arithmetic check).
    #[test]
    fn pads_inside_the_pour_are_left_out_and_the_copper_is_unchanged() {
        let pour = rect(0.0, 0.0, 10.0, 6.0)
            .difference(&rect(4.0, 2.0, 6.0, 4.0))
            .0
            .remove(0);
        let regions = MultiPolygon(vec![pour]);
        let pads = [
            via(1.0, 1.0, 0.6),  // inside
            via(8.0, 5.0, 0.6),  // inside
            via(0.1, 3.0, 0.6),  // across the outer edge
            via(5.0, 3.0, 0.6),  // in the hole
            via(4.0, 3.0, 0.6),  // on the hole's edge
            via(3.65, 3.0, 0.6), // 0.05 mm clear of the hole's edge: inside
            via(3.8, 3.0, 0.6),  // reaching 0.1 mm into the hole
            via(12.0, 3.0, 0.6), // outside
            Flash {
                at: Point::new(2.0, 5.0),
                shape: Shape::Rect(1.0, 0.5),
                function: PadFunction::Via,
            }, // inside
        ];
        let inside = Inside::new(&regions);
        let held: Vec<bool> = pads.iter().map(|f| inside.holds(f)).collect();
        assert_eq!(
            held,
            [true, true, false, false, false, true, false, false, true],
            "{held:?}"
        );
        let all: Vec<geo::Polygon<f64>> = regions
            .0
            .iter()
            .cloned()
            .chain(pads.iter().map(flash_polygon))
            .collect();
        let whole = geo::unary_union(&all);
        let copper = layer_copper(&regions, &pads);
        assert!((copper.unsigned_area() - whole.unsigned_area()).abs() < 1e-9);
        assert!(copper.xor(&whole).unsigned_area() < 1e-9);
        // Every pad inside (an inner shield layer): the copper is the union's, to the bit.
        let inner: Vec<Flash> = pads.iter().filter(|f| inside.holds(f)).copied().collect();
        assert_eq!(inner.len(), 4);
        let all: Vec<geo::Polygon<f64>> = regions
            .0
            .iter()
            .cloned()
            .chain(inner.iter().map(flash_polygon))
            .collect();
        assert_eq!(layer_copper(&regions, &inner), geo::unary_union(&all));
    }
}
