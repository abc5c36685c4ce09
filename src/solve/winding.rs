//! A multi-turn loop's winding: each turn's width on its own layer, the stacked turns' field
//! solution (their common-mode impedance per turn and the capacitance between neighbouring
//! turns) and where the turns leave the ring and are joined.
//!
//! Construction (`geom::multiturn` draws it; docs/probe-spec.md states it): turn k stands on
//! copper layer `signal_layer + k − 1`, on the loop's centreline (the turns stacked), inside the
//! one shield whose outer layers are the copper layers just above the first turn and just below
//! the last. Every turn enters the ring from the handle at x = −e (the feed's offset), runs up
//! the left side, across the apex gap and down the right side, and leaves the ring at
//! x = +e_k = e + f + (k − 1)·2f (f the fence offset). Turn k (k < N) goes straight down to its
//! join via V_k at (e_k, y_b − 2f·k), y_b the centreline's lowest point; turn k + 1 starts at
//! V_k on the next layer, runs across the handle to x = −e and up into the ring. The last turn
//! goes down into solid shield and is shorted there by two vias, as a single turn is. Every
//! join via is a through via: lands on its two layers and on both outer layers (isolated),
//! antipads on the others; no other layer's trace passes it.

use crate::error::{Error, FieldError};
use crate::field::{Conductor, CrossSection, Dielectric, Role};
use crate::model::centreline::{arclengths, left_half};
use crate::model::probe::{Probe, WidthFrom};
use crate::solve::impedance::{
    Accuracy, Line, Method, Solution, SolveLimits, Structure, Warning, solve_width,
    solve_width_polished,
};
use crate::solve::probe::{RING_RIM, Section, VIA_WEB, cross_section, fence_offset, with_via_rows};
use kurbo::Point;

/// One turn's line on its own layer (turns 2 to N; turn 1 is the probe's trace).
#[derive(Debug, Clone, PartialEq)]
pub struct TurnLine {
    /// Copper layer, 1 = top.
    pub layer: usize,
    /// Trace width, mm.
    pub width: f64,
    /// Its impedance solution on that layer's own stripline.
    pub solution: Solution,
    /// What set the width.
    pub width_source: WidthFrom,
    /// The closed form's width, mm.
    pub closed_form_width: f64,
}

/// A multi-turn loop's winding.
#[derive(Debug, Clone, PartialEq)]
pub struct Winding {
    /// Turns 2 to N, each on its layer.
    pub lines: Vec<TurnLine>,
    /// Widest trace of all the turns, mm: the channels, fences and rows keep clear of it.
    pub width_max: f64,
    /// Field solution of the stacked turns at one potential (the ring's cross-section, the
    /// shield's outer layers and the via rows as ground): the common-mode impedance per turn,
    /// N·Z of the group, Ω.
    pub z_common: f64,
    /// Its effective permittivity.
    pub eps_common: f64,
    /// Capacitance between turn k and turn k + 1 per metre of ring, F/m, from three field
    /// solutions (each alone and both at 1 V, the others grounded).
    pub c_adjacent: Vec<f64>,
    /// Where the turns leave the ring and are joined.
    pub junction: Junction,
}

/// Where a multi-turn loop's turns enter and leave the ring and are joined, mm.
#[derive(Debug, Clone, PartialEq)]
pub struct Junction {
    /// Every turn enters the ring from below at x = −entry.
    pub entry: f64,
    /// Turn k leaves it at x = exits[k − 1].
    pub exits: Vec<f64>,
    /// The join vias V_k between turn k and k + 1.
    pub joins: Vec<Point>,
    /// Spacing of the exits and of the joins, 2f, mm.
    pub step: f64,
}

/// The turns' layers and the shield layers bounding them, as the field sees them: the y of
/// each turn's bottom face and its copper thickness (first turn first), the dielectric slabs
/// from the lower shield up, and the height of the upper shield's face.
fn stack(p: &Probe) -> (Vec<(f64, f64)>, Vec<Dielectric>, f64) {
    let st = &p.stackup;
    let layers: Vec<usize> = p.turn_layers().collect();
    let mut slabs = Vec::new();
    let mut y = 0.0;
    let mut faces = vec![(0.0, 0.0); layers.len()];
    // From the lower shield up: the dielectric under each turn, the turn's copper (filled with
    // the dielectric above it), then the dielectric over the first turn.
    for (i, &n) in layers.iter().enumerate().rev() {
        let below = st.dielectric_below(n).expect("validated: dielectric below");
        slabs.push(Dielectric::new(below.thickness_mm, below.er));
        y += below.thickness_mm;
        let t = st.copper(n).map(|c| c.thickness_mm).unwrap_or(0.0);
        let above = st
            .dielectric_below(n - 1)
            .expect("validated: dielectric above");
        if t > 0.0 {
            slabs.push(Dielectric::new(t, above.er));
        }
        faces[i] = (y, t);
        y += t;
    }
    let top = st
        .dielectric_below(layers[0] - 1)
        .expect("validated: dielectric above");
    slabs.push(Dielectric::new(top.thickness_mm, top.er));
    y += top.thickness_mm;
    (faces, slabs, y)
}

