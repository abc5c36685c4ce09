//! The discrete Laplace problem on a [`Grid`] and its solution by conjugate gradients with a
//! modified incomplete Cholesky (MIC(0)) preconditioner.
//!
//! The 5-point finite-volume stencil on a rectilinear mesh with one permittivity per cell
//! couples neighbouring nodes through the edge conductance
//!
//! ```text
//!     g(horizontal edge) = Σ_adjacent cells ε_r · (cell height / 2) / (edge length)
//!     g(vertical edge)   = Σ_adjacent cells ε_r · (cell width / 2)  / (edge length)
//! ```
//!
//! which is exactly the stiffness matrix of linear finite elements on the triangles obtained
//! by cutting every cell along a diagonal (a right triangle couples only along its legs).
//! The discrete energy ½·Σ g·Δφ² is therefore the energy of an admissible potential, and the
//! capacitance C = ε0·Σ g·Δφ² (V = 1) approaches the exact value from above (Dirichlet's
//! principle; see `docs/field-solver.md`).

use super::mesh::{FREE, Grid, SIGNAL};
use crate::math::dot;

/// Vacuum permittivity ε0 = 1/(μ0·c0²), F/m (CODATA 2022 μ0 = 1.25663706127e-6 H/m).
pub use crate::math::EPS0;

/// The assembled system for one grid and one set of permittivities.
pub(crate) struct System {
    nx: usize,
    /// Conductance between node n and n+1 (0 across a row end).
    gx: Vec<f64>,
    /// Conductance between node n and n+nx.
    gy: Vec<f64>,
    /// The same with every coupling to a held node removed (the unknowns' matrix).
    ax: Vec<f64>,
    ay: Vec<f64>,
    /// Diagonal of the unknowns' matrix (1 on held nodes).
    diag: Vec<f64>,
    /// Right-hand side: conductance-weighted held potentials next to each free node.
    rhs: Vec<f64>,
    /// Held potentials (0 on free nodes).
    held: Vec<f64>,
    free: Vec<bool>,
    /// A row of zeros: the couplings and neighbours beyond the grid's first and last rows, for
    /// the loops over row windows (the product, the pivots, the sweeps).
    zeros: Vec<f64>,
}

impl System {
    /// Assembles the system for cell permittivities `eps`.
    pub fn new(grid: &Grid, eps: &[f64]) -> System {
        let (nx, ny) = (grid.nx(), grid.ny());
        let n = nx * ny;
        let (xs, ys) = (&grid.xs, &grid.ys);
        // Half the cell heights and widths, and the cells' permittivity row by row.
        let half_h: Vec<f64> = ys.windows(2).map(|w| 0.5 * (w[1] - w[0])).collect();
        let half_w: Vec<f64> = xs.windows(2).map(|w| 0.5 * (w[1] - w[0])).collect();
        let dx: Vec<f64> = xs.windows(2).map(|w| w[1] - w[0]).collect();
        let eps_row = |j: usize| &eps[j * (nx - 1)..(j + 1) * (nx - 1)];
        let mut gx = vec![0.0; n];
        let mut gy = vec![0.0; n];
        for j in 0..ny {
            let row = &mut gx[j * nx..j * nx + nx - 1];
            // The cell below the edge, then the cell above (the order of the sum).
            match (j > 0, j + 1 < ny) {
                (true, true) => {
                    let (below, above, hb, ha) =
                        (eps_row(j - 1), eps_row(j), half_h[j - 1], half_h[j]);
                    for i in 0..nx - 1 {
                        row[i] = (below[i] * hb + above[i] * ha) / dx[i];
                    }
                }
                (true, false) => {
                    let (below, hb) = (eps_row(j - 1), half_h[j - 1]);
                    for i in 0..nx - 1 {
                        row[i] = below[i] * hb / dx[i];
                    }
                }
                (false, true) => {
                    let (above, ha) = (eps_row(j), half_h[j]);
                    for i in 0..nx - 1 {
                        row[i] = above[i] * ha / dx[i];
                    }
                }
                (false, false) => {}
            }
        }
        for j in 0..ny - 1 {
            let dy = ys[j + 1] - ys[j];
            let cells = eps_row(j);
            let row = &mut gy[j * nx..j * nx + nx];
            // The cell left of the edge, then the cell right of it.
            if nx < 2 {
                continue; // no cells beside the edge
            }
            row[0] = cells[0] * half_w[0] / dy;
            for i in 1..nx - 1 {
                row[i] = (cells[i - 1] * half_w[i - 1] + cells[i] * half_w[i]) / dy;
            }
            row[nx - 1] = cells[nx - 2] * half_w[nx - 2] / dy;
        }
        let free: Vec<bool> = grid.state.iter().map(|&s| s == FREE).collect();
        let held: Vec<f64> = grid
            .state
            .iter()
            .map(|&s| if s == SIGNAL { 1.0 } else { 0.0 })
            .collect();
        // A free node's diagonal is the sum of its edges' conductances and its right-hand side
        // the held neighbours' share, each summed south, west, east, north; a coupling stays in
        // the unknowns' matrix only between two free nodes.
        let mut diag = vec![1.0; n];
        let mut rhs = vec![0.0; n];
        let mut ax = gx.clone();
        let mut ay = gy.clone();
        // Row by row, a missing neighbour (beyond the grid) standing as a held node behind an
        // edge of no conductance: adding its +0 term changes no sum (no term is −0: every
        // conductance and held potential is positive or +0).
        let none_g = vec![0.0; nx];
        let none_free = vec![false; nx];
        for j in 0..ny {
            let o = j * nx;
            let row = o..o + nx;
            let (s_g, s_free, s_held) = if j > 0 {
                (&gy[o - nx..o], &free[o - nx..o], &held[o - nx..o])
            } else {
                (&none_g[..], &none_free[..], &none_g[..])
            };
            let (n_free, n_held) = if j + 1 < ny {
                (&free[o + nx..o + 2 * nx], &held[o + nx..o + 2 * nx])
            } else {
                (&none_free[..], &none_g[..])
            };
            // The top row's gy and each row's last gx are 0 (no edge).
            let (n_g, e_g) = (&gy[row.clone()], &gx[row.clone()]);
            let (c_free, c_held) = (&free[row.clone()], &held[row.clone()]);
            let (axr, ayr) = (&mut ax[row.clone()], &mut ay[row.clone()]);
            let (dr, br) = (&mut diag[row.clone()], &mut rhs[row]);
            // A held neighbour's share: g·V behind an edge to a node that is not free.
            let share = |g: f64, free: bool, v: f64| if free { 0.0 } else { g * v };
            for i in 0..nx {
                let (w_g, w_free, w_held) = if i > 0 {
                    (e_g[i - 1], c_free[i - 1], c_held[i - 1])
                } else {
                    (0.0, false, 0.0)
                };
                let (e_free, e_held) = if i + 1 < nx {
                    (c_free[i + 1], c_held[i + 1])
                } else {
                    (false, 0.0)
                };
                if !(c_free[i] && e_free) {
                    axr[i] = 0.0;
                }
                if !(c_free[i] && n_free[i]) {
                    ayr[i] = 0.0;
                }
                if c_free[i] {
                    // Summed south, west, east, north.
                    dr[i] = s_g[i] + w_g + e_g[i] + n_g[i];
                    br[i] = share(s_g[i], s_free[i], s_held[i])
                        + share(w_g, w_free, w_held)
                        + share(e_g[i], e_free, e_held)
                        + share(n_g[i], n_free[i], n_held[i]);
                }
            }
        }
        System {
            nx,
            gx,
            gy,
            ax,
            ay,
            diag,
            rhs,
            held,
            free,
            zeros: vec![0.0; nx],
        }
    }

