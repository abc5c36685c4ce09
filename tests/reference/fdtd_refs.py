# Full-wave (FDTD, openEMS) references: the demo probes FM-R10 and FM-R5 standing on the demo
# fixture's 50-ohm test line, S21 from the line's input port to the probe's output port.
# CI never runs this; its results are recorded in tests/data/fdtd_refs.toml.
#
# Needs Debian's openEMS build (apt-get install -y openems python3-openems) and Debian's
# /usr/bin/python3 (the pyenv python does not see the Debian modules). Run from the repo root:
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_refs.py run line coarse   # sanity: line alone
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_refs.py run R10 coarse
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_refs.py run R10 fine
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_refs.py run R5 coarse
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_refs.py run R5 fine
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_refs.py run R5 finer  # third mesh, 12 min
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_refs.py run R10 finer # 3.7 M cells, 37 min
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_refs.py run R5 finest # 3.4 M cells, 42 min
# The finest run was recorded after the others, appended to the file with its Richardson table
# of the three finest meshes:
#     /usr/bin/python3 tests/reference/fdtd_refs.py append R5 finest >> tests/data/fdtd_refs.toml
# The FM-R10 runs ring for tens of ns (see the TOML header); they were stopped at 6.5 ns by
# creating a file ABORT in their run folder, and `... post CASE MESH` redoes the S-parameters
# of a finished or stopped run.
#     /usr/bin/python3 tests/reference/fdtd_refs.py toml > tests/data/fdtd_refs.toml
# Each run writes its field data under $FDTD_WORK (default /tmp/loopwright-fdtd/<case>-<mesh>)
# and a small JSON of its results there; `toml` gathers the JSON files.
#
# Coordinates (mm): x along the line (port 1 at x = -LINE_LEN/2, port 2 at +LINE_LEN/2),
# y across it, z up; the fixture's ground plane is the z = 0 boundary (PEC). The probe board
# stands in the x-z plane, its mid-plane at y = 0 (through the line's axis), the loop centre at
# x = 0, the apex (with the shield gap) down towards the line, the handle up.
import json
import math
import os
import re
import sys
import time

import numpy

numpy.float = float  # Debian's openEMS 0.0.35 python module still uses the removed alias
import numpy as np  # noqa: E402
import CSXCAD  # noqa: E402
from openEMS import openEMS  # noqa: E402

C0 = 299792458.0

# ---- geometry (mm), from the demo's fab notes and specs ------------------------------------
# Fixture (common-2l-1.6): microstrip w 2.82 on 1.53 mm er 4.5, copper 35 um.
LINE_W = 2.82
LINE_H = 1.53
LINE_T = 0.035
LINE_ER = 4.5
LINE_LEN = 50.0  # modelled line length (the real board has 74 mm between the pads)
# Probe (common-4l-1.6): copper as zero-thickness sheets at the dielectric interfaces.
Y_L1 = 0.7425  # top shield (0.5325 + 0.21, written out: a sheet must sit exactly on a mesh line)
Y_L2 = 0.5325  # loop trace and coplanar ground
Y_L3 = -0.5325  # shield
Y_L4 = -0.7425  # shield
ER_PREPREG = 4.4
ER_CORE = 4.5
TRACE_W = 0.216
SLOT = 0.2  # coplanar-ground clearance on L2
RING_HW = 1.108  # shield ring half width about the centreline
FENCE = 0.658  # stitching rows at +-FENCE from the centreline
WALL_T = 0.3  # fence modelled as a continuous PEC wall one drill (0.3 mm) thick
GAP = 0.4  # shield gap at the apex, every shield layer and the L2 ground
EDGE = 0.3  # copper to board edge
FEED_X = -0.329  # feed leaves the loop here (towards the handle), the short sits at +0.329
HANDLE_W = 8.0  # handle board (and shield) width
HANDLE_LEN = 6.0  # modelled handle length above the ring's outer edge (real: 40 mm)
TIP_HEIGHT = 1.0  # probe tip above the line's copper top
PORT_LEN = 0.2  # probe's lumped port: between the trace end and the end cap

F_MIN, F_MAX = 10e6, 3e9
FREQS = np.unique(np.concatenate([np.geomspace(F_MIN, F_MAX, 121),
                                  np.linspace(1.5e9, 2.6e9, 111),  # the 10 mm loop's null/peak
                                  [10e6, 30e6, 100e6, 300e6, 1e9, 2e9, 3e9]]))
BAND_NP = (1.5e9, 2.6e9)  # where the null and the peak near 2 GHz are looked for
TABLE_F = [10e6, 30e6, 100e6, 300e6, 1e9, 2e9, 3e9]

MESHES = {
    # d: cell in the probe's region (x, z); ny_pre/ny_core: cells across prepreg/core (y)
    # end: the run stops when the field energy has fallen this far below its peak
    "coarse": dict(d=0.15, ny_pre=2, ny_core=4, dmax=1.5, end=1e-5),
    "fine": dict(d=0.11, ny_pre=3, ny_core=5, dmax=1.5, end=1e-4),
    # a third mesh: how the staircase error falls with d (Richardson, observed order)
    "finer": dict(d=0.08, ny_pre=4, ny_core=6, dmax=1.5, end=1e-4),
    # a fourth (FM-R5 only, about 80 min on two cores): whether the top of the band settles
    "finest": dict(d=0.06, ny_pre=5, ny_core=8, dmax=1.5, end=1e-4),
    # the fine mesh run on to -50 dB (probe-driven runs: whether their low-frequency port
    # inductance, which the -40 dB record leaves to its tail, settles)
    "fine-long": dict(d=0.11, ny_pre=3, ny_core=5, dmax=1.5, end=1e-5),
    "finer-long": dict(d=0.08, ny_pre=4, ny_core=6, dmax=1.5, end=1e-5),
}
PROBES = {"R10": 10.0, "R5": 5.0}


