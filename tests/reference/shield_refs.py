# Outside-reference values for the outer-surface current of a round shielded loop: the outer-loop
# inductance and the current-weighted (effective) area of a set of thin coaxial annular plates.
# Run from the repository root (two shared cores, so niced):
#     nice -n 19 python3 tests/reference/shield_refs.py > tests/data/shield_refs.toml
# Needs numpy and scipy (pip install numpy scipy). Convergence tables go to stderr and into the
# TOML as comments. The script stops with an error (and prints no TOML table after it) if a
# self-check fails, so a broken kernel cannot produce a quiet file.
#
# Model: perfect conductor, magnetostatic, zero-thickness plates coaxial about z. Unknown: the
# azimuthal sheet current (A per mm of radius) on every plate, total current 1 A, with the flux
# linkage psi(r, z) = sum over current of M(ring, ring') equal at every plate point (all plates
# are joined, one turn). L = psi / I, A_eff = sum(dI * pi r^2) / sum(dI).
# Ring-ring mutual inductance: Maxwell's coaxial-circle formula (Maxwell 1873, Treatise vol. 2;
# Grover 1946; from memory, re-checked numerically below against its own log-split)
#     M = mu0 sqrt(r1 r2) ((2/k - k) K(k) - (2/k) E(k)),  k^2 = 4 r1 r2 / ((r1 + r2)^2 + dz^2)
# with scipy.special.ellipk/ellipe taking the parameter m = k^2 and ellipkm1(p) = K(m = 1 - p).
#
# Method 1 (the reference values): Nystrom / product integration with the edge singularity built in.
#   On each radial interval [a, b], r = c + h x (c, h = centre, half-width), the current element is
#   dI = g(x) dx / sqrt(1 - x^2) with g smooth (the 1/sqrt edge singularity of a thin sheet is
#   exact); g is sampled at the P Chebyshev-Gauss nodes x_p = cos((2p - 1) pi / (2P)) with weights
#   pi/P. On a plate's own interval the kernel is split exactly as
#     M = A(r, r') ln(1/m1) + B(r, r'),   m1 = 1 - k^2 = ((r - r')^2 + dz^2) / ((r + r')^2 + dz^2),
#     A = mu0 sqrt(r r')/pi ((2/k) E(m1) - k K(m1)),  B = mu0 sqrt(r r') ((2/k - k) Kreg - (2/k) Ereg),
#     Kreg = K(1 - m1) - K(m1)/pi ln(1/m1),  Ereg = E(1 - m1) - (K(m1) - E(m1))/pi ln(1/m1)
#   (the logarithmic parts of K and E near m = 1 are K(m1)/pi and (K(m1) - E(m1))/pi times
#   ln(1/m1): the hypergeometric connection formulas, [M]; checked numerically in check_kernel()),
#   A and B analytic. ln|x - x'| against a Chebyshev series is integrated exactly with
#     int_{-1}^{1} ln|x - t| T_n(t) / sqrt(1 - t^2) dt = -pi ln 2 (n = 0), -pi T_n(x) / n (n >= 1)
#   (checked by scipy.integrate.quad in check_kernel()). Other intervals: Maxwell's formula at the
#   nodes. Collocation at the same nodes, solve for psi = 1. Converges spectrally in P.
# Method 2 (independent cross-check, shares only Maxwell's formula): Galerkin with piecewise-
#   constant sheet density on cosine-graded elements; same-plane terms by subtracting the ring's
#   log asymptote mu0 r (ln(8 r / |r - r'|) - 2) (integrated analytically) and Gauss-Legendre for
#   the rest; converges like N^-2, Richardson-extrapolated from N and 2N.
# Checks: thin strip vs mu0 R (ln(8R/a) - 2), a = w/4 (conformal-mapping equivalent radius,
#   [M], see shared physics notes 1.3); a round-wire ring (torus surface, periodic Nystrom with
#   Kress's log quadrature, R. Kress, Linear Integral Equations, ch. 12 [M]) vs Maxwell's
#   M(R, R, a) and vs the small-a law derived here.
import datetime
import sys