    /// y = A·x on the unknowns (identity on held nodes), gathered row by row; returns x·y.
    ///
    /// Each node's terms in the order centre, east, west, south, north. A row's inner nodes
    /// are taken in one pass over windows of its arrays cut to the row's inner length (the
    /// compiler then drops the bounds checks); a missing row below or above stands as a
    /// coupling of zero to a potential of zero, whose +0 changes no sum.
    fn apply(&self, x: &[f64], y: &mut [f64]) -> f64 {
        let nx = self.nx;
        let n = x.len();
        let rows = n / nx;
        let zeros = &self.zeros[..];
        let mut xy = 0.0;
        for j in 0..rows {
            let o = j * nx;
            let yr = &mut y[o..o + nx];
            let xr = &x[o..o + nx];
            let dr = &self.diag[o..o + nx];
            let gr = &self.ax[o..o + nx];
            let (xs, gs) = if j > 0 {
                (&x[o - nx..o], &self.ay[o - nx..o])
            } else {
                (zeros, zeros)
            };
            let (xn, gn) = if j + 1 < rows {
                (&x[o + nx..o + 2 * nx], &self.ay[o..o + nx])
            } else {
                (zeros, zeros)
            };
            if nx == 1 {
                yr[0] = dr[0] * xr[0] - gs[0] * xs[0] - gn[0] * xn[0];
            } else {
                yr[0] = dr[0] * xr[0] - gr[0] * xr[1] - gs[0] * xs[0] - gn[0] * xn[0];
                let m = nx - 1;
                yr[m] = dr[m] * xr[m] - gr[m - 1] * xr[m - 1] - gs[m] * xs[m] - gn[m] * xn[m];
                let l = nx - 2;
                let (yw, xc, xe, xw) = (&mut yr[1..1 + l], &xr[1..1 + l], &xr[2..2 + l], &xr[..l]);
                let (dw, ge, gw) = (&dr[1..1 + l], &gr[1..1 + l], &gr[..l]);
                let (xsw, gsw, xnw, gnw) =
                    (&xs[1..1 + l], &gs[1..1 + l], &xn[1..1 + l], &gn[1..1 + l]);
                for i in 0..l {
                    yw[i] = dw[i] * xc[i]
                        - ge[i] * xe[i]
                        - gw[i] * xw[i]
                        - gsw[i] * xsw[i]
                        - gnw[i] * xnw[i];
                }
            }
            xy += dot(xr, yr);
        }
        xy
    }

