# Full-wave (FDTD, openEMS) reference for the 50-ohm test-line fixture's port (its connector
# launch): S11 at the board edge (x = +length/2, port 2; the board is symmetric), 50-ohm
# reference, looking into the centre pad, the taper and 15 mm of the uniform coated microstrip
# (ending in an absorbing termination, so it looks infinite), 100 MHz .. 3 GHz, from the geometry JSON of the
# fixture (`tests/data/fixture_fdtd_geometry.json`, written by `cargo run --release --example
# launch_geometry -- fixture`: stackup, line, taper stations, pads, vias). CI never runs
# this; its results are recorded in tests/data/fixture_fdtd.toml.
#
# Run (Debian's openEMS packages: apt-get install -y openems python3-openems; Debian's
# /usr/bin/python3, the pyenv python does not see them), from the repository root:
#     nice -n 10 /usr/bin/python3 tests/reference/fixture_fdtd.py tests/data/fixture_fdtd_geometry.json
# (tests/launch_fdtd.rs fails when that JSON no longer matches the built fixture: write it
# again with the example and run this again.) Shared helpers: tests/reference/fdtd_common.py.
# That runs, for each mesh (coarse, fine), the port check and the launch, then writes
# tests/data/fixture_fdtd.toml. Options: --meshes coarse,fine  --work DIR (default
# /tmp/fixture-fdtd)  --toml PATH  --reuse (post-process finished runs found in DIR)
#          --only port_check|launch  --no-toml  --setup (print the mesh sizes only)
#          --abs-len MM (absorber length, a check of the termination; default 8)
# Written against openEMS v0.0.35 with CSXCAD v0.6.2 (Debian packages
# 0.0.35+git20190103.6a75e98+dfsg.1-3.2), python 3.11, numpy 1.24.
#
# The model (frame of the JSON: x along the line, port 2's board edge at x = +length/2 = 40;
# y across; z up, L2 at z = 0, L1 at z = 1.53; mm). Full width in y (no symmetry wall: a
# half model with a PMC wall was tried first and went unstable, see below).
#  - Copper is PEC and zero-thickness. L2 (solid ground, bottom ground pads part of it) is the
#    model's PEC bottom wall at z = 0 (the board's underside is therefore not modelled).
#    L1 at z = 1.53: the line (width line_width), the taper (a polygon through the station
#    widths, linear from the pad's 0.8 mm at the pad's inner end x = 37 to line_width at
#    x = 37 - taper), the centre pad (x 37..40, 0.8 wide); the ground pour follows the line
#    at the station gaps (piecewise linear), pad_gap beside the pad, steps out to keepout
#    (4.59 mm from the line edge) at the taper's end, and stops copper_to_edge from the long
#    edges (|y| <= 19.7); it runs to the board edge at the port end.
#  - FR-4 core er = 4.5, LOSSLESS (tan d = 0.018 left out: the line-section model's port
#    sections are lossless too, and the reflection is hardly changed by it).
#  - Solder mask (t = 0.02 mm, er = 3.5) over L1 except over the connector pads: a 0.02 mm
#    cell would set the FDTD time step, so the mask is smeared over the first air cell above
#    L1 (thickness t_c = d_mask) as er_eq = 1 + (er_mask - 1) * t_mask / t_c (same (er - 1) t
#    product, which is what the tangential fringing fields in the gaps see; an approximation).
#  - Ground vias: PEC cylinders (drill diameter, staircased), z = 0..1.53, all the listed ones
#    (the list is symmetric except two stitching vias at y = +6.35, x = 30.0 and 32.3).
#  - The connector is not modelled. The excitation is not a lumped port at the edge: the
#    board's cross-section at the edge (pad, its gap, the pour, the mask pattern and the
#    dielectric, |y| <= FEED_HW = 4.4; the two via rows beside the pad, |y| = 0.912 and 3.737,
#    both 1.18 mm pitch on the board, continued with that pitch) is continued 20 pitches
#    beyond the edge as a feed line ("surrogate connector"); a lumped 50-ohm source (L2 to
#    the pad) 12 pitches beyond the edge launches the wave, and the feed runs on behind it
#    into an absorbing termination. The x mesh is uniform, p/n_per, along the feed, so that
#    the line and its mesh repeat every pitch p. Probes on three planes 4, 3 and 2 pitches
#    beyond the edge (voltage L2-to-pad at y = 0; current round the pad, mean of the two dual
#    planes either side) give V and I there. The feed's Bloch impedance Zb and phase per
#    pitch come from the port check (three-plane split x_k = F e^{-j theta k} + R e^{j theta k};
#    eps_eff and Zb fitted as a + b f^2 over 0.8..3 GHz). The reflection at the middle plane
#    is G = (V - Zb I)/(V + Zb I), moved to the edge (3 whole pitches, lossless) and referred
#    to 50 ohm through Zb: Z_edge = Zb (1+G)/(1-G), S11 = (Z_edge - 50)/(Z_edge + 50). The
#    voltage-only split R/F (impedance-free, re the feed) is recorded as a cross-check.
#  - Port check: the same feed mesh, source and probes, with the feed's cross-section
#    continued straight through the whole model (no board) into the absorbers at both ends.
#    Its reflection re the feed's Zb is the floor of the method (probe and extraction error,
#    the source's evanescent fields, the far absorber); re 50 ohm it adds the feed line's own
#    mismatch to 50 ohm, which the launch's S11 re 50 ohm does NOT contain (Z_edge is
#    re-referenced to 50 ohm through Zb).
#  - The uniform line runs 15 mm past the taper's end before its absorbing termination (line,
#    pour and dielectric run into it). A second probe set on the uniform line (three planes
#    1.2 mm apart, 8..10.4 mm past the taper) gives the line's Zc and eps_eff in the FDTD and
#    the backward wave coming back along it (about -40..-46 dB re the forward wave by the V/I
#    split; doubling the absorber to 16 mm, --abs-len 16, changed that by only 1..2 dB, so part
#    of it is the line probes' own error or the pour's second mode, not the absorber).
#    That backward wave is removed to first order: with power waves a = (V + Z I)/(2 sqrt Z),
#    b = (V - Z I)/(2 sqrt Z) at the feed's and the line's middle planes,
#    G_corr = G - a_line b_line / a_feed^2 (S12 = S21 = a_line/a_feed; the termination's
#    multiple reflections with the launch are second order and left in). s11_db is the
#    corrected value; s11_raw_db (uncorrected) is recorded too.
#  - Absorbing terminations (both x ends): ABS_LEN = 8 mm of graded matched lossy medium
#    (kappa = eps alpha, magnetic sigma = mu0 alpha in every material, alpha quadratic in depth
#    up to ABS_ALPHA, one slab per cell) in front of a PEC wall. openEMS's PML_8 at the x ends
#    went unstable in this model (field energy growing from about 2 ns on, with Mur, with PEC
#    side walls and with a 0.8 time-step factor alike; PEC ends were stable), so it is not used.
#  - Boundaries: PEC at both x ends (behind the absorbers), Mur at y = +-23 (3 mm of air
#    beyond the board's long edges) and at the top (6 mm of air above L1), PEC at z = 0 (L2).
#  - Excitation: Gaussian pulse f0 = 1.55 GHz, fc = 1.5 GHz; end criterion:
#    field energy 50 dB below its peak; a run not there by T_MAX simulated (or by the wall
#    clock limit, or growing: unstable) is stopped and says so.
#  - Mesh: pad and line edges and the pad's gap edges follow the thirds rule in y (common
#    FDTD practice for zero-thickness metal, no source); the taper's slanted edges and the
#    vias are staircased.
# Left out: the connector (and its legs on the ground pads), the board's far half and port 1,
# copper thickness and roughness, conductor and dielectric loss, the pour's resonances over the
# full board length (the line and pour end in the absorber 15 mm past the taper; the pour has
# no vias beyond x = 30), the part of the board beyond |y| = FEED_HW in the feed (the feed is
# narrower than the board), the board below L2.
import argparse
import datetime
import json
import math
import os
import re
import subprocess
import sys
import threading
import time