/// The stacked turns' cross-section across the ring, turns in `live` at 1 V, the others
/// grounded: the shield's outer layers the ring's width, coplanar ground on every turn's layer
/// at the clearance, the via rows as fences at the fence offset of the widest trace.
pub fn winding_section(p: &Probe, widths: &[f64], live: &[usize], pitch_max: f64) -> CrossSection {
    let w_max = widths.iter().copied().fold(0.0, f64::max);
    let f = fence_offset(p, w_max);
    let half = f + p.vias.pad / 2.0 + RING_RIM;
    let (faces, layers, top) = stack(p);
    let mut conductors = vec![
        Conductor::finite_plane(-half, half, 0.0, 0.0),
        Conductor::finite_plane(-half, half, top, 0.0),
    ];
    for (i, (&(y, t), &w)) in faces.iter().zip(widths).enumerate() {
        let mut trace = Conductor::trace(0.0, y, w, t, 0.0);
        if !live.contains(&i) {
            trace.role = Role::Ground;
        }
        conductors.push(trace);
        conductors.extend(Conductor::coplanar_pair(
            0.0,
            y,
            w,
            p.clearance,
            half - w / 2.0 - p.clearance,
            t,
        ));
    }
    with_via_rows(p, layers, conductors, f, half, top, 0.95 * pitch_max)
}

/// A turn's width on layer `n`: the closed form of that layer's own stripline (its
/// neighbouring copper layers as planes), set by the field solution of its arm's cross-section
/// as the probe's own width is (`width_from`).
fn turn_line(p: &Probe, n: usize, pitch_max: f64, pitch_min: f64) -> Result<TurnLine, Error> {
    let template = p
        .stackup
        .line_for_layer(n, Structure::Stripline, 1.0, None)?;
    let limits = SolveLimits {
        min_trace_mm: p.fab.min_trace,
        ..Default::default()
    };
    let refuse = |why: String| {
        Error::Invalid(vec![FieldError::new(
            "target_z0_ohms",
            p.target_z0,
            format!("cannot be met on layer {n} (a turn of '{}'): {why}", p.name),
        )])
    };
    let (line, closed) =
        solve_width(&template, None, p.target_z0, &limits).map_err(|e| refuse(e.to_string()))?;
    let Line::Stripline(st) = line else {
        unreachable!("line_for_layer(Stripline) gives a stripline")
    };
    let field_z = |w: f64| -> Result<f64, Error> {
        let cs = cross_section(p, &st, w, Section::Arm, pitch_max, pitch_min.min(pitch_max));
        crate::field::solve(&cs, Accuracy::default()).map(|s| s.z0_ohms)
    };
    let w_cf = st.width;
    let z_cf = field_z(w_cf).map_err(|e| refuse(e.to_string()))?;
    let use_field = match p.width_from {
        WidthFrom::Field => true,
        WidthFrom::ClosedForm => false,
        WidthFrom::Auto => (closed.z0 / z_cf - 1.0).abs() > WidthFrom::AUTO_THRESHOLD,
    };
    let (width, solution, width_source) = if use_field {
        let rough = |w: f64| {
            let cs = cross_section(p, &st, w, Section::Arm, pitch_max, pitch_min.min(pitch_max));
            crate::field::rough_z0(&cs)
        };
        let w = solve_width_polished(field_z, rough, w_cf, p.target_z0)
            .map_err(|e| refuse(e.to_string()))?;
        let z = field_z(w).map_err(|e| refuse(e.to_string()))?;
        let sol = Solution {
            z0: z,
            eps_eff: closed.eps_eff,
            method: Method::Field,
            warnings: vec![Warning::note(format!(
                "width from the 2-D field solution of layer {n}'s loop arm; the {} closed form \
                 for ideal stripline gives w = {w_cf:.4} mm, which would be {z_cf:.2} Ω here",
                closed.method
            ))],
        };
        (w, sol, WidthFrom::Field)
    } else {
        (w_cf, closed, WidthFrom::ClosedForm)
    };
    if width < p.fab.min_trace {
        return Err(refuse(format!(
            "the width {width:.4} mm is below the fab minimum trace of {} mm",
            p.fab.min_trace
        )));
    }
    Ok(TurnLine {
        layer: n,
        width,
        solution,
        width_source,
        closed_form_width: w_cf,
    })
}

