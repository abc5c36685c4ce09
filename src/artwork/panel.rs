//! A panel's artwork: every board's artwork moved to its place (its copper, pads, openings,
//! legend and holes unchanged but for the move), each board's nets kept under the board's name,
//! and the panel's own objects: fiducials (copper dots with their mask openings), tooling holes
//! and the tabs' perforations (non-plated, with their drill functions), and the profile (the
//! panel's edge and the board edges the router cuts, broken at the tabs).

use super::{Artwork, CopperLayer, Drill, Flash, Mechanical, Nets, PadFunction, Shape, snap};
use crate::geom::panel::PanelLayout;
use crate::model::panel::{Panel, defaults};
use geo::{MultiPolygon, Translate};
use kurbo::{Point, Vec2};

fn moved(p: Point, v: Vec2) -> Point {
    Point::new(snap(p.x + v.x), snap(p.y + v.y))
}

fn moved_flash(f: &Flash, v: Vec2) -> Flash {
    Flash {
        at: moved(f.at, v),
        ..*f
    }
}

/// The panel's artwork from its layout and each placed board's own artwork (`boards[i]` is
/// the artwork of `layout.placed[i]`, named `names[i]`). All boards share one stackup, so they
/// have the same copper layers.
pub fn compose(
    panel: &Panel,
    layout: &PanelLayout,
    boards: &[&Artwork],
    names: &[String],
    silk_width: f64,
) -> Artwork {
    let n_layers = boards.first().map_or(0, |a| a.copper.len());
    let mut copper: Vec<CopperLayer> = (1..=n_layers)
        .map(|n| CopperLayer {
            n,
            side: super::Side::of(n, n_layers),
            signal: false,
            mixed: false,
            regions: MultiPolygon(vec![]),
            flashes: Vec::new(),
        })
        .collect();
    let mut nets = Nets {
        default: None,
        areas: Vec::new(),
    };
    let mut art = Artwork {
        copper: Vec::new(),
        mask_top: Vec::new(),
        mask_bottom: Vec::new(),
        silk_top: Vec::new(),
        silk_bottom: Vec::new(),
        silk_width: snap(silk_width),
        profile: Vec::new(),
        drills: Vec::new(),
        gap_rects: Vec::new(),
        nets: Nets::one(""),
        layer_roles: ("signal and ground", "ground"),
    };
    for ((p, a), name) in layout.placed.iter().zip(boards).zip(names) {
        let v = p.offset;
        for (dst, src) in copper.iter_mut().zip(&a.copper) {
            dst.signal |= src.signal;
            dst.mixed |= src.mixed;
            dst.regions.0.extend(src.regions.translate(v.x, v.y).0);
            dst.flashes
                .extend(src.flashes.iter().map(|f| moved_flash(f, v)));
        }
        // The board's nets, named after the board: two boards' nets are never one net.
        for (net, area) in &a.nets.areas {
            nets.areas
                .push((format!("{name}/{net}"), area.translate(v.x, v.y)));
        }
        if let Some(d) = &a.nets.default {
            nets.areas
                .push((format!("{name}/{d}"), MultiPolygon(vec![p.outline.clone()])));
        }
        art.mask_top
            .extend(a.mask_top.iter().map(|f| moved_flash(f, v)));
        art.mask_bottom
            .extend(a.mask_bottom.iter().map(|f| moved_flash(f, v)));
        let strokes = |s: &Vec<Vec<Point>>| -> Vec<Vec<Point>> {
            s.iter()
                .map(|st| st.iter().map(|q| moved(*q, v)).collect())
                .collect()
        };
        art.silk_top.extend(strokes(&a.silk_top));
        art.silk_bottom.extend(strokes(&a.silk_bottom));
        art.drills.extend(a.drills.iter().map(|d| Drill {
            at: moved(d.at, v),
            ..*d
        }));
    }
    // Fiducials: a bare copper dot on both outer layers, its mask opening twice its size.
    for f in &layout.fiducials {
        let at = Point::new(snap(f.x), snap(f.y));
        let dot = Flash {
            at,
            shape: Shape::Circle(defaults::FIDUCIAL_DOT),
            function: PadFunction::Fiducial,
        };
        let opening = Flash {
            at,
            shape: Shape::Circle(defaults::FIDUCIAL_OPENING),
            function: PadFunction::MaskOpening,
        };
        if let Some(l) = copper.first_mut() {
            l.flashes.push(dot);
        }
        if n_layers > 1
            && let Some(l) = copper.last_mut()
        {
            l.flashes.push(dot);
        }
        art.mask_top.push(opening);
        art.mask_bottom.push(opening);
    }
    for t in &layout.tooling {
        art.drills.push(Drill {
            at: Point::new(snap(t.x), snap(t.y)),
            d: snap(panel.tooling_hole),
            plated: false,
            via: false,
            mechanical: Some(Mechanical::Tooling),
        });
    }
    for p in &layout.placed {
        for t in &p.tabs {
            art.drills.extend(t.holes.iter().map(|h| Drill {
                at: *h,
                d: snap(panel.perforation_drill),
                plated: false,
                via: false,
                mechanical: Some(Mechanical::BreakOut),
            }));
        }
    }
    let (w, h) = (snap(layout.size.0), snap(layout.size.1));
    art.profile.push(vec![
        Point::new(0.0, 0.0),
        Point::new(w, 0.0),
        Point::new(w, h),
        Point::new(0.0, h),
        Point::new(0.0, 0.0),
    ]);
    art.profile.extend(layout.cut_edges.iter().cloned());
    art.copper = copper;
    art.nets = nets;
    art
}
