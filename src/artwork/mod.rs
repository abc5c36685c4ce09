//! Layer artwork: what each fabrication layer holds, as regions, flashes and strokes, with every
//! coordinate snapped to the 1 nm grid the Gerber files use. The emitters write this one-to-one
//! (they compute no geometry) and the design-rule check reads it, so the check sees exactly what
//! is emitted.

use crate::geom::{Board, Pad, ViaRole, circle, rect, stroke_butt};
use crate::model::probe::Probe;
use geo::{BooleanOps, Coord, LineString, MultiPolygon, Polygon};
use kurbo::Point;

pub mod fixture;
pub mod panel;

/// The net every copper object of a probe belongs to: the loop trace is shorted to the shield at
/// its far end, so the whole probe is one net at DC (the fab's electrical test must expect the
/// centre pad to be continuous with the shield).
pub const NET: &str = "PROBE";

/// An electric probe's nets: its electrode and line (open to the shield at DC, so the fab's
/// electrical test must find the centre pad isolated from the shield) and its shield.
pub const ELECTRODE_NET: &str = "ELECTRODE";
/// An electric probe's shield net.
pub const SHIELD_NET: &str = "SHIELD";

/// Net names of a board's copper objects (the Gerber `.N` attribute).
#[derive(Debug, Clone, PartialEq)]
pub struct Nets {
    /// The net of every object in none of `areas`; `None`: not connected (`N/C`, as for a
    /// panel's fiducials).
    pub default: Option<String>,
    /// Nets and the areas they cover: an object whose first point (a region's first vertex, a
    /// flash's centre) lies in an area belongs to the first such net.
    pub areas: Vec<(String, MultiPolygon<f64>)>,
}

impl Nets {
    /// One net for everything.
    pub fn one(name: &str) -> Nets {
        Nets {
            default: Some(name.to_string()),
            areas: Vec::new(),
        }
    }

    /// The nets with each area's bounding box, for looking up many objects' nets
    /// ([`LocatedNets::at`]: a point outside a box skips its area's edges).
    pub fn located(&self) -> LocatedNets<'_> {
        use geo::BoundingRect;
        LocatedNets {
            nets: self,
            boxes: self.areas.iter().map(|(_, a)| a.bounding_rect()).collect(),
        }
    }
}

/// [`Nets`] with each area's bounding box ([`Nets::located`]).
#[derive(Debug, Clone)]
pub struct LocatedNets<'a> {
    nets: &'a Nets,
    boxes: Vec<Option<geo::Rect<f64>>>,
}

impl<'a> LocatedNets<'a> {
    /// The net of an object whose first point is `p`: the first area that holds it, else the
    /// default (`None`: not connected).
    pub fn at(&self, p: Point) -> Option<&'a str> {
        use geo::Intersects;
        let q = geo::Point::new(p.x, p.y);
        self.nets
            .areas
            .iter()
            .zip(&self.boxes)
            .find(|((_, area), b)| {
                // A point outside the box is outside the area (an empty area has no box).
                b.is_some_and(|r| {
                    p.x >= r.min().x && p.x <= r.max().x && p.y >= r.min().y && p.y <= r.max().y
                }) && area.intersects(&q)
            })
            .map(|((name, _), _)| name.as_str())
            .or(self.nets.default.as_deref())
    }
}

/// What a flash is for (its Gerber aperture function).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum PadFunction {
    /// A via pad.
    Via,
    /// A connector pad (surface, edge launch).
    Connector,
    /// A pad around a plated component hole.
    Component,
    /// A solder-mask opening (on mask layers).
    MaskOpening,
    /// A panel's fiducial (a bare copper dot for the assembler's vision system).
    Fiducial,
}

/// An aperture shape (mm, snapped to nm).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Shape {
    /// Circle of diameter.
    Circle(f64),
    /// Rectangle w × h.
    Rect(f64, f64),
}

impl Shape {
    /// The pad's narrowest width (a circle's diameter, a rectangle's shorter side): what an
    /// annular ring is measured across.
    pub fn least_width(self) -> f64 {
        match self {
            Shape::Circle(x) => x,
            Shape::Rect(w, h) => w.min(h),
        }
    }
}