# ---- mesh --------------------------------------------------------------------------------
def graded(lo, hi, fixed, regions, dmax, ratio=1.25):
    """Mesh lines from lo to hi through every `fixed` line; cell size d inside each
    (a, b, d) region, growing by about `ratio` per cell away from it, never above dmax."""
    xs = np.linspace(lo, hi, 200001)
    h = np.full_like(xs, dmax)
    for a, b, d in regions:
        dist = np.maximum(np.maximum(a - xs, xs - b), 0.0)
        h = np.minimum(h, d + (ratio - 1.0) * dist)
    fixed = sorted(set([lo, hi] + [f for f in fixed if lo <= f <= hi]))
    hsize = lambda x: np.interp(x, xs, h)  # noqa: E731
    # merge fixed lines closer than 0.5 of the local cell
    merged = [fixed[0]]
    for f in fixed[1:]:
        if f - merged[-1] < 0.5 * hsize(f):
            if f == hi:
                merged[-1] = hi
            continue
        merged.append(f)
    lines = [merged[0]]
    for a, b in zip(merged[:-1], merged[1:]):
        seg = np.linspace(a, b, 2001)
        inv = 1.0 / hsize(seg)
        cum = np.concatenate([[0.0], np.cumsum(0.5 * (inv[1:] + inv[:-1]) * np.diff(seg))])
        n = max(1, int(math.ceil(cum[-1] - 1e-9)))
        targets = np.linspace(0.0, cum[-1], n + 1)[1:]
        lines.extend(np.interp(targets, cum, seg))
    return np.array(lines)


# ---- probe shapes in the x-z plane (the board's plane) -------------------------------------
def ring_xz(zc, rho_in, rho_out, phi_a, phi_b, n=None):
    """Annulus sector about (0, zc), phi from the apex (down, -z), x = rho sin(phi),
    z = zc - rho cos(phi); returns [z_list, x_list] (CSXCAD order for a y-normal polygon)."""
    if n is None:
        n = max(24, int(abs(phi_b - phi_a) * rho_out / 0.05))
    po = np.linspace(phi_a, phi_b, n)
    pi_ = po[::-1]
    xs = np.concatenate([rho_out * np.sin(po), rho_in * np.sin(pi_)])
    zs = np.concatenate([zc - rho_out * np.cos(po), zc - rho_in * np.cos(pi_)])
    return [list(zs), list(xs)]


def gap_phi(rho, half):
    """Angle from the apex at which a straight cut |x| < half meets the circle rho."""
    return math.asin(min(1.0, half / rho))


def rect_xz(x0, x1, z0, z1):
    return [[z0, z0, z1, z1], [x0, x1, x1, x0]]


