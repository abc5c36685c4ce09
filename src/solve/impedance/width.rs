//! Width solving: the trace width that gives a target Z0.
//!
//! Z0 falls monotonically as the trace widens for every method here, so the solve brackets
//! the target between a very narrow and a very wide trace (10⁻⁴ to 10² times the dielectric
//! height) and refines it with Brent's method. The field method starts instead from the
//! closed-form width and refines it with secant steps in ln w (Z0 is close to linear in ln w),
//! falling back to bracketing; each step is a field solution.

use super::{
    Accuracy, Line, Method, Solution, WarningKind, analyse, analyse_with, default_method, sig,
};
use crate::error::{Error, FieldError, check_range};
use crate::solve::roots::brent;

/// Limits on an acceptable solved width.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SolveLimits {
    /// The fab's minimum trace width, mm. A solution below it is refused.
    pub min_trace_mm: f64,
    /// Where the user sets that minimum, for messages: `[fab] min_trace_mm` in a spec (the
    /// default), `--min-trace` on the `impedance` command.
    pub min_trace_setting: &'static str,
    /// Field-solver accuracy, for the field method.
    pub accuracy: Accuracy,
}

impl Default for SolveLimits {
    /// 0.127 mm: the built-in standard fab profile's minimum trace (common practice, no
    /// single source).
    fn default() -> Self {
        SolveLimits {
            min_trace_mm: 0.127,
            min_trace_setting: "[fab] min_trace_mm",
            accuracy: Accuracy::default(),
        }
    }
}

/// Finds the width where a decreasing function `z_of(w)` equals `target`, starting near
/// `guess`: secant steps in ln w (at most a factor 2 each), then bracketing and Brent's method
/// if the steps do not settle. Stops within 1 mΩ.
pub fn solve_width_near(
    mut z_of: impl FnMut(f64) -> Result<f64, Error>,
    guess: f64,
    target: f64,
) -> Result<f64, Error> {
    let (mut w0, mut z0) = (guess, z_of(guess)?);
    if (z0 - target).abs() < NEAR_TOL {
        return Ok(w0);
    }
    let mut w1 = if z0 > target {
        guess * 1.05
    } else {
        guess / 1.05
    };
    let mut z1 = z_of(w1)?;
    for _ in 0..25 {
        if (z1 - target).abs() < NEAR_TOL {
            return Ok(w1);
        }
        let slope = (z1 - z0) / (w1.ln() - w0.ln());
        if !(slope.is_finite() && slope < 0.0) {
            break;
        }
        let step = ((target - z1) / slope).clamp(-std::f64::consts::LN_2, std::f64::consts::LN_2);
        w0 = w1;
        z0 = z1;
        w1 *= step.exp();
        z1 = z_of(w1)?;
    }
    // Bracket and refine.
    let (mut lo, mut hi) = (guess / 1.5, guess * 1.5);
    for _ in 0..30 {
        let (zl, zh) = (z_of(lo)?, z_of(hi)?);
        if zl >= target && zh <= target {
            break;
        }
        if zl < target {
            lo /= 1.5;
        }
        if zh > target {
            hi *= 1.5;
        }
    }
    let mut err = None;
    let w = brent(
        |w| match z_of(w) {
            Ok(z) => z - target,
            Err(e) => {
                err = Some(e);
                f64::NAN
            }
        },
        lo,
        hi,
        guess * 1e-7,
    );
    if let Some(e) = err {
        return Err(e);
    }
    w.map_err(|e| {
        Error::Unsolvable(format!(
            "target = {} Ω: width solve failed ({e:?})",
            sig(target)
        ))
    })
}

/// [`solve_width_near`] for an expensive `z_of` (a full field solution) with a cheap
/// approximation `rough` of it (the rough field solution of the same cross-section,
/// [`crate::field::rough_z0`]): the search runs on `rough`, and its width is polished on `z_of`
/// by secant steps starting with the rough slope (`roots::polish`), two or three full solutions
/// where the search on `z_of` alone takes three to five. Should the polish not settle, the
/// search runs on `z_of` from the rough width (from `guess` if the rough solution fails). Stops
/// within 1 mΩ of `z_of`.
pub fn solve_width_polished(
    mut z_of: impl FnMut(f64) -> Result<f64, Error>,
    mut rough: impl FnMut(f64) -> Result<f64, Error>,
    guess: f64,
    target: f64,
) -> Result<f64, Error> {
    // The rough search and its slope; should the rough solution fail anywhere (it is a
    // coarser mesh of the same section), the search runs on `z_of` alone.
    let h = 0.02;
    let rough_root = solve_width_near(&mut rough, guess, target).and_then(|w| {
        let slope = (rough(w * f64::exp(h))? - rough(w)?) / h;
        Ok((w, slope))
    });
    let Ok((w, slope)) = rough_root else {
        return solve_width_near(z_of, guess, target);
    };
    let x = w.ln();
    let polished = crate::solve::roots::polish(
        |x: f64| z_of(x.exp()).map(|z| z - target),
        x,
        slope,
        (x - std::f64::consts::LN_2, x + std::f64::consts::LN_2),
        (0.0, NEAR_TOL),
        4,
    )?;
    match polished {
        Some(x) => Ok(x.exp()),
        None => solve_width_near(z_of, w, target),
    }
}

/// Where [`solve_width_near`] stops: within 1 mΩ of the target.
const NEAR_TOL: f64 = 1e-3;