impl Artwork {
    /// The pads flashed round `d` on every copper layer, with their layer number: centred on
    /// it within one step of the 1 nm grid every coordinate is snapped to ([`snap`]).
    pub fn pads_round(&self, d: &Drill) -> impl Iterator<Item = (usize, &Flash)> {
        let at = d.at;
        self.copper.iter().flat_map(move |l| {
            l.flashes
                .iter()
                .filter(move |f| (f.at - at).hypot() < 1e-6)
                .map(move |f| (l.n, f))
        })
    }
}

/// A flashed pad.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Flash {
    /// Centre, mm (snapped).
    pub at: Point,
    /// Shape.
    pub shape: Shape,
    /// Function.
    pub function: PadFunction,
}

/// Which side an outer layer faces.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Side {
    /// Top.
    Top,
    /// Inner.
    Inner,
    /// Bottom.
    Bottom,
}

impl Side {
    /// The side of copper layer `n` (1 = top) of `count`.
    pub fn of(n: usize, count: usize) -> Side {
        if n == 1 {
            Side::Top
        } else if n == count {
            Side::Bottom
        } else {
            Side::Inner
        }
    }
}

/// One copper layer.
#[derive(Debug, Clone)]
pub struct CopperLayer {
    /// Layer number, 1 = top.
    pub n: usize,
    /// Side.
    pub side: Side,
    /// True for the loop's signal layer.
    pub signal: bool,
    /// The layer holds signal copper (the loop trace, the top link and centre pad, the test
    /// line) beside ground: its file is a `Mixed` copper layer; ground alone is `Plane`.
    pub mixed: bool,
    /// Copper regions (nm-snapped; holes are interiors).
    pub regions: MultiPolygon<f64>,
    /// Flashed pads.
    pub flashes: Vec<Flash>,
}

/// A drilled hole.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Drill {
    /// Centre, mm.
    pub at: Point,
    /// Finished diameter, mm.
    pub d: f64,
    /// Plated.
    pub plated: bool,
    /// A via (true) or a component hole.
    pub via: bool,
    /// A hole drilled for the fab's own use, not the board's: a panel's tooling hole or a
    /// tab's perforation (never plated).
    pub mechanical: Option<Mechanical>,
}

/// What a mechanical hole is for (the Gerber format's drill functions).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Mechanical {
    /// A panel's tooling hole (registration).
    Tooling,
    /// A breakaway tab's perforation.
    BreakOut,
}

/// All artwork of one probe board.
#[derive(Debug, Clone)]
pub struct Artwork {
    /// Copper layers, top to bottom.
    pub copper: Vec<CopperLayer>,
    /// Solder-mask openings, top side.
    pub mask_top: Vec<Flash>,
    /// Solder-mask openings, bottom side.
    pub mask_bottom: Vec<Flash>,
    /// Silkscreen strokes, top (nm-snapped).
    pub silk_top: Vec<Vec<Point>>,
    /// Silkscreen strokes, bottom.
    pub silk_bottom: Vec<Vec<Point>>,
    /// Silk line width, mm.
    pub silk_width: f64,
    /// Board outline rings (exterior first), closed.
    pub profile: Vec<Vec<Point>>,
    /// Holes.
    pub drills: Vec<Drill>,
    /// A loop's shield gap rectangles (x0, y0, x1, y1), for checks: one at a singly-loaded
    /// loop's apex, two at a balanced loop's sides; none on an electric probe or a fixture.
    pub gap_rects: Vec<(f64, f64, f64, f64)>,
    /// Net names of the copper objects.
    pub nets: Nets,
    /// What the signal layer and the other copper layers carry, for legends.
    pub layer_roles: (&'static str, &'static str),
}

/// Rounds a length to the 1 nm grid.
pub fn snap(v: f64) -> f64 {
    (v * 1e6).round() / 1e6
}

pub(crate) fn snap_pt(p: Point) -> Point {
    Point::new(snap(p.x), snap(p.y))
}