def build(case, mesh_name, drive_probe=False, bridged=False, wall_back=0.3, gap_port=False,
          fixture=True):
    """The FDTD model of one case on one mesh; `drive_probe` excites the probe's port instead
    of the line's input (fdtd_probe_port.py), `bridged` joins the shield across its gap on
    L1, L3 and L4 (PEC sheets over the cut, the trace untouched); `wall_back` (mm) is how far
    the ring's fence walls stop short of the cut (0.3 as built). `gap_port` (fdtd_gap_port.py)
    removes the trace, its feed and short, fills L2 like the shield layers (ring with the cut,
    handle plate) and puts the driven port 3 across the cut on L2 at the centreline (x from
    -GAP/2 to +GAP/2, trace wide): the shield's gap circuit seen with no line at all.
    `fixture=False` leaves the fixture out (the probe alone in air, PML on all six faces, the
    same probe coordinates; for a plane wave, fdtd_gap_port.py)."""
    m = MESHES[mesh_name]
    d = m["d"]
    z_cu = LINE_H + LINE_T  # line's copper top (the strip itself is modelled as a sheet at LINE_H)
    fdtd = openEMS(EndCriteria=m["end"], NrTS=120000)
    fdtd.SetGaussExcite(0.5 * (F_MAX + 0.1e9), 0.5 * (F_MAX + 0.1e9))
    fdtd.SetBoundaryCond(["PML_8", "PML_8", "PML_8", "PML_8", "PEC" if fixture else "PML_8",
                          "PML_8"])
    csx = CSXCAD.ContinuousStructure()
    fdtd.SetCSX(csx)
    grid = csx.GetGrid()
    grid.SetDeltaUnit(1e-3)

    xl = LINE_LEN / 2
    ports = []
    if fixture:
        # fixture: substrate over the whole domain, strip as a PEC sheet on top, lumped ports
        sub = csx.AddMaterial("fixture_fr4", epsilon=LINE_ER)
        big = 200.0
        sub.AddBox([-big, -big, 0.0], [big, big, LINE_H], priority=1)
        strip = csx.AddMetal("line")
        strip.AddBox([-xl, -LINE_W / 2, LINE_H], [xl, LINE_W / 2, LINE_H], priority=10)
        p1 = fdtd.AddLumpedPort(1, 50.0, [-xl, -LINE_W / 2, 0.0], [-xl, LINE_W / 2, LINE_H], "z",
                                excite=0.0 if drive_probe else 1.0, priority=5)
        p2 = fdtd.AddLumpedPort(2, 50.0, [xl, -LINE_W / 2, 0.0], [xl, LINE_W / 2, LINE_H], "z",
                                priority=5)
        ports = [p1, p2]

    fx, fy, fz = [-xl, xl], [-LINE_W / 2, LINE_W / 2, 0.0], [0.0, LINE_H]
    rx, ry, rz = [(-xl - 1, -xl + 1, 0.5), (xl - 1, xl + 1, 0.5)], \
        [(-LINE_W / 2, LINE_W / 2, 0.35)], [(0.0, LINE_H, 0.4)]
    x_span, y_span, z_top, z_bot = xl + 16.0, 22.0, 20.0, 0.0
    if not fixture:
        fx, fy, fz, rx, ry, rz = [], [], [], [], [], []
        x_span, z_bot = 0.0, -15.0
    geo = {}
    if case != "line":
        r = PROBES[case] / 2
        ro, ri = r + RING_HW, r - RING_HW
        zc = z_cu + TIP_HEIGHT + EDGE + RING_HW + r  # loop centre
        z_ring_top = zc + ro
        z_p1 = z_ring_top + HANDLE_LEN  # end cap (shield end) / port top
        z_p0 = z_p1 - PORT_LEN  # trace end / port bottom
        geo = dict(r=r, zc=zc, apex_centreline=zc - r, tip=zc - ro - EDGE,
                   handle_end=z_p1)
        hw = HANDLE_W / 2
        # dielectric: disc (loop interior kept) + handle, three layers
        for name, er, y0, y1 in [("prepreg_top", ER_PREPREG, Y_L2, Y_L1),
                                 ("core", ER_CORE, Y_L3, Y_L2),
                                 ("prepreg_bot", ER_PREPREG, Y_L4, Y_L3)]:
            mat = csx.AddMaterial(name, epsilon=er)
            mat.AddCylinder([0.0, y0, zc], [0.0, y1, zc], ro + EDGE, priority=2)
            mat.AddBox([-hw, y0, zc], [hw, y1, z_p1], priority=2)
        pec = csx.AddMetal("probe_pec")
        # shield layers L1, L3, L4: ring with the apex gap, plus the handle, plus the end cap
        for y in (Y_L1, Y_L3, Y_L4):
            pec.AddPolygon(_ring_with_gap(zc, ri, ro), "y", y, priority=10)
            pec.AddPolygon(rect_xz(-hw, hw, zc + r, z_p1), "y", y, priority=10)
        delta = math.asin(abs(FEED_X) / r)
        if gap_port:
            # L2 as a shield layer: the ring with the cut and the handle plate, no trace
            pec.AddPolygon(_ring_with_gap(zc, ri, ro), "y", Y_L2, priority=10)
            pec.AddPolygon(rect_xz(-hw, hw, zc + r, z_p1), "y", Y_L2, priority=10)
        else:
            # L2: coplanar ground outside the slot (ring sides), handle ground either side of the
            # feed slot, trace ring (whole turn but the top arc between feed and short), feed line
            s_out, s_in = r + TRACE_W / 2 + SLOT, r - TRACE_W / 2 - SLOT
            fs0, fs1 = FEED_X - TRACE_W / 2 - SLOT, FEED_X + TRACE_W / 2 + SLOT
            # outer ground: from the apex gap round each side to the feed's slot (x = fs0..fs1,
            # both left of the axis), where the feed leaves the loop
            rm = 0.5 * (s_out + ro)
            pg = gap_phi(rm, GAP / 2)
            pec.AddPolygon(ring_xz(zc, s_out, ro, pg, math.pi + math.asin(-fs1 / rm)), "y", Y_L2,
                           priority=10)
            pec.AddPolygon(ring_xz(zc, s_out, ro, -(math.pi - math.asin(-fs0 / rm)), -pg), "y", Y_L2,
                           priority=10)
            pec.AddPolygon(_ring_with_gap(zc, ri, s_in), "y", Y_L2, priority=10)
            z_h0 = zc + s_out + 0.0
            pec.AddPolygon(rect_xz(-hw, fs0, z_h0, z_p1), "y", Y_L2, priority=10)
            pec.AddPolygon(rect_xz(fs1, hw, z_h0, z_p1), "y", Y_L2, priority=10)
            pec.AddPolygon(ring_xz(zc, r - TRACE_W / 2, r + TRACE_W / 2, -(math.pi - delta),
                                   math.pi - delta), "y", Y_L2, priority=10)
            z_feed0 = zc + r * math.cos(delta) - TRACE_W / 2
            pec.AddPolygon(rect_xz(FEED_X - TRACE_W / 2, FEED_X + TRACE_W / 2, z_feed0, z_p0),
                           "y", Y_L2, priority=10)
            # short: a via (square, drill size) through all layers at the trace's far end
            xs_ = -FEED_X
            zs_ = zc + r * math.cos(delta)
            pec.AddBox([xs_ - 0.15, Y_L4, zs_ - 0.15], [xs_ + 0.15, Y_L1, zs_ + 0.15], priority=10)
        # fences as walls L1..L4: inner and outer ring rows (cut at the gap; the outer row
        # opens where the feed leaves), and the feed's two rows up the handle
        gcut = GAP / 2 + wall_back
        rw_i, rw_o = r - FENCE, r + FENCE
        pec.AddLinPoly(_ring_with_gap(zc, rw_i - WALL_T / 2, rw_i + WALL_T / 2, gcut), "y",
                       Y_L4, Y_L1 - Y_L4, priority=10)
        fx0, fx1 = FEED_X - FENCE, FEED_X + FENCE  # -0.987, +0.329
        # outer row: from the gap round each side up to the handle's fence rows
        for sgn, xend in ((+1, fx1), (-1, fx0)):
            pa = gap_phi(rw_o, gcut)
            pb = math.pi - math.asin(abs(xend) / rw_o)
            if sgn < 0:
                pa, pb = -pb, -pa
            pec.AddLinPoly(ring_xz(zc, rw_o - WALL_T / 2, rw_o + WALL_T / 2, pa, pb), "y",
                           Y_L4, Y_L1 - Y_L4, priority=10)
        for xw in (fx0, fx1):
            zw0 = zc + math.sqrt(max(rw_o ** 2 - xw ** 2, 0.0)) - WALL_T
            pec.AddBox([xw - WALL_T / 2, Y_L4, zw0], [xw + WALL_T / 2, Y_L1, z_p1],
                       priority=10)
        # end cap: shield closed across the handle's end (the connector's ground)
        pec.AddBox([-hw, Y_L4, z_p1], [hw, Y_L1, z_p1], priority=10)
        # output port: 50 ohm between the end cap (start) and the trace end (stop), so its
        # voltage is trace minus shield
        if gap_port:
            z_a = zc - r  # apex of the centreline
            p3 = fdtd.AddLumpedPort(3, 50.0, [-GAP / 2, Y_L2, z_a - TRACE_W / 2],
                                    [GAP / 2, Y_L2, z_a + TRACE_W / 2], "x",
                                    excite=1.0 if drive_probe else 0.0, priority=5)
            fz += [z_a - TRACE_W / 2, z_a + TRACE_W / 2]
        else:
            p3 = fdtd.AddLumpedPort(3, 50.0, [FEED_X - TRACE_W / 2, Y_L2, z_p1],
                                    [FEED_X + TRACE_W / 2, Y_L2, z_p0], "z",
                                    excite=1.0 if drive_probe else 0.0, priority=5)
        if bridged:
            for y in (Y_L1, Y_L3, Y_L4):
                pec.AddBox([-GAP / 2 - d, y, zc - ro], [GAP / 2 + d, y, zc - ri], priority=10)
        ports.append(p3)
        fx += [0.0, -GAP / 2, GAP / 2, FEED_X - TRACE_W / 2, FEED_X + TRACE_W / 2]
        fy += [Y_L1, Y_L2, Y_L3, Y_L4]
        fz += [z_p0, z_p1]
        rx.append((-ro - EDGE - 0.3, ro + EDGE + 0.3, d))
        rx.append((-hw, hw, d))
        rz.append((LINE_H, z_ring_top + 0.3, d))
        rz.append((z_p0 - 0.3, z_p1 + 0.3, d))
        rz.append((z_ring_top, z_p1, 3 * d))
        z_top = z_p1 + 18.0
        x_span = max(x_span, ro + 16.0)

    # y: prepreg and core split evenly, graded outwards
    ylines = list(np.linspace(Y_L4, Y_L3, m["ny_pre"] + 1)) + \
        list(np.linspace(Y_L3, Y_L2, m["ny_core"] + 1)) + list(np.linspace(Y_L2, Y_L1, m["ny_pre"] + 1))
    if case != "line":
        yfix = sorted(set(np.round(ylines, 6)))
        yreg = [(Y_L4, Y_L1, (Y_L1 - Y_L2) / m["ny_pre"])] + ry
    else:
        yfix, yreg = [], ry
    X = graded(-x_span, x_span, fx, rx, m["dmax"])
    Y = graded(-y_span, y_span, sorted(set(fy + list(yfix))), yreg, m["dmax"])
    if case != "line":
        # keep the board's own y lines exactly (graded() may not insert all of them)
        Y = np.array(sorted(set(np.round(np.concatenate([Y[(Y < Y_L4 - 0.05) | (Y > Y_L1 + 0.05)],
                                                        yfix]), 6))))
    Z = graded(z_bot, z_top, fz, rz, m["dmax"])
    grid.SetLines("x", X)
    grid.SetLines("y", Y)
    grid.SetLines("z", Z)
    ncell = (len(X) - 1) * (len(Y) - 1) * (len(Z) - 1)
    info = dict(case=case, mesh=mesh_name, mesh_params=m, nx=len(X), ny=len(Y), nz=len(Z), cells=ncell,
                min_cell_mm=float(min(np.diff(X).min(), np.diff(Y).min(), np.diff(Z).min())),
                domain_mm=[[-x_span, x_span], [-y_span, y_span], [z_bot, z_top]], geo=geo)
    return fdtd, csx, ports, info


