//! Transmission-line cross-sections as the engine sees them (the model's own types; the
//! closed forms and the field solver that give their Z0 live in `solve::impedance` and
//! `field`), with the limits every length and permittivity must keep.

use crate::error::{FieldError, check_range};
use std::fmt;

/// Largest length accepted anywhere in the engine, in millimetres.
pub const MAX_LENGTH_MM: f64 = 1000.0;
/// Largest relative permittivity accepted.
pub const MAX_ER: f64 = 200.0;

/// The transmission-line structures the engine knows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Structure {
    /// Trace on an outer layer over one plane, air above.
    Microstrip,
    /// Microstrip under a solder-mask coat.
    CoatedMicrostrip,
    /// Trace between two planes, centred or offset.
    Stripline,
    /// Grounded coplanar waveguide: trace with coplanar ground on both sides and a plane below.
    Cpwg,
}

impl Structure {
    /// Every structure, in the order the command line lists them.
    pub const ALL: [Structure; 4] = [
        Structure::Microstrip,
        Structure::CoatedMicrostrip,
        Structure::Stripline,
        Structure::Cpwg,
    ];

    /// The name used on the command line and in JSON.
    pub fn name(self) -> &'static str {
        match self {
            Structure::Microstrip => "microstrip",
            Structure::CoatedMicrostrip => "coated-microstrip",
            Structure::Stripline => "stripline",
            Structure::Cpwg => "cpwg",
        }
    }

    /// Parses a command-line name.
    pub fn parse(s: &str) -> Option<Structure> {
        Structure::ALL.into_iter().find(|m| m.name() == s)
    }

    /// The methods that apply to this structure, most accurate first (the first is the default
    /// for typical geometries; see [`default_method`]).
    pub fn methods(self) -> &'static [Method] {
        match self {
            Structure::Microstrip => &[Method::HammerstadJensen, Method::Ipc2141, Method::Field],
            Structure::CoatedMicrostrip => &[Method::CoverBlend, Method::Ipc2141, Method::Field],
            Structure::Stripline => &[
                Method::Wheeler,
                Method::Cohn,
                Method::Ipc2141,
                Method::Field,
            ],
            Structure::Cpwg => &[Method::Conformal, Method::Field],
        }
    }
}

impl fmt::Display for Structure {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// Microstrip: a trace of width `width` and thickness `t` on a dielectric of height `h`
/// (trace underside to plane) and permittivity `er`, air above.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Microstrip {
    /// Trace width, mm.
    pub width: f64,
    /// Dielectric height from the trace's underside to the plane, mm.
    pub h: f64,
    /// Trace thickness, mm (0 allowed: the zero-thickness idealisation).
    pub t: f64,
    /// Relative permittivity of the substrate.
    pub er: f64,
}

/// Microstrip under a solder-mask coat of thickness `mask_t` (measured over the substrate
/// beside the trace) and permittivity `mask_er`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CoatedMicrostrip {
    /// The uncoated line.
    pub line: Microstrip,
    /// Mask thickness over the substrate, mm.
    pub mask_t: f64,
    /// Mask relative permittivity.
    pub mask_er: f64,
}

/// Stripline between two planes: `h1` of dielectric from the upper plane to the trace's top,
/// `h2` from the trace's bottom to the lower plane (equal: centred). The two dielectrics
/// may differ (`er1` above, `er2` below), as in a real stackup.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stripline {
    /// Trace width, mm.
    pub width: f64,
    /// Dielectric between the upper plane and the trace's top, mm.
    pub h1: f64,
    /// Dielectric between the trace's bottom and the lower plane, mm.
    pub h2: f64,
    /// Trace thickness, mm.
    pub t: f64,
    /// Relative permittivity above the trace.
    pub er1: f64,
    /// Relative permittivity below the trace.
    pub er2: f64,
}

impl Stripline {
    /// Plane-to-plane spacing b = h1 + t + h2.
    pub fn b(&self) -> f64 {
        self.h1 + self.t + self.h2
    }

    /// True when the trace is centred between the planes (to 1e-9 relative).
    pub fn is_centred(&self) -> bool {
        (self.h1 - self.h2).abs() <= 1e-9 * self.h1.max(self.h2)
    }
}