fn snap_ring(ls: &LineString<f64>) -> LineString<f64> {
    let mut v: Vec<Coord<f64>> = ls
        .coords()
        .map(|c| Coord {
            x: snap(c.x),
            y: snap(c.y),
        })
        .collect();
    v.dedup();
    // Drop exactly collinear vertices (after snapping), and the sub-micrometre spikes polygon
    // offsetting can leave at joins (a vertex where the contour turns back on itself over less
    // than 0.1 µm). Both tests are exact or mirror-invariant, so symmetric input stays symmetric.
    if v.len() > 1 && v.first() == v.last() {
        v.pop();
    }
    let drop = |a: Coord<f64>, b: Coord<f64>, c: Coord<f64>| -> bool {
        let (ux, uy, wx, wy) = (b.x - a.x, b.y - a.y, c.x - b.x, c.y - b.y);
        let cross = ux * wy - uy * wx;
        let dot = ux * wx + uy * wy;
        let (lu, lw) = ((ux * ux + uy * uy).sqrt(), (wx * wx + wy * wy).sqrt());
        let collinear = cross == 0.0 && dot > 0.0;
        let spike = dot < 0.0 && cross.abs() <= 0.2 * (-dot) && lu.min(lw) < 1e-4;
        collinear || spike || lu == 0.0
    };
    let mut changed = true;
    while changed && v.len() > 3 {
        changed = false;
        let mut i = 0;
        while i < v.len() && v.len() > 3 {
            let n = v.len();
            let (a, b, c) = (v[(i + n - 1) % n], v[i], v[(i + 1) % n]);
            if drop(a, b, c) {
                v.remove(i);
                changed = true;
            } else {
                i += 1;
            }
        }
    }
    let out = v;
    let mut ls = LineString::from(out);
    ls.close();
    ls
}

/// Snaps every coordinate of a region set to the nm grid and drops slivers below 1e-6 mm².
pub fn snap_regions(m: &MultiPolygon<f64>) -> MultiPolygon<f64> {
    use geo::Area;
    MultiPolygon(
        m.0.iter()
            .map(|p| {
                Polygon::new(
                    snap_ring(p.exterior()),
                    p.interiors()
                        .iter()
                        .map(snap_ring)
                        .filter(|r| r.0.len() >= 4)
                        .collect(),
                )
            })
            .filter(|p| p.exterior().0.len() >= 4 && p.unsigned_area() > 1e-6)
            .collect(),
    )
}

pub(crate) fn pad_flash(pd: &Pad) -> Flash {
    Flash {
        at: snap_pt(pd.at),
        shape: Shape::Rect(snap(pd.w), snap(pd.h)),
        function: PadFunction::Connector,
    }
}

/// The plated drills of vias.
pub(crate) fn via_drills(vias: &[crate::geom::Via]) -> Vec<Drill> {
    vias.iter()
        .map(|v| Drill {
            at: snap_pt(v.at),
            d: snap(v.drill),
            plated: true,
            via: true,
            mechanical: None,
        })
        .collect()
}

/// The solder-mask opening of a pad: the pad grown by the mask expansion on every side.
pub(crate) fn mask_opening(pd: &Pad, exp: f64) -> Flash {
    Flash {
        at: snap_pt(pd.at),
        shape: Shape::Rect(snap(pd.w + 2.0 * exp), snap(pd.h + 2.0 * exp)),
        function: PadFunction::MaskOpening,
    }
}

/// One line's launch as the artwork draws it: its signal via, the connector's centre pad, its
/// centreline on the signal layer (to the loop's exit and whole) and its top link.
struct Port {
    sv: crate::geom::Via,
    centre: Pad,
    channel_path: Vec<Point>,
    trace_path: Vec<Point>,
    top_path: Vec<Point>,
}

