# Full-wave (FDTD, openEMS) reference for the probe's connector launch: S11 at the board's
# connector edge (50-ohm reference) of the centre pad, the top-layer link, the signal via with
# its stub and the start of the stripline, from the geometry JSON that
# `cargo run --release --example launch_geometry` writes (demo: FM-R10, 4-layer 1.6 mm board,
# loop on L3). CI never runs this; its results are recorded in tests/data/launch_fdtd.toml.
#
# Run (Debian's openEMS packages: apt-get install -y openems python3-openems; Debian's
# /usr/bin/python3, the pyenv python does not see them), from the repository root:
#     nice -n 19 /usr/bin/python3 tests/reference/launch_fdtd.py tests/data/launch_fdtd_geometry.json
# (that JSON is `cargo run --release --example launch_geometry`'s output; tests/launch_fdtd.rs
# fails when it no longer matches the built probe: write it again and run this again).
# Shared helpers: tests/reference/fdtd_common.py.
# That runs, for each mesh (coarse, fine), the port check and the launch (four runs; the
# recorded wall times are in the TOML, roughly 4 + 4 + 15 + 15 minutes on two busy cores),
# then writes tests/data/launch_fdtd.toml. Needs numpy, scipy (and matplotlib for --layers).
# Options: --meshes coarse,fine  --work DIR (default /tmp/launch-fdtd)  --toml PATH
#          --reuse (keep finished runs found in DIR: only post-process them)
#          --sheets (plain zero-thickness sheets, no edge shift; runs in DIR/sheets, and the
#          next TOML written includes those runs as '<mesh>_sheets' entries)
#          --calibrate-edges (recompute the thickness-equivalent edge shifts, 2D, ~5 min)
#          --layers (also write PNG maps of the copper on each layer, as openEMS resolves it)
#          --check (set up only: check from openEMS's PEC dump that the signal conductor is
#          one piece, not joined to the ground; the runs do this check first as well)
# Written against openEMS v0.0.35 with CSXCAD v0.6.2 (Debian packages
# 0.0.35+git20190103.6a75e98+dfsg.1-3.2), python 3.11, numpy 1.24.
#
# The model (board frame of the JSON shifted so that the connector edge is y = 0; x across
# the handle, +y towards the loop; z up with L4 at z = 0; mm):
#  - Copper is PEC and zero-thickness: each copper layer is a sheet at its dielectric
#    interface (L4 z = 0, L3 = 0.21, L2 = 1.275, L1 = 1.485 for the demo stack). As plain
#    sheets the stripline and the pad's line come out 3-4 ohm high (2D check: 53.7 and 52.5
#    ohm against 49.9 and 49.1 with the real copper), enough alone for about -29 dB; so the
#    straight line edges are moved by a thickness-equivalent shift (EDGE_SHIFT, from
#    line_zc_2d) that gives the sheets the copper's impedance. Dielectrics are lossless
#    (tan d left out) with the stack's er per layer; no solder mask.
#  - L1: ground pour |x| <= w/2 - copper_to_edge, cleared around the centre pad (pad_gap
#    either side, and one link gap past the pad's inner end, as the artwork does: ending the
#    clearance at the pad's end would join the pad's corners to the pour), the link (coplanar
#    gap) and the signal via (antipad_d); pad, link and the via's own pad in copper.
#    L2: ground with the relief under the pad (pad_gap either side; it runs on to the via's
#    centre, into the barrel antipad, when that comes within 0.25 mm of the pad's end) and
#    the barrel antipad. L3: ground with the trace's coplanar gap and the via antipad; the
#    trace starts at the via (with the via's pad) and runs STRAIGHT along +y (the real trace
#    jogs about 1 mm past the via; not modelled). L4: ground with the stub antipad and an
#    isolated land on the via.
#  - Vias are PEC cylinders (staircased by the mesh): the signal via L4..L1 (joined to
#    copper only on L1, L3 and its L4 land), and every listed ground via up to about 1 mm
#    past the signal via, L4..L1. The listed rows that follow the jogged trace are replaced
#    by two straight fence rows at x = +-trace.fence_offset from via_y + pitch on, with the
#    listed rows' pitch (<= 1.2 mm), to the end of the model.
#  - The connector is not modelled. The excitation is not a lumped port at the edge: the
#    pad's cross-section (pad, its clearance, the L2 relief, L3/L4 ground and the two via
#    rows either side of the pad, same pitch) is continued 15 via pitches (17.7 mm) beyond
#    the edge as a feed line, the board and its dielectric with it; a 50-ohm source (openEMS
#    lumped port, L3 to pad) 12 pitches before the edge launches the wave, and the line runs
#    on behind it into the PML (the resistor also drains the pulse's DC part). The y mesh is
#    uniform, p/n_per, along the feed, so the line and its mesh repeat every pitch p.
#    Probes on three planes 4, 3 and 2 pitches before the edge (voltage pad-to-L3 at x = 0;
#    current round the pad, mean of the two dual planes either side) give V and I there.
#    The feed's Bloch impedance Zb = F_V/F_I and phase per pitch theta come from the
#    three-plane split x_k = F e^{-j theta k} + R e^{j theta k} of the port check's signals
#    (x[-1] + x[+1] = 2 cos(theta) x[0] for any mix of waves; eps_eff and Zb then fitted as
#    a + b f^2, eps_eff over 1..3 GHz, Zb over 0.5..3 GHz). The reflection at the middle plane is
#    G = (V - Zb I)/(V + Zb I); the source's own mismatch plays no part. The middle plane
#    is whole pitches from the edge (equivalent to it), so G moves to the edge by the phase
#    e^{2 j 3 theta} (lossless line), and is referred to 50 ohm through the feed's Zb:
#    Z_edge = Zb (1+G)/(1-G), S11 = (Z_edge-50)/(Z_edge+50). The split of the voltages
#    alone (R/F, impedance-free) is recorded as a cross-check (s11_bloch_feedref_db).
#  - The stripline runs 16 pitches past the via, its last 8 cells PML (line and dielectric
#    continue through it). A second probe set 6..8 pitches past the via (the fence rows'
#    planes) gives the stripline's Zb and eps_eff, the wave carried on (|S21|, power balance)
#    and the reflection of its PML end.
#  - Port check: the same mesh, source and probes, with the pad's cross-section continued
#    straight through the whole model (no pad end, link, via or stripline) into the PML at
#    both ends. Its reflection (re the feed's Zb) is the floor of the method: probe and
#    extraction error, the source's evanescent fields and the far PML's reflection. Its
#    reflection re 50 ohm adds the feed line's own mismatch to 50 ohm, which the launch's S11
#    (re 50 ohm) also contains.
#  - Boundaries: PML (8 cells) at both y ends, first-order Mur on the four other faces (air
#    2 mm beside the board, 4 mm above, 1.2 mm below).
#  - Excitation: Gaussian pulse f0 = 2.0 GHz, fc = 1.2 GHz (small DC part, see F0); end
#    criterion: field energy 50 dB below its peak (a run not there by 10 ns simulated is
#    stopped and says so).
#  - Mesh: the edges of the trace, its coplanar gap, the pad and its gap follow the thirds
#    rule in x (common FDTD practice for zero-thickness metal, no source); the other copper
#    outlines and the round vias/antipads are staircased on the mesh.
# Left out: the connector and its ground legs, solder mask, copper thickness and roughness,
# dielectric loss, the trace's jog, ground vias beyond the listed ones (except the two straight
# fence rows), the rest of the probe beyond the modelled stripline.
import argparse
import datetime
import json
import math
import os
import re
import struct
import subprocess
import sys
import multiprocessing
import time

import numpy

numpy.float = float  # Debian's openEMS 0.0.35 python module still uses the removed aliases
numpy.int = int
import numpy as np  # noqa: E402
from CSXCAD import ContinuousStructure  # noqa: E402
from openEMS import openEMS  # noqa: E402