def _ring_with_gap(zc, rho_in, rho_out, half=GAP / 2):
    """Closed ring with the straight apex cut |x| < half (z below the centre)."""
    pa_o, pa_i = gap_phi(rho_out, half), gap_phi(rho_in, half)
    n = max(48, int(2 * math.pi * rho_out / 0.05))
    po = np.linspace(pa_o, 2 * math.pi - pa_o, n)
    pi_ = np.linspace(2 * math.pi - pa_i, pa_i, n)
    xs = np.concatenate([rho_out * np.sin(po), rho_in * np.sin(pi_)])
    zs = np.concatenate([zc - rho_out * np.cos(po), zc - rho_in * np.cos(pi_)])
    return [list(zs), list(xs)]


def run(case, mesh_name):
    work = os.environ.get("FDTD_WORK", "/tmp/loopwright-fdtd")
    sim = os.path.join(work, f"{case}-{mesh_name}")
    if run_engine(build(case, mesh_name), sim, os.path.join(work, f"{case}-{mesh_name}")):
        post(case, mesh_name)


def run_engine(built, sim, stem, extra=None):
    """Runs one built model (`build`'s result) in folder `sim`, its engine log in `stem`.log
    and its run facts in `stem`.info.json; False on a dry run (FDTD_DRY: geometry only)."""
    fdtd, csx, _, info = built
    info.update(extra or {})
    os.makedirs(sim, exist_ok=True)
    print(json.dumps(info), flush=True)
    csx.Write2XML(os.path.join(sim, "geometry.xml"))
    if os.environ.get("FDTD_DRY"):
        return False
    t0 = time.time()
    # the engine prints its timestep and iteration count on fd 1: keep them in a log
    log = stem + ".log"
    sys.stdout.flush()
    saved = os.dup(1)
    with open(log, "w") as lf:
        os.dup2(lf.fileno(), 1)
        try:
            fdtd.Run(sim, cleanup=True, numThreads=2)
        finally:
            sys.stdout.flush()
            os.dup2(saved, 1)
    info["run_seconds"] = round(time.time() - t0, 1)
    text = open(log, errors="replace").read()
    its = re.findall(r"Time for (\d+) iterations with ([\d.]+) cells", text)
    dts = re.findall(r"FDTD timestep is: ([\d.e+-]+) s", text)
    info["timesteps"] = int(its[-1][0]) if its else None
    info["dt_s"] = float(dts[0]) if dts else None
    info["end_energy_db"] = _last_energy_db(text)
    with open(stem + ".info.json", "w") as f:
        json.dump(info, f)
    return True


def _last_energy_db(text):
    e = re.findall(r"Energy: ~[\d.e+-]+ \(\s*-\s*([\d.]+)dB\)", text)
    return -float(e[-1]) if e else None


MAX_FIT_RESID = 0.02  # a tail is added only where the fit leaves less than this (rms, relative)
T_FIT0 = 3.0e-9  # late-time fits start here: after the pulse (1.85 ns) and the line's transit