/// The board's lines: the one it draws, and on a balanced loop its mirror image.
fn ports(b: &Board) -> Vec<Port> {
    use crate::geom::shape::mirror;
    let sv = *b
        .vias
        .iter()
        .find(|v| v.role == ViaRole::Signal)
        .expect("a board always has its signal via");
    // The line's own centre pad: the one on its side of the axis (on the axis for one line).
    let centre = *b
        .pads
        .iter()
        .filter(|pd| pd.centre)
        .min_by(|a, c| {
            (a.at.x - sv.at.x)
                .abs()
                .total_cmp(&(c.at.x - sv.at.x).abs())
        })
        .expect("centre pad");
    let one = Port {
        sv,
        centre,
        channel_path: b.trace_path[..=b.exit_index].to_vec(),
        trace_path: b.trace_path.clone(),
        top_path: b.top_path.clone(),
    };
    if !b.mirrored {
        return vec![one];
    }
    let m = |v: &[Point]| v.iter().map(|q| mirror(*q)).collect::<Vec<_>>();
    let other = Port {
        sv: crate::geom::Via {
            at: mirror(sv.at),
            ..sv
        },
        centre: Pad {
            at: mirror(centre.at),
            ..centre
        },
        channel_path: m(&one.channel_path),
        trace_path: m(&one.trace_path),
        top_path: m(&one.top_path),
    };
    vec![one, other]
}

