# Full-wave (FDTD, openEMS) reference of a multi-turn loop seen from its own output: a 10 mm
# round loop on common-4l-1.6 built with one turn (L2) and with two turns stacked on L2 and L3,
# each alone in free space (PML on all faces), driven at its output port at the handle's end.
# Records S33 of each; the test reads the port impedance Z = 50*(1 + S33)/(1 - S33): its
# low-frequency inductance (two turns against one: the 1 : N transformer) and its first
# parallel resonance (the self-resonance).
# CI never runs this; results go to tests/data/fdtd_multiturn.toml.
#
# Needs Debian's openEMS (see fdtd_refs.py). From the repo root:
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_multiturn.py run 1
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_multiturn.py run 2
#     /usr/bin/python3 tests/reference/fdtd_multiturn.py toml > tests/data/fdtd_multiturn.toml
# The runs ring for tens of ns (PEC metal, lossless laminate): each was stopped by creating a
# file ABORT in its run folder and its S33 taken with matrix-pencil tails (fdtd_refs.py), then
#     /usr/bin/python3 tests/reference/fdtd_multiturn.py post TURNS
# redid the S-parameters with the tail's self-check (s33_cut: the first 80 % of the record).
#
# Geometry: fdtd_refs.py's probe (its stackup, trace, slot, ring, fence offset f, gap, handle of
# 6 mm with an end cap, coarse mesh) with the winding's junction of loopwright's construction
# (src/solve/winding.rs): every turn enters the ring at x = -e (e = 0.329, the feed's offset),
# turn k leaves it at x = e + f + (k - 1)*2f; turn 1 goes on towards the handle to its join via
# at (e + f, y_b + 2f) (y_b the centreline's end on the handle's side), turn 2 starts there on
# L3, runs across to x = -e and into the ring, and past its exit into the shield, shorted by a
# via. A single turn is built the same way (its exit at e + f, shorted there). Each copper layer
# that carries a turn is a ground sheet (ring with the cut, handle plate) with the trace's slot
# carved by a dielectric sheet of higher priority and the trace on top. Simplifications (stated
# in the TOML): the join via is a barrel from L2 to L3 only (the built via also runs to the outer
# layers, isolated in their clearances); the fence rows are walls: the ring's inner row, the
# outer row up to the junction, and one wall up the handle on each side of the junction (none
# between the lines there).
import json
import math
import os
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import fdtd_refs as R  # noqa: E402
import numpy as np  # noqa: E402
import CSXCAD  # noqa: E402
from openEMS import openEMS  # noqa: E402

D = 10.0
MESH = "coarse"
E = abs(R.FEED_X)
F = R.FENCE
VIA = 0.3  # via barrels modelled as square PEC boxes one drill wide
PAD = 0.6


def sim_dir(turns):
    work = os.environ.get("FDTD_WORK", "/tmp/loopwright-fdtd")
    return os.path.join(work, f"MT{turns}-{MESH}")


def arc_trace(zc, r, x_from, x_to, half):
    """The ring's band of half-width `half` about the centreline from x = -x_from (on the
    handle's side, left) through the apex to x = +x_to (on the handle's side, right)."""
    pa = -(math.pi - math.asin(x_from / r))
    pb = math.pi - math.asin(x_to / r)
    return R.ring_xz(zc, r - half, r + half, pa, pb)


def seg(x0, z0, x1, z1, half):
    """An axis-aligned strip of half-width `half` about the segment (x0, z0)-(x1, z1)."""
    return R.rect_xz(min(x0, x1) - half, max(x0, x1) + half, min(z0, z1) - half,
                     max(z0, z1) + half)


