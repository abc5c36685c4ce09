//! Width solving: the trace width that gives a target Z0.
//!
//! Z0 falls monotonically as the trace widens for every method here, so the solve brackets
//! the target between a very narrow and a very wide trace (10⁻⁴ to 10² times the dielectric
//! height) and refines it with Brent's method.

use super::{Line, Method, Solution, WarningKind, analyse, default_method, sig};
use crate::error::{Error, FieldError, check_range};
use crate::solve::roots::brent;

/// Limits on an acceptable solved width.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SolveLimits {
    /// The fab's minimum trace width, mm. A solution below it is refused.
    pub min_trace_mm: f64,
}

impl Default for SolveLimits {
    /// 0.1 mm: the common "standard process" minimum trace (common practice, no single source).
    fn default() -> Self {
        SolveLimits { min_trace_mm: 0.1 }
    }
}

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
    check_range(&mut errs, "min-trace", limits.min_trace_mm, 0.0, 100.0);
    // Validate the rest of the line; its width is what we solve for.
    let probe = template.with_width(1.0);
    errs.extend(probe.validate().into_iter().filter(|e| e.field != "width"));
    if !errs.is_empty() {
        return Err(Error::Invalid(errs));
    }
    let method = method.unwrap_or_else(|| default_method(template));
    let z_of = |w: f64| -> Result<Solution, Error> {
        analyse(&template.with_width(w), Some(method)).map_err(Error::Invalid)
    };
    let scale = template.scale_height();
    let w_hi = scale * 1e2;
    // Some thickness corrections break down for traces much narrower than they are thick:
    // start the bracket at the narrowest width where the method gives a finite Z0.
    let mut w_lo = scale * 1e-4;
    let mut z_narrow = z_of(w_lo)?.z0;
    while !z_narrow.is_finite() && w_lo < scale {
        w_lo *= 2.0;
        z_narrow = z_of(w_lo)?.z0;
    }
    let z_wide = z_of(w_hi)?.z0;
    if !(target_ohms <= z_narrow && target_ohms >= z_wide) {
        return Err(Error::Unsolvable(format!(
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
    if w < limits.min_trace_mm {
        return Err(Error::Invalid(vec![FieldError::new(
            "target",
            sig(target_ohms),
            format!(
                "solves to a trace width of {} mm, below the fab minimum trace of {} mm; \
                 lower the target, thin the dielectric or use a finer process (--min-trace)",
                sig(w),
                sig(limits.min_trace_mm)
            ),
        )]));
    }
    Ok((line, sol))
}