import numpy as np
import scipy
from scipy.integrate import quad
from scipy.special import ellipe, ellipk, ellipkm1, eval_chebyt

MU0 = 1.25663706127e-6  # H/m, CODATA 2022
MU = MU0 * 1e6  # nH per mm
COMMAND = "nice -n 19 python3 tests/reference/shield_refs.py > tests/data/shield_refs.toml"
LOG = []  # comment lines for the TOML


def say(line=""):
    print(line, file=sys.stderr, flush=True)
    LOG.append(line)


def fail(msg):
    print(f"SELF-CHECK FAILED: {msg}", file=sys.stderr)
    sys.exit(1)


# ---------------------------------------------------------------- kernel
def maxwell(r1, z1, r2, z2):
    """Maxwell's coaxial-circle mutual inductance in nH (lengths mm)."""
    s = (r1 + r2) ** 2 + (z1 - z2) ** 2
    m = np.minimum(4 * r1 * r2 / s, 1.0)
    m1 = ((r1 - r2) ** 2 + (z1 - z2) ** 2) / s
    k = np.sqrt(m)
    return MU * np.sqrt(r1 * r2) * ((2 / k - k) * ellipkm1(m1) - (2 / k) * ellipe(m))


def split(r1, z1, r2, z2):
    """Exact split M = A ln(1/m1) + B; returns A, B and ln((r1 + r2)^2 + dz^2)."""
    r1, z1, r2, z2 = np.broadcast_arrays(r1, z1, r2, z2)
    s = (r1 + r2) ** 2 + (z1 - z2) ** 2
    m1 = ((r1 - r2) ** 2 + (z1 - z2) ** 2) / s
    m = np.minimum(4 * r1 * r2 / s, 1.0)
    k = np.sqrt(m)
    km1, em1 = ellipk(m1), ellipe(m1)
    a = MU * np.sqrt(r1 * r2) / np.pi * ((2 / k) * em1 - k * km1)
    pos = m1 > 0
    l1 = np.log(1 / np.where(pos, m1, 1.0))
    kreg = np.where(pos, ellipkm1(m1) - km1 / np.pi * l1, np.log(4.0))
    ereg = np.where(pos, ellipe(m) - (km1 - em1) / np.pi * l1, 1.0)
    b = MU * np.sqrt(r1 * r2) * ((2 / k - k) * kreg - (2 / k) * ereg)
    return a, b, np.log(s)


def check_kernel():
    say("## Kernel checks")
    worst = 0.0
    rng = np.random.default_rng(20261202)
    for _ in range(200):
        r1, r2 = rng.uniform(0.5, 20, 2)
        dz = rng.choice([0.0, rng.uniform(0, 2)])
        if r1 == r2 and dz == 0:
            continue
        a, b, ls = split(r1, 0.0, r2, dz)
        rec = a * (ls - np.log((r1 - r2) ** 2 + dz**2)) + b
        worst = max(worst, abs(rec / maxwell(r1, 0.0, r2, dz) - 1))
    say(f"# split A ln(1/m1) + B vs Maxwell direct, 200 random ring pairs: max rel diff {worst:.1e}")
    if worst > 1e-12:
        fail("kernel split does not reproduce Maxwell's formula")
    # smoothness of Kreg/Ereg: Kreg = ln4 + m1 (ln4 - 1)/4 + ..., Ereg = 1 + m1 (ln4/2 - 1/4) + ...
    for m1 in [1e-4, 1e-8]:
        l1 = np.log(1 / m1)
        kreg = ellipkm1(m1) - ellipk(m1) / np.pi * l1
        ereg = ellipe(1 - m1) - (ellipk(m1) - ellipe(m1)) / np.pi * l1
        ck = (kreg - np.log(4)) / m1
        ce = (ereg - 1) / m1
        say(f"# m1 = {m1:g}: (Kreg - ln4)/m1 = {ck:.6f} (series {(np.log(4) - 1) / 4:.6f}), "
            f"(Ereg - 1)/m1 = {ce:.6f} (series {np.log(4) / 2 - 0.25:.6f})")
        if abs(ck - (np.log(4) - 1) / 4) > 1e-3 or abs(ce - (np.log(4) / 2 - 0.25)) > 1e-3:
            fail("log part of K or E is not the assumed one")
    worst = 0.0
    for n in [0, 1, 2, 7]:
        for x in [-0.83, 0.1, 0.97]:
            v = quad(lambda t: np.log(abs(x - np.cos(t))) * np.cos(n * t), 0, np.pi,
                     points=[np.arccos(x)], limit=200, epsabs=1e-13)[0]
            ref = -np.pi * np.log(2) if n == 0 else -np.pi * eval_chebyt(n, x) / n
            worst = max(worst, abs(v - ref))
    say(f"# Chebyshev log identity vs scipy.integrate.quad: max abs diff {worst:.1e}")
    if worst > 1e-10:
        fail("Chebyshev log identity")
    say("")


