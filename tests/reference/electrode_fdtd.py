# openEMS (FDTD) reference for the electric probe's electrode (issue 12): the charge a disc set
# into a flat probe face collects from a microstrip below it, with the face as big as a probe's
# handle (finite) and as wide as the board (nearly unlimited), against the model of
# `physics::electrode` (face unlimited, collecting radius r + c/2).
#
# Stated geometry (ours, mm; x along the line, y across it, z up):
#  - ground plane z = 0 and FR-4 (er 4.3, lossless) 0..1.5 over x -20..20, y -15..15;
#  - trace: a zero-thickness sheet 3.0 mm wide on z = 1.5 from x = -20 to 20, a 50 ohm lumped
#    port at each end (ground to trace; port 1 driven, port 2 the load);
#  - probe face: a zero-thickness PEC sheet on z = 2.5 (1.0 mm above the trace), centred over
#    the line, `face` = half sizes (x, y): (8, 5) like a probe's tip and handle, or (19, 14)
#    nearly the board; a round aperture of radius 1.3 mm at the origin, and in it the electrode
#    disc of radius 1.0 mm (clearance 0.3 mm);
#  - the electrode's load: a 50 ohm lumped port (port 3) across the clearance along +x at
#    y = 0 (in the probe, the 50 ohm line behind the electrode; here the load sits at it);
#  - the face tied to the ground plane by a thin wire at each of its four corners (the probe's
#    shield at the line's ground, as the field solver's face is);
#  - air box 10 mm beyond the board on every side, Mur absorbing boundaries.
# Records: the line voltage under the electrode (a voltage probe from the ground plane to the
# trace at the origin) and port 3's voltage; C_m(f) = |V3| / (w * R * |V_line|) (the load's
# own capacitance, a fraction of a pF, is a fraction of a percent below 300 MHz).
#
# Run with Debian's python3 and its openems packages (never in CI; tens of minutes each):
#     /usr/bin/python3 tests/reference/electrode_fdtd.py /tmp/efdtd > tests/data/electrode_fdtd.toml
import datetime
import json
import math
import os
import re
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy  # noqa: E402

numpy.float = float  # Debian's openEMS 0.0.35 python module still uses the removed aliases
numpy.int = int
import numpy as np  # noqa: E402
from CSXCAD import ContinuousStructure  # noqa: E402
from openEMS import openEMS  # noqa: E402

from fdtd_common import dft, mesh_lines  # noqa: E402

H, W_TRACE, GAP = 1.5, 3.0, 1.0
ER = 4.3
R_DISC, CLEAR = 1.0, 0.3
L_HALF, B_HALF = 20.0, 15.0
AIR = 10.0
R_LOAD = 50.0
F0, FC = 0.75e9, 0.75e9  # Gaussian pulse: DC .. 1.5 GHz
FREQS = np.arange(1, 21) * 50e6  # 50 MHz .. 1 GHz
END_CRITERION = 1e-5  # -50 dB (never reached: see NR_TS)
# The face, its corner wires and the ground plane are closed loops of perfect conductor: they
# keep the flux the pulse's DC content left in them, so the field energy never falls below
# about -8 dB. The run stops after NR_TS steps (about 10 ns) instead, and the script reports how
# far the two records it uses have fallen by then (their last 5 % against their peaks).
NR_TS = 120000
FACES = {"handle": (8.0, 5.0), "board": (19.0, 14.0)}
D_FINE = 0.05  # cell across the clearance and the disc's rim, mm