/// Turns the board into layer artwork.
pub fn compose(p: &Probe, b: &Board) -> Artwork {
    let n_layers = p.stackup.copper_count();
    let c = b.launch.clearance;
    let ports = ports(b);
    // A loop's shield gaps (x0, y0, x1, y1); an electric probe has none.
    let gap_rects: Vec<(f64, f64, f64, f64)> = b
        .loop_head
        .as_ref()
        .map(|h| h.gaps.clone())
        .unwrap_or_default();
    // An electric probe's electrode: a disc on both outer layers, its via in the middle.
    let electrode = p
        .kind
        .electrode()
        .map(|e| MultiPolygon(vec![circle(Point::ZERO, e.diameter / 2.0)]));
    let gap = MultiPolygon(
        gap_rects
            .iter()
            .map(|&(x0, y0, x1, y1)| rect(x0, y0, x1, y1))
            .collect(),
    );
    // The anti-pad clears the via pad and the ends of both lines that meet it.
    let sv_pad_d = ports[0].sv.pad;
    let antipad_r = sv_pad_d.max(b.trace_width).max(b.launch.top_width) / 2.0 + c;
    let discs = |r: f64| -> Vec<MultiPolygon<f64>> {
        ports
            .iter()
            .map(|pt| MultiPolygon(vec![circle(pt.sv.at, r)]))
            .collect()
    };
    let antipad = discs(antipad_r);
    // Between layer 1 and the loop's layer the via is a coaxial barrel, below it a stub: their
    // antipads are the launch solve's.
    let stub_antipad = discs(antipad_r.max(b.launch.stub_antipad_d / 2.0));
    let barrel_antipad = discs(antipad_r.max(b.launch.barrel_antipad_d / 2.0));
    let sv_pad = discs(sv_pad_d / 2.0);
    let shield_cut = b.shield.difference(&gap);
    // The signal via's antipad radius on layer n: the link's on L1, the barrel's down to the
    // loop's layer, the stub's below it.
    let antipad_r_on = |n: usize| {
        if n > p.signal_layer {
            antipad_r.max(b.launch.stub_antipad_d / 2.0)
        } else if n > 1 {
            antipad_r.max(b.launch.barrel_antipad_d / 2.0)
        } else {
            antipad_r
        }
    };
    // Copper narrower than this between two clearances is a sliver: the clearances are joined.
    let sliver = 2.0 * p.fab.min_trace.max(p.fab.min_space);
    // The relief under the connector's centre pad, on the layers the launch solve chose: the
    // pad grown by its gap across, from beyond the board edge to the pad's inner end.
    let relief = |n: usize, pt: &Port| -> MultiPolygon<f64> {
        let centre = pt.centre;
        if !b.launch.relief_layers.contains(&n) {
            return MultiPolygon(vec![]);
        }
        // Where the signal via's antipad on this layer comes within a sliver of the relief's
        // end, the relief runs on into the antipad (no copper sliver between them).
        let pad_end = centre.at.y + centre.h / 2.0;
        let web = pt.sv.at.y - antipad_r_on(n) - pad_end;
        let top = if web < sliver { pt.sv.at.y } else { pad_end };
        MultiPolygon(vec![rect(
            centre.at.x - centre.w / 2.0 - b.launch.pad_gap,
            centre.at.y - centre.h / 2.0 - 1.0,
            centre.at.x + centre.w / 2.0 + b.launch.pad_gap,
            top,
        )])
    };
    // Where the signal via's antipad on an inner or bottom layer comes within a sliver of the
    // copper's pullback from the connector edge (a large copper-to-edge rule), the antipad runs
    // on to the edge as wide as itself: no copper neck narrower than a trace between them.
    let edge_web = |n: usize, pt: &Port| -> MultiPolygon<f64> {
        let r_n = antipad_r_on(n);
        let web = pt.sv.at.y - r_n - (b.edge_y + p.fab.copper_to_edge);
        if n == 1 || n == p.signal_layer || web >= sliver {
            return MultiPolygon(vec![]);
        }
        MultiPolygon(vec![rect(
            pt.sv.at.x - r_n,
            b.edge_y - 1.0,
            pt.sv.at.x + r_n,
            pt.sv.at.y,
        )])
    };
    // Each line's cuts taken one after the other, then its copper added: one line gives the
    // same operations as before there were two.
    let cut_all = |mut m: MultiPolygon<f64>, cuts: &[MultiPolygon<f64>]| {
        for k in cuts {
            m = m.difference(k);
        }
        m
    };
    let add_all = |mut m: MultiPolygon<f64>, adds: &[MultiPolygon<f64>]| {
        for k in adds {
            m = m.union(k);
        }
        m
    };
    // A multi-turn loop's join vias: an antipad (the pad and a clearance) on every layer; their
    // lands are flashed where they join and on the outer layers.
    let join_antipads = MultiPolygon(
        b.joins
            .iter()
            .map(|j| circle(j.at, p.vias.pad / 2.0 + c))
            .collect(),
    );
    let mut copper = Vec::new();
    for n in 1..=n_layers {
        let side = Side::of(n, n_layers);
        let turn = b.turns.iter().find(|t| t.layer == n);
        let signal = n == p.signal_layer || turn.is_some();
        let mut regions = if let Some(t) = turn {
            // A later turn of a multi-turn loop: its channel cut from the shield as the first
            // turn's is, the signal via's stub antipad and the joins' antipads, then its trace.
            let mut m = shield_cut.clone();
            for (i, pt) in ports.iter().enumerate() {
                m = cut_all(
                    m,
                    &[stub_antipad[i].clone(), relief(n, pt), edge_web(n, pt)],
                );
            }
            let channel = stroke_butt(&t.path[..=t.channel_end], t.width / 2.0 + c);
            m = cut_all(m, &[channel, join_antipads.clone()]);
            add_all(m, &[stroke_butt(&t.path, t.width / 2.0)])
        } else if n == p.signal_layer {
            let mut m = shield_cut.clone();
            for (i, pt) in ports.iter().enumerate() {
                let channel = stroke_butt(&pt.channel_path, b.trace_width / 2.0 + c);
                m = cut_all(m, &[channel, antipad[i].clone(), relief(n, pt)]);
            }
            if !b.joins.is_empty() {
                m = m.difference(&join_antipads);
            }
            for (i, pt) in ports.iter().enumerate() {
                let trace = stroke_butt(&pt.trace_path, b.trace_width / 2.0);
                m = add_all(m, &[trace, sv_pad[i].clone()]);
            }
            m
        } else if n == 1 {
            let g = b.launch.pad_gap;
            let mut m = shield_cut.clone();
            for (i, pt) in ports.iter().enumerate() {
                let centre = pt.centre;
                let pad_clear = MultiPolygon(vec![rect(
                    centre.at.x - centre.w / 2.0 - g,
                    centre.at.y - centre.h / 2.0 - 1.0,
                    centre.at.x + centre.w / 2.0 + g,
                    centre.at.y + centre.h / 2.0 + c,
                )]);
                let channel = stroke_butt(&pt.top_path, b.launch.top_width / 2.0 + c);
                m = cut_all(m, &[channel, antipad[i].clone(), pad_clear]);
            }
            if !b.joins.is_empty() {
                m = m.difference(&join_antipads);
            }
            for (i, pt) in ports.iter().enumerate() {
                let link = stroke_butt(&pt.top_path, b.launch.top_width / 2.0);
                m = add_all(m, &[link, sv_pad[i].clone()]);
            }
            m
        } else {
            let mut m = shield_cut.clone();
            for (i, pt) in ports.iter().enumerate() {
                let a = if n > p.signal_layer {
                    stub_antipad[i].clone()
                } else {
                    barrel_antipad[i].clone()
                };
                m = cut_all(m, &[a, relief(n, pt), edge_web(n, pt)]);
            }
            if !b.joins.is_empty() {
                m = m.difference(&join_antipads);
            }
            m
        };
        if let Some(disc) = &electrode
            && (n == 1 || n == n_layers)
        {
            regions = regions.union(disc);
        }
        let mut flashes = Vec::new();
        for v in &b.vias {
            // The signal via has lands where it connects (L1, the loop's layer) and an isolated
            // land on the bottom layer, so both outer layers carry a pad around the hole; the
            // electrode's via has lands where it joins (the discs, the line's end).
            let lands_only = matches!(v.role, ViaRole::Signal | ViaRole::Electrode);
            let joins = if v.role == ViaRole::Join {
                // A join via lands on its two turns' layers and, isolated, on the outer layers.
                n == 1
                    || n == n_layers
                    || b.joins
                        .iter()
                        .any(|j| (j.at - v.at).hypot() < 1e-9 && (j.upper == n || j.lower == n))
            } else {
                !lands_only || n == 1 || n == p.signal_layer || n == n_layers
            };
            if joins {
                flashes.push(Flash {
                    at: snap_pt(v.at),
                    shape: Shape::Circle(snap(v.pad)),
                    function: PadFunction::Via,
                });
            }
        }
        for h in &b.holes {
            flashes.push(Flash {
                at: snap_pt(h.at),
                shape: Shape::Circle(snap(h.pad)),
                function: PadFunction::Component,
            });
        }
        for pd in &b.pads {
            if (pd.top && n == 1) || (!pd.top && n == n_layers) {
                flashes.push(pad_flash(pd));
            }
        }
        copper.push(CopperLayer {
            n,
            side,
            signal,
            // L1 carries the centre pad and the link to the signal via.
            mixed: signal || n == 1,
            regions: snap_regions(&regions),
            flashes,
        });
    }
    let exp = p.fab.mask_expansion;
    let opening = |pd: &Pad| mask_opening(pd, exp);
    // A hole through a connector pad is already inside that pad's opening: no second opening
    // (two overlapping openings would leave a zero-width web between them).
    let inside_pad = |h: &crate::geom::Hole| {
        b.pads.iter().any(|pd| {
            (h.at.x - pd.at.x).abs() + h.pad / 2.0 <= pd.w / 2.0 + 1e-9
                && (h.at.y - pd.at.y).abs() + h.pad / 2.0 <= pd.h / 2.0 + 1e-9
        })
    };
    let hole_openings = b.holes.iter().filter(|h| !inside_pad(h)).map(|h| Flash {
        at: snap_pt(h.at),
        shape: Shape::Circle(snap(h.pad + 2.0 * exp)),
        function: PadFunction::MaskOpening,
    });
    // The electrode is bare copper on both sides: the mask opens over it, grown by the mask
    // expansion.
    let electrode_opening = p.kind.electrode().map(|e| Flash {
        at: Point::ZERO,
        shape: Shape::Circle(snap(e.diameter + 2.0 * exp)),
        function: PadFunction::MaskOpening,
    });
    let mask_top = b
        .pads
        .iter()
        .filter(|pd| pd.top)
        .map(opening)
        .chain(hole_openings.clone())
        .chain(electrode_opening)
        .collect();
    let mask_bottom = b
        .pads
        .iter()
        .filter(|pd| !pd.top)
        .map(opening)
        .chain(hole_openings)
        .chain(electrode_opening)
        .collect();
    let snap_strokes = |v: &[Vec<Point>]| -> Vec<Vec<Point>> {
        v.iter()
            .map(|s| {
                let mut s: Vec<Point> = s.iter().map(|q| snap_pt(*q)).collect();
                s.dedup();
                if s.len() == 1 {
                    s.push(s[0]);
                }
                s
            })
            .collect()
    };
    let mut profile = vec![ring_points(b.outline.exterior())];
    for r in b.outline.interiors() {
        profile.push(ring_points(r));
    }
    let mut drills = via_drills(&b.vias);
    drills.extend(b.holes.iter().map(|h| Drill {
        at: snap_pt(h.at),
        d: snap(h.drill),
        plated: true,
        via: false,
        mechanical: None,
    }));
    Artwork {
        copper,
        mask_top,
        mask_bottom,
        silk_top: snap_strokes(&b.silk_top),
        silk_bottom: snap_strokes(&b.silk_bottom),
        silk_width: snap(p.fab.silk_width),
        profile,
        drills,
        gap_rects,
        nets: match &electrode {
            None => Nets::one(NET),
            Some(disc) => electric_nets(p, b, disc, ports[0].sv.at),
        },
        layer_roles: if electrode.is_some() {
            ("line to the electrode", "shield")
        } else {
            ("loop trace", "shield")
        },
    }
}