import fdtd_common as fc  # noqa: E402
from fdtd_common import C0, FREQS, arr, band, bloch_theta, db, dft, read_set, rect, reflection, split, worst, mesh_lines  # noqa: E402

Z_REF = 50.0
HERE = os.path.dirname(os.path.abspath(__file__))
DEFAULT_TOML = os.path.join(HERE, "..", "data", "launch_fdtd.toml")

# FREQS (fdtd_common): 50 MHz .. 3 GHz, 50 MHz steps
# Gaussian pulse (openEMS: f0 +- fc at -20 dB). Its DC part must be small: what of it is left
# after the pulse stays in the model as static fields (the PEC loops and the PMLs hold it) and
# the field energy stalls instead of decaying (launch, coarse mesh: at -32 dB with f0 = 1.75,
# fc = 1.35 GHz, DC at -33 dB; at -51 dB and falling with these values, DC at -54 dB).
# Spectrum relative to its peak: 50..100 MHz about -50 dB, 3 GHz -14 dB.
F0, FC = 2.0e9, 1.2e9
T_MAX = 10e-9  # the run is stopped (ABORT file) if the end criterion is not met by then
BAND_FIT = (0.5e9, 3.0e9)  # where the lines' Bloch impedances are fitted
BAND_EPS = (1.0e9, 3.0e9)  # where eps_eff is fitted (theta per pitch well conditioned)

# Lengths along y in via pitches p (the rows beside the pad and the fence rows share it): the
# y mesh is uniform with p/n_per cells over the feed and the far stripline, so that every
# probe plane below is equivalent (same place in a via period, same mesh) to the others of
# its set and the feed's middle plane is equivalent to the edge.
FEED_PERIODS = 15  # feed line beyond the edge (incl. its PML)
# source plane, before the edge: 8 pitches (9.4 mm) from the nearest probe plane, where the
# source's evanescent fields are below -90 dB (at 3 pitches they were about -36 dB: the
# parallel-plate guide between the pad's via rows, 2.7 mm wide, decays by ~pi/2.7 per mm)
SRC_PERIODS = 12
MEAS_PERIODS = (4, 3, 2)  # feed's probe planes, before the edge (middle one: 3 p)
LINE_PERIODS = 16  # stripline past the signal via (incl. its PML)
FAR_PERIODS = (6, 7, 8)  # far probe planes, past the signal via
R_SRC = 50.0  # source resistance
AIR_SIDE, AIR_TOP, AIR_BOT = 2.0, 4.0, 1.2

MESHES = {
    # d_fine: x/y cell round the pad end, link, via and trace (|x| < 0.95, y from 0.6 mm
    # before the pad's end to 1.4 mm past the via); d_mid: x cell over the rest of the board;
    # n_per: y cells per via pitch along the feed and the far stripline; n_pre/n_core: cells
    # across each prepreg and the core; d_air: largest cell (air).
    "coarse": dict(d_fine=0.05, d_mid=0.15, n_per=5, n_pre=3, n_core=6, d_air=0.6),
    "fine": dict(d_fine=0.033, d_mid=0.1, n_per=7, n_pre=4, n_core=9, d_air=0.5),
}
END_CRITERION = 1e-5  # -50 dB

# Thickness-equivalent edge shift (mm) for the zero-thickness copper: every edge of the signal
# copper (trace; pad, link) moves out, every ground edge beside it (coplanar gaps, the L2
# relief) moves in, by this much, so that the sheet line has the impedance of the real copper
# (L3 17.5 um; L1 35 um with L2 17.5 um). Found with `line_zc_2d` below (2D electrostatics,
# finite differences, h = 2.5 um; via rows as walls, a lid 1.5 mm over the top layer):
#   stripline: copper 49.92 ohm, sheets 53.70, sheets shifted 12.5/15 um 50.25/49.58 -> 13.7 um
#   pad line:  copper 49.09 ohm, sheets 52.52, sheets shifted 20 um 48.79           -> 18.4 um
# Recompute with --calibrate-edges; --sheets runs the plain sheet model (no shift).
EDGE_SHIFT = {"L1": 0.0184, "L3": 0.0137}
LINE_ZC_2D = {"pad": 49.09, "strip": 49.92}  # the same 2D solutions with the copper (ohm)


# ---- geometry from the JSON -----------------------------------------------------------------
class Launch:
    def __init__(self, path):
        j = json.load(open(path))
        self.j = j
        self.path = path
        ey = j["edge_y"]
        self.probe = j.get("probe", "?")
        cop = [l for l in j["layers"] if l["type"] == "copper"]
        # copper sheet heights: bottom layer at z = 0, dielectric thicknesses summed upwards
        z, zc, diel = 0.0, [], []
        for l in reversed(j["layers"]):
            if l["type"] == "copper":
                zc.append(z)
            else:
                diel.append((z, z + l["t"], l["er"]))
                z += l["t"]
        # rounded: a sheet must lie exactly on its mesh line (1.4849999... would be lost)
        self.z_cu = [round(v, 9) for v in reversed(zc)]  # z of L1, L2, ... (top first)
        self.diel = [(round(a, 9), round(b, 9), er) for a, b, er in diel]  # bottom first
        self.n_cu = len(cop)
        assert self.n_cu == 4, "this model is written for a 4-layer board"
        self.sig = j["signal_layer"]
        assert self.sig == 3, "this model is written for the loop on L3"
        self.zL1, self.zL2, self.zL3, self.zL4 = self.z_cu
        self.hw = j["handle_width"] / 2
        self.cu_hw = self.hw - j["copper_to_edge"]
        p = j["centre_pad"]
        self.pad_hw = p["w"] / 2
        self.pad_x = p["x"]
        assert abs(p["x"]) < 1e-9, "pad assumed centred"
        self.pad_end = p["y"] + p["h"] / 2 - ey
        assert abs(p["y"] - p["h"] / 2 - ey) < 1e-6, "pad assumed to run to the edge"
        self.pad_clr = self.pad_hw + j["pad_gap"]
        # the L1 clearance round the pad also runs one clearance (the link's coplanar gap, the
        # artwork's clearance c) past the pad's inner end: the link's channel is narrower
        # than the pad, so a clearance ending at the pad's end would join the pad's corners
        # to the pour
        self.pad_clr_end = self.pad_end + j["link"]["gap"]
        lk = j["link"]
        self.link_hw = lk["width"] / 2
        self.link_clr = self.link_hw + lk["gap"]
        self.link_y0 = lk["from_y"] - ey
        self.link_y1 = lk["to_y"] - ey
        sv = j["signal_via"]
        self.via_x, self.via_y = sv["x"], sv["y"] - ey
        assert abs(self.via_x) < 1e-9
        self.via_r = sv["drill"] / 2
        self.via_pad_r = sv["pad"] / 2
        self.antipad_r = sv["antipad_d"] / 2  # L1 and L3
        self.barrel_antipad_r = sv.get("barrel_antipad_d", 1.753) / 2  # L2
        self.stub_antipad_r = sv.get("stub_antipad_d", 1.725) / 2  # L4
        # L2 relief: runs on to the via's centre (into the barrel antipad) where the antipad
        # comes within ~0.25 mm of the pad's end, else it stops at the pad's end
        web = self.via_y - self.barrel_antipad_r - self.pad_end
        self.relief_end = self.via_y if web < 0.25 else self.pad_end
        assert j.get("relief_layers", [2]) == [2], "relief modelled on L2 only"
        t = j["trace"]
        self.tr_hw = t["width"] / 2
        self.tr_clr = self.tr_hw + t["gap"]
        self.fence_x = t["fence_offset"]
        self.gvia_r = j["ground_via"]["drill"] / 2
        vias = [(x, y - ey) for x, y in j["ground_vias"]]
        # keep the listed vias up to ~1 mm past the signal via (the real trace jogs after that
        # and the rows beyond follow the jog); continue two straight fence rows instead
        self.kept_vias = [v for v in vias if v[1] <= self.via_y + 1.0]
        self.dropped_vias = [v for v in vias if v[1] > self.via_y + 1.0]
        self.pitch = self._row_pitch(vias)
        # the rows beside the pad (listed vias before the pad's end), continued into the feed
        self.pad_rows = self._rows([v for v in vias if v[1] < self.pad_end])
        self.model = j.get("model", {})
        self.edge_shift = {"L1": 0.0, "L3": 0.0}

    def shift_edges(self, sh):
        """Thickness-equivalent edges (see EDGE_SHIFT): the straight line edges only (not the
        round via pads and antipads, nor the ends of the pad and link)."""
        d1, d3 = sh["L1"], sh["L3"]
        self.tr_hw += d3
        self.tr_clr -= d3
        self.pad_hw += d1
        self.pad_clr -= d1
        self.link_hw += d1
        self.link_clr -= d1
        self.edge_shift = dict(sh)

    @staticmethod
    def _row_pitch(vias):
        best = None
        for i, a in enumerate(vias):
            for b in vias[i + 1:]:
                if abs(a[0] - b[0]) < 1e-3 and abs(a[1] - b[1]) > 0.3:
                    d = abs(a[1] - b[1])
                    best = d if best is None else min(best, d)
        return min(best or 1.2, 1.2)

    @staticmethod
    def _rows(vias):
        """x -> sorted y's of the vias sharing that x (rows of two or more)."""
        rows = {}
        for x, y in vias:
            k = round(x, 3)
            rows.setdefault(k, []).append(y)
        return {k: sorted(v) for k, v in rows.items() if len(v) >= 2}

    def fence_vias(self, y_hi):
        """The straight fence rows along the trace, from via_y + pitch to y_hi."""
        out, y = [], self.via_y + self.pitch
        while y < y_hi:
            out += [(self.fence_x, y), (-self.fence_x, y)]
            y += self.pitch
        return out

    def pad_row_vias(self, y_lo, y_hi, listed_too):
        """The rows beside the pad continued with their own pitch over [y_lo, y_hi]; the
        listed vias themselves only if listed_too."""
        out = []
        for x, ys in self.pad_rows.items():
            p = min(np.diff(ys))
            y0 = ys[0]
            k = math.floor((y_lo - y0) / p)
            while y0 + k * p <= y_hi:
                y = y0 + k * p
                listed = any(abs(y - yy) < 1e-6 for yy in ys)
                if y >= y_lo and (listed_too or not listed):
                    out.append((x, y))
                k += 1
        return out