/// Grounded coplanar waveguide: trace of `width`, `gap` to coplanar grounds on both sides
/// (taken as wide and tied to the plane), dielectric `h` to the plane, air above.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Cpwg {
    /// Trace width, mm.
    pub width: f64,
    /// Gap from the trace edge to the coplanar ground, mm.
    pub gap: f64,
    /// Dielectric height to the plane, mm.
    pub h: f64,
    /// Trace and ground thickness, mm.
    pub t: f64,
    /// Substrate relative permittivity.
    pub er: f64,
}

/// A trace cross-section of any structure.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Line {
    /// See [`Microstrip`].
    Microstrip(Microstrip),
    /// See [`CoatedMicrostrip`].
    CoatedMicrostrip(CoatedMicrostrip),
    /// See [`Stripline`].
    Stripline(Stripline),
    /// See [`Cpwg`].
    Cpwg(Cpwg),
}

impl Line {
    /// The structure of this line.
    pub fn structure(&self) -> Structure {
        match self {
            Line::Microstrip(_) => Structure::Microstrip,
            Line::CoatedMicrostrip(_) => Structure::CoatedMicrostrip,
            Line::Stripline(_) => Structure::Stripline,
            Line::Cpwg(_) => Structure::Cpwg,
        }
    }

    /// Trace width, mm.
    pub fn width(&self) -> f64 {
        match self {
            Line::Microstrip(m) => m.width,
            Line::CoatedMicrostrip(c) => c.line.width,
            Line::Stripline(s) => s.width,
            Line::Cpwg(c) => c.width,
        }
    }

    /// The same line with another width.
    pub fn with_width(&self, w: f64) -> Line {
        let mut l = *self;
        match &mut l {
            Line::Microstrip(m) => m.width = w,
            Line::CoatedMicrostrip(c) => c.line.width = w,
            Line::Stripline(s) => s.width = w,
            Line::Cpwg(c) => c.width = w,
        }
        l
    }

    /// The dielectric height that sets the line's scale (h, or b for stripline), mm.
    pub fn scale_height(&self) -> f64 {
        match self {
            Line::Microstrip(m) => m.h,
            Line::CoatedMicrostrip(c) => c.line.h,
            Line::Stripline(s) => s.b(),
            Line::Cpwg(c) => c.h,
        }
    }

    /// Every length multiplied by `k` (permittivities unchanged).
    pub fn scaled(&self, k: f64) -> Line {
        match *self {
            Line::Microstrip(m) => Line::Microstrip(scale_ms(m, k)),
            Line::CoatedMicrostrip(c) => Line::CoatedMicrostrip(CoatedMicrostrip {
                line: scale_ms(c.line, k),
                mask_t: c.mask_t * k,
                mask_er: c.mask_er,
            }),
            Line::Stripline(s) => Line::Stripline(Stripline {
                width: s.width * k,
                h1: s.h1 * k,
                h2: s.h2 * k,
                t: s.t * k,
                ..s
            }),
            Line::Cpwg(c) => Line::Cpwg(Cpwg {
                width: c.width * k,
                gap: c.gap * k,
                h: c.h * k,
                t: c.t * k,
                er: c.er,
            }),
        }
    }

    /// Checks every field; the names are the command-line flag names without dashes.
    /// An empty list means the line can be analysed.
    pub fn validate(&self) -> Vec<FieldError> {
        let mut e = Vec::new();
        let er = |e: &mut Vec<FieldError>, name: &str, v: f64| check_range(e, name, v, 1.0, MAX_ER);
        let t = check_thickness;
        match self {
            Line::Microstrip(m) => validate_ms(&mut e, m),
            Line::CoatedMicrostrip(c) => {
                validate_ms(&mut e, &c.line);
                t(&mut e, "mask-t", c.mask_t);
                er(&mut e, "mask-er", c.mask_er);
            }
            Line::Stripline(s) => {
                check_length(&mut e, "width", s.width);
                check_length(&mut e, "h1", s.h1);
                check_length(&mut e, "h2", s.h2);
                t(&mut e, "t", s.t);
                er(&mut e, "er", s.er1);
                if s.er2 != s.er1 {
                    er(&mut e, "er (lower dielectric)", s.er2);
                }
            }
            Line::Cpwg(c) => {
                check_length(&mut e, "width", c.width);
                check_length(&mut e, "gap", c.gap);
                check_length(&mut e, "h", c.h);
                t(&mut e, "t", c.t);
                er(&mut e, "er", c.er);
            }
        }
        e
    }
}