/// Solves the width of `template` (whose own width is ignored) for `target_ohms`.
///
/// Errors: an invalid line or target (field errors), a target out of reach of the method,
/// a solution outside the method's validity range, or below `limits.min_trace_mm`.
pub fn solve_width(
    template: &Line,
    method: Option<Method>,
    target_ohms: f64,
    limits: &SolveLimits,
) -> Result<(Line, Solution), Error> {
    let mut errs = Vec::new();
    check_range(&mut errs, "target", target_ohms, 1.0, 1000.0);
    check_range(
        &mut errs,
        limits.min_trace_setting,
        limits.min_trace_mm,
        0.0,
        100.0,
    );
    // Validate the rest of the line; its width is what we solve for.
    let probe = template.with_width(1.0);
    errs.extend(probe.validate().into_iter().filter(|e| e.field != "width"));
    if !errs.is_empty() {
        return Err(Error::Invalid(errs));
    }
    let method = method.unwrap_or_else(|| default_method(template));
    let s = template.structure();
    if !s.methods().contains(&method) {
        let names: Vec<_> = s.methods().iter().map(|m| m.name()).collect();
        return Err(Error::Invalid(vec![FieldError::new(
            "method",
            method.name(),
            format!("for {} the methods are: {}", s.name(), names.join(", ")),
        )]));
    }
    if method == Method::Field {
        return solve_width_field(template, target_ohms, limits);
    }
    let z_of = |w: f64| -> Result<Solution, Error> {
        analyse(&template.with_width(w), Some(method)).map_err(Error::Invalid)
    };
    let scale = template.scale_height();
    let w_hi = (scale * 1e2).min(super::MAX_LENGTH_MM);
    // Some thickness corrections break down for traces much narrower than they are thick:
    // start the bracket at the narrowest width where the method gives a finite Z0.
    let z_or_nan = |w: f64| z_of(w).map(|s| s.z0).unwrap_or(f64::NAN);
    let mut w_lo = (scale * 1e-4).max(2.0 * super::MIN_LENGTH_MM);
    let mut z_narrow = z_or_nan(w_lo);
    while !z_narrow.is_finite() && w_lo < scale {
        w_lo *= 2.0;
        z_narrow = z_or_nan(w_lo);
    }
    // And end it at the widest width where it still gives one (IPC's fits go negative).
    let mut w_hi = w_hi;
    let mut z_wide = z_or_nan(w_hi);
    while !z_wide.is_finite() && w_hi > 4.0 * w_lo {
        w_hi /= 2.0;
        z_wide = z_or_nan(w_hi);
    }
    if !(target_ohms <= z_narrow && target_ohms >= z_wide) {
        return Err(Error::OutOfReach(format!(
            "target = {} Ω is out of reach for {} by {}: Z0 runs from {} Ω (w = {} mm) \
             down to {} Ω (w = {} mm)",
            sig(target_ohms),
            template.structure(),
            method,
            sig(z_narrow),
            sig(w_lo),
            sig(z_wide),
            sig(w_hi),
        )));
    }
    let f = |w: f64| match analyse(&template.with_width(w), Some(method)) {
        Ok(s) => s.z0 - target_ohms,
        Err(_) => f64::NAN,
    };
    let w = brent(f, w_lo, w_hi, scale * 1e-12)
        .map_err(|e| Error::Unsolvable(format!("width solve failed: {e:?}")))?;
    let line = template.with_width(w);
    let sol = z_of(w)?;
    let outside: Vec<_> = sol
        .warnings
        .iter()
        .filter(|x| x.kind == WarningKind::OutsideValidity)
        .map(|x| x.text.as_str())
        .collect();
    if !outside.is_empty() {
        return Err(Error::Unsolvable(format!(
            "target = {} Ω solves to w = {} mm, outside the validity of {}: {}; \
             try another --method",
            sig(target_ohms),
            sig(w),
            method,
            outside.join("; ")
        )));
    }
    check_min_trace(w, target_ohms, limits)?;
    Ok((line, sol))
}

/// The field method: from the closed-form width, refined by field solutions.
fn solve_width_field(
    template: &Line,
    target_ohms: f64,
    limits: &SolveLimits,
) -> Result<(Line, Solution), Error> {
    let scale = template.scale_height();
    let loose = SolveLimits {
        min_trace_mm: 0.0,
        ..*limits
    };
    let guess = match solve_width(template, None, target_ohms, &loose) {
        Ok((l, _)) => l.width(),
        // Out of the closed form's reach is out of the field's too, to within a few percent;
        // say so plainly rather than search blindly.
        Err(e @ Error::OutOfReach(_)) => return Err(e),
        Err(_) => scale,
    };
    let z_of = |w: f64| -> Result<f64, Error> {
        analyse_with(
            &template.with_width(w),
            Some(Method::Field),
            limits.accuracy,
        )
        .map(|s| s.z0)
        .map_err(Error::Invalid)
    };
    let rough = |w: f64| -> Result<f64, Error> {
        crate::field::rough_z0(&crate::field::cross_section_for_line(
            &template.with_width(w),
        ))
    };
    let w = solve_width_polished(z_of, rough, guess, target_ohms)?;
    let line = template.with_width(w);
    let sol = analyse_with(&line, Some(Method::Field), limits.accuracy).map_err(Error::Invalid)?;
    check_min_trace(w, target_ohms, limits)?;
    Ok((line, sol))
}

/// Refuses a solved width below the fab's minimum trace.
fn check_min_trace(w: f64, target_ohms: f64, limits: &SolveLimits) -> Result<(), Error> {
    if w < limits.min_trace_mm {
        return Err(Error::Invalid(vec![FieldError::new(
            "target",
            sig(target_ohms),
            format!(
                "solves to a trace width of {} mm, below the fab minimum trace of {} mm; \
                 lower the target, use a thicker dielectric or a finer process ({})",
                sig(w),
                sig(limits.min_trace_mm),
                limits.min_trace_setting
            ),
        )]));
    }
    Ok(())
}