# ---- mesh --------------------------------------------------------------------------------


def make_mesh(g, m):
    sym = lambda vals: sorted(set([v for x in vals for v in (x, -x)]))  # noqa: E731
    x_out = g.hw + AIR_SIDE
    d = m["d_fine"]
    # thirds rule (common FDTD practice for zero-thickness metal edges): the line inside the
    # metal d/3 from the edge, the one outside 2d/3 from it, for the edges that set the
    # impedance of the stripline and of the pad's line (trace and its gap; pad and its gap)
    thirds = []
    for e, metal_inside in ((g.tr_hw, True), (g.tr_clr, False), (g.pad_hw, True),
                            (g.pad_clr, False)):
        s_ = 1.0 if metal_inside else -1.0
        thirds += [e - s_ * d / 3, e + s_ * 2 * d / 3]
    xfix = sym([0.0, g.hw, g.cu_hw] + thirds)
    xsec = sym([g.link_hw, g.link_clr, g.fence_x] +
               [abs(x) for x, _ in g.kept_vias] + list(g.pad_rows.keys()))
    X = mesh_lines(-x_out, x_out, xfix,
                   [(-0.95, 0.95, m["d_fine"]), (-g.hw, g.hw, m["d_mid"])], m["d_air"],
                   secondary=xsec)
    p, n = g.pitch, m["n_per"]
    h = p / n
    feed = [(-FEED_PERIODS * n + i) * h for i in range(n * (FEED_PERIODS + 1) + 1)]  # .. +p
    y_s = g.via_y + 2 * p
    far = [y_s + i * h for i in range(n * (LINE_PERIODS - 2) + 1)]
    mid = mesh_lines(p, y_s, [g.pad_end, g.via_y],
                     [(g.pad_end - 0.6, g.via_y + 1.4, m["d_fine"])], h)
    Y = np.array(feed[:-1] + list(mid[:-1]) + far)
    zb = []
    for z0, z1, _er in g.diel:
        n = m["n_core"] if (z1 - z0) > 0.5 else m["n_pre"]
        zb.extend(np.linspace(z0, z1, n + 1))
    zb = sorted(set(np.round(zb, 9)))
    dz0 = min(np.diff(zb))
    below = mesh_lines(-AIR_BOT, 0.0, [], [(0.0, 0.0, dz0)], m["d_air"])
    above = mesh_lines(zb[-1], zb[-1] + AIR_TOP, [], [(zb[-1], zb[-1], dz0)], m["d_air"])
    Z = np.array(sorted(set(np.round(list(below) + zb + list(above), 9))))
    return X, Y, Z


# ---- model -------------------------------------------------------------------------------
def circle(xc, yc, r, n=72):
    return fc.circle(xc, yc, r, n)


