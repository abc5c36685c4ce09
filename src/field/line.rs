//! Cross-sections for the impedance engine's structures, so that every [`Line`] can be
//! solved by the field method.

use super::geometry::{Boundary, Coat, Conductor, CrossSection, Dielectric};
use super::{Accuracy, FieldSolution, solve};
use crate::error::Error;
use crate::model::line::Line;

/// Solves one of the impedance engine's lines by the field method: validates the line (the
/// errors name the command-line fields: `width`, `h1`, `er`…), builds its cross-section
/// with [`cross_section_for_line`] and calls [`solve`].
pub fn solve_line(line: &Line, acc: Accuracy) -> Result<FieldSolution, Error> {
    let errors = line.validate();
    if !errors.is_empty() {
        return Err(Error::Invalid(errors));
    }
    solve(&cross_section_for_line(line), acc)
}

/// The cross-section of one of the impedance engine's lines. The trace is centred at
/// `x = 0`; lengths are the line's (mm).
///
/// - Microstrip: one substrate layer on an unlimited plane (`y = 0`), the trace on top, air
///   above, open boundary (a zero-normal-field edge [`OPEN_FAR_FACTOR`](super::OPEN_FAR_FACTOR)
///   sizes away; its effect is quantified in `docs/field-solver.md`).
/// - Coated microstrip: the same with a conformal [`Coat`] of `mask_t` over the substrate
///   and over the trace's top and sides.
/// - Stripline: unlimited planes `h2 + t + h1` apart; `er2` below the trace, `er1` above it
///   and beside it (the trace etched on the lower dielectric, the upper one flowing around
///   it; with t = 0 or er1 = er2 the choice does not matter).
/// - Grounded CPW: microstrip with coplanar grounds of unlimited width on the trace's layer,
///   `gap` from the trace, as thick as the trace (the conformal-mapping model's geometry).
///
/// The line is not validated here; [`solve`](super::solve) validates the cross-section.
pub fn cross_section_for_line(line: &Line) -> CrossSection {
    match line {
        Line::Microstrip(m) => CrossSection {
            layers: vec![Dielectric::new(m.h, m.er)],
            board: None,
            conductors: vec![
                Conductor::plane(0.0, 0.0),
                Conductor::trace(0.0, m.h, m.width, m.t, 0.0),
            ],
            coat: None,
            fences: vec![],
            boundary: Boundary::Open,
        },
        Line::CoatedMicrostrip(c) => {
            let mut cs = cross_section_for_line(&Line::Microstrip(c.line));
            cs.coat = Some(Coat {
                thickness: c.mask_t,
                er: c.mask_er,
            });
            cs
        }
        Line::Stripline(s) => {
            let mut layers = vec![Dielectric::new(s.h2, s.er2)];
            if s.t > 0.0 {
                layers.push(Dielectric::new(s.t, s.er1));
            }
            layers.push(Dielectric::new(s.h1, s.er1));
            CrossSection {
                layers,
                board: None,
                conductors: vec![
                    Conductor::plane(0.0, 0.0),
                    Conductor::trace(0.0, s.h2, s.width, s.t, 0.0),
                    Conductor::plane(s.h2 + s.t + s.h1, 0.0),
                ],
                coat: None,
                fences: vec![],
                boundary: Boundary::Open,
            }
        }
        Line::Cpwg(c) => {
            let [left, right] =
                Conductor::coplanar_pair(0.0, c.h, c.width, c.gap, f64::INFINITY, c.t);
            CrossSection {
                layers: vec![Dielectric::new(c.h, c.er)],
                board: None,
                conductors: vec![
                    Conductor::plane(0.0, 0.0),
                    Conductor::trace(0.0, c.h, c.width, c.t, 0.0),
                    left,
                    right,
                ],
                coat: None,
                fences: vec![],
                boundary: Boundary::Open,
            }
        }
    }
}