def _pencil_tail(t, y, freqs, t0=T_FIT0, tol=1e-4, max_order=16):
    """Matrix-pencil fit of the late-time signal (t >= t0) by damped exponentials
    sum c_m z_m^k (Hua and Sarkar's matrix pencil method, cited from memory), and the one-sided DFT (same
    normalisation as openEMS.utilities.DFT_time2freq) of that model from the end of the
    record to infinity. Returns (tail spectrum, largest |z|, relative rms residual, order)."""
    ts = t[1] - t[0]
    n0 = int(np.searchsorted(t, t0))
    seg = y[n0:]
    k = len(seg)
    if k < 12 or not np.any(seg):
        return np.zeros(len(freqs), complex), 0.0, 0.0, 0
    lp = k // 3
    hank = np.array([seg[i:i + lp + 1] for i in range(k - lp)])
    _, sv, vh = np.linalg.svd(hank, full_matrices=False)
    order = int(min(max_order, max(1, np.sum(sv > tol * sv[0]))))
    v = vh[:order].conj().T
    z = np.linalg.eigvals(np.linalg.pinv(v[:-1]) @ v[1:])
    z = z[np.abs(z) < 1.0]  # growing terms are fit artefacts: leave them out
    vander = z[None, :] ** np.arange(k)[:, None]
    c = np.linalg.lstsq(vander, seg.astype(complex), rcond=None)[0]
    resid = float(np.linalg.norm(vander @ c - seg) / np.linalg.norm(seg))
    t_next = t[-1] + ts
    w = 2 * np.pi * np.asarray(freqs)
    e = np.exp(-1j * w * ts)
    zn = c * z ** k
    tail = 2 * ts * np.exp(-1j * w * t_next) * np.sum(zn[None, :] / (1 - z[None, :] * e[:, None]),
                                                      axis=1)
    if resid > MAX_FIT_RESID:  # the late signal is not a sum of few modes (noise): no tail
        tail = np.zeros(len(freqs), complex)
    return tail, float(np.abs(z).max() if len(z) else 0.0), resid, order


def _s_params(ports, sim, keep=None, extrapolate=False):
    """S11, S21 (thru) and S21 (probe) from the ports' time signals, all referred to the
    wave incident on port 1; `keep` truncates every signal to its first `keep` samples;
    `extrapolate` adds each signal's matrix-pencil tail beyond the record."""
    waves, diag = port_waves(ports, sim, keep, extrapolate)
    inc1 = waves[0][0]
    out = dict(s11=waves[0][1] / inc1, s21_thru=waves[1][1] / inc1)
    if len(waves) > 2:
        out["s21_probe"] = waves[2][1] / inc1
    if extrapolate:
        out["diag"] = diag
    return out, waves[0][2], waves[0][3]


def port_waves(ports, sim, keep=None, extrapolate=False):
    """Per port, the 50-ohm (incident, reflected) spectra, the record's length and end time,
    and the tails' diagnostics (see `_s_params`)."""
    from openEMS import utilities
    waves, diag = [], []
    for p in ports:
        u = np.loadtxt(os.path.join(sim, p.U_filenames[0]), comments="%")
        i = np.loadtxt(os.path.join(sim, p.I_filenames[0]), comments="%")
        if keep is not None:
            u, i = u[:keep], i[:keep]
        uf = utilities.DFT_time2freq(u[:, 0], u[:, 1], FREQS)
        jf = utilities.DFT_time2freq(i[:, 0], i[:, 1], FREQS)
        if extrapolate:
            tu, zu, ru, ou = _pencil_tail(u[:, 0], u[:, 1], FREQS)
            ti, zi, ri, oi = _pencil_tail(i[:, 0], i[:, 1], FREQS)
            used = max(ru, ri) <= MAX_FIT_RESID  # a port's u and i get a tail together or not
            if used:
                uf, jf = uf + tu, jf + ti
            diag.append(dict(max_abs_z=max(zu, zi), resid=max(ru, ri), order=max(ou, oi),
                             tail_used=used))
        inc = 0.5 * (uf + 50.0 * jf)
        waves.append((inc, uf - inc, len(u), float(u[-1, 0])))
    return waves, diag


def post(case, mesh_name):
    """S-parameters of a finished run: from the record plus its matrix-pencil tail (the
    values recorded), from the record alone (`*_raw`), and from the first 80 % of the record
    plus its own tail (`*_cut_change_db`, the change: the tail's self-check)."""
    work = os.environ.get("FDTD_WORK", "/tmp/loopwright-fdtd")
    sim = os.path.join(work, f"{case}-{mesh_name}")
    _, _, ports, _ = build(case, mesh_name)
    res = json.load(open(os.path.join(work, f"{case}-{mesh_name}.info.json")))
    raw, n, t_end = _s_params(ports, sim)
    full, _, _ = _s_params(ports, sim, extrapolate=True)
    cut, _, t_cut = _s_params(ports, sim, keep=int(0.8 * n), extrapolate=True)
    res["freq_hz"] = list(map(float, FREQS))
    res["time_end_s"] = t_end
    res["time_cut_s"] = t_cut
    res["tail_fit"] = full.pop("diag")
    cut.pop("diag")
    for k, v in full.items():
        res[k] = [[float(c.real), float(c.imag)] for c in v]
        res[k + "_raw"] = [[float(c.real), float(c.imag)] for c in raw[k]]
        res[k + "_cut_change_db"] = [float(20 * np.log10(abs(a) / abs(b)))
                                     for a, b in zip(cut[k], v)]
    with open(os.path.join(work, f"{case}-{mesh_name}.json"), "w") as f:
        json.dump(res, f)
    print(json.dumps({k: res.get(k) for k in ("cells", "timesteps", "run_seconds", "dt_s")}))


def _db(c):
    return 20 * math.log10(abs(c))


def _deg(c):
    return math.degrees(math.atan2(c.imag, c.real))


def _cplx(lst):
    return [complex(a, b) for a, b in lst]


def _arr(vals, fmt="{:.4f}"):
    return "[" + ", ".join(fmt.format(v) for v in vals) + "]"