def build(g, mesh_name, case):
    """case: 'launch' or 'port_check'."""
    m = MESHES[mesh_name]
    fdtd = openEMS(EndCriteria=END_CRITERION, NrTS=400000)
    fdtd.SetGaussExcite(F0, FC)
    fdtd.SetBoundaryCond(["MUR", "MUR", "PML_8", "PML_8", "MUR", "MUR"])
    csx = ContinuousStructure()
    fdtd.SetCSX(csx)
    grid = csx.GetGrid()
    grid.SetDeltaUnit(1e-3)
    X, Y, Z = make_mesh(g, m)
    grid.SetLines("x", X)
    grid.SetLines("y", Y)
    grid.SetLines("z", Z)
    y_lo, y_hi = Y[0], Y[-1]
    launch = case == "launch"

    # dielectrics (whole length, board width)
    for n, (z0, z1, er) in enumerate(g.diel):
        csx.AddMaterial(f"diel{n}", epsilon=er).AddBox([-g.hw, y_lo, z0], [g.hw, y_hi, z1],
                                                       priority=1)
    gnd = csx.AddMetal("ground")
    sig = csx.AddMetal("signal")
    gvia = csx.AddMetal("ground_vias")  # PEC as the ground; its own name for the layer maps
    er_at = {}  # clearance "material" per copper plane: mean er of the two sides
    for zc in g.z_cu:
        side = [er for z0, z1, er in g.diel if abs(z0 - zc) < 1e-9 or abs(z1 - zc) < 1e-9]
        er_at[zc] = sum(side + [1.0] * (2 - len(side))) / 2
    clear = {zc: csx.AddMaterial(f"clear_{i + 1}", epsilon=er_at[zc])
             for i, zc in enumerate(g.z_cu)}

    def sheet(prop, poly, z, prio):
        prop.AddPolygon(poly, "z", z, priority=prio)

    cu = g.cu_hw
    for zc in g.z_cu:  # every layer: a ground sheet over the board
        sheet(gnd, rect(-cu, cu, y_lo, y_hi), zc, 10)
    yp = g.pad_end if launch else y_hi
    # L1: pad clearance, pad
    sheet(clear[g.zL1], rect(-g.pad_clr, g.pad_clr, y_lo, g.pad_clr_end if launch else y_hi),
          g.zL1, 20)
    sheet(sig, rect(-g.pad_hw, g.pad_hw, y_lo, yp), g.zL1, 30)
    # L2: relief under the pad
    sheet(clear[g.zL2], rect(-g.pad_clr, g.pad_clr, y_lo, g.relief_end if launch else y_hi),
          g.zL2, 20)
    vias = []
    if launch:
        vy = g.via_y
        # L1: link with its coplanar gap, via antipad, via pad
        sheet(clear[g.zL1], rect(-g.link_clr, g.link_clr, g.link_y0, g.link_y1), g.zL1, 20)
        sheet(clear[g.zL1], circle(0.0, vy, g.antipad_r), g.zL1, 20)
        sheet(sig, rect(-g.link_hw, g.link_hw, g.link_y0, g.link_y1), g.zL1, 30)
        sheet(sig, circle(0.0, vy, g.via_pad_r), g.zL1, 30)
        # L2: barrel antipad
        sheet(clear[g.zL2], circle(0.0, vy, g.barrel_antipad_r), g.zL2, 20)
        # L3: trace with its coplanar gap, via antipad, via pad
        sheet(clear[g.zL3], rect(-g.tr_clr, g.tr_clr, vy, y_hi), g.zL3, 20)
        sheet(clear[g.zL3], circle(0.0, vy, g.antipad_r), g.zL3, 20)
        sheet(sig, rect(-g.tr_hw, g.tr_hw, vy, y_hi), g.zL3, 30)
        sheet(sig, circle(0.0, vy, g.via_pad_r), g.zL3, 30)
        # L4: stub antipad and the via's land
        sheet(clear[g.zL4], circle(0.0, vy, g.stub_antipad_r), g.zL4, 20)
        sheet(sig, circle(0.0, vy, g.via_pad_r), g.zL4, 30)
        sig.AddCylinder([0.0, vy, g.zL4], [0.0, vy, g.zL1], g.via_r, priority=30)
        vias = list(g.kept_vias) + g.pad_row_vias(y_lo, g.pad_end, listed_too=False) + \
            g.fence_vias(y_hi)
    else:
        vias = g.pad_row_vias(y_lo, y_hi, listed_too=True)
    for x, y in vias:
        if y_lo <= y <= y_hi:
            gvia.AddCylinder([x, y, g.zL4], [x, y, g.zL1], g.gvia_r, priority=30)

    # excitation: a 50-ohm source (openEMS lumped port: soft E-field source plus resistor)
    # from L3 up to the pad, one mesh plane thick, across the feed line. The resistor also
    # drains the Gaussian's DC part (otherwise a static charge stays on the floating signal
    # conductor and the field energy never decays); a pure soft source would be transparent
    # to the returning wave, this one reflects part of it, which the probes see as incident
    # wave again (the source's mismatch plays no part in S11).
    p = g.pitch
    ks = int(np.argmin(np.abs(Y + SRC_PERIODS * p)))
    fdtd.AddLumpedPort(1, R_SRC, [-g.pad_hw, Y[ks], g.zL3], [g.pad_hw, Y[ks], g.zL1], "z",
                       excite=1.0, priority=40)

    # probe sets: feed (pad over L3) and far line (stripline over L4, or the pad line), each
    # three planes one via pitch apart: a voltage probe on the plane (signal to ground, at
    # x = 0) and current probes round the signal conductor half a cell either side of it
    sets = {}

    def probe_set(name, planes, v_lo, v_hi, i_hw, i_z):
        ys = []
        for n, yc in enumerate(planes):
            k = int(np.argmin(np.abs(Y - yc)))
            assert abs(Y[k] - yc) < 1e-6, "probe plane off the mesh"
            y = float(Y[k])
            ys.append(y)
            csx.AddProbe(f"{name}_v{n}", p_type=0, weight=-1).AddBox([0.0, y, v_lo],
                                                                     [0.0, y, v_hi])
            for side, yi in (("a", 0.5 * (Y[k - 1] + y)), ("b", 0.5 * (y + Y[k + 1]))):
                csx.AddProbe(f"{name}_i{n}{side}", p_type=1, weight=1, norm_dir=1).AddBox(
                    [-i_hw, yi, i_z], [i_hw, yi, i_z])
        sets[name] = dict(y=ys, pitch=p)

    probe_set("feed", [-k * p for k in MEAS_PERIODS], g.zL3, g.zL1, g.pad_hw, g.zL1)
    far = [g.via_y + k * p for k in FAR_PERIODS]
    if launch:
        probe_set("far", far, g.zL4, g.zL3, g.tr_hw, g.zL3)
    else:
        probe_set("far", far, g.zL3, g.zL1, g.pad_hw, g.zL1)

    ncell = (len(X) - 1) * (len(Y) - 1) * (len(Z) - 1)
    info = dict(case=case, mesh=mesh_name, mesh_params=m, lines=[len(X), len(Y), len(Z)],
                cells=ncell, src_y=float(Y[ks]), probes=sets,
                min_cell_mm=[float(np.diff(A).min()) for A in (X, Y, Z)],
                max_cell_mm=[float(np.diff(A).max()) for A in (X, Y, Z)],
                domain_mm=[[float(A[0]), float(A[-1])] for A in (X, Y, Z)],
                n_ground_vias=len(vias))
    return fdtd, csx, info


# ---- run ---------------------------------------------------------------------------------
def log_dt(text):
    """The engine's timestep from its log, by way of its 'Nyquist rate: N timesteps @ f Hz'
    line (dt = 1/(2 f N), to 1/N): the 'timestep is' line is sometimes printed as 0.00 (the
    stream's format left fixed by an earlier setup in the same process)."""
    m = re.findall(r"Nyquist rate: (\d+) timesteps @([\d.e+]+) Hz", text)
    return 1.0 / (2.0 * float(m[0][1]) * int(m[0][0])) if m else None


def run(g, mesh_name, case, work):
    sim = os.path.join(work, f"{case}-{mesh_name}")
    fdtd, csx, info = build(g, mesh_name, case)
    print(json.dumps({k: info[k] for k in ("case", "mesh", "lines", "cells", "min_cell_mm")}),
          flush=True)
    os.makedirs(sim, exist_ok=True)
    csx.Write2XML(os.path.join(sim, "geometry.xml"))
    log = os.path.join(work, f"{case}-{mesh_name}.log")
    t0 = time.time()
    sys.stdout.flush()
    saved = os.dup(1)
    marker = os.path.join(work, f"{case}-{mesh_name}.t_max")
    if os.path.exists(marker):
        os.remove(marker)

    def watchdog():  # the engine stops when it finds a file ABORT in its run folder
        while True:
            time.sleep(3.0)
            try:
                text = open(log, errors="replace").read()
            except OSError:
                continue
            ts = re.findall(r"Timestep:\s+(\d+)", text)
            dt = log_dt(text)
            if ts and dt and int(ts[-1]) * dt > T_MAX:
                open(os.path.join(sim, "ABORT"), "w").close()
                open(marker, "w").close()
                return

    with open(log, "w") as lf:  # the engine prints on fd 1: keep it in a log
        os.dup2(lf.fileno(), 1)
        # a process, not a thread: the engine does not release the GIL while it runs
        wd = multiprocessing.get_context("fork").Process(target=watchdog, daemon=True)
        wd.start()
        try:
            fdtd.Run(sim, cleanup=True, numThreads=2)
        finally:
            wd.terminate()
            wd.join()
            sys.stdout.flush()
            os.dup2(saved, 1)
            os.close(saved)
    info["stopped_at_t_max"] = os.path.exists(marker)
    info["run_seconds"] = round(time.time() - t0, 1)
    text = open(log, errors="replace").read()
    its = re.findall(r"Time for (\d+) iterations with ([\d.]+) cells", text)
    en = re.findall(r"Energy: ~[\d.e+-]+ \(\s*-\s*([\d.]+)dB\)", text)
    info["timesteps"] = int(its[-1][0]) if its else None
    info["dt_s"] = log_dt(text)
    info["end_energy_db"] = -float(en[-1]) if en else None
    ver = re.findall(r"openEMS \d+bit -- version (\S+)", text)
    cver = re.findall(r"CSXCAD -- Version: (\S+)", text)
    info["openems"] = ver[0] if ver else "?"
    info["csxcad"] = cver[0] if cver else "?"
    with open(os.path.join(work, f"{case}-{mesh_name}.info.json"), "w") as f:
        json.dump(info, f, indent=1)
    print(json.dumps({k: info[k] for k in ("case", "mesh", "run_seconds", "timesteps",
                                           "end_energy_db")}), flush=True)
    return info