def build(turns):
    m = R.MESHES[MESH]
    d = m["d"]
    fdtd = openEMS(EndCriteria=m["end"], NrTS=200000)
    fdtd.SetGaussExcite(0.5 * (R.F_MAX + 0.1e9), 0.5 * (R.F_MAX + 0.1e9))
    fdtd.SetBoundaryCond(["PML_8"] * 6)
    csx = CSXCAD.ContinuousStructure()
    fdtd.SetCSX(csx)
    grid = csx.GetGrid()
    grid.SetDeltaUnit(1e-3)

    r = D / 2
    w, c = R.TRACE_W, R.SLOT
    ro, ri = r + R.RING_HW, r - R.RING_HW
    zc = 0.0
    z_end = zc + ro + R.HANDLE_LEN  # end cap
    z_p0 = z_end - R.PORT_LEN
    hw = R.HANDLE_W / 2
    exits = [E + F + k * 2 * F for k in range(turns)]
    yb = zc + r  # the centreline's end on the handle's side
    joins = [(exits[k], yb + 2 * F * (k + 1)) for k in range(turns - 1)]
    layers = [R.Y_L2, R.Y_L3][:turns]
    mats = {}
    for name, er, y0, y1 in [("prepreg_top", R.ER_PREPREG, R.Y_L2, R.Y_L1),
                             ("core", R.ER_CORE, R.Y_L3, R.Y_L2),
                             ("prepreg_bot", R.ER_PREPREG, R.Y_L4, R.Y_L3)]:
        mat = csx.AddMaterial(name, epsilon=er)
        mat.AddCylinder([0.0, y0, zc], [0.0, y1, zc], ro + R.EDGE, priority=2)
        mat.AddBox([-hw, y0, zc], [hw, y1, z_end], priority=2)
        mats[name] = mat
    pec = csx.AddMetal("probe_pec")
    # Every layer: the ring with the apex cut and the handle plate.
    for y in (R.Y_L1, R.Y_L2, R.Y_L3, R.Y_L4):
        pec.AddPolygon(R._ring_with_gap(zc, ri, ro), "y", y, priority=10)
        pec.AddPolygon(R.rect_xz(-hw, hw, zc + r, z_end), "y", y, priority=10)
    # The turns: each path as (arc, straight segments), its slot carved by the dielectric
    # beside it (priority 11), the trace on top (priority 12).
    slot_mat = {R.Y_L2: mats["prepreg_top"], R.Y_L3: mats["core"]}
    paths = []
    for k in range(turns):
        x_out = exits[k]
        z_out = zc + r * math.cos(math.asin(x_out / r))
        z_in = zc + r * math.cos(math.asin(E / r))
        segs = []
        if k == 0:
            segs.append((-E, z_in, -E, z_p0))  # the feed to the port
        else:
            jx, jz = joins[k - 1]
            segs.append((jx, jz, -E, jz))
            segs.append((-E, jz, -E, z_in))
        if k + 1 < turns:
            segs.append((x_out, z_out, x_out, joins[k][1]))
            channel_end = None
        else:
            # on past the exit into solid shield: the short via below the channel's end
            z_short = z_out + w / 2 + c + PAD / 2 + 0.05
            segs.append((x_out, z_out, x_out, z_short + PAD))
            channel_end = z_out
        paths.append((layers[k], x_out, segs, channel_end))
    for y, x_out, segs, channel_end in paths:
        slot = slot_mat[y]
        slot.AddPolygon(arc_trace(zc, r, E, x_out, w / 2 + c), "y", y, priority=11)
        for i, (x0, z0, x1, z1) in enumerate(segs):
            last = i == len(segs) - 1
            if last and channel_end is not None:
                # the short's run: its slot stops at the exit (the trace joins the shield)
                continue
            slot.AddPolygon(seg(x0, z0, x1, z1, w / 2 + c), "y", y, priority=11)
        pec.AddPolygon(arc_trace(zc, r, E, x_out, w / 2), "y", y, priority=12)
        for x0, z0, x1, z1 in segs:
            pec.AddPolygon(seg(x0, z0, x1, z1, w / 2), "y", y, priority=12)
    # Join vias (L2 to L3) and the last turn's short (through all layers).
    for jx, jz in joins:
        pec.AddBox([jx - VIA / 2, R.Y_L3, jz - VIA / 2], [jx + VIA / 2, R.Y_L2, jz + VIA / 2],
                   priority=13)
    x_s = exits[-1]
    z_s = zc + r * math.cos(math.asin(x_s / r)) + w / 2 + c + PAD / 2 + 0.05
    pec.AddBox([x_s - VIA / 2, R.Y_L4, z_s - VIA / 2], [x_s + VIA / 2, R.Y_L1, z_s + VIA / 2],
               priority=13)
    # Fence walls: the inner row; the outer row from the cut to the junction's walls; a wall up
    # the handle each side of the junction.
    gcut = R.GAP / 2 + 0.3
    rw_i, rw_o = r - F, r + F
    pec.AddLinPoly(R._ring_with_gap(zc, rw_i - R.WALL_T / 2, rw_i + R.WALL_T / 2, gcut), "y",
                   R.Y_L4, R.Y_L1 - R.Y_L4, priority=10)
    x_left, x_right = -E - F, exits[-1] + F
    for sgn, xend in ((+1, x_right), (-1, x_left)):
        pa = R.gap_phi(rw_o, gcut)
        pb = math.pi - math.asin(min(abs(xend) / rw_o, 1.0))
        if sgn < 0:
            pa, pb = -pb, -pa
        pec.AddLinPoly(R.ring_xz(zc, rw_o - R.WALL_T / 2, rw_o + R.WALL_T / 2, pa, pb), "y",
                       R.Y_L4, R.Y_L1 - R.Y_L4, priority=10)
    for xw in (x_left, x_right):
        zw0 = zc + math.sqrt(max(rw_o ** 2 - xw ** 2, 0.0)) - R.WALL_T
        pec.AddBox([xw - R.WALL_T / 2, R.Y_L4, zw0], [xw + R.WALL_T / 2, R.Y_L1, z_end],
                   priority=10)
    pec.AddBox([-hw, R.Y_L4, z_end], [hw, R.Y_L1, z_end], priority=10)
    p3 = fdtd.AddLumpedPort(3, 50.0, [-E - w / 2, R.Y_L2, z_end], [-E + w / 2, R.Y_L2, z_p0],
                            "z", excite=1.0, priority=5)
    fx = [0.0, -R.GAP / 2, R.GAP / 2, -E - w / 2, -E + w / 2] + \
        [x for xo in exits for x in (xo - w / 2, xo + w / 2)]
    fy = [R.Y_L1, R.Y_L2, R.Y_L3, R.Y_L4]
    fz = [z_p0, z_end] + [jz for _, jz in joins]
    rx = [(-ro - R.EDGE - 0.3, ro + R.EDGE + 0.3, d), (-hw, hw, d)]
    rz = [(zc - ro - 0.3, zc + ro + 0.3, d), (z_p0 - 0.3, z_end + 0.3, d)]
    span = ro + 16.0
    ylines = list(np.linspace(R.Y_L4, R.Y_L3, m["ny_pre"] + 1)) + \
        list(np.linspace(R.Y_L3, R.Y_L2, m["ny_core"] + 1)) + \
        list(np.linspace(R.Y_L2, R.Y_L1, m["ny_pre"] + 1))
    yfix = sorted(set(np.round(ylines, 6)))
    X = R.graded(-span, span, fx, rx, m["dmax"])
    Y = R.graded(-22.0, 22.0, sorted(set(fy + list(yfix))),
                 [(R.Y_L4, R.Y_L1, (R.Y_L1 - R.Y_L2) / m["ny_pre"])], m["dmax"])
    Y = np.array(sorted(set(np.round(np.concatenate([Y[(Y < R.Y_L4 - 0.05) | (Y > R.Y_L1 + 0.05)],
                                                    yfix]), 6))))
    Z = R.graded(zc - ro - 16.0, z_end + 18.0, fz, rz, m["dmax"])
    grid.SetLines("x", X)
    grid.SetLines("y", Y)
    grid.SetLines("z", Z)
    ncell = (len(X) - 1) * (len(Y) - 1) * (len(Z) - 1)
    geo = dict(d_mm=D, turns=turns, exits_mm=exits, joins_mm=joins, handle_mm=R.HANDLE_LEN,
               feed_run_mm=(z_p0 - (zc + r * math.cos(math.asin(E / r)))))
    info = dict(case=f"MT{turns}", mesh=MESH, mesh_params=m, cells=ncell, geo=geo)
    return fdtd, csx, [p3], info


