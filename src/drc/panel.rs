//! The design-rule check of a panel itself (each board has had its own check): spacing between
//! boards and rails, tab count and placement, that every board hangs on the frame and no loose
//! waste is left, and that fiducials, tooling holes and perforations keep clear of copper.
//! Measured on the panel's artwork and layout as emitted.

use crate::artwork::{Artwork, Mechanical, PadFunction};
use crate::geom::panel::{MIN_TABS, PanelLayout};
use crate::model::fab::FabProfile;
use crate::model::panel::{Panel, defaults};
use geo::{
    Area, BooleanOps, BoundingRect, Contains, Distance, Euclidean, InteriorPoint, Intersects,
    MultiPolygon, Polygon,
};
use kurbo::Point;

/// The panel's own rules, each with its source.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum PanelRule {
    /// Boards keep the router bit's diameter from each other and from the rails, so the bit
    /// passes between them (`fab.router_diameter_mm`; the fab's own capability).
    BoardSpacing,
    /// Every board has at least two tabs (common practice, no source).
    TabCount,
    /// No tab or perforation touches any board's keep-out: a probe's loop (its tip, its sides,
    /// inside it) and the connector edges (the panel's own rule, from the probe's function).
    TabInKeepOut,
    /// Every board hangs, through its tabs, on the panel's frame (the rails), so nothing comes
    /// free while the router runs (common practice).
    BoardDetached,
    /// No piece of waste is left loose by the routing: it would fly off (common practice).
    LooseWaste,
    /// Fiducials keep a copper-free area three times their size and lie in the frame
    /// (common practice for vision systems; no single source).
    FiducialClear,
    /// Tooling holes and perforations keep the copper-to-edge distance from all copper: they
    /// are machined edges (`fab.copper_to_edge_mm`).
    HoleToCopper,
}

impl PanelRule {
    /// Every rule.
    pub const ALL: [PanelRule; 7] = [
        PanelRule::BoardSpacing,
        PanelRule::TabCount,
        PanelRule::TabInKeepOut,
        PanelRule::BoardDetached,
        PanelRule::LooseWaste,
        PanelRule::FiducialClear,
        PanelRule::HoleToCopper,
    ];

    /// The rule's name as printed.
    pub fn name(self) -> &'static str {
        match self {
            PanelRule::BoardSpacing => "board spacing",
            PanelRule::TabCount => "tab count",
            PanelRule::TabInKeepOut => "tab in a keep-out",
            PanelRule::BoardDetached => "board detached",
            PanelRule::LooseWaste => "loose waste",
            PanelRule::FiducialClear => "fiducial clearance",
            PanelRule::HoleToCopper => "hole to copper",
        }
    }
}

/// One panel rule broken.
#[derive(Debug, Clone, PartialEq)]
pub struct PanelViolation {
    /// The rule.
    pub rule: PanelRule,
    /// Where, panel mm.
    pub at: Point,
    /// What was measured against what was required.
    pub detail: String,
}

impl std::fmt::Display for PanelViolation {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "{} at ({:.3}, {:.3}) mm: {}",
            self.rule.name(),
            self.at.x,
            self.at.y,
            self.detail
        )
    }
}

/// Slack of a measured distance against its limit, mm: two steps of the 1 nm grid.
const GRID: f64 = 2e-6;

fn gp(p: Point) -> geo::Point<f64> {
    geo::Point::new(p.x, p.y)
}

/// A piece of copper: its layer, polygon, function and bounding box (none for an empty one).
type Piece = (usize, Polygon<f64>, PadFunction, Option<geo::Rect<f64>>);

/// All copper of a layer as polygons (regions' polygons and flashes), unioned only where
/// needed: distances are taken to each piece. Each piece's bounding box is taken once here,
/// not at every query.
fn copper_pieces(art: &Artwork) -> Vec<Piece> {
    let mut v = Vec::new();
    let mut push = |n: usize, p: Polygon<f64>, f: PadFunction| {
        let r = p.bounding_rect();
        v.push((n, p, f, r));
    };
    for l in &art.copper {
        for p in &l.regions.0 {
            push(l.n, p.clone(), PadFunction::Via);
        }
        for f in &l.flashes {
            push(l.n, super::flash_polygon(f), f.function);
        }
    }
    v
}