/// Where the centreline's right half crosses x = `x` on its way down to the bottom: (y, arc
/// length from the apex), mm. None when the loop is not that wide.
pub fn crossing(p: &Probe, x: f64) -> Option<(f64, f64)> {
    let left = left_half(&p.shape, 0.0);
    let s = arclengths(&left);
    let (k, t, q) = crate::model::centreline::crossing_down(&left, x)?;
    Some((q.y, s[k] + t * (s[k + 1] - s[k])))
}

/// The winding's junction for the feed offset `e` and fence offset `f`.
pub fn junction(p: &Probe, e: f64, f: f64) -> Junction {
    let n = p.turns.max(1) as usize;
    let step = 2.0 * f;
    let bottom = left_half(&p.shape, 0.0).last().map(|q| q.y).unwrap_or(0.0);
    // The first exit a fence offset past the feed's mirror image (the feed's channel and the
    // first turn's descent, on one layer, keep a full fence offset of shield between them),
    // then two fence offsets apart.
    let exits: Vec<f64> = (0..n).map(|k| e + f + k as f64 * step).collect();
    let joins = (1..n)
        .map(|k| Point::new(exits[k - 1], bottom - step * k as f64))
        .collect();
    Junction {
        entry: e,
        exits,
        joins,
        step,
    }
}

/// The winding's line from turn k's pass across the gap to turn k + 1's (k from 1), mm: down
/// the right half to its exit, down to its join via, across the handle and up to the entry,
/// up the left half to the apex.
pub fn turn_section(p: &Probe, j: &Junction, k: usize) -> Option<f64> {
    let (y_out, s_out) = crossing(p, j.exits[k - 1])?;
    let (y_in, s_in) = crossing(p, j.entry)?;
    let v = j.joins[k - 1];
    Some(s_out + (y_out - v.y) + (j.exits[k - 1] + j.entry) + (y_in - v.y) + s_in)
}

/// How far below its exit (on the ring's centreline at x = `x`) the last turn's first short via
/// stands, mm: a trace's half-width, a clearance, half a via pad and a web into solid shield, as
/// a single turn's, and further down the handle where that would come within a fence offset
/// `f` of the other turns, which run on along the ring past the exit on their own layers.
pub fn short_drop(p: &Probe, x: f64, w: f64, f: f64) -> f64 {
    let least = w / 2.0 + p.clearance + p.vias.pad / 2.0 + VIA_WEB;
    let Some((y, _)) = crossing(p, x) else {
        return least;
    };
    let ring = crate::model::centreline::closed(&p.shape, 0.0);
    let clear = |d: f64| {
        crate::model::centreline::dist_to_polyline(Point::new(x, y - d), &ring) >= f + 1e-3
    };
    let mut d = least;
    while !clear(d) && d < least + 4.0 * f {
        d += 0.005;
    }
    d
}

/// The last turn's stub from its pass across the gap to its first short via, mm.
pub fn last_stub(p: &Probe, j: &Junction, w: f64) -> Option<f64> {
    let x = *j.exits.last()?;
    let (_, s_out) = crossing(p, x)?;
    Some(s_out + short_drop(p, x, w, j.step / 2.0))
}