    /// The inverse MIC(0) pivots: d_k = a_kk − Σ_lower a_kl·(a_kl + ω·fill)/d_l in the
    /// natural ordering, the fill-in each elimination would create lumped onto the diagonal.
    ///
    /// Each pivot waits on its west neighbour's (a division in the chain); rows meet only
    /// through their south neighbours, so four rows are run together on a front skewed by one
    /// node per row, four independent chains that the processor overlaps. The same arithmetic,
    /// node by node, as the plain natural-order loop.
    fn mic_inverse(&self, omega: f64) -> Vec<f64> {
        let nx = self.nx;
        let n = self.diag.len();
        let rows = n / nx;
        let mut dinv = vec![0.0; n];
        // The fronts rely on no coupling across a row's end (the assembly writes none).
        debug_assert!((0..rows).all(|j| self.ax[j * nx + nx - 1] == 0.0));
        let pivot = |k: usize, dinv: &[f64]| -> f64 {
            let mut v = self.diag[k];
            if k >= 1 {
                let w = self.ax[k - 1];
                if w != 0.0 {
                    // Fill-in towards (k−1)+nx.
                    let fill = if k - 1 + nx < n { self.ay[k - 1] } else { 0.0 };
                    v -= w * (w + omega * fill) * dinv[k - 1];
                }
            }
            if k >= nx {
                let s = self.ay[k - nx];
                if s != 0.0 {
                    // Fill-in towards (k−nx)+1.
                    let fill = self.ax[k - nx];
                    v -= s * (s + omega * fill) * dinv[k - nx];
                }
            }
            // Guard against breakdown (not seen with ω < 1, but cheap).
            let d = if v > 1e-3 * self.diag[k] {
                v
            } else {
                self.diag[k]
            };
            1.0 / d
        };
        let zeros = &self.zeros[..];
        for j0 in (0..rows).step_by(ROWS) {
            let group = ROWS.min(rows - j0);
            // Row j0 + r is at node s − r: its west neighbour was done at step s − 1, and so
            // was its south one (row r − 1 was at node s − r then).
            let ends = |s: usize, dinv: &mut [f64]| {
                for r in 0..group {
                    if s >= r && s - r < nx {
                        let k = (j0 + r) * nx + (s - r);
                        dinv[k] = pivot(k, dinv);
                    }
                }
            };
            if group < ROWS || nx <= ROWS {
                (0..nx + group - 1).for_each(|s| ends(s, &mut dinv));
                continue;
            }
            (0..ROWS).for_each(|s| ends(s, &mut dinv));
            // Every row on the front: as `pivot`, over windows cut to the steps' length (see
            // `skewed`), each row's last pivot and the one across kept. A coupling of zero
            // takes off +0 where `pivot` skips it, and a fill-in towards a node beyond the top
            // row is the top row's north coupling, 0, as `pivot` takes it.
            let l = nx - ROWS;
            let base = j0 * nx;
            let o = |q: usize| base + q * nx + ROWS - q;
            let (diag, ax, ay) = (&self.diag[..], &self.ax[..], &self.ay[..]);
            let win = |v, at| window(v, at, l);
            let (dg0, dg1, dg2, dg3) = (
                win(diag, o(0)),
                win(diag, o(1)),
                win(diag, o(2)),
                win(diag, o(3)),
            );
            let (aw0, aw1, aw2, aw3) = (
                win(ax, o(0) - 1),
                win(ax, o(1) - 1),
                win(ax, o(2) - 1),
                win(ax, o(3) - 1),
            );
            let (fw0, fw1, fw2, fw3) = (
                win(ay, o(0) - 1),
                win(ay, o(1) - 1),
                win(ay, o(2) - 1),
                win(ay, o(3) - 1),
            );
            let (as0, fs0) = if j0 > 0 {
                (win(ay, o(0) - nx), win(ax, o(0) - nx))
            } else {
                (&zeros[..l], &zeros[..l])
            };
            let (as1, as2, as3) = (win(ay, o(1) - nx), win(ay, o(2) - nx), win(ay, o(3) - nx));
            let (fs1, fs2, fs3) = (win(ax, o(1) - nx), win(ax, o(2) - nx), win(ax, o(3) - nx));
            let (below, rest) = dinv.split_at_mut(base);
            let south0 = if j0 > 0 {
                &below[base - nx + ROWS..base - nx + ROWS + l]
            } else {
                &zeros[..l]
            };
            let (z0, rest) = rest.split_at_mut(nx);
            let (z1, rest) = rest.split_at_mut(nx);
            let (z2, rest) = rest.split_at_mut(nx);
            let last = [z0[ROWS - 1], z1[ROWS - 2], z2[ROWS - 3], rest[0]];
            let z0 = &mut z0[ROWS..ROWS + l];
            let z1 = &mut z1[ROWS - 1..ROWS - 1 + l];
            let z2 = &mut z2[ROWS - 2..ROWS - 2 + l];
            let z3 = &mut rest[ROWS - 3..ROWS - 3 + l];
            let one = |dg: f64, w: f64, fw: f64, west: f64, s: f64, fs: f64, south: f64| {
                let mut v = dg;
                v -= w * (w + omega * fw) * west;
                v -= s * (s + omega * fs) * south;
                1.0 / if v > 1e-3 * dg { v } else { dg }
            };
            let [mut w0, mut w1, mut w2, mut w3] = last;
            for t in 0..l {
                let v0 = one(dg0[t], aw0[t], fw0[t], w0, as0[t], fs0[t], south0[t]);
                let v1 = one(dg1[t], aw1[t], fw1[t], w1, as1[t], fs1[t], w0);
                let v2 = one(dg2[t], aw2[t], fw2[t], w2, as2[t], fs2[t], w1);
                let v3 = one(dg3[t], aw3[t], fw3[t], w3, as3[t], fs3[t], w2);
                z0[t] = v0;
                z1[t] = v1;
                z2[t] = v2;
                z3[t] = v3;
                (w0, w1, w2, w3) = (v0, v1, v2, v3);
            }
            (nx..nx + ROWS - 1).for_each(|s| ends(s, &mut dinv));
        }
        dinv
    }

    /// The MIC(0) factor ready for [`System::precondition`]: the inverse pivots of
    /// [`System::mic_inverse`] (the sweeps scale the couplings by them as they go).
    fn factor(&self, omega: f64) -> Factor {
        Factor {
            dinv: self.mic_inverse(omega),
        }
    }

