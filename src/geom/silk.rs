//! Silkscreen strokes: name, shape, size, stackup and the field mark.

use super::shape::{arc_points, mirror};
use super::*;
use crate::model::probe::Probe;
use crate::solve::probe::SolvedProbe;
use kurbo::{Affine, Point, Vec2};

/// Silkscreen: name, size and stackup along the handle, and the sensitive-direction mark.
/// The text ends a millimetre short of `head_y`, where the probe's head (the loop's shield ring,
/// the electric probe's face) begins.
pub(super) fn silk(
    p: &Probe,
    s: &SolvedProbe,
    edge_y: f64,
    head_y: f64,
    hw: f64,
) -> (Vec<Vec<Point>>, Vec<Vec<Point>>) {
    let h = p.fab.silk_text_height;
    let (kind, letter) = match p.kind {
        crate::model::probe::ProbeKind::Loop => (p.shape.kind().to_uppercase(), "H"),
        crate::model::probe::ProbeKind::Balanced => ("BALANCED".to_string(), "H"),
        crate::model::probe::ProbeKind::Electric(_) => ("ELECTRIC".to_string(), "E"),
    };
    let right = format!("{} {kind} {}", p.name, p.shape.size_tag());
    let mut left = p.stackup.name().to_uppercase();
    if !p.silk_text.is_empty() {
        left = format!("{left} {}", p.silk_text);
    }
    // Text runs up the handle (rotated 90°: the glyphs' tops face −x), one column on each side
    // of the feed's via fences.
    let clear = s.fence_offset + p.vias.pad / 2.0 + 0.3;
    let y_start = edge_y + p.connector.ground_pad_length + p.fab.silk_to_pad + 1.0;
    let y_end = head_y - 1.0;
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
    // component normal to the board), with "H" (a loop) or "E" (an electric probe) below it.
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
        top.extend(font::text_strokes(letter, h, place));
        // Bottom: the same mark, seen from the top (mirrored).
        bottom.push(arc_points(mirror(mark_c), r, 0.0, std::f64::consts::TAU));
    }
    (top, bottom)
}
