//! Fab-tolerance spread: Z0 at the corners of width ± etch tolerance, εr ± tolerance and each
//! dielectric thickness ± a relative tolerance.

use super::{Accuracy, Line, Method, analyse_with};
use crate::error::{Error, FieldError, check_range};

/// Manufacturing tolerances for the spread.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tolerances {
    /// Trace width ± this, mm. Default 0.025 mm (about ±1 mil, common practice for 1 oz
    /// copper; no single source).
    pub etch_mm: f64,
    /// εr ± this (absolute). Default 0.2 (common FR-4 laminate spread; no single source).
    pub er_abs: f64,
    /// Each dielectric thickness ± this fraction. Default 0.10 (±10 %, common practice).
    pub h_rel: f64,
}

impl Default for Tolerances {
    fn default() -> Self {
        Tolerances {
            etch_mm: 0.025,
            er_abs: 0.2,
            h_rel: 0.10,
        }
    }
}

/// The spread of Z0 over the tolerance corners.
#[derive(Debug, Clone, PartialEq)]
pub struct Spread {
    /// Lowest Z0 over the corners, Ω.
    pub z0_min: f64,
    /// Highest Z0 over the corners, Ω.
    pub z0_max: f64,
    /// How many corners were evaluated.
    pub corners: usize,
    /// The tolerances used.
    pub tolerances: Tolerances,
}

impl Tolerances {
    /// Checks the tolerances against the nominal line.
    pub fn validate(&self, line: &Line) -> Vec<FieldError> {
        let mut e = Vec::new();
        let most = 0.999 * line.width();
        if !(self.etch_mm.is_finite() && (0.0..=most).contains(&self.etch_mm)) {
            e.push(FieldError::new(
                "etch-tol",
                crate::math::fmt_num(self.etch_mm),
                format!(
                    "must be from 0 to {} mm, below the trace width {} mm: the spread's narrow \
                     corner (width − tolerance) must keep copper ({} mm is the tolerance when the \
                     flag is not given; give a smaller one, or 0 for no etch spread)",
                    crate::math::sig_fig(most, 3),
                    crate::math::sig_fig(line.width(), 4),
                    crate::math::fmt_num(Tolerances::default().etch_mm)
                ),
            ));
        }
        check_range(&mut e, "er-tol", self.er_abs, 0.0, 5.0);
        check_range(&mut e, "h-tol-pct", self.h_rel * 100.0, 0.0, 50.0);
        e
    }
}

/// Evaluates Z0 at every corner of the tolerance box around `line`.
pub fn spread(line: &Line, method: Option<Method>, tol: &Tolerances) -> Result<Spread, Error> {
    spread_with(line, method, tol, Accuracy::default())
}

/// [`spread`] with the field solver's accuracy (used by the field method).
pub fn spread_with(
    line: &Line,
    method: Option<Method>,
    tol: &Tolerances,
    accuracy: Accuracy,
) -> Result<Spread, Error> {
    let errs = tol.validate(line);
    if !errs.is_empty() {
        return Err(Error::Invalid(errs));
    }
    // Each axis: a function applying the sign (±1) to a copy of the line.
    type Axis = Box<dyn Fn(&mut Line, f64)>;
    let mut axes: Vec<Axis> = Vec::new();
    let (etch, der, hr) = (tol.etch_mm, tol.er_abs, tol.h_rel);
    axes.push(Box::new(move |l, s| {
        *l = l.with_width(l.width() + s * etch);
    }));
    // εr never below 1.
    let shift = move |er: &mut f64, s: f64| *er = (*er + s * der).max(1.0);
    match line {
        Line::Microstrip(_) | Line::CoatedMicrostrip(_) | Line::Cpwg(_) => {
            axes.push(Box::new(move |l, s| match l {
                Line::Microstrip(m) => shift(&mut m.er, s),
                Line::CoatedMicrostrip(c) => shift(&mut c.line.er, s),
                Line::Cpwg(c) => shift(&mut c.er, s),
                Line::Stripline(_) => {}
            }));
            axes.push(Box::new(move |l, s| match l {
                Line::Microstrip(m) => m.h *= 1.0 + s * hr,
                Line::CoatedMicrostrip(c) => c.line.h *= 1.0 + s * hr,
                Line::Cpwg(c) => c.h *= 1.0 + s * hr,
                Line::Stripline(_) => {}
            }));
        }
        Line::Stripline(_) => {
            axes.push(Box::new(move |l, s| {
                if let Line::Stripline(st) = l {
                    shift(&mut st.er1, s);
                    shift(&mut st.er2, s);
                }
            }));
            axes.push(Box::new(move |l, s| {
                if let Line::Stripline(st) = l {
                    st.h1 *= 1.0 + s * hr;
                }
            }));
            axes.push(Box::new(move |l, s| {
                if let Line::Stripline(st) = l {
                    st.h2 *= 1.0 + s * hr;
                }
            }));
        }
    }
    let n = axes.len();
    let mut zmin = f64::INFINITY;
    let mut zmax = f64::NEG_INFINITY;
    for mask in 0..(1usize << n) {
        let mut l = *line;
        for (i, axis) in axes.iter().enumerate() {
            let sign = if mask & (1 << i) != 0 { 1.0 } else { -1.0 };
            axis(&mut l, sign);
        }
        // A corner outside the accepted range is the nominal plus its tolerance: say so, so
        // that a value the user never typed (width 1000.025 from 1000 and 0.025) makes sense.
        let z = analyse_with(&l, method, accuracy)
            .map_err(|errs| {
                Error::Invalid(
                    errs.into_iter()
                        .map(|mut e| {
                            e.allowed = format!(
                                "{} (this is a corner of the fab-tolerance spread: the nominal \
                                 value moved by its tolerance; change the nominal or the \
                                 tolerance)",
                                e.allowed
                            );
                            e
                        })
                        .collect(),
                )
            })?
            .z0;
        zmin = zmin.min(z);
        zmax = zmax.max(z);
    }
    Ok(Spread {
        z0_min: zmin,
        z0_max: zmax,
        corners: 1 << n,
        tolerances: *tol,
    })
}