import numpy

numpy.float = float  # Debian's openEMS 0.0.35 python module still uses the removed aliases
numpy.int = int
import numpy as np  # noqa: E402
from CSXCAD import ContinuousStructure  # noqa: E402
from openEMS import openEMS  # noqa: E402

import fdtd_common as fc  # noqa: E402
from fdtd_common import C0, FREQS, arr, band, bloch_theta, db, dft, read_set, rect, reflection, split, worst  # noqa: E402

Z_REF = 50.0
HERE = os.path.dirname(os.path.abspath(__file__))
DEFAULT_TOML = os.path.join(HERE, "..", "data", "fixture_fdtd.toml")

# FREQS (fdtd_common): 50 MHz .. 3 GHz, 50 MHz steps
# Gaussian (openEMS: f0 +- fc at -20 dB): 100 MHz and 3 GHz both about -19 dB re the peak, DC
# -21 dB (harmless here: the conductors run through the absorbers to the PEC end walls). A
# first try with f0 = 2.0, fc = 1.2 GHz (100 MHz at -50 dB) gave noisy points below 300 MHz.
F0, FC = 1.55e9, 1.5e9
T_MAX = 8e-9
WALL_MAX = 11.5 * 60  # seconds of wall clock per run (shared machine)
END_CRITERION = 1e-5  # -50 dB
BAND_FIT = (0.8e9, 3.0e9)  # where eps_eff and Zb are fitted (the three-plane split is ill-conditioned below)

PITCH = 1.18  # via pitch of the rows beside the pad (38.17, 39.35; 37.475, 38.655)
ROWS = (0.912, 3.737)  # |y| of the via rows continued into the feed
FEED_HW = 4.4  # half width of the feed's board (pour and dielectric)
FEED_PERIODS = 20  # incl. the absorber (ABS_LEN) at its far end
SRC_PERIODS = 12
MEAS_PERIODS = (4, 3, 2)  # feed probe planes beyond the edge, in order of propagation
LINE_PAST_TAPER = 15.0  # uniform line before its absorber
# Absorbing terminations (both x ends): ABS_LEN of graded matched lossy medium, in every
# material kappa = eps alpha(x), sigma_m = mu0 alpha(x) (wave impedance unchanged, the wave
# decays by alpha/v per metre at every frequency), alpha = ABS_ALPHA (d/ABS_LEN)^2, one slab
# per cell; PEC wall behind it. (openEMS's PML_8 went unstable in this model.)
ABS_LEN = 8.0
ABS_ALPHA = 2.5e11  # 1/s
EPS0, MU0 = 8.8541878128e-12, 4e-7 * math.pi
FAR_PLANES = (8.0, 9.2, 10.4)  # far probe planes, mm past the taper's end
AIR_SIDE, AIR_TOP = 3.0, 6.0
TS_FACTOR = float(os.environ.get("FIXTURE_TS_FACTOR", "1.0"))
BOUNDARY = json.loads(os.environ.get("FIXTURE_BC", '["PEC", "PEC", "MUR", "MUR", "PEC", "MUR"]'))
R_SRC = 50.0

MESHES = {
    # d_fine: y cell round the pad, its gap and the line edge (|y| < 1.6), and x cell round the
    # pad end and taper is 2 d_fine; d_mid: y cell 1.6..3.7 (taper's gap); n_per: x cells per
    # via pitch in the feed; d_line: x cell along the uniform line; n_core: largest core cell
    # is 1.53/n_core (graded to d_top under L1); d_mask: first air cell (mask layer).
    "coarse": dict(d_fine=0.075, d_mid=0.15, n_per=5, d_line=0.3, n_core=5, d_top=0.12,
                   d_mask=0.1, d_air=1.0),
    "fine": dict(d_fine=0.05, d_mid=0.1, n_per=7, d_line=0.2, n_core=7, d_top=0.07,
                 d_mask=0.06, d_air=0.8),
}