    /// z = M⁻¹·r for M = (D + L)·D⁻¹·(D + L)ᵀ (L: the strictly lower part of A, D the pivots of
    /// `f`); returns r·z. With a `step`, r is first brought up to date (r −= α·q, x += α·p),
    /// each block of rows just before the forward sweep reads it, while it is in the cache.
    ///
    /// Each node of a sweep waits on its west and south neighbours (east and north going
    /// back): [`ROWS`] rows run together on a front skewed by one node per row, as in
    /// [`System::mic_inverse`], so that the processor overlaps [`ROWS`] independent
    /// recursions, in one pass over the arrays.
    fn precondition(
        &self,
        f: &Factor,
        r: &mut [f64],
        z: &mut [f64],
        mut step: Option<Step>,
    ) -> f64 {
        let nx = self.nx;
        let rows = r.len() / nx;
        // Forward: (D + L)·u = r.
        for j0 in (0..rows).step_by(ROWS) {
            let block = j0 * nx..(j0 + ROWS).min(rows) * nx;
            if let Some(st) = step.as_mut() {
                let a = st.alpha;
                for ((xk, rk), (pk, qk)) in st.x[block.clone()]
                    .iter_mut()
                    .zip(&mut r[block.clone()])
                    .zip(st.p[block.clone()].iter().zip(&st.q[block]))
                {
                    *xk += a * pk;
                    *rk -= a * qk;
                }
            }
            self.forward(f, r, z, j0);
        }
        // Backward: (D + L)ᵀ·z = D·u, from the top; r·z gathered block by block.
        let mut rz = 0.0;
        let mut top = rows;
        while top > 0 {
            let j0 = top.saturating_sub(ROWS);
            self.backward(f, z, j0, top);
            rz += dot(&r[j0 * nx..top * nx], &z[j0 * nx..top * nx]);
            top = j0;
        }
        rz
    }

    /// The forward sweep over rows j0 … j0 + [`ROWS`] − 1 (or fewer at the top; those below
    /// are done): u_k = e_k·r_k + a_(k−nx,k)·e_k·u_(k−nx) + a_(k−1,k)·e_k·u_(k−1), e_k the
    /// inverse pivot (`dinv`), row j0 + q at node s − q at step s.
    fn forward(&self, f: &Factor, r: &[f64], z: &mut [f64], j0: usize) {
        let nx = self.nx;
        let group = ROWS.min(z.len() / nx - j0);
        let base = j0 * nx;
        let (d, ax, ay) = (&f.dinv, &self.ax, &self.ay);
        skewed(
            z,
            nx,
            group,
            |s, q| base + q * nx + s - q,
            |z, k, first| {
                let mut v = d[k] * r[k];
                if k >= nx {
                    v += ay[k - nx] * d[k] * z[k - nx];
                }
                if !first {
                    v += ax[k - 1] * d[k] * z[k - 1];
                }
                z[k] = v;
            },
            |z, last| {
                let l = nx - ROWS;
                let (below, rest) = z.split_at_mut(base);
                let south0: &[f64] = if j0 > 0 {
                    &below[base - nx + ROWS..base - nx + ROWS + l]
                } else {
                    &self.zeros[..l]
                };
                let (z0, rest) = rest.split_at_mut(nx);
                let (z1, rest) = rest.split_at_mut(nx);
                let (z2, rest) = rest.split_at_mut(nx);
                let z3 = &mut rest[..nx];
                let z0 = &mut z0[ROWS..ROWS + l];
                let z1 = &mut z1[ROWS - 1..ROWS - 1 + l];
                let z2 = &mut z2[ROWS - 2..ROWS - 2 + l];
                let z3 = &mut z3[ROWS - 3..ROWS - 3 + l];
                // Row q's node at step ROWS + t: column ROWS − q + t, from offset o(q) + t.
                let o = |q: usize| base + q * nx + ROWS - q;
                let win = |v, at| window(v, at, l);
                let south_at = |q: usize| {
                    if j0 + q > 0 {
                        win(ay, o(q) - nx)
                    } else {
                        win(&self.zeros, 0)
                    }
                };
                let (r0, r1, r2, r3) = (win(r, o(0)), win(r, o(1)), win(r, o(2)), win(r, o(3)));
                let (d0, d1, d2, d3) = (win(d, o(0)), win(d, o(1)), win(d, o(2)), win(d, o(3)));
                let (w0a, w1a, w2a, w3a) = (
                    win(ax, o(0) - 1),
                    win(ax, o(1) - 1),
                    win(ax, o(2) - 1),
                    win(ax, o(3) - 1),
                );
                let (s0a, s1a, s2a, s3a) = (south_at(0), south_at(1), south_at(2), south_at(3));
                let [mut w0, mut w1, mut w2, mut w3] = last;
                for t in 0..l {
                    let v0 = d0[t] * r0[t] + s0a[t] * d0[t] * south0[t] + w0a[t] * d0[t] * w0;
                    let v1 = d1[t] * r1[t] + s1a[t] * d1[t] * w0 + w1a[t] * d1[t] * w1;
                    let v2 = d2[t] * r2[t] + s2a[t] * d2[t] * w1 + w2a[t] * d2[t] * w2;
                    let v3 = d3[t] * r3[t] + s3a[t] * d3[t] * w2 + w3a[t] * d3[t] * w3;
                    z0[t] = v0;
                    z1[t] = v1;
                    z2[t] = v2;
                    z3[t] = v3;
                    (w0, w1, w2, w3) = (v0, v1, v2, v3);
                }
            },
        );
    }