/// Solves a multi-turn loop's winding: every later turn's width, the stacked turns' field
/// solutions, the junction (a loop or handle too small for it is refused by [`room`]).
pub fn solve(p: &Probe, w1_width: f64, pitch_max: f64, pitch_min: f64) -> Result<Winding, Error> {
    let mut lines = Vec::new();
    for n in p.turn_layers().skip(1) {
        lines.push(turn_line(p, n, pitch_max, pitch_min)?);
    }
    let widths: Vec<f64> = std::iter::once(w1_width)
        .chain(lines.iter().map(|l| l.width))
        .collect();
    let width_max = widths.iter().copied().fold(0.0, f64::max);
    let solve = |live: &[usize]| {
        crate::field::solve(
            &winding_section(p, &widths, live, pitch_max),
            Accuracy::default(),
        )
        .map_err(|e| {
            Error::Invalid(vec![FieldError::new(
                "turns",
                p.turns,
                format!(
                    "the field solution of '{}''s stacked turns failed: {e}",
                    p.name
                ),
            )])
        })
    };
    let n = widths.len();
    let all: Vec<usize> = (0..n).collect();
    let common = solve(&all)?;
    let alone: Vec<f64> = (0..n)
        .map(|i| solve(&[i]).map(|s| s.c_per_m))
        .collect::<Result<_, _>>()?;
    let mut c_adjacent = Vec::new();
    for i in 0..n - 1 {
        let pair = if n == 2 {
            common.c_per_m
        } else {
            solve(&[i, i + 1])?.c_per_m
        };
        c_adjacent.push(0.5 * (alone[i] + alone[i + 1] - pair));
    }
    let f = fence_offset(p, width_max);
    let e = f / 2.0;
    Ok(Winding {
        lines,
        width_max,
        z_common: n as f64 * common.z0_ohms,
        eps_common: common.eps_eff,
        c_adjacent,
        junction: junction(p, e, f),
    })
}

/// A multi-turn loop's room (our construction rules): the loop must be wide enough for the
/// last turn's exit and its fence; the handle wide enough for it, its fences and the ring's
/// rim; long enough that the lowest join via and the last turn's shorts (`w` the last turn's
/// width; the second short taken at least two fence offsets and two pads below the first)
/// stand clear above the feed's jog from the signal via.
pub fn room(p: &Probe, j: &Junction, f: f64, w: f64, jog_top: f64, errs: &mut Vec<FieldError>) {
    let last = *j.exits.last().unwrap_or(&j.entry);
    let a = p.shape.half_width();
    if last + f > a {
        errs.push(FieldError::new(
            p.shape.width_field(),
            crate::model::probe::num(2.0 * a),
            format!(
                "probe '{}' is too narrow for {} turns: the last turn leaves the ring {:.3} mm \
                 right of the axis (each turn's exit 2 × {f:.3} mm, two fence offsets, beyond the \
                 last), which needs a loop at least {} mm wide",
                p.name,
                p.turns,
                last,
                crate::math::trimmed(((last + f) * 2.0 * 1000.0).ceil() / 1000.0, 3)
            ),
        ));
    }
    let need_w = 2.0 * (last + f + p.vias.pad / 2.0 + RING_RIM);
    if p.handle.width < need_w - 1e-9 {
        errs.push(FieldError::new(
            "handle.width_mm",
            p.handle.width,
            format!(
                "is too narrow for '{}', a loop of {} turns: its last turn leaves the ring and \
                 runs down the handle {last:.3} mm right of the axis, which with its fences needs \
                 a handle at least {} mm wide (set the probe's handle_width_mm)",
                p.name,
                p.turns,
                crate::math::trimmed((need_w * 1000.0).ceil() / 1000.0, 3)
            ),
        ));
    }
    // Heights from the centreline's bottom: the lowest join via, and the last turn's second
    // short via (its exit is at least as low as the bottom).
    let lowest_join = j.joins.last().map(|v| v.y).unwrap_or(0.0);
    let bottom = left_half(&p.shape, 0.0).last().map(|q| q.y).unwrap_or(0.0);
    let y_exit = crossing(p, last).map_or(bottom, |(y, _)| y);
    let shorts = y_exit - short_drop(p, last, w, f) - j.step.max(2.0 * p.vias.pad);
    let low = lowest_join.min(shorts) - f;
    // `jog_top` is the feed's jog top above the connector edge; the connector edge stands the
    // handle's length below the ring's outer edge (half the ring below the bottom).
    let hr = f + p.vias.pad / 2.0 + RING_RIM;
    let edge = bottom - hr - p.handle.length;
    if low - f < edge + jog_top {
        let least = p.handle.length + (edge + jog_top) - (low - f);
        errs.push(FieldError::new(
            "handle.length_mm",
            crate::model::probe::num(p.handle.length),
            format!(
                "is too short for '{}', a loop of {} turns: its join vias and shorts stand in the \
                 handle below the ring, above the feed's jog from the connector; it needs at least \
                 {} mm",
                p.name,
                p.turns,
                crate::math::trimmed((least * 1000.0).ceil() / 1000.0, 3)
            ),
        ));
    }
}
