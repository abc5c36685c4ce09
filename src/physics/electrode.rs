//! The flat electrode of an electric-field probe (`kind = "electric"`; what the built probe
//! measures is `physics::electric_probe`): the charge a disc set into a grounded plane collects
//! from a line below it.
//!
//! Held flat over a board, the probe's outer copper is a grounded plane facing the line, and
//! the electrode is a disc set into it (the copper round it pulled back by a clearance). With
//! the line at a voltage, the plane carries an induced charge whose density the 2-D field
//! solver gives column by column across the line ([`crate::field::ground_charge`]: the line's
//! own cross-section, dielectrics included, with the plane above it). The disc's share of that
//! charge is the line-to-electrode capacitance: integrated here exactly over the disc's chords,
//! the probe being short against the line's length (so the section holds under the whole disc).
//! The clearance round the disc widens the collecting radius by half of itself
//! ([`effective_radius`]); the face is taken as unlimited, which an FDTD of a tip-sized face
//! bears out to 0.9 % (`tests/electrode.rs`). The probe held upright is not in this part.

use crate::error::Error;
use crate::field::{Accuracy, ChargeColumn, CrossSection, cross_section_for_line, ground_charge};
use crate::model::line::Line;

/// Points of the rule over the disc (θ from −π/2 to π/2, x = x0 + r·sin θ).
const DISC_POINTS: usize = 4000;

/// The charge per volt on the line (F; negative, induced) that a disc of radius `r` (mm) set
/// into the grounded plane whose charge columns are `columns` collects, its centre `x0` (mm)
/// across the line from the line's axis. The density is linear between the node columns and
/// keeps every column's charge ([`nodal_density`]); ∫ σ(x)·2√(r² − (x − x0)²) dx is taken with
/// x = x0 + r·sin θ, which makes the chord's square-root ends smooth (2r²·cos²θ dθ): the
/// midpoint rule in θ.
/// NaN when `r` or `x0` is not a finite number or `r` is negative.
pub fn disc_charge(columns: &[ChargeColumn], r: f64, x0: f64) -> f64 {
    disc_charge_of(&nodal_density(columns), &disc_rule(), r, x0)
}

/// sin θ and cos²θ at the rule's points θ = −π/2 + (k + ½)·π/[`DISC_POINTS`], k ascending: the
/// same for every disc, made once for many.
fn disc_rule() -> Vec<(f64, f64)> {
    let dt = std::f64::consts::PI / DISC_POINTS as f64;
    (0..DISC_POINTS)
        .map(|k| {
            let t = -std::f64::consts::FRAC_PI_2 + (k as f64 + 0.5) * dt;
            (t.sin(), t.cos().powi(2))
        })
        .collect()
}

/// [`disc_charge`] from the columns' [`nodal_density`] and the [`disc_rule`] (each taken once
/// for many discs).
fn disc_charge_of(cols: &[(f64, f64)], rule: &[(f64, f64)], r: f64, x0: f64) -> f64 {
    if !(r.is_finite() && x0.is_finite() && r >= 0.0) {
        return f64::NAN;
    }
    if cols.is_empty() || r == 0.0 {
        return 0.0;
    }
    // Density (F/m per mm of x) at x, linear between node columns, held beyond the ends; the
    // columns at or left of x counted on from the last point's (x rises with θ), the count a
    // search from the start would find.
    let mut k = 0;
    let mut density = |x: f64| -> f64 {
        while k < cols.len() && cols[k].0 <= x {
            k += 1;
        }
        match k {
            0 => cols[0].1,
            k if k == cols.len() => cols[k - 1].1,
            k => {
                let ((xa, da), (xb, db)) = (cols[k - 1], cols[k]);
                da + (db - da) * (x - xa) / (xb - xa)
            }
        }
    };
    let dt = std::f64::consts::PI / DISC_POINTS as f64;
    let sum: f64 = rule
        .iter()
        .map(|&(sin_t, cos2_t)| density(x0 + r * sin_t) * 2.0 * r * r * cos2_t)
        .sum();
    // (F/m per mm) × mm² = mm·F/m.
    sum * dt * 1e-3
}