    /// The backward sweep over rows j0 … top − 1 (those above are done):
    /// z_k = u_k + e_k·a_(k,k+nx)·z_(k+nx) + e_k·a_(k,k+1)·z_(k+1), e_k the inverse pivot,
    /// row top − 1 − q at node nx − 1 − (s − q) at step s.
    fn backward(&self, f: &Factor, z: &mut [f64], j0: usize, top: usize) {
        let nx = self.nx;
        let n = z.len();
        let (d, ax, ay) = (&f.dinv, &self.ax, &self.ay);
        skewed(
            z,
            nx,
            top - j0,
            |s, q| (top - 1 - q) * nx + nx - 1 - (s - q),
            |z, k, first| {
                let mut v = z[k];
                if k + nx < n {
                    v += d[k] * ay[k] * z[k + nx];
                }
                if !first {
                    v += d[k] * ax[k] * z[k + 1];
                }
                z[k] = v;
            },
            |z, last| {
                let l = nx - ROWS;
                let (lower, above) = z.split_at_mut(top * nx);
                let north0: &[f64] = if top * nx < n {
                    &above[..l]
                } else {
                    &self.zeros[..l]
                };
                let blk = &mut lower[(top - ROWS) * nx..];
                let (z3, rest) = blk.split_at_mut(nx);
                let (z2, rest) = rest.split_at_mut(nx);
                let (z1, z0) = rest.split_at_mut(nx);
                // Row q (row top − 1 − q) walks columns nx − 1 − ROWS + q down to q: index
                // l − 1 − t of the window from column q.
                let z0 = &mut z0[..l];
                let z1 = &mut z1[1..1 + l];
                let z2 = &mut z2[2..2 + l];
                let z3 = &mut z3[3..3 + l];
                let o = |q: usize| (top - 1 - q) * nx + q;
                let win = |v, at| window(v, at, l);
                let (d0, d1, d2, d3) = (win(d, o(0)), win(d, o(1)), win(d, o(2)), win(d, o(3)));
                let (e0a, e1a, e2a, e3a) =
                    (win(ax, o(0)), win(ax, o(1)), win(ax, o(2)), win(ax, o(3)));
                let n0a = if top * nx < n {
                    win(ay, o(0))
                } else {
                    win(&self.zeros, 0)
                };
                let (n1a, n2a, n3a) = (win(ay, o(1)), win(ay, o(2)), win(ay, o(3)));
                let [mut e0, mut e1, mut e2, mut e3] = last;
                for t in 0..l {
                    let i = l - 1 - t;
                    let v0 = z0[i] + d0[i] * n0a[i] * north0[i] + d0[i] * e0a[i] * e0;
                    let v1 = z1[i] + d1[i] * n1a[i] * e0 + d1[i] * e1a[i] * e1;
                    let v2 = z2[i] + d2[i] * n2a[i] * e1 + d2[i] * e2a[i] * e2;
                    let v3 = z3[i] + d3[i] * n3a[i] * e2 + d3[i] * e3a[i] * e3;
                    z0[i] = v0;
                    z1[i] = v1;
                    z2[i] = v2;
                    z3[i] = v3;
                    (e0, e1, e2, e3) = (v0, v1, v2, v3);
                }
            },
        );
    }

    /// Solves for the free potentials, starting from `guess` (full-grid potentials, or
    /// `None`). Returns the full-grid potential, the iteration count and whether the
    /// tolerance was reached within the iteration cap.
    pub fn solve(&self, guess: Option<&[f64]>, rel_tol: f64) -> (Vec<f64>, usize, bool) {
        let n = self.diag.len();
        debug_assert!(
            guess.is_none_or(|g| g.len() == n),
            "a guess of the grid's size"
        );
        let mut x: Vec<f64> = match guess {
            Some(g) => g
                .iter()
                .zip(&self.free)
                .map(|(&v, &free)| if free { v } else { 0.0 })
                .collect(),
            None => vec![0.0; n],
        };
        let f = self.factor(0.97);
        let mut z = vec![0.0; n];
        // Stop on the preconditioned residual relative to the right-hand side's. From zero the
        // residual is the right-hand side (0 on held nodes), preconditioned once for both.
        let mut r = self.rhs.clone();
        let mut rz = self.precondition(&f, &mut r, &mut z, None);
        let scale = rz.max(f64::MIN_POSITIVE);
        if guess.is_some() {
            self.apply(&x, &mut r);
            for ((rk, &free), &b) in r.iter_mut().zip(&self.free).zip(&self.rhs) {
                *rk = if free { b - *rk } else { 0.0 };
            }
            rz = self.precondition(&f, &mut r, &mut z, None);
        }
        let mut p = z.clone();
        let mut q = vec![0.0; n];
        let mut iters = 0;
        let max_iter = 20 * (n as f64).sqrt() as usize + 200;
        while rz > rel_tol * rel_tol * scale && iters < max_iter {
            let pq = self.apply(&p, &mut q);
            let alpha = rz / pq;
            let step = Step {
                alpha,
                x: &mut x,
                p: &p,
                q: &q,
            };
            let rz_new = self.precondition(&f, &mut r, &mut z, Some(step));
            let beta = rz_new / rz;
            rz = rz_new;
            for (pk, zk) in p.iter_mut().zip(&z) {
                *pk = zk + beta * *pk;
            }
            iters += 1;
        }
        for ((xk, &free), &held) in x.iter_mut().zip(&self.free).zip(&self.held) {
            if !free {
                *xk = held;
            }
        }
        let converged = rz <= rel_tol * rel_tol * scale;
        (x, iters, converged)
    }

    /// The charge (per ε0, per metre) at node `k` for the potential `phi`: Gauss's law on the
    /// node's cell, Σ over its edges of g·(φ_k − φ_neighbour). On a held node it is the charge
    /// the conductor carries there; on a free node of a solved potential, about 0.
    pub fn node_charge(&self, phi: &[f64], k: usize) -> f64 {
        let (nx, n) = (self.nx, phi.len());
        let mut q = 0.0;
        if k % nx + 1 < nx {
            q += self.gx[k] * (phi[k] - phi[k + 1]);
        }
        if !k.is_multiple_of(nx) {
            q += self.gx[k - 1] * (phi[k] - phi[k - 1]);
        }
        if k + nx < n {
            q += self.gy[k] * (phi[k] - phi[k + nx]);
        }
        if k >= nx {
            q += self.gy[k - nx] * (phi[k] - phi[k - nx]);
        }
        q
    }

    /// Σ g·Δφ² over every edge (= 2 × the energy per ε0 per metre at 1 V).
    pub fn energy(&self, phi: &[f64]) -> f64 {
        let nx = self.nx;
        let n = phi.len();
        let mut e = 0.0;
        for k in 0..n - 1 {
            let dphi = phi[k + 1] - phi[k];
            e += self.gx[k] * dphi * dphi;
        }
        for k in 0..n - nx {
            let dphi = phi[k + nx] - phi[k];
            e += self.gy[k] * dphi * dphi;
        }
        e
    }
}