def smooth(y, band_=BAND_FIT):
    return fc.smooth(y, band_)


def line_waves(v, i, p_m, theta=None):
    return fc.line_waves(v, i, p_m, BAND_EPS, BAND_FIT, theta)


def post(g, mesh_name, work):
    """S11 of the launch and of the port check on one mesh."""
    out = {}
    pc_info = json.load(open(os.path.join(work, f"port_check-{mesh_name}.info.json")))
    la_info = json.load(open(os.path.join(work, f"launch-{mesh_name}.info.json")))
    p_m = pc_info["probes"]["feed"]["pitch"] * 1e-3
    n_edge = MEAS_PERIODS[1]  # the middle plane is this many pitches before the edge

    sim = os.path.join(work, f"port_check-{mesh_name}")
    v, i, t_pc, tail_pc = read_set(sim, "feed")
    pc = line_waves(v, i, p_m)
    theta, zb = pc["theta"], pc["zb"]  # the feed's, used for the launch too (same feed, mesh)

    def at_edge(gam_mid):
        gam = gam_mid * np.exp(2j * theta * n_edge)
        zin = zb * (1 + gam) / (1 - gam)
        return gam, (zin - Z_REF) / (zin + Z_REF)

    g_pc, s_pc = at_edge(reflection(pc, zb))
    vf, i_f, _, _ = read_set(sim, "far")
    pcf = line_waves(vf, i_f, p_m)
    pcf["gamma"] = reflection(pcf, pcf["zb"])
    out["port_check"] = dict(
        info=pc_info, t_end=t_pc, tail_db=tail_pc, feed=pc, far=pcf,
        s11_feedref=g_pc, s11=s_pc, s11_bloch=at_edge(pc["gamma_bloch"])[0])

    sim = os.path.join(work, f"launch-{mesh_name}")
    v, i, t_la, tail_la = read_set(sim, "feed")
    la = line_waves(v, i, p_m, theta=theta)
    la_own = line_waves(v, i, p_m)  # its own eps_eff and Zb: should agree with the port check
    g_l, s_l = at_edge(reflection(la, zb))
    vs, i_s, _, _ = read_set(sim, "far")
    st = line_waves(vs, i_s, p_m)
    st["gamma"] = reflection(st, st["zb"])
    a_s = 0.5 * (st["v"] + st["zb"] * st["i"])  # forward waves from V and I (well conditioned)
    a_f = 0.5 * (la["v"] + zb * la["i"])
    s21 = (np.abs(a_s) ** 2 / st["zb"]) / (np.abs(a_f) ** 2 / zb)
    out["launch"] = dict(
        info=la_info, t_end=t_la, tail_db=tail_la, feed=la, feed_own=la_own, far=st,
        s11_feedref=g_l, s11=s_l, s11_bloch=at_edge(la["gamma_bloch"])[0], s21_pow=s21,
        power_balance=1 - np.abs(g_l) ** 2 - s21)
    return out


def model_cascade(g, zpad=None, zload=None, zref=Z_REF, eps_pad=None):
    """The JSON's own line model of the launch (model.sections: pad, link, via barrel as lines,
    the via stub as an open shunt stub at the signal layer, loaded by z_line), S11 re zref;
    zpad/zload replace the pad's and the load's impedance (with the FDTD's own line
    impedances it shows what the model gives for the lines this mesh really has)."""
    secs = [(d["kind"], d) for d in g.model.get("sections", [])]
    w = 2 * np.pi * FREQS
    z = np.full(len(FREQS), g.model["z_load"] if zload is None else zload, complex)
    for n, (kind, d) in reversed(list(enumerate(secs))):
        z0 = zpad if (n == 0 and zpad is not None) else d["z0"]
        eps = eps_pad if (n == 0 and eps_pad is not None) else d["eps_eff"]
        bl = w * np.sqrt(eps) / C0 * d["len_m"]
        if kind == "open_stub":
            zs = -1j * z0 / np.tan(bl)
            z = z * zs / (z + zs)
        else:
            t = np.tan(bl)
            z = z0 * (z + 1j * z0 * t) / (z0 + 1j * z * t)
    return (z - zref) / (z + zref)


# ---- output ------------------------------------------------------------------------------


def bandmed(x, lo=BAND_FIT[0], hi=BAND_FIT[1]):
    return fc.bandmed(x, lo, hi)


