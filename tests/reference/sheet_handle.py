# Reference for src/physics/handle.rs: the flux a thin perfectly conducting sheet (a probe's
# shield outline: ring with its gap, and handle) lets through the loop in a uniform normal
# field, on the same lattice of square cells as the Rust code (cell centres at (k + 1/2)*h from
# the loop's centre), but solved densely (numpy.linalg.solve on the full matrix) instead of by
# FFT and conjugate gradients, with the kernel written out here on its own. It checks the Rust
# solver's kernel, circulant embedding and iteration; the method itself is checked against the
# FDTD (tests/fullwave.rs) and the disc's polarizability (src/physics/handle.rs).
# CI never runs this. Run with any Python 3 with numpy (recorded with numpy 1.26 on CPython
# 3.11, pyenv):
#     python3 tests/reference/sheet_handle.py > tests/data/sheet_handle.toml
import numpy as np


def loop_field(px, py, h):
    """B_z at (px, py) of unit ccw square loops of side h centred at the origin, in units of
    mu0*I/(4*pi): the four sides by Biot-Savart."""
    q = h / 2
    c = [(-q, -q), (q, -q), (q, q), (-q, q)]
    b = np.zeros_like(px)
    for k in range(4):
        (ax, ay), (bx, by) = c[k], c[(k + 1) % 4]
        ux, uy = (bx - ax) / h, (by - ay) / h
        pax, pay, pbx, pby = px - ax, py - ay, px - bx, py - by
        cr = ux * pay - uy * pax
        ra, rb = np.hypot(pax, pay), np.hypot(pbx, pby)
        b += ((ux * pax + uy * pay) / ra - (ux * pbx + uy * pby) / rb) / cr
    return b


def case(d, hw_ring, gap, handle, h):
    """Round centreline of diameter d (mm), ring half width hw_ring, gap across the axis at the
    top (y > 0); handle (half width, y0, y1) or None. Returns (flux/B0 in mm^2, moment/H0 in
    mm^3, copper cells)."""
    r = d / 2
    xm = r + hw_ring
    ylo, ytop = -(r + hw_ring), r + hw_ring
    if handle:
        xm = max(xm, handle[0])
        ylo = min(ylo, handle[1])
    half_x = max(np.ceil(xm / h), 1.0)
    jlo, jhi = np.floor(ylo / h), np.ceil(ytop / h)
    xs = (np.arange(-half_x, half_x) + 0.5) * h
    ys = (np.arange(jlo, jhi) + 0.5) * h
    X, Y = np.meshgrid(xs, ys, indexing="ij")
    R = np.hypot(X, Y)
    gapc = (np.abs(X) < gap / 2) & (Y > 0)
    cu = (np.abs(R - r) <= hw_ring) & ~gapc
    if handle:
        cu |= (np.abs(X) <= handle[0]) & (Y >= handle[1]) & (Y <= handle[2])
    inside = (R < r) & ~cu
    cx, cy = X[cu], Y[cu]
    K = loop_field(cx[:, None] - cx[None, :], cy[:, None] - cy[None, :], h)
    psi = np.linalg.solve(K, -np.ones(len(cx)))
    fx, fy = X[inside], Y[inside]
    b = loop_field(fx[:, None] - cx[None, :], fy[:, None] - cy[None, :], h) @ psi
    return float((1 + b).sum() * h * h), float(4 * np.pi * psi.sum() * h * h), int(cu.sum())


RING = (5.0, 1.108, 0.4)  # FM-R5's centreline, ring half width and gap, mm
RO = 2.5 + 1.108
CASES = [
    # name, (d, hw_ring, gap), handle, h
    ("disc", (1.0, 0.5, 0.0), None, 0.05),
    ("r5_ring", RING, None, 0.2),
    ("r5_handle6", RING, (4.0, -(RO + 6.0), -2.5), 0.2),
    ("r5_handle40", RING, (4.0, -(RO + 40.0), -2.5), 0.2),
    ("r10_handle40", (10.0, 1.108, 0.4), (4.0, -(5.0 + 1.108 + 40.0), -5.0), 0.25),
]

print("# Reference for src/physics/handle.rs (tests/reference/sheet_handle.py; dense numpy")
print("# solve of the same cell lattice). flux_mm2: flux through the loop over the applied B0;")
print("# moment_mm3: the sheet's magnetic moment over H0 (4*pi*sum(psi)*h^2); cells: copper cells.")
print("# The disc is a centreline of diameter 1 with half width 0.5 (a disc of radius 1 mm).")
for name, (d, hw, g), hd, h in CASES:
    f, m, n = case(d, hw, g, hd, h)
    print(f"\n[{name}]")
    print(f"diameter_mm = {d}\nring_half_width_mm = {hw}\ngap_mm = {g}\ncell_mm = {h}")
    if hd:
        print(f"handle_half_width_mm = {hd[0]}\nhandle_y0_mm = {hd[1]:.4f}\nhandle_y1_mm = {hd[2]}")
    print(f"flux_mm2 = {f:.8f}\nmoment_mm3 = {m:.8f}\ncells = {n}")