/// The `len` values of `v` from `at`: a row's window for the loops indexed by the step alone.
fn window(v: &[f64], at: usize, len: usize) -> &[f64] {
    &v[at..at + len]
}

/// One triangular sweep over `group` rows on a front skewed by one node per row: row q is at
/// node `at(s, q)` at step s, for s − q in 0…nx − 1, so each node's neighbour along its row and
/// its neighbour in the row before it on the front were both done at the step before.
///
/// At the front's ends (and throughout for fewer than [`ROWS`] rows, or rows of at most
/// [`ROWS`] nodes) `node(z, k, first)` computes node k from its neighbours in `z` (`first`: k
/// is its row's first node in the sweep's direction, with no neighbour along it). Inside, where
/// every row is on the front (steps [`ROWS`] … nx − 1), `middle(z, last)` runs the steps
/// itself, from each row's value at step [`ROWS`] − 1 (`last`), keeping each row's value and
/// the one across from step to step instead of reading them back: the rows' recursions then
/// overlap, as none waits on memory. The sweeps write it over windows of their arrays cut to
/// the steps' length, one per row and array, indexed by the step alone, so that the compiler
/// drops every bounds check from the loop and keeps its pointers in registers (1.4 times as
/// fast as indexing whole arrays by node; docs/architecture.md, "Performance").
fn skewed(
    z: &mut [f64],
    nx: usize,
    group: usize,
    at: impl Fn(usize, usize) -> usize,
    node: impl Fn(&mut [f64], usize, bool),
    middle: impl FnOnce(&mut [f64], [f64; ROWS]),
) {
    // The sweeps' `middle`s are written out for four rows.
    const { assert!(ROWS == 4) };
    // The front's ends node by node (every step when no row is long enough for a middle),
    // written out twice rather than as a closure, which the compiler left uninlined.
    let whole = group == ROWS && nx > ROWS;
    for s in 0..if whole { ROWS } else { nx + group - 1 } {
        for q in 0..group {
            if s >= q && s - q < nx {
                node(z, at(s, q), s == q);
            }
        }
    }
    if !whole {
        return;
    }
    let mut last = [0.0; ROWS];
    for (q, v) in last.iter_mut().enumerate() {
        *v = z[at(ROWS - 1, q)];
    }
    middle(z, last);
    for s in nx..nx + ROWS - 1 {
        for q in 0..group {
            if s - q < nx {
                node(z, at(s, q), false);
            }
        }
    }
}

/// The conjugate-gradient step x += α·p, r −= α·q, which [`System::precondition`] makes
/// block by block just before its forward sweep reads r.
struct Step<'a> {
    alpha: f64,
    x: &'a mut [f64],
    p: &'a [f64],
    q: &'a [f64],
}

/// Rows a triangular sweep runs together ([`System::precondition`]).
const ROWS: usize = 4;

/// The MIC(0) factor of a [`System`], as its sweeps use it ([`System::factor`]).
struct Factor {
    /// Inverse pivots.
    dinv: Vec<f64>,
}

/// Bilinear prolongation of a potential from a grid to the grid with every cell halved.
pub(crate) fn prolong(coarse: &[f64], cnx: usize, cny: usize) -> Vec<f64> {
    let mut f = vec![0.0; (2 * cnx - 1) * (2 * cny - 1)];
    prolong_with(coarse, cnx, cny, &mut f, |t, v| *t = v);
    f
}

/// Adds [`prolong`]'s values to `f` (a finer grid's), without a vector of its own.
pub(crate) fn prolong_add(coarse: &[f64], cnx: usize, cny: usize, f: &mut [f64]) {
    prolong_with(coarse, cnx, cny, f, |t, v| *t += v);
}

fn prolong_with(
    coarse: &[f64],
    cnx: usize,
    cny: usize,
    f: &mut [f64],
    put: impl Fn(&mut f64, f64),
) {
    let (fnx, fny) = (2 * cnx - 1, 2 * cny - 1);
    debug_assert!(
        coarse.len() == cnx * cny && f.len() == fnx * fny,
        "the grids' sizes"
    );
    for j in 0..fny {
        let (j0, j1) = (j / 2, j.div_ceil(2));
        for i in 0..fnx {
            let (i0, i1) = (i / 2, i.div_ceil(2));
            put(
                &mut f[j * fnx + i],
                0.25 * (coarse[j0 * cnx + i0]
                    + coarse[j0 * cnx + i1]
                    + coarse[j1 * cnx + i0]
                    + coarse[j1 * cnx + i1]),
            );
        }
    }
}

#[cfg(test)]
mod tests {
    use super::super::mesh::GROUND;
    use super::*;

    /// A grid of `nx` × `ny` nodes with unequal spacings and permittivities, each node's state
    /// (free, ground, signal) given by `state`.
    fn uneven_grid(nx: usize, ny: usize, state: impl Fn(usize) -> u8) -> Grid {
        Grid {
            xs: (0..nx).map(|i| i as f64 + 0.13 * (i * i) as f64).collect(),
            ys: (0..ny)
                .map(|j| 0.7 * j as f64 + 0.05 * (j * j) as f64)
                .collect(),
            eps: (0..nx.saturating_sub(1) * ny.saturating_sub(1))
                .map(|c| 1.0 + (c % 3) as f64 * 1.7)
                .collect(),
            state: (0..nx * ny).map(state).collect(),
        }
    }

    /// [`uneven_grid`] with a ground node and a signal node in every 17.
    fn mixed_grid(nx: usize, ny: usize) -> Grid {
        uneven_grid(nx, ny, |k| match (k * 5) % 17 {
            0 => GROUND,
            3 => SIGNAL,
            _ => FREE,
        })
    }