/// Distance from `c` to the nearest copper piece accepted by `keep`, with that piece's bounding
/// box pre-filter at `within`.
fn nearest_copper(pieces: &[Piece], c: Point, within: f64, keep: impl Fn(&Piece) -> bool) -> f64 {
    let mut best = f64::INFINITY;
    for piece in pieces.iter().filter(|p| keep(p)) {
        let Some(r) = piece.3 else {
            continue;
        };
        let dx = (r.min().x - c.x).max(c.x - r.max().x).max(0.0);
        let dy = (r.min().y - c.y).max(c.y - r.max().y).max(0.0);
        if dx.hypot(dy) > within.min(best) {
            continue;
        }
        best = best.min(Euclidean.distance(&gp(c), &piece.1));
    }
    best
}

/// Checks a panel; `names[i]` names `layout.placed[i]`.
pub fn check_panel(
    panel: &Panel,
    layout: &PanelLayout,
    art: &Artwork,
    names: &[String],
    fab: &FabProfile,
) -> Vec<PanelViolation> {
    let mut out = Vec::new();
    let d = panel.router;
    let mut v = |rule, at, detail: String| out.push(PanelViolation { rule, at, detail });
    // Spacing: board to board, board to rail (bounding boxes first).
    let boxes: Vec<_> = layout
        .placed
        .iter()
        .map(|p| {
            p.outline
                .bounding_rect()
                .expect("a placed board has an outline")
        })
        .collect();
    for i in 0..layout.placed.len() {
        for j in i + 1..layout.placed.len() {
            let (a, b) = (boxes[i], boxes[j]);
            let gx = (a.min().x - b.max().x).max(b.min().x - a.max().x);
            let gy = (a.min().y - b.max().y).max(b.min().y - a.max().y);
            if gx.max(gy) >= d {
                continue;
            }
            let dist = Euclidean.distance(&layout.placed[i].outline, &layout.placed[j].outline);
            if dist < d - GRID {
                let c = a.center();
                v(
                    PanelRule::BoardSpacing,
                    Point::new(c.x, c.y),
                    format!(
                        "'{}' and '{}' are {dist:.3} mm apart; the router bit needs {d} mm",
                        names[i], names[j]
                    ),
                );
            }
        }
        for r in &layout.rails {
            let dist = Euclidean.distance(&layout.placed[i].outline, r);
            if dist < d - GRID {
                let c = boxes[i].center();
                v(
                    PanelRule::BoardSpacing,
                    Point::new(c.x, c.y),
                    format!(
                        "'{}' is {dist:.3} mm from a rail; the router bit needs {d} mm",
                        names[i]
                    ),
                );
            }
        }
    }
    // Tabs: count and keep-outs (the bridge itself and each perforation hole).
    for ((p, name), b) in layout.placed.iter().zip(names).zip(&boxes) {
        let c = b.center();
        if p.tabs.len() < MIN_TABS {
            v(
                PanelRule::TabCount,
                Point::new(c.x, c.y),
                format!("'{name}' has {} tab(s); at least {MIN_TABS}", p.tabs.len()),
            );
        }
        for t in &p.tabs {
            // The perforation holes drawn once per tab, each with its box: a keep-out whose box
            // misses a hole's cannot touch the hole.
            let holes: Vec<_> = t
                .holes
                .iter()
                .map(|h| {
                    let disc = crate::geom::circle(*h, panel.perforation_drill / 2.0);
                    let b = disc.bounding_rect();
                    (disc, b)
                })
                .collect();
            // Its own keep-outs and its neighbours' (a tab may bridge to another board).
            for (k, why) in layout.placed.iter().flat_map(|q| q.keep_outs.iter()) {
                let kb = k.bounding_rect();
                let apart = |b: &Option<geo::Rect<f64>>| match (kb, b) {
                    (Some(p), Some(q)) => {
                        p.max().x < q.min().x
                            || q.max().x < p.min().x
                            || p.max().y < q.min().y
                            || q.max().y < p.min().y
                    }
                    _ => false,
                };
                let holes_in = holes
                    .iter()
                    .any(|(disc, b)| !apart(b) && k.intersects(disc));
                if k.intersects(&t.bridge) || holes_in {
                    v(
                        PanelRule::TabInKeepOut,
                        t.at,
                        format!("a tab of '{name}' touches {why}"),
                    );
                }
            }
        }
    }
    // The frame: the panel less what the router removes. Its largest piece must hold every
    // rail and every board; any other piece is loose waste.
    let (pw, ph) = layout.size;
    let material =
        MultiPolygon(vec![crate::geom::rect(0.0, 0.0, pw, ph)]).difference(&layout.routed);
    let body = (0..material.0.len()).max_by(|&a, &b| {
        material.0[a]
            .unsigned_area()
            .total_cmp(&material.0[b].unsigned_area())
    });
    for r in &layout.rails {
        if body.is_none_or(|b| !material.0[b].intersects(r)) {
            let q = r.interior_point().expect("a rail has an inside");
            v(
                PanelRule::BoardDetached,
                Point::new(q.x(), q.y()),
                "the rails are not joined: the panel falls apart".into(),
            );
        }
    }
    for (i, p) in layout.placed.iter().enumerate() {
        let Some(q) = p.outline.interior_point() else {
            continue;
        };
        if body.is_none_or(|b| !material.0[b].contains(&q)) {
            v(
                PanelRule::BoardDetached,
                Point::new(q.x(), q.y()),
                format!("'{}' does not hang on the frame through its tabs", names[i]),
            );
        }
    }
    // Pieces that hold a board are boards adrift (reported above), not waste.
    let board_points: Vec<_> = layout
        .placed
        .iter()
        .filter_map(|p| p.outline.interior_point())
        .collect();
    for (k, m) in material.0.iter().enumerate() {
        if Some(k) == body || m.unsigned_area() < 1e-3 || board_points.iter().any(|q| m.contains(q))
        {
            continue;
        }
        if let Some(q) = m.interior_point() {
            v(
                PanelRule::LooseWaste,
                Point::new(q.x(), q.y()),
                format!(
                    "a {:.1} mm² piece of waste is cut free by the routing",
                    m.unsigned_area()
                ),
            );
        }
    }
    // Fiducials, tooling holes and perforations against copper.
    let pieces = copper_pieces(art);
    let clear = defaults::FIDUCIAL_CLEAR / 2.0;
    for f in &layout.fiducials {
        let near = nearest_copper(&pieces, *f, clear, |p| {
            !(p.2 == PadFunction::Fiducial && p.1.contains(&gp(*f)))
        });
        if near < clear - GRID {
            v(
                PanelRule::FiducialClear,
                *f,
                format!("copper {near:.3} mm from the fiducial's centre; at least {clear} mm"),
            );
        }
        let disc = crate::geom::circle(*f, clear);
        if let Some(b) = body
            && !material.0[b].contains(&disc)
        {
            v(
                PanelRule::FiducialClear,
                *f,
                "the fiducial's clear area leaves the panel's frame".into(),
            );
        }
    }
    let cte = fab.copper_to_edge;
    for h in art.drills.iter().filter(|h| h.mechanical.is_some()) {
        let r = h.d / 2.0;
        let near = nearest_copper(&pieces, h.at, r + cte, |_| true) - r;
        if near < cte - GRID {
            let what = match h.mechanical {
                Some(Mechanical::Tooling) => "tooling hole",
                _ => "perforation",
            };
            v(
                PanelRule::HoleToCopper,
                h.at,
                format!("a {what}'s edge is {near:.3} mm from copper; at least {cte} mm"),
            );
        }
    }
    out
}