# ---------------------------------------------------------------- method 1
def cheb_nodes(p):
    th = (2 * np.arange(1, p + 1) - 1) * np.pi / (2 * p)
    return np.cos(th), th


def log_weights(p):
    """W[i, q]: int ln|x_i - t| f(t)/sqrt(1-t^2) dt ~= sum_q W[i, q] f(t_q)."""
    _, th = cheb_nodes(p)
    n = np.arange(1, p)
    c = np.cos(np.outer(th, n))
    return -np.pi * np.log(2) / p - (2 * np.pi / p) * (c / n) @ c.T


def solve_cheb(intervals, p):
    """intervals: list of (z, a, b) in mm. Returns L nH, A_eff mm^2, interval current shares."""
    x, _ = cheb_nodes(p)
    w = log_weights(p)
    rs = [0.5 * (a + b) + 0.5 * (b - a) * x for (_, a, b) in intervals]
    nj = len(intervals)
    q = np.empty((nj * p, nj * p))
    for i, (zi, ai, bi) in enumerate(intervals):
        for j, (zj, _, _) in enumerate(intervals):
            ri, rj = rs[i][:, None], rs[j][None, :]
            if i == j:
                a, b, ls = split(ri, zi, rj, zj)
                blk = -2 * a * w + (np.pi / p) * (a * (ls - 2 * np.log(0.5 * (bi - ai))) + b)
            else:
                blk = (np.pi / p) * maxwell(ri, zi, rj, zj)
            q[i * p:(i + 1) * p, j * p:(j + 1) * p] = blk
    u = np.linalg.solve(q, np.ones(nj * p))
    cur = np.array([(np.pi / p) * u[j * p:(j + 1) * p].sum() for j in range(nj)])
    mom = sum((np.pi / p) * (u[j * p:(j + 1) * p] * np.pi * rs[j] ** 2).sum() for j in range(nj))
    tot = cur.sum()
    return 1 / tot, mom / tot, cur / tot


# ---------------------------------------------------------------- method 2
def int_log(x, a, b):
    """int_a^b ln|x - t| dt."""
    def f(u):
        au = abs(u)
        return u * np.log(au) - u if au > 0 else 0.0
    return f(x - a) - f(x - b)