SIMPLIFICATIONS = [
    "copper is PEC and zero-thickness: every copper layer is a sheet at its dielectric interface"
    " (probe: L1 at y = +0.7425, L2 at +0.5325, L3 at -0.5325, L4 at -0.7425 mm; board mid-plane"
    " y = 0 through the line's axis); the line's strip is a sheet on the substrate (z = 1.53 mm),"
    " heights are still measured from its real copper top (z = 1.565 mm)",
    "dielectrics lossless (tan d omitted); no solder mask on either board",
    "stitching-via rows (+-0.658 mm about the centreline) modelled as continuous PEC walls 0.3 mm"
    " thick from L1 to L4; the walls stop 0.5 mm from the apex axis (gap 0.4 mm plus 0.3 mm);"
    " the outer row opens where the feed leaves and joins the feed's two rows up the handle"
    " (x = -0.987 and +0.329 mm)",
    "the short is one square PEC post (0.3 mm) through all layers at the trace's far end"
    " (x = +0.329 mm), the feed leaves the loop at x = -0.329 mm (port 1's side) towards the"
    " handle through a 0.2 mm clearance on each side in the L2 ground",
    "handle shortened to 6 mm above the ring's outer edge (real: 40 mm), 8 mm wide, shield on"
    " L1/L3/L4 and L2 ground, closed by a PEC end cap across the board; the output is a 50-ohm"
    " lumped port (0.2 mm long, trace width) between the trace end and that cap, in place of"
    " the connector; no coaxial cable on the probe (its shield floats)",
    "the shield ring's junction with the handle is simplified: the handle's copper starts at the"
    " centreline's top (z = loop centre + r), the L2 handle ground at the slot's outer edge",
    "fixture: a 50 mm uniform microstrip (real: 74 mm between the pads, tapers at the ends)"
    " with 50-ohm lumped ports (sheets from the ground to the strip, strip wide) at both ends;"
    " the substrate fills the whole x-y extent of the domain; no coplanar ground pour, no"
    " stitching vias, no connectors; the ground plane is the domain's PEC bottom boundary"
    " (an infinite plane); the other five faces are 8-cell PML",
    "staircase (rectilinear) mesh of the round loop: graded mesh, uniform cell d in the probe's"
    " x-z region, prepreg and core split into ny_pre and ny_core cells across y",
]


def _run_block(w, case, mesh, r):
    """One [[run]] table: the run facts of one JSON result."""
    mp, g = r["mesh_params"], r.get("geo") or {}
    row = dict(case=f"'{case}'", mesh=f"'{mesh}'", cell_probe_region_mm=mp["d"],
               cells_prepreg=mp["ny_pre"], cells_core=mp["ny_core"], cell_max_mm=mp["dmax"],
               end_criterion=mp["end"], lines_xyz=[r["nx"], r["ny"], r["nz"]],
               cells=r["cells"], min_cell_mm=round(r["min_cell_mm"], 4), dt_s=r["dt_s"],
               timesteps=r["timesteps"], simulated_time_s=float(f"{r['time_end_s']:.4e}"),
               end_energy_db=r["end_energy_db"], run_seconds=r["run_seconds"])
    reached = r["end_energy_db"] is not None and r["end_energy_db"] <= 10 * math.log10(mp["end"])
    row["stopped_by"] = ("'end criterion'" if reached else
                         "'hand (ABORT file in the run folder): time budget; see the tail'")
    for k in ("zc", "apex_centreline", "tip", "handle_end"):
        if k in g:
            row[{"zc": "loop_centre"}.get(k, k) + "_z_mm"] = round(g[k], 4)
    w("[[run]]")
    for k, v in row.items():
        w(f"{k} = {v}")
    w("")


def _sparam_block(w, case, mesh, r):
    """One [[sparam]] table: every frequency of one run."""
    f = r["freq_hz"]
    w("[[sparam]]")
    w(f"case = '{case}'\nmesh = '{mesh}'")
    w(f"freq_hz = {_arr(f, '{:.6e}')}")
    for k in ("s21_probe", "s21_thru", "s11"):
        if k in r:
            c = _cplx(r[k])
            w(f"{k}_db = {_arr([_db(v) for v in c])}")
            w(f"{k}_deg = {_arr([_deg(v) for v in c], '{:.2f}')}")
            w(f"{k}_raw_db = {_arr([_db(v) for v in _cplx(r[k + '_raw'])])}")
            w(f"{k}_cut_change_db = {_arr(r[k + '_cut_change_db'])}")
    if "s21_probe" in r:
        band = [i for i, fr in enumerate(f) if BAND_NP[0] <= fr <= BAND_NP[1]]
        mags = [_db(_cplx(r["s21_probe"])[i]) for i in band]
        lo, hi = band[int(np.argmin(mags))], band[int(np.argmax(mags))]
        if lo not in (band[0], band[-1]):  # an interior minimum only (FM-R5 has none)
            w(f"null_hz = {f[lo]:.4e}\nnull_db = {_db(complex(*r['s21_probe'][lo])):.2f}")
        if hi not in (band[0], band[-1]):
            w(f"peak_hz = {f[hi]:.4e}\npeak_db = {_db(complex(*r['s21_probe'][hi])):.2f}")
    for n, d in enumerate(r.get("tail_fit", []), start=1):
        w(f"tail_fit_port{n} = {{ order = {d['order']}, max_abs_z = {d['max_abs_z']:.6f}, "
          f"rms_resid = {d['resid']:.3e}, used = {str(d['tail_used']).lower()} }}")
    w("")


