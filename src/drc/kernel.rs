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
    let polys: Vec<geo::Polygon<f64>> = regions
        .0
        .iter()
        .cloned()
        .chain(flashes.iter().map(flash_polygon))
        .map(|p| p.orient(Direction::Default))
        .collect();
    geo::unary_union(&polys)
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
    let mut idx: Vec<usize> = (0..segs.len()).collect();
    let xmin = |s: &Seg| s.a.x.min(s.b.x);
    let xmax = |s: &Seg| s.a.x.max(s.b.x);
    idx.sort_by(|&i, &j| xmin(&segs[i]).total_cmp(&xmin(&segs[j])));
    let mut out = Vec::new();
    for (k, &i) in idx.iter().enumerate() {
        let si = &segs[i];
        let (ylo, yhi) = (si.a.y.min(si.b.y) - grow, si.a.y.max(si.b.y) + grow);
        for &j in &idx[k + 1..] {
            let sj = &segs[j];
            if xmin(sj) > xmax(si) + grow {
                break;
            }
            if sj.a.y.max(sj.b.y) < ylo || sj.a.y.min(sj.b.y) > yhi {
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