def solve_pwc(intervals, n, nq=8):
    gx, gw = np.polynomial.legendre.leggauss(nq)
    els = []
    for (z, a, b) in intervals:
        e = 0.5 * (a + b) + 0.5 * (b - a) * np.cos(np.linspace(np.pi, 0, n + 1))
        els += [(z, e[k], e[k + 1]) for k in range(n)]
    z = np.array([e[0] for e in els])
    a = np.array([e[1] for e in els])
    b = np.array([e[2] for e in els])
    h = b - a
    rq = 0.5 * (a + b)[:, None] + 0.5 * h[:, None] * gx[None, :]
    wq = 0.5 * h[:, None] * gw[None, :]
    ne = len(els)
    g = np.zeros((ne, ne))
    for i in range(ne):
        ri, wi = rq[i], wq[i]
        far = maxwell(ri[None, None, :], z[i], rq[:, :, None], z[:, None, None])
        g[i] = np.einsum("jk,jko,o->j", wq, far, wi)
        for j in np.where(z == z[i])[0]:
            tot = 0.0
            for o in range(nq):
                x = ri[o]
                sing = MU * x * ((np.log(8 * x) - 2) * h[j] - int_log(x, a[j], b[j]))
                segs = [(a[j], x), (x, b[j])] if a[j] < x < b[j] else [(a[j], b[j])]
                rem = 0.0
                for (s0, s1) in segs:
                    t = 0.5 * (s0 + s1) + 0.5 * (s1 - s0) * gx
                    tw = 0.5 * (s1 - s0) * gw
                    rem += (tw * (maxwell(x, z[i], t, z[j])
                                  - MU * x * (np.log(8 * x / np.abs(x - t)) - 2))).sum()
                tot += wi[o] * (sing + rem)
            g[i, j] = tot
    sig = np.linalg.solve(g, h)  # Galerkin with unit flux linkage
    cur = sig * h
    mom = (sig[:, None] * wq * np.pi * rq**2).sum()
    return 1 / cur.sum(), mom / cur.sum()


# ---------------------------------------------------------------- torus check
def solve_torus(r0, a, n):
    """Perfectly conducting round-wire ring (torus surface), Kress log quadrature, 2n nodes."""
    t = np.pi * np.arange(2 * n) / n
    d = t[:, None] - t[None, :]
    rw = -(2 * np.pi / n) * sum(np.cos(m * d) / m for m in range(1, n)) - (np.pi / n**2) * np.cos(n * d)
    r, z = r0 + a * np.cos(t), a * np.sin(t)
    aa, bb, ls = split(r[:, None], z[:, None], r[None, :], z[None, :])
    q = -aa * rw + (np.pi / n) * (aa * (ls - 2 * np.log(a)) + bb)
    f = np.linalg.solve(q, np.ones(2 * n))
    return 1 / ((np.pi / n) * f.sum())


def check_torus():
    say("## Round-wire ring check (torus surface current), R = 5 mm")
    say("# L_torus converged in n (2n nodes: 16/32/64); Maxwell M(R,R,a); log form mu0 R (ln(8R/a) - 2);")
    say("# small-a law derived here: L = mu0 R (Lam - (a/R)^2 (Lam^2/4 + c1 Lam + c0)), Lam = ln(8R/a) - 2,")
    say("# the Lam^2/4 term from the first-order cos(t) current shift; c1, c0 fitted on a = 0.05, 0.02.")
    r0 = 5.0
    rows = []
    for a in [0.5, 0.25, 0.1, 0.05, 0.02, 0.01]:
        ls = [solve_torus(r0, a, n) for n in (8, 16, 32)]
        lm = maxwell(r0, 0.0, r0, a)
        llog = MU * r0 * (np.log(8 * r0 / a) - 2)
        rows.append((a, ls[-1], lm, llog))
        say(f"# a = {a:5.2f}: L = {ls[-1]:.10f} nH (n-change {abs(ls[-1] - ls[0]):.1e}), Maxwell {lm:.10f}"
            f" ({(ls[-1] / lm - 1) * 100:+.5f} %), log {llog:.10f} ({(ls[-1] / llog - 1) * 100:+.5f} %)")
    lam = lambda a: np.log(8 * r0 / a) - 2  # noqa: E731
    y = {a: -((l / (MU * r0) - lam(a)) / (a / r0) ** 2) - lam(a) ** 2 / 4 for (a, l, _, _) in rows}
    c1 = (y[0.05] - y[0.02]) / (lam(0.05) - lam(0.02))
    c0 = y[0.05] - c1 * lam(0.05)
    say(f"# fit: c1 = {c1:.4f}, c0 = {c0:.4f}; prediction vs solver at the other radii:")
    for (a, l, _, _) in rows:
        pred = MU * r0 * (lam(a) - (a / r0) ** 2 * (lam(a) ** 2 / 4 + c1 * lam(a) + c0))
        say(f"#   a = {a:5.2f}: rel diff {(l / pred - 1):+.2e}")
    a, l, lm, _ = rows[-1]
    if abs(l / lm - 1) > 2e-5:
        fail("torus does not approach Maxwell's M(R,R,a)")
    pred = MU * r0 * (lam(a) - (a / r0) ** 2 * (lam(a) ** 2 / 4 + c1 * lam(a) + c0))
    if abs(l / pred - 1) > 1e-8:
        fail("torus small-a law")
    say("")
    return rows