# ---- geometry from the JSON -----------------------------------------------------------------
class Fixture:
    def __init__(self, path):
        j = json.load(open(path))
        self.j, self.path = j, path
        self.name = j.get("fixture", "?")
        cu = [l for l in j["layers"] if l["type"] == "copper"]
        di = [l for l in j["layers"] if l["type"] == "dielectric"]
        assert len(cu) == 2 and len(di) == 1 and j["line_layer"] == 1
        self.h = di[0]["t"]
        self.er = di[0]["er"]
        self.tan_d = di[0].get("tan_d", 0.0)
        self.mask_t, self.mask_er = j["mask"]["t"], j["mask"]["er"]
        self.edge = j["length"] / 2
        self.bw = j["width"] / 2
        self.cu_hw = self.bw - j["copper_to_edge"]
        self.line_hw = j["line_width"] / 2
        self.keep = j["keepout"]
        pads = j["pads_port2"]
        cp = [p for p in pads if p["centre"]][0]
        self.pad_hw = cp["h"] / 2
        self.pad_x0 = cp["x"] - cp["w"] / 2  # inner end
        assert abs(cp["x"] + cp["w"] / 2 - self.edge) < 1e-6 and abs(cp["y"]) < 1e-9
        self.pad_gap = j["pad_gap"]
        self.gpads = [(p["x"] - p["w"] / 2, p["x"] + p["w"] / 2, abs(p["y"]) - p["h"] / 2,
                       abs(p["y"]) + p["h"] / 2) for p in pads
                      if not p["centre"] and p["top"] and p["y"] > 0]
        st = j["stations"]
        self.taper = j["taper"]
        self.x_taper_end = self.pad_x0 - self.taper
        # taper edge and pour edge, (x, y) from the pad's inner end towards the centre
        self.taper_pts = [(self.pad_x0 - s["x"], s["width"] / 2) for s in st]
        self.clr_pts = [(self.pad_x0 - s["x"], s["width"] / 2 + s["gap"]) for s in st]
        assert abs(st[0]["width"] / 2 - self.pad_hw) < 1e-6
        assert abs(st[-1]["width"] / 2 - self.line_hw) < 1e-6
        self.via_r = j["via"]["drill"] / 2
        self.vias = [tuple(v) for v in j["vias_port2"]]
        self.model = j.get("model", {})


# ---- mesh --------------------------------------------------------------------------------
def mesh_lines(lo, hi, fixed, regions, dmax, ratio=1.3, secondary=()):
    return fc.mesh_lines(lo, hi, fixed, regions, dmax, ratio, secondary, samples=20001)


def make_mesh(g, m, case):
    d = m["d_fine"]
    # y: thirds rule for the pad edge, the pad's gap edge and the line edge
    thirds = []
    for e, metal_inside in ((g.pad_hw, True), (g.pad_hw + g.pad_gap, False),
                            (g.line_hw, True)):
        s_ = 1.0 if metal_inside else -1.0
        thirds += [e - s_ * d / 3, e + s_ * 2 * d / 3]
    yfix = [0.0, g.line_hw + g.keep, g.cu_hw, g.bw, FEED_HW] + thirds
    ysec = list(ROWS) + [v for p in g.gpads for v in p[2:]] + [abs(y) for _, y in g.vias]
    ysec += [y for _, y in g.clr_pts[1:]]
    Yh = mesh_lines(0.0, g.bw + AIR_SIDE, yfix,
                    [(0.0, 1.6, d), (1.6, g.clr_pts[-1][1] + 0.2, m["d_mid"])], m["d_air"],
                    secondary=ysec)
    Y = np.concatenate([-Yh[:0:-1], Yh])  # mirror-symmetric about y = 0
    # x: uniform p/n_per along the feed (from one pitch before the edge), 2 d_fine round the
    # pad and taper, uniform d_line along the line
    p, n = PITCH, m["n_per"]
    hf = p / n
    x_feed0 = g.edge - p
    feed = [x_feed0 + i * hf for i in range(n * (FEED_PERIODS + 1) + 1)]
    dl = m["d_line"]
    x_u = g.x_taper_end - 2.0  # uniform line mesh from here down
    n_u = int(math.ceil((LINE_PAST_TAPER + 2.0 + ABS_LEN) / dl))
    x_min = x_u - n_u * dl
    if case == "launch":
        uni = [x_u - k * dl for k in range(n_u, -1, -1)]
        mid = mesh_lines(x_u, x_feed0, [g.pad_x0, g.x_taper_end],
                         [(g.x_taper_end - 0.5, x_feed0, 2 * d)], dl,
                         secondary=[x for x, _ in g.vias if x_u < x < x_feed0] +
                         [x for x, _ in g.taper_pts])
        X = np.array(uni[:-1] + list(mid[:-1]) + feed)
    else:  # port check: the feed's uniform mesh through the whole model
        k0 = int(math.ceil((x_feed0 - x_min) / hf))
        X = np.array([x_feed0 - k * hf for k in range(k0, 0, -1)] + feed)
    # z: core graded towards L1, the mask cell, air above
    zc = list(mesh_lines(0.0, g.h, [], [(g.h, g.h, m["d_top"])], g.h / m["n_core"]))
    zt = g.h + m["d_mask"]
    za = list(mesh_lines(zt, g.h + AIR_TOP, [], [(zt, zt, m["d_mask"])], m["d_air"]))
    Z = np.array(sorted(set(np.round(zc + [g.h] + za, 9))))
    return np.round(X, 9), np.round(Y, 9), Z


# ---- model -------------------------------------------------------------------------------
def circle(xc, yc, r, n=36):
    return fc.circle(xc, yc, r, n)