/// The density at each node column (F/m per mm of x), joined linearly, that gives every
/// column's cell exactly its charge: a cell runs half way to each neighbour, so its charge is
/// a·(3dᵢ + dᵢ₋₁)/4 + b·(3dᵢ + dᵢ₊₁)/4 with a and b its half widths on either side, a
/// tridiagonal system (solved by elimination; it is diagonally dominant). Taking each cell's mean
/// density at its node instead would flatten the peak under the line by the cells' widths.
pub fn nodal_density(columns: &[ChargeColumn]) -> Vec<(f64, f64)> {
    let cols: Vec<&ChargeColumn> = columns.iter().filter(|c| c.x1 > c.x0).collect();
    let n = cols.len();
    if n == 0 {
        return Vec::new();
    }
    let (mut lower, mut diag, mut upper, mut rhs) =
        (vec![0.0; n], vec![0.0; n], vec![0.0; n], vec![0.0; n]);
    for (i, c) in cols.iter().enumerate() {
        let (a, b) = (c.x - c.x0, c.x1 - c.x);
        diag[i] = 0.75 * (a + b);
        if i > 0 {
            lower[i] = 0.25 * a;
        } else {
            diag[i] += 0.25 * a;
        }
        if i + 1 < n {
            upper[i] = 0.25 * b;
        } else {
            diag[i] += 0.25 * b;
        }
        rhs[i] = c.c_per_m;
    }
    // Thomas algorithm.
    for i in 1..n {
        let m = lower[i] / diag[i - 1];
        diag[i] -= m * upper[i - 1];
        rhs[i] -= m * rhs[i - 1];
    }
    let mut d = vec![0.0; n];
    d[n - 1] = rhs[n - 1] / diag[n - 1];
    for i in (0..n - 1).rev() {
        d[i] = (rhs[i] - upper[i] * d[i + 1]) / diag[i];
    }
    cols.iter().zip(d).map(|(c, d)| (c.x, d)).collect()
}

/// The cross-section of a microstrip `line` with the probe's face, a grounded plane of unlimited
/// width, `gap` mm above the trace's copper top (in air). Conductor 2 is the face.
pub fn section_under_face(line: &crate::model::line::Microstrip, gap: f64) -> CrossSection {
    let mut cs = cross_section_for_line(&Line::Microstrip(*line));
    cs.conductors
        .push(crate::field::Conductor::plane(line.h + line.t + gap, 0.0));
    cs
}

/// The cross-section of a surface line (microstrip, coated or not, or grounded coplanar) with
/// the probe's face `gap` mm above the trace's copper top, and the face's conductor index. A
/// coated line's face must clear its coat; a stripline, buried under its upper plane, is
/// refused.
pub fn face_section(line: &Line, gap: f64) -> Result<(CrossSection, usize), Error> {
    let (h, t, coat) = match line {
        Line::Microstrip(m) => (m.h, m.t, 0.0),
        Line::CoatedMicrostrip(c) => (c.line.h, c.line.t, c.mask_t),
        Line::Cpwg(c) => (c.h, c.t, 0.0),
        Line::Stripline(_) => {
            return Err(Error::Invalid(vec![crate::error::FieldError::new(
                "fixture.structure",
                "\"stripline\"",
                "an electric probe's face rests over a surface line: \"microstrip\" (coated \
                 or not) or \"cpwg\"",
            )]));
        }
    };
    if gap <= coat {
        return Err(Error::Invalid(vec![crate::error::FieldError::new(
            "height",
            gap,
            format!(
                "must be more than the line's solder-mask coat ({coat} mm): the face rests on it"
            ),
        )]));
    }
    let mut cs = cross_section_for_line(line);
    cs.conductors
        .push(crate::field::Conductor::plane(h + t + gap, 0.0));
    let face = cs.conductors.len() - 1;
    Ok((cs, face))
}

/// The mesh the electrode's charge is taken on: a distribution converges more slowly than a
/// capacitance (`tests/electrode.rs`: within 0.6 % of the closed form here, where `Standard`
/// reads up to 0.56 % high under the line).
pub const ACCURACY: Accuracy = Accuracy::Refined(2);

/// The charge per volt on the line (F; negative, induced) that a disc of radius `r` (mm) in the
/// probe's face, `gap` mm above the copper of `line`, collects at each lateral offset of
/// `offsets` (mm, from the line's axis).
pub fn line_coupling(
    line: &crate::model::line::Microstrip,
    gap: f64,
    r: f64,
    offsets: &[f64],
) -> Result<Vec<f64>, Error> {
    surface_coupling(&Line::Microstrip(*line), gap, r, offsets)
}

