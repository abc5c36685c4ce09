//! The impedance engine: quasi-static Z0 and εeff of the trace structures a probe
//! or a test fixture uses, by published closed forms.
//!
//! One type per structure ([`Microstrip`], [`CoatedMicrostrip`], [`Stripline`],
//! [`Cpwg`], gathered in [`Line`]); the formula family is a value ([`Method`]).
//! Every result carries [`Warning`]s when the geometry is outside the method's
//! published validity range; the answer is still given.
//!
//! All lengths are millimetres; the formulas only use ratios, so any unit works.
//! The formulas, their validity ranges, accuracies and sources are collected in
//! `docs/formulas.md`.

mod cpwg;
mod microstrip;
mod spread;
mod stripline;
mod width;

pub use spread::{Spread, Tolerances, spread, spread_with};
pub use width::{SolveLimits, solve_width, solve_width_near, solve_width_polished};

use crate::error::FieldError;
pub use crate::field::Accuracy;

/// Free-space wave impedance η0 = μ0·c0 in ohms (CODATA 2022 μ0 = 1.25663706127e-6 H/m,
/// c0 = 299 792 458 m/s exact).
pub use crate::math::ETA0;

pub use crate::model::line::{
    CoatedMicrostrip, Cpwg, Line, MAX_ER, MAX_LENGTH_MM, MIN_LENGTH_MM, Method, Microstrip,
    Stripline, Structure,
};

/// How serious a warning is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum WarningKind {
    /// The geometry is outside the method's stated validity range: the answer may be off
    /// by more than the method's stated accuracy. The width solver refuses such solutions.
    OutsideValidity,
    /// Information on how the answer was obtained, or a known accuracy limit inside the range.
    Note,
}

/// A warning attached to a result.
#[derive(Debug, Clone, PartialEq)]
pub struct Warning {
    /// Its kind.
    pub kind: WarningKind,
    /// The text shown to the user.
    pub text: String,
}

impl Warning {
    pub(crate) fn outside(text: impl Into<String>) -> Self {
        Warning {
            kind: WarningKind::OutsideValidity,
            text: text.into(),
        }
    }

    pub(crate) fn note(text: impl Into<String>) -> Self {
        Warning {
            kind: WarningKind::Note,
            text: text.into(),
        }
    }
}

/// Records an `OutsideValidity` warning when `value` is not inside the open range `(lo, hi)`.
pub(crate) fn range_warning(
    w: &mut Vec<Warning>,
    method: &str,
    what: &str,
    value: f64,
    lo: f64,
    hi: f64,
) {
    if !(value > lo && value < hi) {
        w.push(Warning::outside(format!(
            "{method}: {what} = {} is outside its validity range {lo} < {what} < {hi}",
            sig(value)
        )));
    }
}

/// A number with 4 significant digits, for messages.
pub(crate) fn sig(v: f64) -> String {
    crate::math::sig_fig(v, 4)
}

/// The quasi-static solution for one line.
#[derive(Debug, Clone, PartialEq)]
pub struct Solution {
    /// Characteristic impedance, Ω.
    pub z0: f64,
    /// Effective relative permittivity.
    pub eps_eff: f64,
    /// The method that produced it.
    pub method: Method,
    /// What the method did and where it is out of its depth.
    pub warnings: Vec<Warning>,
}

impl Solution {
    /// True when some warning says the geometry is outside the method's validity range.
    pub fn outside_validity(&self) -> bool {
        self.warnings
            .iter()
            .any(|w| w.kind == WarningKind::OutsideValidity)
    }
}

/// The most accurate closed form for this line: Hammerstad–Jensen for microstrip, the
/// cover blend for coated microstrip, Cohn's exact solution for zero-thickness stripline and
/// Wheeler's finite-thickness formula otherwise, conformal mapping for grounded CPW.
pub fn default_method(line: &Line) -> Method {
    match line {
        Line::Microstrip(_) => Method::HammerstadJensen,
        Line::CoatedMicrostrip(_) => Method::CoverBlend,
        Line::Stripline(s) if s.t == 0.0 => Method::Cohn,
        Line::Stripline(_) => Method::Wheeler,
        Line::Cpwg(_) => Method::Conformal,
    }
}