def feed_vias(g, x_lo, x_hi):
    """The rows beside the pad continued with the pitch over [x_lo, x_hi]."""
    out = []
    for y0 in ROWS:
        xs = sorted(x for x, y in g.vias if abs(y - y0) < 1e-3)
        x0 = xs[0]
        k = math.floor((x_lo - x0) / PITCH)
        while x0 + k * PITCH <= x_hi:
            x = x0 + k * PITCH
            if x >= x_lo:
                out += [(x, y0), (x, -y0)]
            k += 1
    return out


def build(g, mesh_name, case):
    """case: 'launch' or 'port_check'."""
    m = MESHES[mesh_name]
    fdtd = openEMS(EndCriteria=END_CRITERION, NrTS=1000000)
    fdtd.SetGaussExcite(F0, FC)
    fdtd.SetBoundaryCond(BOUNDARY)
    if TS_FACTOR != 1.0:
        fdtd.SetTimeStepFactor(TS_FACTOR)
    csx = ContinuousStructure()
    fdtd.SetCSX(csx)
    grid = csx.GetGrid()
    grid.SetDeltaUnit(1e-3)
    X, Y, Z = make_mesh(g, m, case)
    grid.SetLines("x", X)
    grid.SetLines("y", Y)
    grid.SetLines("z", Z)
    x_lo, x_hi = X[0], X[-1]
    launch = case == "launch"
    E, h = g.edge, g.h
    zm = h + m["d_mask"]
    er_mask = 1.0 + (g.mask_er - 1.0) * g.mask_t / m["d_mask"]

    fr4 = csx.AddMaterial("fr4", epsilon=g.er)
    mask = csx.AddMaterial("mask_eq", epsilon=er_mask)
    air = csx.AddMaterial("mask_opening", epsilon=1.0)
    gnd = csx.AddMetal("ground")
    sig = csx.AddMetal("signal")
    gvia = csx.AddMetal("ground_vias")
    ph = g.pad_hw + g.pad_gap
    if launch:
        fr4.AddBox([x_lo, -g.bw, 0], [E, g.bw, h], priority=1)
        mask.AddBox([x_lo, -g.bw, h], [E, g.bw, zm], priority=1)
    fr4.AddBox([E if launch else x_lo, -FEED_HW, 0], [x_hi, FEED_HW, h], priority=1)
    mask.AddBox([E if launch else x_lo, -FEED_HW, h], [x_hi, FEED_HW, zm], priority=1)
    xo = g.pad_x0 if launch else x_lo  # mask openings: pads (and their continuation)
    air.AddBox([xo, -g.pad_hw, h], [x_hi, g.pad_hw, zm], priority=2)
    for _, _, y0, y1 in g.gpads:
        for sgn in (1, -1):
            air.AddBox([xo, sgn * y0, h], [x_hi, sgn * y1, zm], priority=2)

    # absorbing terminations: one slab per cell, alpha graded quadratically
    n_slab = 0
    for end in ("lo", "hi"):
        for k in range(len(X) - 1):
            a_, b_ = X[k], X[k + 1]
            depth = (x_lo + ABS_LEN - 0.5 * (a_ + b_)) if end == "lo" else \
                (0.5 * (a_ + b_) - (x_hi - ABS_LEN))
            if depth <= 0:
                continue
            al = float(ABS_ALPHA * (depth / ABS_LEN) ** 2)
            narrow = (end == "hi") or not launch  # feed cross-section (mask openings too)
            yb = FEED_HW if narrow else g.bw

            mats = {}

            def lossy(nm, er, prio, p0, p1):
                if nm not in mats:
                    mats[nm] = csx.AddMaterial(f"abs_{nm}_{n_slab}", epsilon=float(er),
                                               kappa=float(EPS0 * er * al), sigma=float(MU0 * al))
                mats[nm].AddBox([float(v) for v in p0], [float(v) for v in p1], priority=prio)
            lossy("air", 1.0, 3, [a_, Y[0], Z[0]], [b_, Y[-1], Z[-1]])
            lossy("fr4", g.er, 4, [a_, -yb, 0.0], [b_, yb, h])
            lossy("mask", er_mask, 4, [a_, -yb, h], [b_, yb, zm])
            if narrow:
                lossy("open", 1.0, 5, [a_, -g.pad_hw, h], [b_, g.pad_hw, zm])
                for _, _, y0, y1 in g.gpads:
                    for sgn in (1, -1):
                        lossy("open", 1.0, 5, [a_, sgn * y0, h], [b_, sgn * y1, zm])
            n_slab += 1

    def poly(prop, pts, mirror_pts=True):
        for sgn in ((1, -1) if mirror_pts else (1,)):
            prop.AddPolygon([[q[0] for q in pts], [sgn * q[1] for q in pts]], "z", h,
                            priority=10)

    if launch:
        # pour (one polygon, y >= 0): pad gap, station gaps, step out to the keepout
        pts = [(x_hi, FEED_HW), (x_hi, ph), (g.pad_x0, ph)] + g.clr_pts[1:] + \
              [(g.x_taper_end, g.line_hw + g.keep), (x_lo, g.line_hw + g.keep),
               (x_lo, g.cu_hw), (E, g.cu_hw), (E, FEED_HW)]
        poly(gnd, pts)
        top = [(x_hi, g.pad_hw), (g.pad_x0, g.pad_hw)] + g.taper_pts[1:] + [(x_lo, g.line_hw)]
        spts = top + [(x, -y) for x, y in reversed(top)]
        poly(sig, spts, mirror_pts=False)
        vias = list(g.vias) + feed_vias(g, E + 1e-6, x_hi)
    else:
        poly(gnd, [(x_lo, ph), (x_hi, ph), (x_hi, FEED_HW), (x_lo, FEED_HW)])
        poly(sig, [(x_lo, -g.pad_hw), (x_hi, -g.pad_hw), (x_hi, g.pad_hw), (x_lo, g.pad_hw)],
             mirror_pts=False)
        vias = feed_vias(g, x_lo, x_hi)
    for x, y in vias:
        if x_lo <= x <= x_hi:
            gvia.AddCylinder([x, y, 0.0], [x, y, h], g.via_r, priority=30)

    # source: lumped port L2 -> pad on the feed, across the pad
    p = PITCH
    ks = int(np.argmin(np.abs(X - (E + SRC_PERIODS * p))))
    fdtd.AddLumpedPort(1, R_SRC, [X[ks], -g.pad_hw, 0.0], [X[ks], g.pad_hw, h], "z",
                       excite=1.0, priority=40)

    sets = {}
    yv = 0.0  # voltage probe L2 -> pad on the centre line

    def probe_set(name, planes, i_hw):
        xs = []
        for n, xc in enumerate(planes):
            k = int(np.argmin(np.abs(X - xc)))
            assert abs(X[k] - xc) < 1e-6, f"probe plane {xc} off the mesh"
            x = float(X[k])
            xs.append(x)
            csx.AddProbe(f"{name}_v{n}", p_type=0, weight=-1).AddBox([x, yv, 0.0], [x, yv, h])
            for side, xi in (("a", 0.5 * (X[k - 1] + x)), ("b", 0.5 * (x + X[k + 1]))):
                # current towards -x (into the board), round the pad or line
                csx.AddProbe(f"{name}_i{n}{side}", p_type=1, weight=-1, norm_dir=0).AddBox(
                    [xi, -i_hw, h], [xi, i_hw, h])
        sets[name] = dict(x=xs)

    probe_set("feed", [E + k * p for k in MEAS_PERIODS], ph - g.pad_gap / 2)
    if launch:
        far = [g.x_taper_end - d for d in FAR_PLANES]
        far = [float(X[int(np.argmin(np.abs(X - xf)))]) for xf in far]
        probe_set("far", far, g.line_hw + 1.0)
    else:
        kf = int(round((E - (g.x_taper_end - FAR_PLANES[1])) / p))
        probe_set("far", [E - (kf - 1) * p, E - kf * p, E - (kf + 1) * p], ph - g.pad_gap / 2)

    ncell = (len(X) - 1) * (len(Y) - 1) * (len(Z) - 1)
    info = dict(case=case, mesh=mesh_name, mesh_params=m, lines=[len(X), len(Y), len(Z)],
                cells=ncell, src_x=float(X[ks]), probes=sets, er_mask_eq=er_mask,
                min_cell_mm=[float(np.diff(A).min()) for A in (X, Y, Z)],
                max_cell_mm=[float(np.diff(A).max()) for A in (X, Y, Z)],
                domain_mm=[[float(A[0]), float(A[-1])] for A in (X, Y, Z)],
                n_ground_vias=len(vias))
    return fdtd, csx, info