def write_toml(g, results, path, meshes, sheets=None):
    pkg = subprocess.run(["dpkg-query", "-W", "-f=${Version}", "openems"],
                         capture_output=True, text=True).stdout.strip()
    any_info = results[meshes[0]]["launch"]["info"]
    order = sorted(meshes, key=lambda m: MESHES[m]["d_fine"])  # finest first
    fin = results[order[0]]
    pcw = {m: worst(results[m]["port_check"]["s11_feedref"]) for m in meshes}
    o = []
    w = o.append
    w("# Full-wave reference: S11 of the demo probe's connector launch at the board edge (50 ohm).")
    w("# Generated by: nice -n 19 /usr/bin/python3 tests/reference/launch_fdtd.py tests/data/launch_fdtd_geometry.json")
    w("# (the script's header gives the model, the feed and its probes, and what is left out).")
    w("# [[mesh]] s11_db: re 50 ohm at the connector edge; s11_feedref_db: re the feed line (the")
    w("# pad's cross-section continued beyond the edge); s21_db: power carried on along the")
    w("# stripline; strip_termination_db: the stripline's PML end as seen on the stripline.")
    w("# name = 'port_check': the same feed, source, probes and mesh with the pad line run")
    w("# straight through (no launch); its s11_db is re the feed line (the method's floor), s11_50ohm_db")
    w("# adds the feed line's own mismatch to 50 ohm.")
    w("")
    w("[meta]")
    w("script = 'tests/reference/launch_fdtd.py'")
    w(f"geometry = '{os.path.basename(g.path)}'")
    w(f"probe = '{g.probe}'")
    w(f"openems_version = '{any_info['openems']} (CSXCAD {any_info['csxcad']}; "
      f"Debian openems {pkg})'")
    w(f"python = '{sys.version.split()[0]}'")
    w(f"numpy = '{np.__version__}'")
    w(f"date = '{datetime.date.today().isoformat()}'")
    w("conductors = 'PEC, zero-thickness sheets at the dielectric interfaces, the straight line "
      "edges moved by a thickness-equivalent shift (edge_shift_mm); vias PEC cylinders'")
    w(f"edge_shift_mm = {{ L1 = {g.edge_shift['L1']}, L3 = {g.edge_shift['L3']} }}")
    w("edge_shift_source = 'line_zc_2d in the script: 2D electrostatic finite differences, copper "
      "thickness vs shifted sheets (stripline 49.92 ohm with 17.5 um copper, 53.70 as sheets; pad "
      "line 49.09 with 35/17.5 um copper, 52.52 as sheets)'")
    w("dielectric_loss = false")
    w("boundaries = 'PML_8 at both line ends (lines and dielectric run through it), Mur elsewhere'")
    w(f"excitation = 'Gaussian, f0 = {F0:.4g} Hz, fc = {FC:.4g} Hz; {R_SRC:g}-ohm lumped source "
      f"from L3 to the pad on the feed line, {SRC_PERIODS} via pitches before the edge'")
    w(f"end_criterion_db = {10 * math.log10(END_CRITERION):.0f}")
    w(f"t_max_s = {T_MAX:.3g}")
    w(f"via_pitch_mm = {g.pitch:.4f}")
    w(f"reference_plane = 'board connector edge; feed probes on planes {MEAS_PERIODS} pitches "
      "before it, the middle one equivalent to the edge (whole pitches)'")
    w(f"z_ref_ohm = {Z_REF}")
    w(f"model_worst_s11_db = {g.model.get('worst_s11_db', float('nan')):.3f}")
    w(f"model_worst_s11_hz = {g.model.get('worst_s11_hz', float('nan')):.4g}")
    w("# the JSON's model.sections cascaded here (at the [[mesh]] f_hz): its worst is the value above")
    w(f"model_s11_db = {arr(db(model_cascade(g)))}")
    w(f"worst_s11_db = {worst(fin['launch']['s11'])[0]:.2f}  # finest mesh ({order[0]}), 0.1-3 GHz")
    w(f"worst_s11_hz = {worst(fin['launch']['s11'])[1]:.4g}")
    w("port_validation = '" + "; ".join(
        f"{m}: port check worst {pcw[m][0]:.1f} dB re the feed line ({pcw[m][1] / 1e9:.2f} GHz), "
        f"{worst(results[m]['port_check']['s11'])[0]:.1f} dB re 50 ohm; feed Zb "
        f"{bandmed(results[m]['port_check']['feed']['zb']):.2f} ohm" for m in meshes) + "'")
    notes = [
        "no lumped port at the edge: the pad's line is continued beyond the edge as a feed; "
        "G = (V - Zb I)/(V + Zb I) on a probe plane 3 via pitches before the edge (equivalent "
        "to it), Zb = F_V/F_I the feed's Bloch impedance from the port check's three-plane split "
        "(fitted a + b f^2 over 0.5-3 GHz, eps_eff over 1-3 GHz); the source's own mismatch "
        "does not enter",
        "re 50 ohm through the feed's Zb: Z_edge = Zb (1+G)/(1-G), S11 = (Z_edge-50)/(Z_edge+50)",
        "s11_bloch_feedref_db: the impedance-free three-plane split of the voltages alone, a "
        "cross-check; ill-conditioned at low frequency (planes 2.4 mm apart)",
        "the trace is modelled straight along +y (the real one jogs about 1 mm past the via); "
        "the listed vias along the jog are replaced by straight fence rows at +-fence_offset",
        "copper as sheets with thickness-equivalent edges (edge_shift_mm); without the shift the "
        "sheet lines are 3-4 ohm high (name = '*_sheets' entries, where recorded)",
        "solder mask, dielectric loss, copper roughness and the connector are left out",
    ]
    w("notes = [" + ", ".join(repr(n) for n in notes) + "]")
    for mname in meshes:
        r = results[mname]
        la, pc = r["launch"], r["port_check"]
        mp = MESHES[mname]
        w("")
        w(f"[meta.{mname}]")
        w(f"cell_fine_mm = {mp['d_fine']}")
        w(f"cell_board_x_mm = {mp['d_mid']}")
        w(f"cell_line_y_mm = {g.pitch / mp['n_per']:.4f}")
        w(f"cells_per_prepreg = {mp['n_pre']}")
        w(f"cells_core = {mp['n_core']}")
        w(f"cell_air_max_mm = {mp['d_air']}")
        w(f"lines_xyz = {la['info']['lines']}")
        w(f"cells = {la['info']['cells']}")
        w(f"min_cell_mm = {arr(la['info']['min_cell_mm'], '{:.4f}')}")
        for nm, rr in (("launch", la), ("port_check", pc)):
            inf = rr["info"]
            w(f"{nm}_run_seconds = {inf['run_seconds']}")
            w(f"{nm}_timesteps = {inf['timesteps']}")
            w(f"{nm}_dt_s = {inf['dt_s']:.4e}  # from the log's Nyquist line, to 0.1 %")
            w(f"{nm}_simulated_s = {rr['t_end']:.4e}")
            w(f"{nm}_end_energy_db = {inf['end_energy_db']}")
            w(f"{nm}_stopped_at_t_max = {str(inf.get('stopped_at_t_max', False)).lower()}")
            w(f"{nm}_record_tail_db = {rr['tail_db']:.1f}")
        ws, wf = worst(la["s11"])
        w(f"worst_s11_db = {ws:.2f}")
        w(f"worst_s11_hz = {wf:.4g}")
        w(f"worst_s11_feedref_db = {worst(la['s11_feedref'])[0]:.2f}")
        w(f"worst_s11_bloch_feedref_db_1_3ghz = {worst(la['s11_bloch'], 1e9, 3e9)[0]:.2f}")
        dev, _ = band(db(la["s11_bloch"]) - db(la["s11_feedref"]), 1e9, 3e9)
        w(f"bloch_minus_vi_max_db_1_3ghz = {float(np.max(np.abs(dev))):.2f}")
        w(f"port_check_worst_db = {pcw[mname][0]:.2f}")
        w(f"port_check_worst_hz = {pcw[mname][1]:.4g}")
        w(f"port_check_worst_50ohm_db = {worst(pc['s11'])[0]:.2f}")
        w(f"port_check_far_pml_worst_db = {worst(pc['far']['gamma'])[0]:.2f}")
        w(f"feed_zb_ohm = {bandmed(pc['feed']['zb']):.3f}")
        w(f"feed_eps_eff = {bandmed(pc['feed']['eps']):.4f}")
        w(f"feed_zb_launch_run_ohm = {bandmed(la['feed_own']['zb']):.3f}")
        w(f"feed_eps_eff_launch_run = {bandmed(la['feed_own']['eps']):.4f}")
        w(f"strip_zb_ohm = {bandmed(la['far']['zb']):.3f}")
        w(f"strip_eps_eff = {bandmed(la['far']['eps']):.4f}")
        w(f"strip_termination_worst_db = {worst(la['far']['gamma'])[0]:.2f}")
        zf_, zs_ = bandmed(pc['feed']['zb']), bandmed(la['far']['zb'])
        w(f"line_zc_2d_ohm = {{ pad = {LINE_ZC_2D['pad']}, strip = {LINE_ZC_2D['strip']} }}")
        w(f"line_step_db = {20 * math.log10(abs((zs_ - zf_) / (zs_ + zf_))):.2f}  "
          "# the feed-to-stripline impedance step alone, this mesh")
        mc_ = model_cascade(g, zf_, zs_, zf_, bandmed(pc["feed"]["eps"]))
        w(f"worst_residual_db = {worst(la['s11_feedref'] - mc_)[0]:.2f}")
        pb, _ = band(la["power_balance"])
        w(f"power_balance_max = {float(np.max(np.abs(pb))):.4f}")
    w("")
    for mname in meshes:
        la = results[mname]["launch"]
        w("[[mesh]]")
        w(f"name = '{mname}'")
        w(f"cells = {la['info']['cells']}")
        w(f"f_hz = {arr(FREQS, '{:.6e}')}")
        w(f"s11_db = {arr(db(la['s11']))}")
        w(f"s11_deg = {arr(np.degrees(np.angle(la['s11'])), '{:.2f}')}")
        w(f"s11_feedref_db = {arr(db(la['s11_feedref']))}")
        w(f"s11_bloch_feedref_db = {arr(db(la['s11_bloch']))}")
        w(f"s21_db = {arr(10 * np.log10(la['s21_pow']), '{:.4f}')}")
        w(f"strip_termination_db = {arr(db(la['far']['gamma']))}")
        fd = results[mname]['port_check']['feed']
        zf, zs, ef = bandmed(fd['zb']), bandmed(la['far']['zb']), bandmed(fd['eps'])
        mc = model_cascade(g, zf, zs, zf, ef)
        w(f"# the JSON's line model with this mesh's own lines (pad {zf:.2f} ohm, eps_eff {ef:.3f}; "
          f"load {zs:.2f} ohm), re the feed's Zb: compare with s11_feedref_db; residual_db is")
        w("# |s11_feedref - that| (complex): the reflection the model's sections do not hold")
        w(f"model_with_fdtd_lines_db = {arr(db(mc))}")
        w(f"residual_db = {arr(db(la['s11_feedref'] - mc))}")
        w("")
    for k, mname in enumerate(order):
        pc = results[mname]["port_check"]
        w("[[mesh]]")
        w("name = 'port_check'" if k == 0 else f"name = 'port_check_{mname}'")
        w(f"grid = '{mname}'")
        w(f"cells = {pc['info']['cells']}")
        w(f"f_hz = {arr(FREQS, '{:.6e}')}")
        w(f"s11_db = {arr(db(pc['s11_feedref']))}")
        w(f"s11_50ohm_db = {arr(db(pc['s11']))}")
        w(f"s11_bloch_db = {arr(db(pc['s11_bloch']))}")
        w(f"far_pml_db = {arr(db(pc['far']['gamma']))}")
        w("")
    if sheets:
        for mname, r in sheets.items():
            la, pc = r["launch"], r["port_check"]
            w("[[mesh]]")
            w(f"name = '{mname}_sheets'")
            w("note = 'plain zero-thickness sheets, no edge shift (same mesh rules, thirds rule on the "
              "unshifted edges)'")
            w(f"cells = {la['info']['cells']}")
            w(f"f_hz = {arr(FREQS, '{:.6e}')}")
            w(f"s11_db = {arr(db(la['s11']))}")
            w(f"s11_feedref_db = {arr(db(la['s11_feedref']))}")
            w(f"port_check_s11_db = {arr(db(pc['s11_feedref']))}")
            w(f"feed_zb_ohm = {bandmed(pc['feed']['zb']):.3f}")
            w(f"strip_zb_ohm = {bandmed(la['far']['zb']):.3f}")
            w(f"worst_s11_db = {worst(la['s11'])[0]:.2f}")
            w(f"worst_s11_feedref_db = {worst(la['s11_feedref'])[0]:.2f}")
            w("")
    text = "\n".join(o)
    import tomllib
    tomllib.loads(text)  # refuse to write a file that does not parse
    with open(path, "w") as f:
        f.write(text)
    return text