fn scale_ms(m: Microstrip, k: f64) -> Microstrip {
    Microstrip {
        width: m.width * k,
        h: m.h * k,
        t: m.t * k,
        er: m.er,
    }
}

/// Smallest length accepted, mm (0.1 µm: below any etched feature).
pub const MIN_LENGTH_MM: f64 = 1e-4;

fn check_length(e: &mut Vec<FieldError>, name: &str, v: f64) {
    check_range(e, name, v, MIN_LENGTH_MM, MAX_LENGTH_MM);
}

fn validate_ms(e: &mut Vec<FieldError>, m: &Microstrip) {
    check_length(e, "width", m.width);
    check_length(e, "h", m.h);
    check_thickness(e, "t", m.t);
    check_range(e, "er", m.er, 1.0, MAX_ER);
}

/// Smallest non-zero thickness accepted, mm (1 pm: far below any copper or mask, far above
/// where the closed forms' logarithms of t lose their meaning; the lengths' own minimum would
/// refuse a line merely scaled down).
pub const MIN_THICKNESS_MM: f64 = 1e-9;

/// A thickness: 0 (the zero-thickness idealisation) or a length from [`MIN_THICKNESS_MM`] to
/// [`MAX_LENGTH_MM`]. A vanishing positive thickness (1e-200 mm) is neither and reached the
/// closed forms as NaN.
fn check_thickness(e: &mut Vec<FieldError>, name: &str, v: f64) {
    if v != 0.0 && !(v.is_finite() && (MIN_THICKNESS_MM..=MAX_LENGTH_MM).contains(&v)) {
        e.push(FieldError::new(
            name,
            crate::math::fmt_num(v),
            format!(
                "must be 0 (zero thickness) or a finite number from {MIN_THICKNESS_MM:e} to \
                 {MAX_LENGTH_MM}"
            ),
        ));
    }
}

/// A closed-form method (a family of published formulas).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Method {
    /// Hammerstad & Jensen 1980 microstrip, with their thickness correction.
    HammerstadJensen,
    /// The IPC-2141A equations (microstrip, embedded microstrip, symmetric and asymmetric stripline).
    Ipc2141,
    /// Hammerstad–Jensen microstrip with the exponential cover blend for a solder-mask coat.
    CoverBlend,
    /// Cohn 1954, exact for zero-thickness centred stripline (offset: parallel combination).
    Cohn,
    /// Wheeler 1978 finite-thickness stripline as given by Wadell (offset: parallel combination).
    Wheeler,
    /// Conformal mapping for grounded CPW (Ghione & Naldi 1983), thickness-corrected.
    Conformal,
    /// The 2-D quasi-static field solver (`crate::field`): not a closed form; the check on the
    /// others.
    Field,
}

impl Method {
    /// Every method.
    pub const ALL: [Method; 7] = [
        Method::HammerstadJensen,
        Method::Ipc2141,
        Method::CoverBlend,
        Method::Cohn,
        Method::Wheeler,
        Method::Conformal,
        Method::Field,
    ];

    /// The name used on the command line and in JSON.
    pub fn name(self) -> &'static str {
        match self {
            Method::HammerstadJensen => "hammerstad-jensen",
            Method::Ipc2141 => "ipc-2141",
            Method::CoverBlend => "cover-blend",
            Method::Cohn => "cohn",
            Method::Wheeler => "wheeler",
            Method::Conformal => "conformal",
            Method::Field => "field",
        }
    }

    /// Parses a command-line name.
    pub fn parse(s: &str) -> Option<Method> {
        Method::ALL.into_iter().find(|m| m.name() == s)
    }
}

impl fmt::Display for Method {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}
