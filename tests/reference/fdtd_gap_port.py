# Full-wave (FDTD, openEMS) reference of the shield's gap circuit alone: the demo probe of
# fdtd_refs.py on the same fixture and mesh, with the inner trace, its feed and its short
# removed, L2 filled like the other shield layers, and a lumped port across the cut on L2 at
# the centreline (where the trace crosses it). The port sees the shield loop's inductance in
# parallel with the capacitance across the cut (and its own small series inductance), with no
# line to de-embed.
# Two variants: `open` (the cut as built) and `bridged` (PEC sheets over the cut on L1, L3 and
# L4, as in fdtd_probe_port.py): bridged, the port sees only its own crossing, so
# Z_open - Z_bridged is the shield's impedance at the gap, j*w*L/(1 - w^2*L*C) for a lumped
# L_out in parallel with C_gap.
# Excited and evaluated to 8 GHz (the 2-D gap capacitance puts the parallel resonance near
# 6 GHz on FM-R5). CI never runs this; results go to tests/data/fdtd_gap_port.toml.
#
# Needs Debian's openEMS (see fdtd_refs.py). From the repo root:
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_gap_port.py run R5 fine-long open
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_gap_port.py run R5 fine-long bridged
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_gap_port.py run R5 finer-long open
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_gap_port.py run R5 finer-long bridged
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_gap_port.py run R10 fine-long open
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_gap_port.py run R10 fine-long bridged
#     /usr/bin/python3 tests/reference/fdtd_gap_port.py toml > tests/data/fdtd_gap_port.toml
# The plane-wave runs (the probe alone in air), recorded with them:
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_gap_port.py run R5 fine-long wave
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_gap_port.py run R5 fine-long wave-bare
# and later, appended as its own block (1.6 M cells, 47 min):
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_gap_port.py run R5 fine-long wave-long
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_gap_port.py run R10 fine-long wave-bare
#     nice -n 19 /usr/bin/python3 tests/reference/fdtd_gap_port.py run R10 fine wave-long  # 2.7 M cells
import json
import os
import sys

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import fdtd_probe_port as P  # noqa: E402
import fdtd_refs as R  # noqa: E402

R.F_MIN, R.F_MAX = 50e6, 8e9
R.FREQS = np.unique(np.concatenate([np.geomspace(R.F_MIN, R.F_MAX, 161),
                                    [100e6, 300e6, 1e9, 2e9, 3e9, 5e9]]))
VARIANTS = ("open", "bridged", "wave", "wave-bare", "wave-long")
# `wave`: the probe alone in air (no fixture, PML on every face), the gap port a passive 50-ohm
# load, lit by a plane wave (total-field/scattered-field box round the probe) travelling along
# x in the loop's plane, E along z (the loop's axis: the electric field the symmetric shield
# rejects) and H along y, normal to the loop: the magnetic response in a uniform field,
# V_port/H_inc, the probe factor's own quantity.
WAVE_MARGIN = 1.0  # mm between the probe board and the plane wave's box
RUNS = [("R5", "fine-long"), ("R5", "finer-long"), ("R10", "fine-long"), ("R10", "fine")]


def _sim(case, mesh, variant):
    work = os.environ.get("FDTD_WORK", "/tmp/loopwright-fdtd")
    return os.path.join(work, f"{case}-{mesh}-gap-{variant}")


def _build(case, mesh, variant):
    if variant == "wave-long":
        # the same with the demo's own handle length (40 mm above the ring, 8 mm wide): how
        # much the handle's copper adds when it is as long as built
        keep = R.HANDLE_LEN
        R.HANDLE_LEN = 40.0
        try:
            return _build(case, mesh, "wave")
        finally:
            R.HANDLE_LEN = keep
    if variant == "wave-bare":
        # the same without the handle: its shield cut back to a neck 0.3 mm above the ring,
        # as wide as the ring (how much of the uniform-field response the handle's copper adds)
        keep = (R.HANDLE_LEN, R.HANDLE_W)
        R.HANDLE_LEN, R.HANDLE_W = 0.3, 2 * (R.RING_HW + R.EDGE)
        try:
            return _build(case, mesh, "wave")
        finally:
            R.HANDLE_LEN, R.HANDLE_W = keep
    if variant != "wave":
        return R.build(case, mesh, drive_probe=True, bridged=(variant == "bridged"),
                       gap_port=True)
    fdtd, csx, ports, info = R.build(case, mesh, gap_port=True, fixture=False)
    g = info["geo"]
    r = g["r"] + R.RING_HW + R.EDGE + WAVE_MARGIN
    hw = max(r, R.HANDLE_W / 2 + WAVE_MARGIN)
    exc = csx.AddExcitation("plane_wave", exc_type=10, exc_val=[0, 0, 1])  # E along z, 1 V/m
    exc.SetPropagationDir([1, 0, 0])
    exc.SetFrequency(0.5 * (R.F_MAX + 0.1e9))
    exc.AddBox([-hw, R.Y_L4 - WAVE_MARGIN, g["tip"] - WAVE_MARGIN],
               [hw, R.Y_L1 + WAVE_MARGIN, g["handle_end"] + WAVE_MARGIN], priority=0)
    return fdtd, csx, ports, info