# ---- layer maps (a check of the geometry as the engine sees it) --------------------------
def plot_layers(g, mesh_name, case, work):
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from CSXCAD import CSProperties as CP
    fdtd, csx, _ = build(g, mesh_name, case)  # keep fdtd: it owns the structure
    csx.Update()  # polygons answer IsInside only after this (the engine does it too)
    grid = csx.GetGrid()
    X, Y = grid.GetLines("x"), grid.GetLines("y")
    xs = X[(X > -g.hw - 0.2) & (X < g.hw + 0.2)]
    ys = Y[(Y > -2.0) & (Y < g.via_y + 6.0)]
    xm, ym = 0.5 * (xs[1:] + xs[:-1]), 0.5 * (ys[1:] + ys[:-1])
    ptype = CP.MATERIAL | CP.METAL
    fig, axs = plt.subplots(1, 5, figsize=(20, 8))
    zmid = 0.5 * (g.zL2 + g.zL3)
    for ax, (nm, zc) in zip(axs, zip(("L1", "L2", "L3", "L4", "core"), g.z_cu + [zmid])):
        img = np.zeros((len(ym), len(xm)))
        for a, y in enumerate(ym):
            for b, x in enumerate(xm):
                p = csx.GetPropertyByCoordPriority([x, y, zc], ptype)
                img[a, b] = {"ground": 1, "signal": 2, "ground_vias": 3}.get(
                    None if p is None else p.GetName(), 0)
        ax.pcolormesh(xs, ys, img, cmap="viridis", vmin=0, vmax=3)
        ax.set_title(f"{nm} z={zc:.3f}")
        ax.set_aspect("equal")
    fn = os.path.join(work, f"layers-{case}-{mesh_name}.png")
    fig.savefig(fn, dpi=80)
    return fn


def line_zc_2d(h, half_width, sig, gnd, eps_of, z_top):
    """Zc and eps_eff of a 2D cross-section by electrostatics (5-point finite differences on
    an h grid, PEC walls at x = +-half_width, z = 0 and z = z_top): conductors as (x0, x1,
    z0, z1) boxes (zero height for sheets), eps_of(x, z) per cell. C from the field energy,
    with and without the dielectric; Zc = 1/(c sqrt(C C_air))."""
    import scipy.sparse as sps
    import scipy.sparse.linalg as spl
    nx, nz = int(round(2 * half_width / h)) + 1, int(round(z_top / h)) + 1
    x, z = np.linspace(-half_width, half_width, nx), np.linspace(0.0, z_top, nz)
    X, Z = np.meshgrid(x, z, indexing="ij")
    def inside(b):
        return (X >= b[0] - 1e-9) & (X <= b[1] + 1e-9) & (Z >= b[2] - 1e-9) & (Z <= b[3] + 1e-9)

    S = np.zeros((nx, nz), bool)
    G = np.zeros((nx, nz), bool)
    G[0, :] = G[-1, :] = G[:, 0] = G[:, -1] = True
    for b in sig:
        S |= inside(b)
    for b in gnd:
        G |= inside(b)
    G &= ~S
    XC, ZC = np.meshgrid(0.5 * (x[1:] + x[:-1]), 0.5 * (z[1:] + z[:-1]), indexing="ij")
    free = ~(S | G)
    idx = -np.ones((nx, nz), int)
    idx[free] = np.arange(free.sum())
    n, val, caps = int(free.sum()), S.astype(float), []
    for eps in (eps_of(XC, ZC), np.ones_like(XC)):
        ep = np.pad(eps, 1, mode="edge")
        cx = 0.5 * (ep[1:-1, :-1] + ep[1:-1, 1:])
        cz = 0.5 * (ep[:-1, 1:-1] + ep[1:, 1:-1])
        rows, cols, data = [], [], []
        diag, rhs = np.zeros(n), np.zeros(n)
        for sa, sb, c in ((np.s_[:-1, :], np.s_[1:, :], cx), (np.s_[:, :-1], np.s_[:, 1:], cz)):
            fa, fb, ia, ib = free[sa], free[sb], idx[sa], idx[sb]
            np.add.at(diag, ia[fa], c[fa])
            np.add.at(diag, ib[fb], c[fb])
            m = fa & fb
            rows += [ia[m], ib[m]]
            cols += [ib[m], ia[m]]
            data += [-c[m], -c[m]]
            np.add.at(rhs, ia[fa & ~fb], (c * val[sb])[fa & ~fb])
            np.add.at(rhs, ib[fb & ~fa], (c * val[sa])[fb & ~fa])
        a_ = sps.csr_matrix((np.concatenate(data + [diag]), (np.concatenate(rows + [np.arange(n)]),
                             np.concatenate(cols + [np.arange(n)]))), shape=(n, n))
        phi = val.copy()
        phi[free] = spl.spsolve(a_, rhs)
        caps.append(8.8541878128e-12 * (np.sum(cx * np.diff(phi, axis=0) ** 2) +
                                        np.sum(cz * np.diff(phi, axis=1) ** 2)))
    return 1.0 / (C0 * math.sqrt(caps[0] * caps[1])), caps[0] / caps[1]