# ---------------------------------------------------------------- cases
def rnd(v):
    return round(v, 9)


def demo(r0, hw=1.108, slot=0.308):
    return [(1.5725, [(rnd(r0 - hw), rnd(r0 + hw))]),
            (1.33625, [(rnd(r0 - hw), rnd(r0 - slot)), (rnd(r0 + slot), rnd(r0 + hw))]),
            (0.25375, [(rnd(r0 - hw), rnd(r0 + hw))]),
            (0.0175, [(rnd(r0 - hw), rnd(r0 + hw))])]


def flat(r0, w):
    return [(0.0, [(rnd(r0 - w / 2), rnd(r0 + w / 2))])]


CASES = [("demo-D5", 2.5, demo(2.5)), ("demo-D10", 5.0, demo(5.0)),
         ("demo-D20", 10.0, demo(10.0)), ("demo-D30", 15.0, demo(15.0)),
         ("strip-D10-w1", 5.0, flat(5.0, 1.0)), ("strip-D10-w0.1", 5.0, flat(5.0, 0.1)),
         ("strip-D10-w0.01", 5.0, flat(5.0, 0.01)),
         ("plate-D5-w2.216", 2.5, flat(2.5, 2.216)), ("plate-D20-w2.216", 10.0, flat(10.0, 2.216))]
P_LIST = [8, 16, 32, 64, 128]
N_LIST = [16, 32, 64]


def run_case(name, r0, plates):
    ivs = [(z, a, b) for (z, lst) in plates for (a, b) in lst]
    say(f"## {name}: R = {r0} mm, intervals (z, r_in, r_out) = {ivs}")
    say("# method 1 (Chebyshev-Nystrom), P nodes per interval: L nH, A_eff mm^2")
    res = []
    for p in P_LIST:
        l, ae, cur = solve_cheb(ivs, p)
        res.append((l, ae, cur))
        say(f"#   P = {p:4d}: L = {l:.12f}  A_eff = {ae:.10f}")
    l, ae, cur = res[-1]
    dl = abs(res[-1][0] - res[-2][0]) / l
    da = abs(res[-1][1] - res[-2][1]) / ae
    say("# method 2 (piecewise-constant Galerkin), N elements per interval:")
    pw = []
    for n in N_LIST:
        pw.append(solve_pwc(ivs, n))
        say(f"#   N = {n:4d}: L = {pw[-1][0]:.10f}  A_eff = {pw[-1][1]:.10f}")
    lr = pw[-1][0] + (pw[-1][0] - pw[-2][0]) / 3
    ar = pw[-1][1] + (pw[-1][1] - pw[-2][1]) / 3
    xl, xa = abs(lr / l - 1), abs(ar / ae - 1)
    say(f"#   Richardson (N^-2) from N = {N_LIST[-2]}, {N_LIST[-1]}: L = {lr:.10f}  A_eff = {ar:.10f}")
    say(f"# method 1 last-step change: L {dl:.1e}, A_eff {da:.1e}; method 1 vs 2: L {xl:.1e}, A_eff {xa:.1e}")
    if xl > 2e-5 or xa > 2e-5 or dl > 1e-9 or da > 1e-9:
        fail(f"{name}: methods disagree or method 1 not converged")
    say("")
    return dict(name=name, r0=r0, plates=plates, L=l, Ae=ae, cur=cur, conv=max(dl, da),
                cross_L=lr, cross_A=ar, acc=max(xl, xa, dl, da))