def run(case, mesh, variant):
    if variant not in VARIANTS:
        sys.exit(f"unknown variant {variant}")
    sim = _sim(case, mesh, variant)
    if R.run_engine(_build(case, mesh, variant), sim, sim, {"variant": variant}):
        post(case, mesh, variant)


def post(case, mesh, variant):
    sim = _sim(case, mesh, variant)
    _, _, ports, _ = _build(case, mesh, variant)
    res = json.load(open(sim + ".info.json"))
    if variant.startswith("wave"):
        return _post_wave(sim, ports[0], res)
    w, _ = R.port_waves(ports, sim, extrapolate=True)
    cut, _ = R.port_waves(ports, sim, keep=int(0.8 * w[0][2]), extrapolate=True)
    s33 = w[2][1] / w[2][0]
    s33c = cut[2][1] / cut[2][0]
    res["freq_hz"] = list(map(float, R.FREQS))
    res["s33"] = [[float(c.real), float(c.imag)] for c in s33]
    for k, n in (("s13", 0), ("s23", 1)):
        res[k] = [[float(c.real), float(c.imag)] for c in w[n][1] / w[2][0]]
    res["s33_cut_change_deg"] = [float(np.degrees(np.angle(b / a))) for a, b in zip(s33, s33c)]
    with open(sim + ".json", "w") as f:
        json.dump(res, f)
    print(json.dumps({k: res.get(k) for k in ("cells", "timesteps", "run_seconds")}))


def _spectrum(sim, fname, keep=None):
    """DFT of one time signal (t, v) of the run, with its matrix-pencil tail."""
    from openEMS import utilities
    u = np.loadtxt(os.path.join(sim, fname), comments="%")
    if keep is not None:
        u = u[:keep]
    tail = R._pencil_tail(u[:, 0], u[:, 1], R.FREQS)
    return utilities.DFT_time2freq(u[:, 0], u[:, 1], R.FREQS) + tail[0], len(u)


def _post_wave(sim, port, res):
    """V_port/H_inc (m, complex): the port's voltage over the incident H (E/eta0, E from the
    excitation's own time signal `et`, 1 V/m peak); and its tail's self-check in dB."""
    e, _ = _spectrum(sim, "et")
    v, n = _spectrum(sim, port.U_filenames[0])
    vc, _ = _spectrum(sim, port.U_filenames[0], keep=int(0.8 * n))
    eta0 = 376.730313668
    vh = v / (e / eta0)
    res["freq_hz"] = list(map(float, R.FREQS))
    res["v_per_h"] = [[float(c.real), float(c.imag)] for c in vh]
    res["v_cut_change_db"] = [float(20 * np.log10(abs(b / a))) for a, b in zip(v, vc)]
    with open(sim + ".json", "w") as f:
        json.dump(res, f)
    print(json.dumps({k: res.get(k) for k in ("cells", "timesteps", "run_seconds")}))


def toml_out():
    o = []
    w = o.append
    w("# Full-wave reference: the shield's gap circuit alone (the demo probes on the demo fixture")
    w("# as in fdtd_refs.toml, same geometry and simplifications, but no inner trace, feed or")
    w("# short; L2 filled as a shield layer; a 50-ohm lumped port across the cut on L2 at the")
    w("# centreline, x from -0.2 to +0.2 mm, 0.216 mm tall), the line's ports terminated.")
    w("# Generated by: /usr/bin/python3 tests/reference/fdtd_gap_port.py toml")
    w("# after the runs listed in that script (CI never runs them). openEMS v0.0.35, Debian.")
    w("# Calls as fdtd_refs.py, but SetGaussExcite(4.05e9, 4.05e9) (to 8 GHz),")
    w("# AddLumpedPort(3, 50.0, ..., 'x', excite=1.0) across the cut; S33 = b3/a3, S13 = b1/a3,")
    w("# S23 = b2/a3 (50-ohm waves, matrix-pencil tails). variant 'bridged': PEC sheets over the")
    w("# cut on L1, L3, L4. The line's voltage at port 1 over the gap's current gives the mutual")
    w("# inductance as the line sees the gap driven: M_eff = 2*50*S13/(j*w*(1 - S33)).")
    w("# variant 'wave': the probe alone in air (no fixture; PML_8 on all six faces), the gap port")
    w("# passive, a plane wave (AddExcitation(exc_type=10, exc_val=[0, 0, 1]), SetPropagationDir(")
    w("# [1, 0, 0]), box 1 mm round the board) with E along the loop's axis and H normal to the")
    w("# loop: v_per_h = V_port/H_inc (m), H_inc = E/eta0 from the excitation's signal `et`.")
    w("# s33_cut_change_deg: the phase change of S33 when only the first 80 % of the record is")
    w("# used (with its own tail): the tail's self-check.")
    w("")
    for case, mesh in RUNS:
        for v in VARIANTS:
            p = _sim(case, mesh, v) + ".json"
            if not os.path.exists(p):
                continue
            r = json.load(open(p))
            if v.startswith("wave"):
                P._run_block(w, case, mesh, v, r, ("v_per_h",), "{:.6e}",
                             ("v_cut_change_db", "{:.4f}"))
            else:
                P._run_block(w, case, mesh, v, r, ("s33", "s13", "s23"), "{:.7f}")
    print("\n".join(o))


if __name__ == "__main__":
    {"run": run, "post": post, "toml": toml_out}[sys.argv[1]](*sys.argv[2:])