/// [`line_coupling`] over any surface line of [`face_section`] (a coated microstrip: the face
/// above its coat).
pub fn surface_coupling(line: &Line, gap: f64, r: f64, offsets: &[f64]) -> Result<Vec<f64>, Error> {
    let (cs, face) = face_section(line, gap)?;
    let density = nodal_density(&ground_charge(&cs, face, ACCURACY)?);
    let rule = disc_rule();
    Ok(offsets
        .iter()
        .map(|&x0| disc_charge_of(&density, &rule, r, x0))
        .collect())
}

/// The radius that collects a disc's charge when the plane round it is pulled back by a
/// clearance `c`: the disc's radius plus half the clearance, the field that enters the ring
/// splitting between the disc and the plane (first order in c against the distance to the
/// source; the guard-ring rule, from memory). Its planar analogue solved by the field solver
/// (`tests/electrode.rs`) collects 0.1, 0.6 and 1.8 % less than the rule says at c/r = 0.1,
/// 0.3 and 0.6 (the shortfall growing faster than linearly), mm.
pub fn effective_radius(r: f64, c: f64) -> f64 {
    r + c / 2.0
}

/// The electrode's own capacitance to the copper round it, F: on each of `faces` outer layers a
/// disc of radius `r` in a ring cleared to `r + c`, each edge taken as the coplanar gap of a
/// coplanar waveguide of centre half width `r` and ground half spacing `r + c` (per unit length,
/// both gaps: 2·ε0·(εr + 1)·K(k)/K(k′), k = r/(r + c), on a substrate much thicker than the
/// gap; a conformal-mapping result, e.g. Simons, *Coplanar Waveguide Circuits, Components and
/// Systems*, 2001, ch. 2, from memory) along the disc's edge, half of it per edge: 2πr·C′/2 per
/// face. The via and the inner layers' clearance are left out: an estimate of the load it puts
/// beside the 50 Ω, which sets the corner above which the output stops rising.
/// NaN unless r > 0 and c > 0.
pub fn self_capacitance(r: f64, c: f64, er: f64, faces: usize) -> f64 {
    if !(r > 0.0 && c > 0.0) {
        return f64::NAN;
    }
    let k = r / (r + c);
    let kp = (1.0 - k * k).sqrt();
    let c_per_m = 2.0 * crate::math::EPS0 * (er + 1.0) * crate::solve::elliptic::k_ratio(k, kp);
    faces as f64 * std::f64::consts::PI * r * 1e-3 * c_per_m
}

/// The electric probe factor, dB(1/m), at `f` Hz: E[dBµV/m] = V[dBµV] + factor, with E the
/// field normal to the probe's face over the electrode (its charge over ε0 and its collecting
/// area `area_m2`), V the output into `r_load` Ω shunted by the electrode's own `c_self`:
/// V = jω·ε0·A·E·R/(1 + jωR·C_self), so factor = 20·log10(|1 + jωR·C_self|/(ω·ε0·A·R)) (Gauss's
/// law and the load; our derivation).
pub fn factor_db(f: f64, area_m2: f64, r_load: f64, c_self: f64) -> f64 {
    let w = 2.0 * std::f64::consts::PI * f;
    let load = (1.0 + (w * r_load * c_self).powi(2)).sqrt();
    20.0 * (load / (w * crate::math::EPS0 * area_m2 * r_load)).log10()
}

/// The corner above which the output stops rising with frequency, Hz: 1/(2π·R·C_self).
pub fn corner_hz(r_load: f64, c_self: f64) -> f64 {
    1.0 / (2.0 * std::f64::consts::PI * r_load * c_self)
}

/// The −6 dB full width of a coupling profile taken at offsets `xs` (mm, from 0 outwards, the
/// profile symmetric about 0), by linear interpolation in dB; `None` when it never falls 6 dB.
pub fn resolution_mm(xs: &[f64], q: &[f64]) -> Option<f64> {
    let peak = q.first()?.abs();
    let db = |v: f64| 20.0 * (v.abs() / peak).log10();
    xs.windows(2).zip(q.windows(2)).find_map(|(x, v)| {
        let (a, b) = (db(v[0]), db(v[1]));
        (a >= -6.0 && b < -6.0).then(|| 2.0 * (x[0] + (x[1] - x[0]) * (-6.0 - a) / (b - a)))
    })
}