    /// The row-wise assembly equals, to the bit, the node-by-node loop it replaced (written
    /// out here): diagonal, right-hand side and the unknowns' couplings, on grids of 1 to 7
    /// columns and rows with ground, signal and free nodes everywhere, edges included.
    #[test]
    fn assembly_matches_the_node_loop() {
        for ny in 1..=7_usize {
            for nx in 1..=7_usize {
                let g = uneven_grid(nx, ny, |k| match (k * 3) % 7 {
                    0 => GROUND,
                    2 | 5 => SIGNAL,
                    _ => FREE,
                });
                let sys = System::new(&g, &g.eps);
                let (gx, gy, free, held) = (&sys.gx, &sys.gy, &sys.free, &sys.held);
                let n = nx * ny;
                let (mut diag, mut rhs) = (vec![1.0; n], vec![0.0; n]);
                let (mut ax, mut ay) = (gx.clone(), gy.clone());
                for j in 0..ny {
                    for i in 0..nx {
                        let k = j * nx + i;
                        if i + 1 < nx && !(free[k] && free[k + 1]) {
                            ax[k] = 0.0;
                        }
                        if j + 1 < ny && !(free[k] && free[k + nx]) {
                            ay[k] = 0.0;
                        }
                        if !free[k] {
                            continue;
                        }
                        let (mut d, mut b) = (0.0, 0.0);
                        let mut edge = |g: f64, other: usize| {
                            d += g;
                            if !free[other] {
                                b += g * held[other];
                            }
                        };
                        if j > 0 {
                            edge(gy[k - nx], k - nx);
                        }
                        if i > 0 {
                            edge(gx[k - 1], k - 1);
                        }
                        if i + 1 < nx {
                            edge(gx[k], k + 1);
                        }
                        if j + 1 < ny {
                            edge(gy[k], k + nx);
                        }
                        diag[k] = d;
                        rhs[k] = b;
                    }
                }
                let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
                assert_eq!(bits(&sys.diag), bits(&diag), "diag {nx} × {ny}");
                assert_eq!(bits(&sys.rhs), bits(&rhs), "rhs {nx} × {ny}");
                assert_eq!(bits(&sys.ax), bits(&ax), "ax {nx} × {ny}");
                assert_eq!(bits(&sys.ay), bits(&ay), "ay {nx} × {ny}");
            }
        }
    }

    /// The pivots computed on skewed fronts of four rows equal, to the bit, the plain loop in
    /// natural order they replace (written out here), on grids of 1 to 9 rows (fewer than and
    /// not a multiple of four) and 1 to 13 columns (rows shorter and longer than the front),
    /// with held nodes, free nodes, and unequal spacings and permittivities.
    #[test]
    fn mic_fronts_match_the_natural_order() {
        for ny in 1..=9_usize {
            for nx in 1..=13_usize {
                let g = uneven_grid(nx, ny, |k| match (k * 7) % 5 {
                    0 => GROUND,
                    1 if k % 2 == 0 => SIGNAL,
                    _ => FREE,
                });
                let sys = System::new(&g, &g.eps);
                let omega = 0.97;
                let n = nx * ny;
                let mut dinv = vec![0.0; n];
                for k in 0..n {
                    let mut v = sys.diag[k];
                    if k >= 1 {
                        let w = sys.ax[k - 1];
                        if w != 0.0 {
                            let fill = if k - 1 + nx < n { sys.ay[k - 1] } else { 0.0 };
                            v -= w * (w + omega * fill) * dinv[k - 1];
                        }
                    }
                    if k >= nx {
                        let s = sys.ay[k - nx];
                        if s != 0.0 {
                            v -= s * (s + omega * sys.ax[k - nx]) * dinv[k - nx];
                        }
                    }
                    let d = if v > 1e-3 * sys.diag[k] {
                        v
                    } else {
                        sys.diag[k]
                    };
                    dinv[k] = 1.0 / d;
                }
                assert_eq!(sys.mic_inverse(omega), dinv, "{nx} × {ny}");
            }
        }
    }

    /// The sweeps on skewed fronts (their middles over windows of four rows) give, to the bit,
    /// the plain triangular solves in natural order written out here, u = (D + L)⁻¹·r then
    /// z = u + D⁻¹-scaled (D + L)ᵀ back substitution, each node's terms in the same order, on
    /// grids of 1 to 13 columns and 1 to 14 rows (shorter and longer rows than the front, whole
    /// blocks of rows and every remainder), with held nodes and unequal spacings and
    /// permittivities.
    #[test]
    fn skewed_sweeps_match_the_natural_order() {
        for ny in 1..=14_usize {
            for nx in 1..=13_usize {
                let g = mixed_grid(nx, ny);
                let sys = System::new(&g, &g.eps);
                let f = sys.factor(0.97);
                let n = nx * ny;
                let (d, ax, ay) = (&f.dinv, &sys.ax, &sys.ay);
                let mut r: Vec<f64> = (0..n)
                    .map(|k| {
                        (1.0 + ((k * 13) % 11) as f64 * 0.3) * if k % 3 == 0 { -1.0 } else { 1.0 }
                    })
                    .collect();
                let mut u = vec![0.0; n];
                for k in 0..n {
                    let mut v = d[k] * r[k];
                    if k >= nx {
                        v += ay[k - nx] * d[k] * u[k - nx];
                    }
                    if k % nx > 0 {
                        v += ax[k - 1] * d[k] * u[k - 1];
                    }
                    u[k] = v;
                }
                for k in (0..n).rev() {
                    let mut v = u[k];
                    if k + nx < n {
                        v += d[k] * ay[k] * u[k + nx];
                    }
                    if k % nx + 1 < nx {
                        v += d[k] * ax[k] * u[k + 1];
                    }
                    u[k] = v;
                }
                let mut z = vec![0.0; n];
                sys.precondition(&f, &mut r, &mut z, None);
                let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
                assert_eq!(bits(&z), bits(&u), "{nx} × {ny}");
            }
        }
    }