def _richardson_block(w, case, ms, runs):
    """A [[richardson]] table from three meshes `ms` (coarsest first) of `case`."""
    # Richardson extrapolation of |S21| in dB to a zero cell (the probe region's cell d):
    # the observed order p from three meshes, per frequency, where the changes share a sign
    # and p falls in [0.5, 4]; the extrapolated value m0 = m3 + (m3 - m2)/((d2/d3)^p - 1).
    ds = [MESHES[m]["d"] for m in ms]
    mags = [[_db(v) for v in _cplx(runs[(case, m)]["s21_probe"])] for m in ms]
    fr = runs[(case, ms[-1])]["freq_hz"]
    pp, m0 = [], []
    for i in range(len(fr)):
        a, b, c = (mags[0][i], mags[1][i], mags[2][i])
        e1, e2 = b - a, c - b
        p = None
        if e1 * e2 > 0 and abs(e2) > 1e-4:
            g = lambda q: (ds[0] ** q - ds[1] ** q) / (ds[1] ** q - ds[2] ** q) - e1 / e2
            lo, hi = 0.5, 4.0
            if g(lo) * g(hi) < 0:
                for _ in range(60):
                    mid = 0.5 * (lo + hi)
                    lo, hi = (mid, hi) if g(lo) * g(mid) > 0 else (lo, mid)
                p = 0.5 * (lo + hi)
        pp.append(p)
        m0.append(None if p is None else c + e2 / ((ds[1] / ds[2]) ** p - 1))
    w("[[richardson]]")
    w(f"case = '{case}'")
    w(f"meshes = {ms}")
    w(f"cell_probe_region_mm = {ds}")
    w(f"freq_hz = {_arr(fr, '{:.6e}')}")
    w("# nan where the three meshes do not converge monotonically (order undefined)")
    w("order = [" + ", ".join("nan" if p is None else f"{p:.3f}" for p in pp) + "]")
    w(f"extrapolated_db = [{', '.join('nan' if v is None else f'{v:.4f}' for v in m0)}]")
    w("")


def _table_block(w, case, mesh, r):
    """One [[table]]: |S21| and phase at the table frequencies."""
    k = "s21_probe" if "s21_probe" in r else "s21_thru"
    c = _cplx(r[k])
    idx = [r["freq_hz"].index(t) for t in TABLE_F]
    w("[[table]]")
    w(f"case = '{case}'\nmesh = '{mesh}'\nquantity = '{k}'")
    w(f"freq_hz = {_arr(TABLE_F, '{:.0f}')}")
    w(f"mag_db = {_arr([_db(c[i]) for i in idx], '{:.2f}')}")
    w(f"phase_deg = {_arr([_deg(c[i]) for i in idx], '{:.1f}')}")
    if case == "line":
        s11 = _cplx(r["s11"])
        w(f"s11_db = {_arr([_db(s11[i]) for i in idx], '{:.2f}')}")
    w("")


