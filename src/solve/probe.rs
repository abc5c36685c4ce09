//! Solved values of a probe: trace widths from the impedance engine and the via pitch window.

use crate::error::{Error, FieldError};
use crate::model::probe::Probe;
use crate::solve::impedance::{Line, Solution, SolveLimits, Structure, solve_width};

/// Speed of light in vacuum, m/s (exact).
pub const C0: f64 = 299_792_458.0;

/// Margin between a via pad and a copper edge of the same net, mm (our construction rule).
pub const VIA_WEB: f64 = 0.05;
/// Copper rim beyond the outer via pads of the shield ring, mm (our construction rule).
pub const RING_RIM: f64 = 0.15;

/// Numbers computed for one probe.
#[derive(Debug, Clone, PartialEq)]
pub struct SolvedProbe {
    /// Loop-trace width on the signal layer, mm.
    pub trace_width: f64,
    /// The loop trace's cross-section as solved.
    pub line: Line,
    /// Its impedance solution.
    pub solution: Solution,
    /// Width of the short top-layer link from the connector to the signal via, mm.
    pub top_width: f64,
    /// Z0 of that link, Ω.
    pub top_z0: f64,
    /// Largest allowed via pitch (λ/N in the dielectric at f_max), mm.
    pub pitch_max: f64,
    /// Smallest via pitch the fab allows: max(pad + space, drill + hole gap), mm.
    pub pitch_min: f64,
    /// Distance from the trace centreline to a stitching-via centre, mm.
    pub fence_offset: f64,
    /// Half-width of the shield ring about the trace centreline, mm.
    pub ring_half_width: f64,
    /// Lateral offset of the feed entry and the short from the axis, mm.
    pub feed_offset: f64,
    /// Highest εr next to the trace (sets the shortest wavelength).
    pub er_max: f64,
}

/// Solves a probe's trace width and via pitch window.
pub fn solve(p: &Probe) -> Result<SolvedProbe, Error> {
    let mut errs = Vec::new();
    let template = p
        .stackup
        .line_for_layer(p.signal_layer, Structure::Stripline, 1.0, None)?;
    let limits = SolveLimits {
        min_trace_mm: p.fab.min_trace,
        ..Default::default()
    };
    let (line, solution) = solve_width(&template, None, p.target_z0, &limits).map_err(|e| {
        Error::Invalid(vec![FieldError::new(
            "target_z0_ohms",
            p.target_z0,
            format!(
                "cannot be met on layer {} of '{}': {e}",
                p.signal_layer,
                p.stackup.name()
            ),
        )])
    })?;
    let w = line.width();
    let er_max = match line {
        Line::Stripline(s) => s.er1.max(s.er2),
        _ => 4.5,
    };
    let lambda_mm = C0 / (p.vias.f_max_hz * er_max.sqrt()) * 1e3;
    let pitch_max = lambda_mm / p.vias.pitch_n;
    let pitch_min = (p.vias.pad + p.fab.min_space).max(p.vias.drill + p.fab.min_hole_gap);
    if pitch_max < pitch_min {
        errs.push(FieldError::new(
            "via.pitch_n",
            p.vias.pitch_n,
            format!(
                "λ/{} at {} GHz in εr {:.2} is {:.3} mm, below the fab's smallest via pitch \
                 {:.3} mm (pad + space or drill + hole gap): lower f_max_hz or pitch_n, or use \
                 smaller vias",
                p.vias.pitch_n,
                p.vias.f_max_hz / 1e9,
                er_max,
                pitch_max,
                pitch_min
            ),
        ));
    }
    // The top-layer link: grounded CPW on layer 1 with the probe's clearance.
    let top_template = p
        .stackup
        .line_for_layer(1, Structure::Cpwg, 1.0, Some(p.clearance))?;
    let (top_width, top_z0) = match solve_width(&top_template, None, p.target_z0, &limits) {
        Ok((l, s)) => (
            l.width().min(p.connector.centre_pad_width).min(p.vias.pad),
            s.z0,
        ),
        Err(_) => (p.connector.centre_pad_width, f64::NAN),
    };
    let fence_offset = w / 2.0 + p.clearance + p.vias.pad / 2.0 + VIA_WEB;
    let ring_half_width = fence_offset + p.vias.pad / 2.0 + RING_RIM;
    let feed_offset = fence_offset / 2.0;
    // The ring must leave an opening inside the loop.
    let min_size = 2.0 * ring_half_width + 1.0;
    if p.shape.min_dimension() < min_size {
        errs.push(FieldError::new(
            "size_mm",
            crate::model::probe::num(p.shape.min_dimension()),
            format!(
                "probe '{}' is too small for its shield ring ({:.3} mm wide with these vias and \
                 clearances): the loop's smallest size must be at least {:.3} mm",
                p.name,
                2.0 * ring_half_width,
                min_size
            ),
        ));
    }
    let need_handle = 2.0 * (feed_offset + fence_offset + p.vias.pad / 2.0 + RING_RIM);
    if p.handle.width < need_handle {
        errs.push(FieldError::new(
            "handle.width_mm",
            p.handle.width,
            format!("must hold the line and its via fences: at least {need_handle:.3} mm"),
        ));
    }
    if !errs.is_empty() {
        return Err(Error::Invalid(errs));
    }
    Ok(SolvedProbe {
        trace_width: w,
        line,
        solution,
        top_width,
        top_z0,
        pitch_max,
        pitch_min,
        fence_offset,
        ring_half_width,
        feed_offset,
        er_max,
    })
}
