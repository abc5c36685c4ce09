//! The flat electrode of an electric-field probe (issue 12; the probe kind that uses it is not
//! built yet): the charge a disc set into a grounded plane collects from a line below it.
//!
//! Held flat over a board, the probe's outer copper is a grounded plane facing the line, and
//! the electrode is a disc set into it (the copper round it pulled back by a clearance). With
//! the line at a voltage, the plane carries an induced charge whose density the 2-D field
//! solver gives column by column across the line ([`crate::field::ground_charge`]: the line's
//! own cross-section, dielectrics included, with the plane above it). The disc's share of that
//! charge is the line-to-electrode capacitance: integrated here exactly over the disc's chords,
//! the probe being short against the line's length (so the section holds under the whole disc).
//! The clearance round the disc and the plane's finite extent are not in this part.

use crate::field::ChargeColumn;

/// Points of the rule over the disc (θ from −π/2 to π/2, x = x0 + r·sin θ).
const DISC_POINTS: usize = 4000;

/// The charge per volt on the line (F; negative, induced) that a disc of radius `r` (mm) set
/// into the grounded plane whose charge columns are `columns` collects, its centre `x0` (mm)
/// across the line from the line's axis. The density is linear between the node columns and
/// keeps every column's charge ([`nodal_density`]); ∫ σ(x)·2√(r² − (x − x0)²) dx is taken with
/// x = x0 + r·sin θ, which makes the chord's square-root ends smooth (2r²·cos²θ dθ): the
/// midpoint rule in θ.
pub fn disc_charge(columns: &[ChargeColumn], r: f64, x0: f64) -> f64 {
    let cols = nodal_density(columns);
    if cols.is_empty() || r <= 0.0 {
        return 0.0;
    }
    // Density (F/m per mm of x) at x, linear between node columns, held beyond the ends.
    let density = |x: f64| -> f64 {
        let k = cols.partition_point(|c| c.0 <= x);
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
    let sum: f64 = (0..DISC_POINTS)
        .map(|k| {
            let t = -std::f64::consts::FRAC_PI_2 + (k as f64 + 0.5) * dt;
            density(x0 + r * t.sin()) * 2.0 * r * r * t.cos().powi(2)
        })
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