# ---- run ---------------------------------------------------------------------------------
def run(g, mesh_name, case, work):
    sim = os.path.join(work, f"{case}-{mesh_name}")
    fdtd, csx, info = build(g, mesh_name, case)
    print(json.dumps({k: info[k] for k in ("case", "mesh", "lines", "cells", "min_cell_mm")}),
          flush=True)
    os.makedirs(sim, exist_ok=True)
    log = os.path.join(work, f"{case}-{mesh_name}.log")
    t0 = time.time()
    sys.stdout.flush()
    saved = os.dup(1)
    stop = threading.Event()
    info["stopped_at_t_max"] = False
    info["stopped_at_wall_limit"] = False

    def watchdog():  # the engine stops when it finds a file ABORT in its run folder
        while not stop.wait(3.0):
            if time.time() - t0 > WALL_MAX:
                open(os.path.join(sim, "ABORT"), "w").close()
                info["stopped_at_wall_limit"] = True
                return
            try:
                text = open(log, errors="replace").read()
            except OSError:
                continue
            ts = re.findall(r"Timestep:\s+(\d+)", text)
            dt = re.findall(r"FDTD timestep is: ([\d.e+-]+) s", text)
            en = [float(e) for e in re.findall(r"Energy: ~\s*([\d.e+-]+) ", text)]
            if len(en) > 10 and en[-1] > 100 * max(en[: len(en) // 2]):  # growing: unstable
                open(os.path.join(sim, "ABORT"), "w").close()
                info["unstable"] = True
                return
            if ts and dt and int(ts[-1]) * float(dt[0]) > T_MAX:
                open(os.path.join(sim, "ABORT"), "w").close()
                info["stopped_at_t_max"] = True
                return

    with open(log, "w") as lf:  # the engine prints on fd 1: keep it in a log
        os.dup2(lf.fileno(), 1)
        th = threading.Thread(target=watchdog, daemon=True)
        th.start()
        try:
            fdtd.Run(sim, cleanup=True, numThreads=2)
        finally:
            stop.set()
            sys.stdout.flush()
            os.dup2(saved, 1)
            os.close(saved)
    info["run_seconds"] = round(time.time() - t0, 1)
    text = open(log, errors="replace").read()
    its = re.findall(r"Time for (\d+) iterations with ([\d.]+) cells", text)
    dts = re.findall(r"FDTD timestep is: ([\d.e+-]+) s", text)
    en = re.findall(r"Energy: ~[\d.e+-]+ \(\s*-\s*([\d.]+)dB\)", text)
    info["timesteps"] = int(its[-1][0]) if its else None
    info["dt_s"] = float(dts[0]) if dts else None
    info["end_energy_db"] = -float(en[-1]) if en else None
    ver = re.findall(r"openEMS \d+bit -- version (\S+)", text)
    cver = re.findall(r"CSXCAD -- Version: (\S+)", text)
    info["openems"] = ver[0] if ver else "?"
    info["csxcad"] = cver[0] if cver else "?"
    with open(os.path.join(work, f"{case}-{mesh_name}.info.json"), "w") as f:
        json.dump(info, f, indent=1)
    print(json.dumps({k: info[k] for k in ("case", "mesh", "run_seconds", "timesteps",
                                           "end_energy_db", "stopped_at_wall_limit")}),
          flush=True)
    return info


def smooth(y):
    return fc.smooth(y, BAND_FIT)


def line_waves(v, i, d_m, theta=None):
    return fc.line_waves(v, i, d_m, BAND_FIT, BAND_FIT, theta)


def post(g, mesh_name, work):
    out = {}
    pc_info = json.load(open(os.path.join(work, f"port_check-{mesh_name}.info.json")))
    p_m = PITCH * 1e-3
    n_edge = MEAS_PERIODS[1]
    sim = os.path.join(work, f"port_check-{mesh_name}")
    v, i, t_pc, tail_pc = read_set(sim, "feed")
    pc = line_waves(v, i, p_m)
    theta, zb = pc["theta"], pc["zb"]

    def at_edge(gam_mid):
        gam = gam_mid * np.exp(2j * theta * n_edge)
        zin = zb * (1 + gam) / (1 - gam)
        return gam, (zin - Z_REF) / (zin + Z_REF)

    g_pc, s_pc = at_edge(reflection(pc, zb))
    vf, i_f, _, _ = read_set(sim, "far")
    pcf = line_waves(vf, i_f, p_m)
    pcf["gamma"] = reflection(pcf, pcf["zb"])
    out["port_check"] = dict(info=pc_info, t_end=t_pc, tail_db=tail_pc, feed=pc, far=pcf,
                             s11_feedref=g_pc, s11=s_pc, s11_bloch=at_edge(pc["gamma_bloch"])[0])
    fn = os.path.join(work, f"launch-{mesh_name}.info.json")
    if not os.path.exists(fn):
        return out
    la_info = json.load(open(fn))
    sim = os.path.join(work, f"launch-{mesh_name}")
    v, i, t_la, tail_la = read_set(sim, "feed")
    la = line_waves(v, i, p_m, theta=theta)
    la_own = line_waves(v, i, p_m)
    g_l, s_l = at_edge(reflection(la, zb))
    fx = la_info["probes"]["far"]["x"]
    d_far = (fx[0] - fx[1]) * 1e-3
    assert abs((fx[1] - fx[2]) * 1e-3 - d_far) < 1e-9
    vs, i_s, _, _ = read_set(sim, "far")
    st = line_waves(vs, i_s, d_far)
    st["gamma"] = reflection(st, st["zb"])
    s21 = (np.abs(st["fv"]) ** 2 / st["zb"]) / (np.abs(la["fv"]) ** 2 / zb)
    # first-order removal of the line termination's reflection: power waves at the feed's and
    # the line's middle planes, a = (V + Z I)/(2 sqrt Z), b = (V - Z I)/(2 sqrt Z); what the
    # termination sends back reaches the feed as S12 b_line with S12 = S21 = a_line/a_feed, so
    # G_corr = G - a_line b_line / a_feed^2 (the termination's multiple reflections with the
    # launch, second order, are left in)
    a_f = (la["v"] + zb * la["i"]) / (2 * np.sqrt(zb))
    a_l = (st["v"] + st["zb"] * st["i"]) / (2 * np.sqrt(st["zb"]))
    b_l = (st["v"] - st["zb"] * st["i"]) / (2 * np.sqrt(st["zb"]))
    g_corr = reflection(la, zb) - a_l * b_l / a_f ** 2
    g_c, s_c = at_edge(g_corr)
    out["launch"] = dict(info=la_info, t_end=t_la, tail_db=tail_la, feed=la, feed_own=la_own,
                         far=st, s11_feedref_raw=g_l, s11_raw=s_l, s11_feedref=g_c, s11=s_c,
                         s11_bloch=at_edge(la["gamma_bloch"])[0], s21_pow=s21,
                         power_balance=1 - np.abs(g_l) ** 2 - s21)
    return out


# ---- output ------------------------------------------------------------------------------


OUT_SEL = FREQS >= 100e6 - 1  # 100 MHz .. 3 GHz in the TOML


def bandmed(x, lo=BAND_FIT[0], hi=BAND_FIT[1]):
    return fc.bandmed(x, lo, hi)


def write_toml(g, results, path, meshes):
    pkg = subprocess.run(["dpkg-query", "-W", "-f=${Version}", "openems"],
                         capture_output=True, text=True).stdout.strip()
    have = [m for m in meshes if "launch" in results[m]]
    info0 = results[meshes[0]]["port_check"]["info"]
    order = sorted(have, key=lambda m: MESHES[m]["d_fine"])  # finest first
    pcw = {m: worst(results[m]["port_check"]["s11_feedref"]) for m in meshes}
    F = FREQS[OUT_SEL]
    o = []
    w = o.append
    w("# Full-wave reference: S11 of the test-line fixture's port (connector launch, port 2) at")
    w("# the board edge, 50-ohm reference, looking into the pad, the taper and a uniform line")
    w("# that ends in an absorbing termination (looks infinite).")
    w("# Generated by: nice -n 10 /usr/bin/python3 tests/reference/fixture_fdtd.py tests/data/fixture_fdtd_geometry.json")
    w("# (the script's header gives the model, the feed and its probes, and what is left out).")
    w("# [[mesh]] s11_db: re 50 ohm at the board edge; s11_feedref_db: re the feed line (the")
    w("# board edge's cross-section continued beyond the edge). name = 'port_check': the same")
    w("# feed, source, probes and feed mesh with the feed line run straight through (no board);")
    w("# its s11_db is re the feed line (the method's floor), s11_50ohm_db adds the feed line's")
    w("# own mismatch to 50 ohm.")
    w("")
    w("[meta]")
    w("script = 'tests/reference/fixture_fdtd.py'")
    w(f"geometry = '{os.path.basename(g.path)}'")
    w(f"fixture = '{g.name}'")
    w(f"openems_version = '{info0['openems']} (CSXCAD {info0['csxcad']}; Debian openems {pkg})'")
    w(f"python = '{sys.version.split()[0]}'")
    w(f"numpy = '{np.__version__}'")
    w(f"date = '{datetime.date.today().isoformat()}'")
    w(f"meshes = {json.dumps(have)}")
    w("runtimes_s = { " + ", ".join(
        f"{c}_{m} = {results[m][c]['info']['run_seconds']}" for m in meshes
        for c in ("port_check", "launch") if c in results[m]) + " }")
    w("conductors = 'PEC, zero-thickness; L2 is the PEC bottom wall; vias PEC cylinders'")
    w("dielectric_loss = false")
    w(f"mask = 'smeared over the first air cell: er_eq = 1 + (er-1) t/t_cell'")
    w("symmetry = 'none (full width)'")
    w(f"absorbers = 'graded matched lossy medium, {ABS_LEN} mm, alpha_max {ABS_ALPHA:.3g} 1/s, "
      "quadratic, PEC behind (openEMS PML_8 was unstable in this model)'")
    w("termination_correction = 'G_corr = G - a_line b_line / a_feed^2 (first order); s11_db "
      "corrected, s11_raw_db not'")
    w("boundaries = 'PEC at both x ends behind the absorbers; Mur at y = +-23 mm and at the "
      "top; PEC bottom (L2)'")
    w(f"excitation = 'Gaussian, f0 = {F0:.4g} Hz, fc = {FC:.4g} Hz; {R_SRC:g}-ohm lumped source "
      f"from L2 to the pad on the feed line, {SRC_PERIODS} via pitches beyond the edge'")
    w(f"end_criterion_db = {10 * math.log10(END_CRITERION):.0f}")
    w(f"t_max_s = {T_MAX:.3g}")
    w(f"z_ref_ohm = {Z_REF}")
    w(f"model_worst_s11_db = {g.model.get('worst_s11_db', float('nan')):.3f}")
    w(f"model_worst_s11_hz = {g.model.get('worst_s11_hz', float('nan')):.4g}")
    if order:
        fin = results[order[0]]
        w(f"worst_s11_db = {worst(fin['launch']['s11'])[0]:.2f}  # finest mesh run ({order[0]}),"
          " 0.1-3 GHz")
        w(f"worst_s11_hz = {worst(fin['launch']['s11'])[1]:.4g}")
    w("port_check = '" + "; ".join(
        f"{m}: worst {pcw[m][0]:.1f} dB re the feed line ({pcw[m][1] / 1e9:.2f} GHz), "
        f"{worst(results[m]['port_check']['s11'])[0]:.1f} dB re 50 ohm; feed Zb "
        f"{bandmed(results[m]['port_check']['feed']['zb']):.2f} ohm, eps_eff "
        f"{bandmed(results[m]['port_check']['feed']['eps']):.3f}" for m in meshes) + "'")
    notes = [
        "S11 from a three-plane Bloch split of the feed's V and I (feed = the edge's cross-section "
        "continued beyond the edge), not a lumped port at the edge; re 50 ohm through the feed's "
        "Bloch impedance: Z_edge = Zb (1+G)/(1-G)",
        "the line's termination (graded lossy absorber, openEMS PML_8 was unstable here) "
        "reflects about -40..-46 dB; removed to first order with the line probes' waves "
        "(s11_db); s11_raw_db is without that correction",
        "at low frequency S11 re 50 ohm is set by the FDTD's own line impedance (line_zc_ohm "
        "in [meta.<mesh>]) against 50 ohm; the line-section model's line is "
        f"{g.model.get('z_load', float('nan')):.2f} ohm",
        "PEC zero-thickness copper, lossless FR-4 (tan d left out), solder mask smeared over "
        "the first air cell (same (er-1) t), connector not modelled",
    ] + list(results.get("_notes", []))
    w("notes = [" + ", ".join(repr(n) for n in notes) + "]")
    for mname in meshes:
        r = results[mname]
        pc = r["port_check"]
        mp = MESHES[mname]
        w("")
        w(f"[meta.{mname}]")
        for k, v in mp.items():
            w(f"{k} = {v}")
        w(f"er_mask_eq = {pc['info']['er_mask_eq']:.4f}")
        for nm in ("launch", "port_check"):
            if nm not in r:
                continue
            rr = r[nm]
            inf = rr["info"]
            w(f"{nm}_lines_xyz = {inf['lines']}")
            w(f"{nm}_cells = {inf['cells']}")
            w(f"{nm}_min_cell_mm = {arr(inf['min_cell_mm'], '{:.4f}')}")
            w(f"{nm}_run_seconds = {inf['run_seconds']}")
            w(f"{nm}_timesteps = {inf['timesteps']}")
            w(f"{nm}_dt_s = {rr['t_end'] / inf['timesteps']:.4e}")
            w(f"{nm}_simulated_s = {rr['t_end']:.4e}")
            w(f"{nm}_end_energy_db = {inf['end_energy_db']}")
            w(f"{nm}_stopped_at_t_max = {str(inf.get('stopped_at_t_max', False)).lower()}")
            w(f"{nm}_stopped_at_wall_limit = "
              f"{str(inf.get('stopped_at_wall_limit', False)).lower()}")
            w(f"{nm}_record_tail_db = {rr['tail_db']:.1f}")
        w(f"port_check_worst_db = {pcw[mname][0]:.2f}")
        w(f"port_check_worst_hz = {pcw[mname][1]:.4g}")
        w(f"port_check_worst_50ohm_db = {worst(pc['s11'])[0]:.2f}")
        w(f"port_check_far_pml_worst_db = {worst(pc['far']['gamma'])[0]:.2f}")
        w(f"feed_zb_ohm = {bandmed(pc['feed']['zb']):.3f}")
        w(f"feed_eps_eff = {bandmed(pc['feed']['eps']):.4f}")
        if "launch" in r:
            la = r["launch"]
            ws, wf = worst(la["s11"])
            w(f"worst_s11_db = {ws:.2f}")
            w(f"worst_s11_hz = {wf:.4g}")
            w(f"worst_s11_feedref_db = {worst(la['s11_feedref'])[0]:.2f}")
            w(f"worst_s11_raw_db = {worst(la['s11_raw'])[0]:.2f}")
            w(f"worst_s11_raw_hz = {worst(la['s11_raw'])[1]:.4g}")
            w(f"worst_s11_bloch_feedref_db = {worst(la['s11_bloch'])[0]:.2f}")
            w(f"feed_zb_launch_run_ohm = {bandmed(la['feed_own']['zb']):.3f}")
            w(f"line_zc_ohm = {bandmed(la['far']['zb']):.3f}")
            w(f"line_eps_eff = {bandmed(la['far']['eps']):.4f}")
            w(f"line_termination_worst_db = {worst(la['far']['gamma'])[0]:.2f}")
            w(f"power_balance_max = {float(np.max(np.abs(la['power_balance'][OUT_SEL]))):.4f}")
    w("")
    for mname in have:
        la = results[mname]["launch"]
        w("[[mesh]]")
        w(f"name = '{mname}'")
        w(f"cells = {la['info']['cells']}")
        w(f"f_hz = {arr(F, '{:.6e}')}")
        w(f"s11_db = {arr(db(la['s11'])[OUT_SEL])}")
        w(f"s11_deg = {arr(np.degrees(np.angle(la['s11']))[OUT_SEL], '{:.2f}')}")
        w(f"s11_raw_db = {arr(db(la['s11_raw'])[OUT_SEL])}")
        w(f"s11_feedref_db = {arr(db(la['s11_feedref'])[OUT_SEL])}")
        w(f"s11_bloch_feedref_db = {arr(db(la['s11_bloch'])[OUT_SEL])}")
        w(f"s21_db = {arr(10 * np.log10(la['s21_pow'])[OUT_SEL], '{:.4f}')}")
        w(f"line_termination_db = {arr(db(la['far']['gamma'])[OUT_SEL])}")
        w("")
    pcs = sorted(meshes, key=lambda m: MESHES[m]["d_fine"])
    for k, mname in enumerate(pcs):
        pc = results[mname]["port_check"]
        w("[[mesh]]")
        w("name = 'port_check'" if k == 0 else f"name = 'port_check_{mname}'")
        w(f"grid = '{mname}'")
        w(f"cells = {pc['info']['cells']}")
        w(f"f_hz = {arr(F, '{:.6e}')}")
        w(f"s11_db = {arr(db(pc['s11_feedref'])[OUT_SEL])}")
        w(f"s11_50ohm_db = {arr(db(pc['s11'])[OUT_SEL])}")
        w(f"s11_bloch_db = {arr(db(pc['s11_bloch'])[OUT_SEL])}")
        w(f"far_pml_db = {arr(db(pc['far']['gamma'])[OUT_SEL])}")
        w("")
    text = "\n".join(o)
    import tomllib
    tomllib.loads(text)  # refuse to write a file that does not parse
    with open(path, "w") as f:
        f.write(text)
    return text


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("json")
    ap.add_argument("--meshes", default="coarse,fine")
    ap.add_argument("--work", default=os.environ.get("FDTD_WORK", "/tmp/fixture-fdtd"))
    ap.add_argument("--toml", default=DEFAULT_TOML)
    ap.add_argument("--reuse", action="store_true")
    ap.add_argument("--only", default=None)
    ap.add_argument("--no-toml", action="store_true")
    ap.add_argument("--setup", action="store_true")
    ap.add_argument("--note", action="append", default=[], help="a note for [meta] notes")
    ap.add_argument("--abs-len", type=float, default=None,
                    help="absorber length, mm (a check of the termination; default ABS_LEN)")
    a = ap.parse_args()
    if a.abs_len is not None:
        global ABS_LEN, FEED_PERIODS
        FEED_PERIODS += int(math.ceil((a.abs_len - ABS_LEN) / PITCH))
        ABS_LEN = a.abs_len
    g = Fixture(a.json)
    os.makedirs(a.work, exist_ok=True)
    meshes = a.meshes.split(",")
    if a.setup:
        for m in meshes:
            for c in ("port_check", "launch"):
                _, _, info = build(g, m, c)
                print(json.dumps({k: info[k] for k in ("case", "mesh", "lines", "cells",
                                                       "min_cell_mm", "n_ground_vias",
                                                       "src_x", "probes")}))
        return
    for mname in meshes:
        for case in ("port_check", "launch"):
            if a.only and case != a.only:
                continue
            done = os.path.exists(os.path.join(a.work, f"{case}-{mname}.info.json"))
            if not (a.reuse and done):
                run(g, mname, case, a.work)
    if a.no_toml:
        return
    results = {}
    for mname in meshes:
        results[mname] = post(g, mname, a.work)
        pc = results[mname]["port_check"]
        print(f"{mname}: port check {worst(pc['s11_feedref'])} (50 ohm: {worst(pc['s11'])}) ;"
              f" feed Zb {bandmed(pc['feed']['zb']):.2f} eps {bandmed(pc['feed']['eps']):.3f}")
        if "launch" in results[mname]:
            la = results[mname]["launch"]
            print(f"{mname}: worst S11 {worst(la['s11'])} ; feed-ref {worst(la['s11_feedref'])}"
                  f" ; line {bandmed(la['far']['zb']):.2f} eps {bandmed(la['far']['eps']):.3f}")
    results["_notes"] = a.note
    meshes = [m for m in meshes if m in results]
    write_toml(g, results, a.toml, meshes)
    print("wrote", a.toml)


if __name__ == "__main__":
    main()