/// An electric probe's nets: the electrode's copper (its discs, its via's lands, the line, the
/// top link, the signal via's lands and the connector's centre pad), grown by 1 µm so that the
/// first vertex of each of its regions, snapped to the grid, lies inside; everything else is
/// the shield.
fn electric_nets(p: &Probe, b: &Board, disc: &MultiPolygon<f64>, sv: Point) -> Nets {
    let pad = p.vias.pad / 2.0;
    let centre = b.pads.iter().find(|pd| pd.centre).expect("centre pad");
    let signal = disc
        .union(&stroke_butt(&b.trace_path, b.trace_width / 2.0))
        .union(&stroke_butt(&b.top_path, b.launch.top_width / 2.0))
        .union(&MultiPolygon(vec![circle(sv, pad)]))
        .union(&MultiPolygon(vec![circle(Point::ZERO, pad)]))
        .union(&MultiPolygon(vec![rect(
            centre.at.x - centre.w / 2.0,
            centre.at.y - centre.h / 2.0,
            centre.at.x + centre.w / 2.0,
            centre.at.y + centre.h / 2.0,
        )]));
    Nets {
        default: Some(SHIELD_NET.to_string()),
        areas: vec![(
            ELECTRODE_NET.to_string(),
            crate::geom::round_buffer(&signal, 1e-3),
        )],
    }
}