def toml_out():
    work = os.environ.get("FDTD_WORK", "/tmp/loopwright-fdtd")
    runs = {}
    for case in ("line", "R10", "R5"):
        for mesh in ("coarse", "fine", "finer"):
            fn = os.path.join(work, f"{case}-{mesh}.json")
            if os.path.exists(fn):
                runs[(case, mesh)] = json.load(open(fn))
    import subprocess
    pkg = subprocess.run(["dpkg-query", "-W", "-f=${Version}", "openems"], capture_output=True,
                         text=True).stdout.strip()
    pypkg = subprocess.run(["dpkg-query", "-W", "-f=${Version}", "python3-openems"],
                           capture_output=True, text=True).stdout.strip()
    logtxt = open(os.path.join(work, "R10-coarse.log"), errors="replace").read() \
        if os.path.exists(os.path.join(work, "R10-coarse.log")) else ""
    ver = re.findall(r"openEMS \d+bit -- version (\S+)", logtxt)
    cver = re.findall(r"CSXCAD -- Version: (\S+)", logtxt)
    o = []
    w = o.append
    w("# Full-wave references: S21 from the demo fixture's line input (port 1) to the demo probes'")
    w("# output, FM-R10 and FM-R5 standing on the line, tip 1 mm above the line's copper, loop plane")
    w("# containing the line's axis, apex (shield gap) towards the line.")
    w("# Generated by: /usr/bin/python3 tests/reference/fdtd_refs.py toml > tests/data/fdtd_refs.toml")
    w("# after the runs listed in that script (CI never runs them).")
    w(f"# Solver: openEMS {ver[0] if ver else '?'} with CSXCAD {cver[0] if cver else '?'} (Debian"
      f" packages openems {pkg}, python3-openems {pypkg}); python {sys.version.split()[0]},"
      f" numpy {np.__version__}; date {time.strftime('%Y-%m-%d', time.gmtime())}.")
    w("# Calls: openEMS(EndCriteria=end, NrTS=120000); SetGaussExcite(1.55e9, 1.55e9);")
    w("#   SetBoundaryCond(['PML_8']*4 + ['PEC', 'PML_8']); AddLumpedPort(n, 50.0, ...);")
    w("#   Run(sim, numThreads=2); S from the ports' time signals by openEMS.utilities.DFT_time2freq,")
    w("#   a_1 = (u1 + 50 i1)/2, b_n = u_n - (u_n + 50 i_n)/2, S_n1 = b_n/a_1 (50-ohm reference).")
    w("# Phase reference planes: port 1 at x = -25 mm on the line (the probe stands at x = 0), the")
    w("# probe's port at the end of its shortened handle (6 mm above the ring); the phases include")
    w("# those line lengths (a matched line only adds delay). Probe port voltage = trace - shield.")
    w("# Geometry and simplifications (lengths in mm):")
    for t in SIMPLIFICATIONS:
        w("#  - " + t)
    w("# Run length and the late-time tail: the structure is lossless, and the 10 mm loop has a")
    w("# high-Q resonance near 2 GHz (our reading: gap capacitance with the outer loop while the")
    w("# shorted stub is near a quarter wave, so the 50-ohm load barely damps it), which rings")
    w("# for tens of ns. Every recorded value is therefore the DFT of the record PLUS the analytic")
    w("# DFT of a matrix-pencil fit (Hua and Sarkar, IEEE Trans. ASSP, 1990, from memory) of each port signal from 3 ns to the end")
    w("# of the record, continued to infinity (`_pencil_tail`; a port gets no tail if the fit's rms")
    w("# residual exceeds 2 %). `*_raw_db`: the record alone. `*_cut_change_db`: change when only")
    w("# the first 80 % of the record is used (with its own tail): the tail's self-check.")
    w("# run_seconds: wall clock, nice 19, numThreads=2 on two cores shared with other jobs and")
    w("# with up to three of these runs at once: a rough cost, not a benchmark.")
    w("# null_hz/peak_hz: lowest and highest |S21| of the probe between 1.5 and 2.6 GHz (0.01 GHz grid).")
    w("# Mesh convergence: `convergence` gives fine minus coarse |S21| per frequency, and the same")
    w("# with the coarse record cut at the fine run's end time (same run length, mesh only).")
    w("# Each probe has a third, finer mesh; `richardson` extrapolates |S21| to a zero cell with")
    w("# the order observed from the three meshes (Richardson; the grid-convergence method of")
    w("# Roache, from memory).")
    w("")
    w("[setup]")
    setup = dict(line_length_mm=LINE_LEN, line_width_mm=LINE_W, line_substrate_mm=LINE_H,
                 line_er=LINE_ER, line_copper_top_mm=LINE_H + LINE_T, tip_height_mm=TIP_HEIGHT,
                 copper_to_edge_mm=EDGE, ring_half_width_mm=RING_HW, trace_width_mm=TRACE_W,
                 slot_mm=SLOT, fence_offset_mm=FENCE, fence_wall_mm=WALL_T, gap_mm=GAP,
                 feed_x_mm=FEED_X, handle_length_mm=HANDLE_LEN, handle_width_mm=HANDLE_W,
                 port_ohms=50.0, excitation="'gauss, f0 = fc = 1.55 GHz'")
    for k, v in setup.items():
        w(f"{k} = {v}")
    w(f"table_freq_hz = {_arr(TABLE_F, '{:.0f}')}")
    w("")
    for (case, mesh), r in runs.items():
        _run_block(w, case, mesh, r)
    for (case, mesh), r in runs.items():
        _sparam_block(w, case, mesh, r)
    for case in ("R10", "R5"):
        if (case, "coarse") in runs and (case, "fine") in runs:
            rc, rf = runs[(case, "coarse")], runs[(case, "fine")]
            c = _cplx(rc["s21_probe"])
            fi = _cplx(rf["s21_probe"])
            _, _, ports, _ = build(case, "coarse")
            sim = os.path.join(work, f"{case}-coarse")
            u = np.loadtxt(os.path.join(sim, ports[0].U_filenames[0]), comments="%")
            keep = int(np.searchsorted(u[:, 0], rf["time_end_s"])) + 1
            cut, _, t_cut = _s_params(ports, sim, keep=keep, extrapolate=True)
            w("[[convergence]]")
            w(f"case = '{case}'")
            w(f"freq_hz = {_arr(rf['freq_hz'], '{:.6e}')}")
            w(f"fine_minus_coarse_db = {_arr([_db(b) - _db(a) for a, b in zip(c, fi)])}")
            w(f"fine_minus_coarse_same_time_db = "
              f"{_arr([_db(b) - _db(a) for a, b in zip(cut['s21_probe'], fi)])}")
            w(f"fine_minus_coarse_deg = "
              f"{_arr([(_deg(b) - _deg(a) + 180) % 360 - 180 for a, b in zip(c, fi)], '{:.2f}')}")
            w(f"coarse_cut_time_s = {t_cut:.4e}")
            w("")
    for case in ("R10", "R5"):
        ms = [m for m in ("coarse", "fine", "finer") if (case, m) in runs]
        if len(ms) == 3:
            _richardson_block(w, case, ms, runs)
    w("# |S21| (dB re the wave incident on the line) at the table frequencies")
    for (case, mesh), r in runs.items():
        _table_block(w, case, mesh, r)
    print("\n".join(o))


def toml_append(case, mesh):
    """The blocks of one later run (its JSON under $FDTD_WORK) to append to the recorded file,
    and a Richardson table of the three finest meshes, the other two read back from the file
    (their |S21| in dB as recorded, 4 decimals: what the extrapolation uses)."""
    import tomllib
    work = os.environ.get("FDTD_WORK", "/tmp/loopwright-fdtd")
    here = os.path.dirname(os.path.abspath(__file__))
    rec = tomllib.load(open(os.path.join(here, "..", "data", "fdtd_refs.toml"), "rb"))
    r = json.load(open(os.path.join(work, f"{case}-{mesh}.json")))
    runs = {}
    for sp in rec["sparam"]:
        if sp["case"] == case and "s21_probe_db" in sp:
            c = [10 ** (m / 20) * np.exp(1j * math.radians(a))
                 for m, a in zip(sp["s21_probe_db"], sp["s21_probe_deg"])]
            runs[(case, sp["mesh"])] = {"freq_hz": sp["freq_hz"],
                                        "s21_probe": [[v.real, v.imag] for v in c]}
    runs[(case, mesh)] = r
    o = []
    w = o.append
    day = time.strftime('%Y-%m-%d', time.gmtime())
    w(f"# Appended: {case} on the '{mesh}' mesh (recorded {day}, same script and packages), by")
    w(f"#   /usr/bin/python3 tests/reference/fdtd_refs.py append {case} {mesh}"
      " >> tests/data/fdtd_refs.toml")
    w("# and a Richardson table of the three finest meshes, the coarser two read back from this")
    w("# file (|S21| dB as recorded above).")
    _run_block(w, case, mesh, r)
    _sparam_block(w, case, mesh, r)
    ms = sorted((m for (c, m) in runs if c == case), key=lambda m: -MESHES[m]["d"])[-3:]
    _richardson_block(w, case, ms, runs)
    _table_block(w, case, mesh, r)
    print("\n".join(o))


if __name__ == "__main__":
    if sys.argv[1] == "run":
        run(sys.argv[2], sys.argv[3])
    elif sys.argv[1] == "post":
        post(sys.argv[2], sys.argv[3])
    elif sys.argv[1] == "toml":
        toml_out()
    elif sys.argv[1] == "append":
        toml_append(sys.argv[2], sys.argv[3])
