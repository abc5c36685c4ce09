//! Bracketed root finding (Brent's method).
//!
//! R. P. Brent, *Algorithms for Minimization without Derivatives*, Prentice-Hall
//! 1973, ch. 4: inverse quadratic interpolation and secant steps, falling back
//! to bisection, so that the bracket always shrinks and convergence is
//! guaranteed for any continuous function with a sign change.

/// Why a root search failed.
#[derive(Debug, Clone, PartialEq)]
pub enum RootError {
    /// f(a) and f(b) have the same sign (or one is not finite).
    NotBracketed {
        /// f at the lower end.
        fa: f64,
        /// f at the upper end.
        fb: f64,
    },
    /// The function returned a non-finite value inside the bracket.
    NotFinite(f64),
}

/// Finds x in [a, b] with f(x) = 0 to within `xtol` (absolute), given a sign change.
pub fn brent(mut f: impl FnMut(f64) -> f64, a: f64, b: f64, xtol: f64) -> Result<f64, RootError> {
    let (mut a, mut b) = (a, b);
    let mut fa = f(a);
    let mut fb = f(b);
    if !(fa.is_finite() && fb.is_finite()) || fa * fb > 0.0 {
        return Err(RootError::NotBracketed { fa, fb });
    }
    if fa == 0.0 {
        return Ok(a);
    }
    if fb == 0.0 {
        return Ok(b);
    }
    let (mut c, mut fc) = (a, fa);
    let mut d = b - a;
    let mut e = d;
    for _ in 0..200 {
        if fb * fc > 0.0 {
            c = a;
            fc = fa;
            d = b - a;
            e = d;
        }
        if fc.abs() < fb.abs() {
            a = b;
            b = c;
            c = a;
            fa = fb;
            fb = fc;
            fc = fa;
        }
        let tol = 2.0 * f64::EPSILON * b.abs() + 0.5 * xtol;
        let m = 0.5 * (c - b);
        if m.abs() <= tol || fb == 0.0 {
            return Ok(b);
        }
        if e.abs() >= tol && fa.abs() > fb.abs() {
            let s = fb / fa;
            let (mut p, mut q);
            if a == c {
                p = 2.0 * m * s;
                q = 1.0 - s;
            } else {
                let qq = fa / fc;
                let r = fb / fc;
                p = s * (2.0 * m * qq * (qq - r) - (b - a) * (r - 1.0));
                q = (qq - 1.0) * (r - 1.0) * (s - 1.0);
            }
            if p > 0.0 {
                q = -q;
            } else {
                p = -p;
            }
            if 2.0 * p < (3.0 * m * q - (tol * q).abs()).min((e * q).abs()) {
                e = d;
                d = p / q;
            } else {
                d = m;
                e = m;
            }
        } else {
            d = m;
            e = m;
        }
        a = b;
        fa = fb;
        b += if d.abs() > tol { d } else { tol.copysign(m) };
        fb = f(b);
        if !fb.is_finite() {
            return Err(RootError::NotFinite(b));
        }
    }
    Ok(b)
}

/// Polishes a root of an expensive function `f` from `x0`, the root of a cheaper approximation
/// of it whose slope there is `slope`: secant steps on `f`, the first with that slope, each kept
/// within `[lo, hi]`. Done when |f(x)| ≤ `ftol` (x returned), or when a step is at most `xtol`
/// (the step's end returned unevaluated: its error is the step times the slope's relative
/// error, far below `xtol`). `Ok(None)` when it has not settled within `max_evals` evaluations,
/// a slope is not of the sign of `slope`, or the root lies beyond the bounds (the caller then
/// searches with `f` alone).
///
/// The approximation is a coarser field solution of the same cross-section: its error varies
/// slowly in x, so the two roots are close and the slopes near (within about 6 % on the demo's
/// sections), and two or three evaluations of `f` replace the three to nine a search of `f`
/// takes.
pub fn polish<E>(
    mut f: impl FnMut(f64) -> Result<f64, E>,
    x0: f64,
    slope: f64,
    (lo, hi): (f64, f64),
    (xtol, ftol): (f64, f64),
    max_evals: usize,
) -> Result<Option<f64>, E> {
    if !(slope.is_finite() && slope != 0.0) {
        return Ok(None);
    }
    let (mut x, mut s) = (x0.clamp(lo, hi), slope);
    let mut last: Option<(f64, f64)> = None;
    for _ in 0..max_evals {
        let fx = f(x)?;
        if !fx.is_finite() {
            return Ok(None);
        }
        if fx.abs() <= ftol {
            return Ok(Some(x));
        }
        if let Some((xp, fp)) = last {
            if x != xp {
                s = (fx - fp) / (x - xp);
            }
            if !(s.is_finite() && s * slope > 0.0) {
                return Ok(None);
            }
        }
        let step_end = x - fx / s;
        let next = step_end.clamp(lo, hi);
        if (next - x).abs() <= xtol {
            // A step cut short by the bounds has not found the root: it lies beyond them.
            return Ok((next == step_end).then_some(next));
        }
        last = Some((x, fx));
        x = next;
    }
    Ok(None)
}

#[cfg(test)]
mod tests {
    use super::*;

    // An approximation off by a smooth offset (x³ − 2 against x³ − 2.01): the polished root is
    // 2^(1/3) (arithmetic fact) to the tolerance, in a few evaluations.
    #[test]
    fn polishes_an_approximate_root() {
        let approx_root = 2.01_f64.cbrt();
        let slope = 3.0 * approx_root * approx_root;
        let mut evals = 0;
        let r = polish(
            |x: f64| -> Result<f64, ()> {
                evals += 1;
                Ok(x * x * x - 2.0)
            },
            approx_root,
            slope,
            (1.0, 2.0),
            (0.0, 1e-12),
            8,
        )
        .unwrap()
        .unwrap();
        assert!((r - 2.0_f64.cbrt()).abs() < 1e-12);
        assert!(evals <= 4, "{evals} evaluations");
        // A slope of the wrong sign is refused, not followed.
        let wrong = polish(
            |x: f64| -> Result<f64, ()> { Ok(2.0 - x * x * x) },
            approx_root,
            slope,
            (1.0, 2.0),
            (0.0, 1e-12),
            8,
        );
        assert_eq!(wrong, Ok(None));
        // A root beyond the bounds is not reported at the bound (f = x − 10 on [−1, 1]).
        let beyond = polish(
            |x: f64| -> Result<f64, ()> { Ok(x - 10.0) },
            0.0,
            1.0,
            (-1.0, 1.0),
            (0.0, 1e-12),
            8,
        );
        assert_eq!(beyond, Ok(None));
    }

    // √2 is the positive root of x² − 2 (arithmetic fact).
    #[test]
    fn finds_sqrt2() {
        let r = brent(|x| x * x - 2.0, 0.0, 2.0, 1e-14).unwrap();
        assert!((r - std::f64::consts::SQRT_2).abs() < 1e-13);
    }

    // Dottie number: the fixed point of cos, 0.7390851332151607 (OEIS A003957).
    #[test]
    fn finds_cos_fixed_point() {
        let r = brent(|x| x.cos() - x, 0.0, 1.0, 1e-15).unwrap();
        assert!((r - 0.739_085_133_215_160_7).abs() < 1e-13);
    }

    #[test]
    fn refuses_unbracketed() {
        assert!(matches!(
            brent(|x| x * x + 1.0, -1.0, 1.0, 1e-12),
            Err(RootError::NotBracketed { .. })
        ));
    }
}