pub(crate) fn ring_points(ls: &LineString<f64>) -> Vec<Point> {
    let r = snap_ring(ls);
    r.coords().map(|c| Point::new(c.x, c.y)).collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::geom::{circle, rect};
    use geo::Intersects;

    /// The boxed lookup names the net a plain scan of the areas names, on a grid over areas
    /// that overlap, have holes and lie apart, and the default elsewhere.
    #[test]
    fn located_nets_match_the_plain_scan() {
        let ring = MultiPolygon(vec![rect(-3.0, -3.0, 3.0, 3.0)])
            .difference(&MultiPolygon(vec![circle(Point::ZERO, 1.5)]));
        let nets = Nets {
            default: Some("GND".into()),
            areas: vec![
                ("A".into(), ring),
                (
                    "B".into(),
                    MultiPolygon(vec![circle(Point::new(2.5, 0.0), 1.0)]),
                ),
                ("C".into(), MultiPolygon(vec![rect(6.0, -1.0, 9.0, 1.0)])),
                ("D".into(), MultiPolygon(vec![])),
            ],
        };
        let located = nets.located();
        for i in -50..=100 {
            for j in -40..=40 {
                let p = Point::new(i as f64 * 0.1, j as f64 * 0.1);
                let q = geo::Point::new(p.x, p.y);
                let plain = nets
                    .areas
                    .iter()
                    .find(|(_, a)| a.intersects(&q))
                    .map(|(n, _)| n.as_str())
                    .or(nets.default.as_deref());
                assert_eq!(located.at(p), plain, "{p:?}");
            }
        }
    }
}