def run(turns):
    sim = sim_dir(turns)
    if R.run_engine(build(turns), sim, sim):
        post(turns)


def post(turns):
    sim = sim_dir(turns)
    _, _, ports, _ = build(turns)
    res = json.load(open(sim + ".info.json"))
    w, _ = R.port_waves(ports, sim, extrapolate=True)
    s33 = w[0][1] / w[0][0]
    # The tail's self-check: S33 from the first 80 % of the record with its own tail.
    cut, _ = R.port_waves(ports, sim, keep=int(0.8 * w[0][2]), extrapolate=True)
    s33c = cut[0][1] / cut[0][0]
    res["freq_hz"] = list(map(float, R.FREQS))
    res["s33"] = [[float(c.real), float(c.imag)] for c in s33]
    res["s33_cut"] = [[float(c.real), float(c.imag)] for c in s33c]
    with open(sim + ".json", "w") as f:
        json.dump(res, f)
    print(json.dumps({k: res.get(k) for k in ("cells", "timesteps", "run_seconds")}))


def toml_out():
    o = []
    w = o.append
    w("# Full-wave reference: a 10 mm round loop with one turn and with two stacked turns, each")
    w("# alone in free space, driven at its own output port (S33). openEMS v0.0.35, Debian.")
    w("# Generated by: /usr/bin/python3 tests/reference/fdtd_multiturn.py toml, after")
    w("#   nice -n 19 /usr/bin/python3 tests/reference/fdtd_multiturn.py run 1")
    w("#   nice -n 19 /usr/bin/python3 tests/reference/fdtd_multiturn.py run 2")
    w("# Geometry and simplifications: see the script's header (fdtd_refs.py's probe, coarse mesh,")
    w("# the winding's junction as loopwright builds it; the join via a barrel L2-L3 only; fence")
    w("# rows as walls, none between the lines in the junction).")
    w("")
    for turns in (1, 2):
        p = sim_dir(turns) + ".json"
        if not os.path.exists(p):
            continue
        r = json.load(open(p))
        w("[[run]]")
        w(f"turns = {turns}\nmesh = '{MESH}'\ncells = {r['cells']}")
        w(f"run_seconds = {r.get('run_seconds')}\ntimesteps = {r.get('timesteps')}")
        w(f"end_energy_db = {r.get('end_energy_db')}")
        w(f"feed_run_mm = {r['geo']['feed_run_mm']:.4f}")
        w(f"freq_hz = {R._arr(r['freq_hz'], '{:.6e}')}")
        c = R._cplx(r["s33"])
        w(f"s33_re = {R._arr([x.real for x in c], '{:.6f}')}")
        w(f"s33_im = {R._arr([x.imag for x in c], '{:.6f}')}")
        c = R._cplx(r["s33_cut"])
        w(f"s33_cut_re = {R._arr([x.real for x in c], '{:.6f}')}")
        w(f"s33_cut_im = {R._arr([x.imag for x in c], '{:.6f}')}")
        w("")
    print("\n".join(o))


if __name__ == "__main__":
    if sys.argv[1] == "run":
        run(int(sys.argv[2]))
    elif sys.argv[1] == "post":
        post(int(sys.argv[2]))
    elif sys.argv[1] == "toml":
        toml_out()