def calibrate_edges(g, h=0.0025):
    """The thickness-equivalent edge shifts (EDGE_SHIFT): for the stripline (L3) and the pad's
    line (L1 over L3, L2 relieved), Zc with the real copper thickness, then with sheets and
    two trial shifts; the shift that gives the copper's Zc, by linear interpolation."""
    t = {l["name"]: l["t"] for l in g.j["layers"] if l["type"] == "copper"}
    out = {}
    # stripline: L4 at z = 0, trace and L3 ground on the prepreg (0.21), L2 over the core
    w, gap, pre = g.j["trace"]["width"], g.j["trace"]["gap"], g.zL3 - g.zL4
    core = g.zL2 - g.zL3

    def strip(t3, dw):
        e = w / 2 + dw
        xb = e + round((g.fence_x - e) / h) * h
        return line_zc_2d(h, xb, [(-e, e, pre, pre + t3)],
                          [(-xb, -(w / 2 + gap - dw), pre, pre + t3),
                           (w / 2 + gap - dw, xb, pre, pre + t3)],
                          lambda X, Z: np.where(Z < pre + t3, 4.4, 4.5), pre + t3 + core)[0]

    def pad(t1, t2, dw):  # L3 ground as z = 0, via rows beside the pad as walls, lid 1.5 mm up
        e, xw = g.pad_hw + dw, min(abs(k) for k in g.pad_rows)
        xb = e + round((xw - e) / h) * h
        gl, z2 = g.pad_clr - dw, core
        z1 = z2 + t2 + (g.zL1 - g.zL2)
        er_core = [er for z0, z1_, er in g.diel if z0 == g.zL3][0]
        er_pre = [er for z0, z1_, er in g.diel if z0 == g.zL2][0]
        return line_zc_2d(h, xb, [(-e, e, z1, z1 + t1)],
                          [(-xb, -gl, z1, z1 + t1), (gl, xb, z1, z1 + t1),
                           (-xb, -gl, z2, z2 + t2), (gl, xb, z2, z2 + t2)],
                          lambda X, Z: np.where(Z < z2, er_core, np.where(Z < z1, er_pre, 1.0)),
                          z1 + t1 + 1.5)[0]

    for name, thick, thin in (("L3", lambda: strip(t["L3"], 0.0), lambda dw: strip(0.0, dw)),
                              ("L1", lambda: pad(t["L1"], t["L2"], 0.0),
                               lambda dw: pad(0.0, 0.0, dw))):
        z_cu = thick()
        a_, b_ = 0.5 * t[name], 1.0 * t[name]
        za, zb_ = thin(a_), thin(b_)
        dw = a_ + (z_cu - za) * (b_ - a_) / (zb_ - za)
        out[name] = round(dw, 4)
        print(f"{name}: copper {z_cu:.2f} ohm; sheets shifted {a_ * 1e3:.1f}/{b_ * 1e3:.1f} um: "
              f"{za:.2f}/{zb_:.2f} ohm -> shift {dw * 1e3:.1f} um (sheets unshifted "
              f"{thin(0.0):.2f} ohm)", flush=True)
    return out


def check_pec(g, mesh_name, case, work):
    """Set the model up only, with openEMS's PEC dump, and check from the dump that the
    signal conductor (pad, link, via, trace) is one piece of PEC not joined to the ground.
    Returns True if so."""
    import base64
    import zlib
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components
    sim = os.path.join(work, f"pec-{case}-{mesh_name}")
    fdtd, csx, _ = build(g, mesh_name, case)
    fdtd.Run(sim, cleanup=True, setup_only=True, debug_pec=True)
    raw = open(os.path.join(sim, "PEC_dump.vtp"), "rb").read()
    head, _, app = raw.partition(b'<AppendedData encoding="base64">')
    app, h = app[app.index(b"_") + 1:], head.decode()

    def array(offset, dtype):  # one VTK appended array: base64 header, then zlib blocks
        nb = struct.unpack("<I", base64.b64decode(app[offset:offset + 8])[:4])[0]
        hc = -(-4 * (3 + nb) // 3) * 4
        sizes = struct.unpack(f"<{3 + nb}I", base64.b64decode(app[offset:offset + hc]))[3:]
        data = base64.b64decode(app[offset + hc:offset + hc + -(-sum(sizes) // 3) * 4])
        out, q = b"", 0
        for n in sizes:
            out, q = out + zlib.decompress(data[q:q + n]), q + n
        return np.frombuffer(out, dtype=dtype)

    pts = array(int(re.search(r'Name="Points"[^>]*offset="(\d+)"', h).group(1)), "<f4")
    pts = pts.reshape(-1, 3).astype(float) * 1e3
    lines = h[h.index("<Lines>"):]
    con = array(int(re.search(r'Name="connectivity"[^>]*offset="(\d+)"', lines).group(1)),
                "<i8").reshape(-1, 2)
    adj = coo_matrix((np.ones(len(con)), (con[:, 0], con[:, 1])), shape=(len(pts),) * 2)
    _, lab = connected_components(adj, directed=False)
    near = lambda q: lab[int(np.argmin(np.linalg.norm(pts - np.array(q), axis=1)))]  # noqa
    y_feed = -MEAS_PERIODS[1] * g.pitch
    sig = {near([0.0, y_feed, g.zL1])}
    if case == "launch":
        sig.add(near([0.0, g.via_y + FAR_PERIODS[1] * g.pitch, g.zL3]))
    gnd = {near([0.5 * (g.pad_clr + g.cu_hw), y_feed, z]) for z in g.z_cu}
    ok = len(sig) == 1 and not (sig & gnd)
    print(f"PEC check {case}/{mesh_name}: signal pieces {sorted(sig)}, ground pieces "
          f"{sorted(gnd)}: {'ok' if ok else 'FAILED'}")
    return ok


def main():
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("json")
    ap.add_argument("--meshes", default="coarse,fine")
    ap.add_argument("--work", default=os.environ.get("FDTD_WORK", "/tmp/launch-fdtd"))
    ap.add_argument("--toml", default=DEFAULT_TOML)
    ap.add_argument("--reuse", action="store_true")
    ap.add_argument("--layers", action="store_true")
    ap.add_argument("--sheets", action="store_true",
                    help="plain zero-thickness sheets (no edge shift); runs in WORK/sheets")
    ap.add_argument("--calibrate-edges", action="store_true",
                    help="recompute the thickness-equivalent edge shifts (2D), print, stop")
    ap.add_argument("--check", action="store_true",
                    help="only check the PEC connectivity of both models (setup only)")
    ap.add_argument("--only", default=None, help="run only this case (launch/port_check)")
    ap.add_argument("--no-toml", action="store_true")
    a = ap.parse_args()
    g = Launch(a.json)
    if a.calibrate_edges:
        print(calibrate_edges(g))
        return
    if a.sheets:
        a.work = os.path.join(a.work, "sheets")
    else:
        g.shift_edges(EDGE_SHIFT)
    os.makedirs(a.work, exist_ok=True)
    meshes = a.meshes.split(",")
    if a.layers:
        for case in ("launch", "port_check"):
            print(plot_layers(g, meshes[0], case, a.work))
    if a.check:
        ok = all(check_pec(g, m, c, a.work) for m in meshes for c in ("port_check", "launch"))
        sys.exit(0 if ok else 1)
    results = {}
    for mname in meshes:
        for case in ("port_check", "launch"):
            if a.only and case != a.only:
                continue
            done = os.path.exists(os.path.join(a.work, f"{case}-{mname}.info.json"))
            if not (a.reuse and done):
                if not check_pec(g, mname, case, a.work):
                    sys.exit(f"{case}/{mname}: the signal conductor is broken or joined to ground")
                run(g, mname, case, a.work)
    if a.no_toml or a.only:
        return
    for mname in meshes:
        results[mname] = post(g, mname, a.work)
        la, pc = results[mname]["launch"], results[mname]["port_check"]
        print(f"{mname}: worst S11 {worst(la['s11'])} ; feed-ref {worst(la['s11_feedref'])} ;"
              f" port check {worst(pc['s11_feedref'])} (50 ohm: {worst(pc['s11'])}) ;"
              f" feed Zb {bandmed(pc['feed']['zb']):.2f} eps {bandmed(pc['feed']['eps']):.3f} ;"
              f" strip {bandmed(la['far']['zb']):.2f} eps {bandmed(la['far']['eps']):.3f}")
    sheets = {}
    if not a.sheets:  # the plain-sheet runs, where they were made (--sheets), go in too
        for mname in meshes:
            sd = os.path.join(a.work, "sheets")
            if all(os.path.exists(os.path.join(sd, f"{c}-{mname}.info.json"))
                   for c in ("launch", "port_check")):
                sheets[mname] = post(g, mname, sd)
    write_toml(g, results, a.toml, meshes, sheets)
    print("wrote", a.toml)


if __name__ == "__main__":
    main()