    /// The preconditioner solves with its factor: for M = (D + L)·D⁻¹·(D + L)ᵀ (D the pivots,
    /// L the strictly lower part of A), M·precondition(r) = r, and it returns r·z, on grids of
    /// 2 to 13 columns and 2 to 10 rows (rows shorter and longer than the skewed front, one
    /// to two whole blocks of rows and every remainder) with held nodes and unequal spacings
    /// and permittivities.
    #[test]
    fn the_preconditioner_inverts_its_factor() {
        for ny in 2..=10_usize {
            for nx in 2..=13_usize {
                let g = mixed_grid(nx, ny);
                let sys = System::new(&g, &g.eps);
                let f = sys.factor(0.97);
                let n = nx * ny;
                let mut r: Vec<f64> = (0..n).map(|k| 1.0 + ((k * 13) % 11) as f64 * 0.3).collect();
                let mut z = vec![0.0; n];
                let rz = sys.precondition(&f, &mut r, &mut z, None);
                let want = r.iter().zip(&z).map(|(a, b)| a * b).sum::<f64>();
                assert!((rz - want).abs() < 1e-12 * want.abs(), "{nx} × {ny}: r·z");
                // w = D⁻¹·(D + L)ᵀ·z, then v = (D + L)·w.
                let w: Vec<f64> = (0..n)
                    .map(|k| {
                        let mut y = z[k] / f.dinv[k];
                        if k + 1 < n {
                            y -= sys.ax[k] * z[k + 1];
                        }
                        if k + nx < n {
                            y -= sys.ay[k] * z[k + nx];
                        }
                        y * f.dinv[k]
                    })
                    .collect();
                for k in 0..n {
                    let mut v = w[k] / f.dinv[k];
                    if k >= 1 {
                        v -= sys.ax[k - 1] * w[k - 1];
                    }
                    if k >= nx {
                        v -= sys.ay[k - nx] * w[k - nx];
                    }
                    assert!(
                        (v - r[k]).abs() < 1e-12 * r[k].abs(),
                        "{nx} × {ny}, node {k}: {v} vs {}",
                        r[k]
                    );
                }
            }
        }
    }

    /// The step made inside the forward sweep is the step made before it: the same x, r and
    /// z to the bit.
    #[test]
    fn the_step_inside_the_sweep_matches_the_step_before_it() {
        for (nx, ny) in [(3, 2), (7, 9), (13, 10)] {
            let g = mixed_grid(nx, ny);
            let sys = System::new(&g, &g.eps);
            let f = sys.factor(0.97);
            let n = nx * ny;
            let v = |m: usize, s: f64| -> Vec<f64> {
                (0..n).map(|k| s + ((k * m) % 7) as f64 * 0.1).collect()
            };
            let (p, q, alpha) = (v(3, 0.5), v(5, -0.2), 0.37);
            let (mut x1, mut r1, mut z1) = (v(2, 1.0), v(11, 2.0), vec![0.0; n]);
            let (mut x2, mut r2, mut z2) = (x1.clone(), r1.clone(), vec![0.0; n]);
            let step = Step {
                alpha,
                x: &mut x1,
                p: &p,
                q: &q,
            };
            let rz1 = sys.precondition(&f, &mut r1, &mut z1, Some(step));
            for k in 0..n {
                x2[k] += alpha * p[k];
                r2[k] -= alpha * q[k];
            }
            let rz2 = sys.precondition(&f, &mut r2, &mut z2, None);
            let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
            assert_eq!(bits(&x1), bits(&x2), "{nx} × {ny}: x");
            assert_eq!(bits(&r1), bits(&r2), "{nx} × {ny}: r");
            assert_eq!(bits(&z1), bits(&z2), "{nx} × {ny}: z");
            assert_eq!(rz1.to_bits(), rz2.to_bits(), "{nx} × {ny}: r·z");
        }
    }

    /// A solve from zero (its right-hand side preconditioned once, as the first residual too)
    /// gives the same bits and iterations as a solve from a guess of zeros (which forms the
    /// residual b − A·0 and preconditions it apart).
    #[test]
    fn a_solve_from_zero_matches_a_zero_guess() {
        for (nx, ny) in [(5, 4), (9, 7), (13, 6)] {
            let g = mixed_grid(nx, ny);
            let sys = System::new(&g, &g.eps);
            let zeros = vec![0.0; nx * ny];
            let (a, ia, ca) = sys.solve(None, 1e-9);
            let (b, ib, cb) = sys.solve(Some(&zeros), 1e-9);
            let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
            assert!(ia > 0 && ca && cb, "{nx} × {ny}: iterated and converged");
            assert_eq!((bits(&a), ia), (bits(&b), ib), "{nx} × {ny}");
        }
    }

    /// No signal node: the right-hand side is zero, and so is the solution, reached without an
    /// iteration, from zero or from a guess of zeros.
    #[test]
    fn nothing_driven_solves_to_zero() {
        for (nx, ny) in [(5, 4), (9, 7)] {
            let g = uneven_grid(nx, ny, |k| if k % 7 == 0 { GROUND } else { FREE });
            let sys = System::new(&g, &g.eps);
            let zeros = vec![0.0; nx * ny];
            for guess in [None, Some(&zeros[..])] {
                let (x, it, ok) = sys.solve(guess, 1e-9);
                assert!(
                    ok && it == 0,
                    "{nx} × {ny}: {it} iterations, converged {ok}"
                );
                assert!(x.iter().all(|&v| v == 0.0), "{nx} × {ny}: {x:?}");
            }
        }
    }
}