/// Analyses a line with a method (`None`: [`default_method`]).
///
/// Fails with a field error when the line is invalid or the method does not apply to
/// the structure. A geometry outside the method's validity range still gets its answer,
/// with an `OutsideValidity` warning.
pub fn analyse(line: &Line, method: Option<Method>) -> Result<Solution, Vec<FieldError>> {
    analyse_with(line, method, Accuracy::default())
}

/// [`analyse`] with the field solver's accuracy setting (used only by [`Method::Field`]).
pub fn analyse_with(
    line: &Line,
    method: Option<Method>,
    accuracy: Accuracy,
) -> Result<Solution, Vec<FieldError>> {
    let errors = line.validate();
    if !errors.is_empty() {
        return Err(errors);
    }
    let method = method.unwrap_or_else(|| default_method(line));
    let s = line.structure();
    if !s.methods().contains(&method) {
        let names: Vec<_> = s.methods().iter().map(|m| m.name()).collect();
        return Err(vec![FieldError::new(
            "method",
            method.name(),
            format!("for {} the methods are: {}", s.name(), names.join(", ")),
        )]);
    }
    let mut sol = match line {
        _ if method == Method::Field => return analyse_field(line, accuracy),
        Line::Microstrip(m) => microstrip::analyse(m, method),
        Line::CoatedMicrostrip(c) => microstrip::analyse_coated(c, method),
        Line::Stripline(st) => stripline::analyse(st, method),
        Line::Cpwg(c) => cpwg::analyse(c),
    };
    // Extreme ratios can drive a formula to 0, ∞ or NaN: never pass that off as an answer.
    if !(sol.z0.is_finite() && sol.z0 > 0.0 && sol.eps_eff.is_finite() && sol.eps_eff >= 1.0 - 1e-9)
    {
        return Err(vec![FieldError::new(
            "geometry",
            format!("w/h = {}", sig(line.width() / line.scale_height())),
            format!(
                "{} gives no finite, positive Z0 for these proportions (Z0 = {}, εeff = {}); \
                 check the lengths or use --method field",
                method,
                sig(sol.z0),
                sig(sol.eps_eff)
            ),
        )]);
    }
    if sol.z0 > 1e4 {
        sol.warnings.push(Warning::outside(format!(
            "Z0 = {} Ω: these proportions are far outside any method's range",
            sig(sol.z0)
        )));
    }
    Ok(sol)
}

fn analyse_field(line: &Line, accuracy: Accuracy) -> Result<Solution, Vec<FieldError>> {
    let f = crate::field::solve_line(line, accuracy).map_err(|e| match e {
        crate::error::Error::Invalid(v) => v,
        other => vec![FieldError::new("method", "field", other.to_string())],
    })?;
    let mut warnings = vec![Warning::note(format!(
        "2-D field solution ({} accuracy, {} mesh nodes); Richardson correction {:.3} %, a \
         conservative bound on the error (measured errors are 3–15 % of it)",
        accuracy_name(accuracy),
        f.nodes,
        100.0 * f.estimated_error
    ))];
    match line {
        Line::Microstrip(_) | Line::CoatedMicrostrip(_) | Line::Cpwg(_) => {
            warnings.push(Warning::note(
                "field model: unlimited plane and substrate, open above; grounds of cpwg unlimited",
            ))
        }
        Line::Stripline(_) => warnings.push(Warning::note(
            "field model: unlimited planes, no side walls (a probe's own fenced cross-section is \
             solved by the probe build)",
        )),
    }
    Ok(Solution {
        z0: f.z0_ohms,
        eps_eff: f.eps_eff,
        method: Method::Field,
        warnings,
    })
}

/// The name of a field-solver accuracy setting, as the command line spells it.
pub fn accuracy_name(a: Accuracy) -> &'static str {
    match a {
        Accuracy::Draft => "draft",
        Accuracy::Standard => "standard",
        Accuracy::Fine => "fine",
        Accuracy::Refined(_) => "refined",
    }
}

pub use cpwg::ghione_naldi;
pub use microstrip::{hammerstad_jensen, ipc_embedded, ipc_microstrip};
pub use stripline::{cohn_centred, ipc_asymmetric, ipc_symmetric, wheeler_centred};