def build(face):
    fx, fy = FACES[face]
    zf = H + GAP
    ra = R_DISC + CLEAR
    fdtd = openEMS(EndCriteria=END_CRITERION, NrTS=NR_TS)
    fdtd.SetGaussExcite(F0, FC)
    fdtd.SetBoundaryCond(["MUR"] * 6)
    csx = ContinuousStructure()
    fdtd.SetCSX(csx)
    grid = csx.GetGrid()
    grid.SetDeltaUnit(1e-3)
    xl, yl = L_HALF + AIR, B_HALF + AIR
    rim = [(-ra - 0.1, -R_DISC + 0.1, D_FINE), (R_DISC - 0.1, ra + 0.1, D_FINE),
           (-R_DISC, R_DISC, 0.2)]
    X = mesh_lines(-xl, xl, [-L_HALF, L_HALF, -fx, fx, -ra, -R_DISC, R_DISC, ra, 0.0],
                   rim + [(-L_HALF, -L_HALF + 0.5, 0.25), (L_HALF - 0.5, L_HALF, 0.25)], 1.0)
    Y = mesh_lines(-yl, yl, [-B_HALF, B_HALF, -fy, fy, -ra, -R_DISC, R_DISC, ra, 0.0,
                             -W_TRACE / 2, W_TRACE / 2, -0.1, 0.1],
                   rim + [(-W_TRACE / 2 - 0.2, -W_TRACE / 2 + 0.2, 0.1),
                          (W_TRACE / 2 - 0.2, W_TRACE / 2 + 0.2, 0.1)], 1.0)
    Z = mesh_lines(-AIR, zf + AIR, [0.0, H, zf], [(0.0, H, 0.25), (H, zf, 0.1), (zf - 0.2, zf + 0.2, D_FINE)], 1.0)
    grid.SetLines("x", X)
    grid.SetLines("y", Y)
    grid.SetLines("z", Z)
    fr4 = csx.AddMaterial("fr4", epsilon=ER)
    fr4.AddBox([-L_HALF, -B_HALF, 0.0], [L_HALF, B_HALF, H], priority=1)
    gnd = csx.AddMetal("ground")
    gnd.AddBox([-L_HALF, -B_HALF, 0.0], [L_HALF, B_HALF, 0.0], priority=10)
    sig = csx.AddMetal("trace")
    sig.AddBox([-L_HALF, -W_TRACE / 2, H], [L_HALF, W_TRACE / 2, H], priority=10)
    facem = csx.AddMetal("face")
    facem.AddBox([-fx, -fy, zf], [fx, fy, zf], priority=10)
    # The face is the probe's shield, at the line's ground: a wire from each of its corners
    # down to the ground plane (left floating, it would hold a charge the run never sheds).
    for sx in (-1, 1):
        for sy in (-1, 1):
            facem.AddBox([sx * fx, sy * fy, 0.0], [sx * fx, sy * fy, zf], priority=10)
    hole = csx.AddMaterial("aperture", epsilon=1.0)
    hole.AddCylinder([0.0, 0.0, zf - 0.01], [0.0, 0.0, zf + 0.01], ra, priority=20)
    disc = csx.AddMetal("electrode")
    disc.AddCylinder([0.0, 0.0, zf - 0.01], [0.0, 0.0, zf + 0.01], R_DISC, priority=30)
    fdtd.AddLumpedPort(1, R_LOAD, [-L_HALF, -W_TRACE / 2, 0.0], [-L_HALF, W_TRACE / 2, H], "z",
                       excite=1.0, priority=40)
    fdtd.AddLumpedPort(2, R_LOAD, [L_HALF, -W_TRACE / 2, 0.0], [L_HALF, W_TRACE / 2, H], "z",
                       priority=40)
    p3 = fdtd.AddLumpedPort(3, R_LOAD, [R_DISC, -0.1, zf], [ra, 0.1, zf], "x", priority=40)
    csx.AddProbe("vline", p_type=0).AddBox([0.0, 0.0, 0.0], [0.0, 0.0, H])
    cells = (len(X) - 1) * (len(Y) - 1) * (len(Z) - 1)
    info = dict(face=face, face_half_mm=[fx, fy], lines=[len(X), len(Y), len(Z)], cells=cells,
                min_cell_mm=[float(np.diff(A).min()) for A in (X, Y, Z)])
    return fdtd, p3, info


def run(face, work):
    sim = os.path.join(work, face)
    os.makedirs(sim, exist_ok=True)
    fdtd, p3, info = build(face)
    print(json.dumps(info), file=sys.stderr, flush=True)
    log = os.path.join(work, f"{face}.log")
    saved = os.dup(1)
    with open(log, "w") as lf:  # the engine prints on fd 1: keep it in a log
        os.dup2(lf.fileno(), 1)
        try:
            fdtd.Run(sim, cleanup=True, numThreads=2)
        finally:
            sys.stdout.flush()
            os.dup2(saved, 1)
            os.close(saved)
    text = open(log, errors="replace").read()
    en = re.findall(r"Energy: ~[\d.e+-]+ \(\s*-\s*([\d.]+)dB\)", text)
    ver = re.findall(r"openEMS \d+bit -- version (\S+)", text)
    info["end_energy_db"] = -float(en[-1]) if en else None
    info["openems"] = ver[0] if ver else "?"
    a = np.loadtxt(os.path.join(sim, "vline"), comments="%")
    v_line = dft(a[:, 0], a[:, 1], FREQS)
    p3.CalcPort(sim, FREQS)
    v3 = p3.uf_tot
    u3 = np.loadtxt(os.path.join(sim, p3.U_filenames[0]), comments="%")

    def tail_db(v):
        return float(20 * np.log10(np.abs(v[-max(2, len(v) // 20):]).max() / np.abs(v).max()))

    info["tail_db"] = [tail_db(a[:, 1]), tail_db(u3[:, 1])]
    info["t_end_ns"] = float(a[-1, 0] * 1e9)
    w = 2 * np.pi * FREQS
    info["c_m_ff"] = list(np.abs(v3) / (w * R_LOAD * np.abs(v_line)) * 1e15)
    return info


def main():
    work = sys.argv[1] if len(sys.argv) > 1 else "/tmp/efdtd"
    faces = sys.argv[2:] or list(FACES)
    print("# Written by tests/reference/electrode_fdtd.py (openEMS FDTD, Debian python3); "
          f"{datetime.date.today()}")
    print(f"# The script's header states the geometry. h = {H}, w = {W_TRACE}, er = {ER}, "
          f"face {GAP} mm above the trace, disc r = {R_DISC}, clearance {CLEAR}, load {R_LOAD} ohm.")
    print(f"freq_hz = [{', '.join(f'{f:.0f}' for f in FREQS)}]")
    for face in faces:
        info = run(face, work)
        print(f"\n[{face}]")
        print(f"face_half_mm = {info['face_half_mm']}")
        print(f"cells = {info['cells']}\nend_energy_db = {info['end_energy_db']}")
        print(f"t_end_ns = {info['t_end_ns']:.3f}")
        print(f"tail_db = [{info['tail_db'][0]:.1f}, {info['tail_db'][1]:.1f}]  # line, port 3")
        print(f"openems = \"{info['openems']}\"")
        print(f"c_m_ff = [{', '.join(f'{c:.4f}' for c in info['c_m_ff'])}]", flush=True)


if __name__ == "__main__":
    main()