def fmt_plates(plates):
    items = []
    for (z, lst) in plates:
        iv = ", ".join(f"[{a!r}, {b!r}]" for (a, b) in lst)
        items.append(f"{{z_mm = {z!r}, intervals = [{iv}]}}")
    return "[" + ", ".join(items) + "]"


def main():
    check_kernel()
    check_torus()
    out = [run_case(*c) for c in CASES]
    print("# Outside-reference values: outer-surface current of a round shielded loop, modelled as thin")
    print("# coaxial annular plates (zero thickness, perfect conductor, magnetostatic, all plates one turn).")
    print(f"# Generated by: {COMMAND}")
    print(f"# python {sys.version.split()[0]}, numpy {np.__version__}, scipy {scipy.__version__}; "
          f"date {datetime.datetime.now(datetime.timezone.utc).strftime('%Y-%m-%d %H:%M UTC')}")
    print("# mu0 = 1.25663706127e-6 H/m (CODATA 2022). Lengths mm, L in nH, areas mm^2.")
    print("# Method: Nystrom/product integration; per radial interval the sheet current is")
    print("# g(x)/sqrt(1-x^2) (exact thin-sheet edge singularity), g at P Chebyshev-Gauss nodes; Maxwell's")
    print("# coaxial-ring mutual inductance with its exact ln(1/m1) split on a plate's own interval and the")
    print("# Chebyshev identity int ln|x-t| T_n(t)/sqrt(1-t^2) dt = -pi T_n(x)/n (n>=1), -pi ln2 (n=0);")
    print("# equal flux linkage (1 nH*A) at all nodes, L = 1/I, A_eff = sum(dI pi r^2)/sum(dI).")
    print("# Cross-check: piecewise-constant Galerkin on cosine-graded elements, log-asymptote subtraction,")
    print("# Richardson-extrapolated (L_cross_nH, A_eff_cross_mm2).")
    print("# scipy calls: scipy.special.ellipk(m), ellipe(m) (parameter m = k^2), ellipkm1(p) = K(1 - p);")
    print("# scipy.special.eval_chebyt and scipy.integrate.quad (identity check only); numpy.linalg.solve;")
    print("# numpy.polynomial.legendre.leggauss (cross-check).")
    print("# rel_accuracy = max(method-1 change from P = 64 to 128, |method 1 - method 2| relative), for")
    print("# both L and A_eff. current_shares: fraction of the total current on each interval, in the")
    print("# order the intervals are listed. A_ratio = A_eff / (pi R^2), R = the stated centreline radius.")
    print("# Strip cases also give the thin-strip limit mu0 R (ln(8R/a) - 2), a = w/4 ([M], see notes 1.3).")
    print()
    for line in LOG:
        print(line if line.startswith("#") or not line else "# " + line)
    print()
    for c in out:
        print("[[case]]")
        print(f'name = "{c["name"]}"')
        print(f"R_mm = {c['r0']!r}")
        print(f"plates = {fmt_plates(c['plates'])}")
        print(f"L_nH = {float(c['L'])!r}")
        print(f"A_eff_mm2 = {float(c['Ae'])!r}")
        print(f"A_ratio = {float(c['Ae'] / (np.pi * c['r0'] ** 2))!r}")
        acc = float(f"{max(c['acc'], 1e-15):.1e}")
        conv = float(f"{max(c['conv'], 1e-16):.1e}")
        print(f"rel_accuracy = {acc!r}")
        print(f"rel_change_P64_P128 = {conv!r}")
        print(f"L_cross_nH = {float(c['cross_L'])!r}")
        print(f"A_eff_cross_mm2 = {float(c['cross_A'])!r}")
        print(f"current_shares = [{', '.join(repr(float(x)) for x in c['cur'])}]")
        if c["name"].startswith("strip"):
            (_, [(a, b)]), = c["plates"]
            w = b - a
            lim = MU * c["r0"] * (np.log(8 * c["r0"] / (w / 4)) - 2)
            print(f"L_thin_limit_nH = {float(lim)!r}")
            print(f"L_vs_thin_limit_rel = {float(c['L'] / lim - 1)!r}")
        print()


if __name__ == "__main__":
    main()
