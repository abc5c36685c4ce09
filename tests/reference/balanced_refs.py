# Full-wave (thin-wire method of moments, NEC-2 through PyNEC) reference for the doubly-loaded
# (balanced) shielded loop in plane waves: the shield split at both SIDES of the loop, a load in
# each gap, for loopwright's balanced-probe model (magnetic and electric parts of the two
# outputs) to be matched against. Not run by CI.
# Run from the repository root (progress on stderr; each [[case]] is printed as soon as done):
#     nice -n 19 python3 tests/reference/balanced_refs.py --grid-check > tests/data/balanced_refs.toml
# (the recorded file; about 8.5 minutes on one core, 2.3 without --grid-check).
# `--only NAME ...` runs some variants (thin, plates-20, plates-10), `--grid-check` adds the
# ring-count check (cases plates-20-rings16 and plates-10-rings16: 16 rings per full plate
# instead of 10 and 12, every frequency; most of the run's time), `--check-waves` prints
# the field-direction check below (stderr) and exits, `--header-only` prints the file header alone.
# Needs PyNEC and numpy (pip install PyNEC numpy); PyNEC wraps nec2++, a C++ port of NEC-2.
# Imports nec2_refs.py (same folder) for the shield's constants, its plates' ring grid, the gap
# bus's spine and the load formula; only the two-gap ring grid, bus and bridges are new here.
#
# Set-up (lengths in mm; every number is also written to the TOML):
# - The probe alone in free space (no ground, no test line), as in erej_refs.py. The loop lies
#   in the x-z plane, normal y, symmetry axis z, its centre AT THE ORIGIN (the plane waves'
#   phase reference: the recorded phases are those of a wave whose phase is zero at the loop's
#   centre; nec2_refs.py's z offset of the apex above its ground plane is dropped).
# - Two gaps, both centred on the line through the centre across the axis: ring angle 0 (the
#   +x side, load "px") and pi (the -x side, load "mx"), angles measured from +x towards +z.
#   Each gap is GAP wide on the centreline; every ring is opened by the same angle at both
#   sides (as nec2_refs.py opens its apex gap), so each ring is two half-rings, z > 0 and z < 0.
# - variant "thin": one closed round wire ring, radius A_THIN, wire radius B_THIN, N_THIN equal
#   segments (GA), segment 1 centred at angle 0 and segment N_THIN/2 + 1 at angle pi carry
#   the loads, 50 ohm each (no stub). The closed-form sanity case.
# - variants "plates-D": the demo shield's wire grid of nec2_refs.py (four annular plates at
#   PLATES_Y, L2 with the trace's slot, N rings per full plate evenly spaced, one wire radius
#   s/(2*pi) for the whole probe: plate_rings), nec2_refs.case's defaults for D (12 rings per
#   plate up to 10 mm, 10 above; seg_max = max(0.9, D/12) mm on the centreline). Each half-ring
#   is a polygon graded from both of its gaps: the ring segments next to a gap are gap/3 long
#   on the centreline (as long as a bridge segment) and grow by 25 % per segment up to seg_max;
#   the grid is mirror-symmetric about both axes of the loop (x -> -x and z -> -z). All polygons
#   share one radius factor so that each encloses its circle's area (the gaps' chords counted).
#   In each of the four gap faces a bus joins all ring ends (per plate a radial wire through its
#   ring ends and r = R, and a spine along y across the plates at r = R through y = 0); a
#   straight bridge of three equal segments joins the two faces' y = 0 nodes across each gap,
#   its middle segment carrying the load (LD 4): the inner line seen from that gap, the matched
#   output in series with a short shorted stub, Z = 50 + j*50*tan(beta*L_STUB), L_STUB = 1.5 mm,
#   beta = 2*pi*f*sqrt(EPS_EFF)/c0 (nec2_refs.z_load). Extended thin-wire kernel (EK), as
#   erej_refs.py uses for the plates.
# - Waves: linearly polarised plane waves of |E| = 1 V/m (NEC EX 1, angles theta, phi, eta
#   in degrees; NEC's incident E is cos(eta)*theta_hat + sin(eta)*phi_hat of the direction
#   (theta, phi) the wave arrives FROM, travelling towards -r_hat(theta, phi); H = k_hat x E/eta0):
#     h_axial_e (90,  0,  0): from +x, E = -z (along the axis), H = -y (normal to the loop);
#     h_cross_e ( 0,  0,  0): from +z, E = +x (across the axis, through both gaps), H = -y;
#     e_axial   (90, 90,  0): from +y, E = -z, H = +x (in the loop's plane: no flux);
#     e_cross   (90, 90, 90): from +y, E = -x, H = -z (in the plane: no flux).
#   These directions were checked with NEC itself (`--check-waves`, output copied into the
#   TOML header): NEC's near-field output (NE/NH) leaves the incident field out (it reads 0 at a
#   point 0.9 m from the ring), so the check instead measures the incident field with probes
#   at the origin, one at a time: a short dipole along each axis (10 mm, 11 segments) and a small
#   loop (radius 3 mm, 24 segments) normal to each axis; each probe is first driven by a 1 V
#   source in its middle segment (current I_tx), then received with the source removed
#   (current I_rx, same segment, no load); E_axis = (I_rx/I_tx)/(l/2) (a short dipole's Thevenin
#   voltage is E*l/2) and eta0*H_axis = eta0*(I_rx/I_tx)/(-j*w*mu0*pi*a^2) (the loop's EMF in its
#   right-hand sense). These are small-probe estimates: they come out at about 1.0 on the
#   expected axis, with the expected sign, and about 0 on the others.
# - Currents: I_px, I_mx, the complex current of the +x and -x loads (A; NEC's e^{jwt}), both
#   taken in ONE common circulation sense: the loop sense whose right-hand normal is +y (at
#   +x the current flows -z, at the top (+z) it flows +x, at -x it flows +z). The bridges are
#   built in that sense (the +x bridge from its z > 0 end to its z < 0 end, the -x bridge from
#   z < 0 to z > 0), so NEC's segment currents are recorded as they come; the thin ring's GA
#   segments run the other way (increasing angle) and are negated.
#   Derived: diff_abs = |I_px + I_mx|/2, the circulating (magnetic) part, the same in both
#   loads in that sense; sum_abs = |I_px - I_mx|/2, the part flowing the same way (both +z or
#   both -z) up both sides: the electric part. (Named for the two outputs read each in its own
#   mirror-image sense, in which the circulating part is their half difference and the electric
#   part their half sum.)
# - Symmetry (what the sanity checks test): under the mirror x -> -x the circulating mode is odd
#   and the electric mode even. h_cross_e (E_x, H_y, travelling along the axis) and e_cross (E_x)
#   are odd: circulating mode only. e_axial (E_z uniform) is even: electric mode only.
#   h_axial_e travels along x, so it is neither: its E_z (cos(kx) part) drives the electric
#   mode as e_axial does, and its sum_abs is not small (expected; this is not a leak).
#   Under z -> -z, e_cross's E_x is even while a load's current (along z, on the mirror plane)
#   is odd, so e_cross puts nothing into either load: its currents are numerical noise of the
#   grid's symmetry (the loads sit at the nodes of the current E across the axis drives).
# - Thin-ring closed form (check printed on stderr): |I| = w*mu0*pi*a^2*H/|j*w*L + 2*50 ohm|,
#   L = mu0*a*(ln(8a/b) - 2) (thin round ring, current on the wire's surface: quoted from
#   memory as the Ramo/Grover thin-ring inductance), H = 1/eta0 A/m.
# - NEC-2 pitfalls (met in nec2_refs.py, kept here): one wire radius for the whole probe; the
#   load on the middle segment of a three-segment bridge, not on a segment meeting a
#   multi-wire junction; ring segments next to a gap as long as a bridge segment, graded away.
#   New here: one NEC context per frequency carries the four waves (EX 1 + XQ four times: the
#   matrix is factored once; checked on the thin ring: bit-identical to a fresh context per
#   wave).
# - Checks on the recorded run (numbers from its stderr and the TOML):
#   thin at 100 MHz: L = 25.079 nH, closed-form |I| = 1.6260e-6 A; NEC's circulating part
#   |I_px + I_mx|/2 is 0.9985 of it for both h waves (the 64-gon encloses 0.9984 of the circle's
#   area); h_axial_e's single loads read 1.131 and 0.866 of it (its electric part adds at +x and
#   subtracts at -x). Mode purity over all variants and frequencies: h_cross_e's sum_abs at
#   most 1.7e-6 of its diff_abs, e_axial's diff_abs at most 4.2e-5 of its sum_abs; e_cross at most
#   3.4e-10 A at either load (-73 dB or less against h_cross_e's circulating current, worst at
#   100 MHz where NEC's low-frequency round-off is largest; -110 dB and less from 300 MHz).
#   h_axial_e's sum_abs is e_axial's to 0.5 % up to 500 MHz (0.93 of it for plates-20 at 2 GHz,
#   where k*R is no longer small). Ring count 16 against 10 (plates-20) and 12 (plates-10) per
#   plate: diff_abs -0.2 to -1.0 %, sum_abs +0.5 to +1.1 % at every frequency.
import argparse, datetime, os, platform, sys, time
import importlib.metadata
import numpy as np
import PyNEC

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import nec2_refs as N  # noqa: E402

FREQS = [100e6, 200e6, 300e6, 500e6, 700e6, 1e9, 1.5e9, 2e9]
L_STUB = 1.5            # the short shorted stub behind each gap, mm
A_THIN = 5.0            # thin ring's radius, mm
B_THIN = 0.1            # thin ring's wire radius, mm
N_THIN = 64             # thin ring's segments
TAG_LOAD_PX = N.TAG_LOAD   # bridge across the +x gap
TAG_LOAD_MX = 6            # bridge across the -x gap (a tag nec2_refs.py leaves unused)
TAG_HALF0 = N.TAG_RING0    # half-rings: TAG_HALF0 + 2*i (z > 0) and + 2*i + 1 (z < 0)

# name: (theta, phi, eta) in degrees, the expected E and H directions (unit axes)
WAVES = {
    "h_axial_e": ((90.0, 0.0, 0.0), "-z", "-y"),
    "h_cross_e": ((0.0, 0.0, 0.0), "+x", "-y"),
    "e_axial": ((90.0, 90.0, 0.0), "-z", "+x"),
    "e_cross": ((90.0, 90.0, 90.0), "-x", "-z"),
}


def log(*a):
    print(*a, file=sys.stderr, flush=True)


def side_arc_angles(R, gap, seg_max, grow=1.25):
    """Vertex angles (rad, from +x towards +z) of the two half-rings of every ring, the gaps
    centred at 0 and pi: `up` runs from +half_gap to pi - half_gap (z > 0), `lo` = up + pi
    (z < 0). Each half-ring is graded from both gaps as nec2_refs.ring_angles grades from its
    one gap (first segment gap/3 on the centreline, growing by `grow` up to seg_max), and so is
    mirror-symmetric about its middle. Also the radius factor giving the polygon (gap chords
    included) its circle's area."""
    half_gap = np.arcsin(gap / 2 / R)
    steps, d, left = [], gap / 3 / R, np.pi / 2 - half_gap
    while True:
        n_uni = int(np.ceil(left / (seg_max / R)))
        if d >= left / n_uni or d * grow >= seg_max / R:
            steps += [left / n_uni] * n_uni
            break
        steps.append(d)
        left -= d
        d *= grow
    q = np.concatenate([[0.0], np.cumsum(steps)])
    up = np.concatenate([half_gap + q, (np.pi - half_gap - q[::-1])[1:]])
    lo = up + np.pi
    area = 0.5 * (np.sum(np.sin(np.diff(up))) + np.sum(np.sin(np.diff(lo)))
                  + 2 * np.sin(2 * half_gap))
    return up, lo, np.sqrt(np.pi / area)


def build_plates(ctx, c):
    """The two-gap plates grid of case c (a nec2_refs.case dict), centred at the origin.
    Returns the loads as ((tag, seg) at +x, (tag, seg) at -x) and the grid's numbers."""
    g = ctx.get_geometry()
    R, MM = c["R"], N.MM
    rings, a = N.plate_rings(R, c["n_plate"])
    up, lo, kfac = side_arc_angles(R, c["gap"], c["seg_max"])
    for i, (p, y, r) in enumerate(rings):
        for j, th in enumerate((up, lo)):
            xs, zs = r * kfac * np.cos(th), r * kfac * np.sin(th)
            for k in range(len(th) - 1):
                g.wire(TAG_HALF0 + 2 * i + j, 1, xs[k] * MM, y * MM, zs[k] * MM, xs[k + 1] * MM,
                       y * MM, zs[k + 1] * MM, a * MM, 1, 1)
    # a bus in each of the four gap faces, as nec2_refs.build's (ring ends at these angles)
    tag = N.TAG_BUS0
    by_plate = {}
    for p, y, r in rings:
        by_plate.setdefault(p, (y, []))[1].append(r * kfac)
    rR = R * kfac
    for ang in (up[0], lo[-1], up[-1], lo[0]):
        cs, sn = np.cos(ang), np.sin(ang)
        pt = lambda r, y: (r * cs * MM, y * MM, r * sn * MM)
        for p, (y, rs) in by_plate.items():
            rr = sorted(set(rs + [rR]))
            for ra, rb in zip(rr[:-1], rr[1:]):
                g.wire(tag, 1, *pt(ra, y), *pt(rb, y), a * MM, 1, 1)
            tag += 1
        ys = N.spine_nodes(sorted(set([v[0] for v in by_plate.values()] + [0.0])), c["gap"] / 3)
        for ya, yb in zip(ys[:-1], ys[1:]):
            g.wire(tag, 1, *pt(rR, ya), *pt(rR, yb), a * MM, 1, 1)
        tag += 1
    # the bridges, each in the loop sense whose right-hand normal is +y:
    # +x gap from its z > 0 face (up[0]) to its z < 0 face (lo[-1]): along -z;
    # -x gap from its z < 0 face (lo[0]) to its z > 0 face (up[-1]): along +z.
    for ltag, (ta, tb) in ((TAG_LOAD_PX, (up[0], lo[-1])), (TAG_LOAD_MX, (lo[0], up[-1]))):
        g.wire(ltag, 3, rR * np.cos(ta) * MM, 0, rR * np.sin(ta) * MM, rR * np.cos(tb) * MM, 0,
               rR * np.sin(tb) * MM, a * MM, 1, 1)
    ctx.geometry_complete(0)
    info = dict(rings_total=len(rings), wire_radius_mm=a, segments_per_half_ring=len(up) - 1,
                area_radius_factor=kfac)
    return ((TAG_LOAD_PX, 2), (TAG_LOAD_MX, 2)), info


def build_thin(ctx):
    """One closed ring (GA in the x-z plane, centred at the origin), segment 1 centred at angle
    0 (+x) and segment N_THIN/2 + 1 at pi (-x). GA's segments run towards increasing angle,
    the loop sense with normal -y."""
    g = ctx.get_geometry()
    h = 180.0 / N_THIN
    g.arc(TAG_HALF0, N_THIN, A_THIN * N.MM, -h, 360 - h, B_THIN * N.MM)
    ctx.geometry_complete(0)
    return ((TAG_HALF0, 1), (TAG_HALF0, N_THIN // 2 + 1))


def solve(c, f):
    """{wave: (I_px, I_mx)} at f, in the +y-normal loop sense, and the segment count."""
    ctx = PyNEC.nec_context()
    if c["variant"] == "thin":
        loads, sense = build_thin(ctx), -1.0
        zl = N.Z0_OUT + 0j
    else:
        loads, _ = build_plates(ctx, c)
        sense = 1.0
        zl = N.z_load(f, L_STUB)
    if c["ek"]:
        ctx.set_extended_thin_wire_kernel(True)
    for ltag, lseg in loads:
        ctx.ld_card(4, ltag, lseg, lseg, zl.real, zl.imag, 0)
    ctx.fr_card(0, 1, f / 1e6, 0)
    out, nseg = {}, 0
    for k, (w, ((th, ph, et), _, _)) in enumerate(WAVES.items()):
        ctx.ex_card(1, 1, 1, 0, th, ph, et, 0, 0, 0)
        ctx.xq_card(0)
        sc = ctx.get_structure_currents(k)
        cur = np.array(sc.get_current())
        tags = np.array(sc.get_current_segment_tag())
        nseg = len(cur)
        out[w] = tuple(sense * complex(cur[tags == t][s - 1]) for t, s in loads)
    return out, nseg


def check_waves(f=100e6):
    """Measure each wave's incident E and H at the origin with small probes (see the header)."""
    MM, w0 = N.MM, 2 * np.pi * f
    eta0 = N.MU0 * N.C0
    axes = {"x": np.array([1.0, 0, 0]), "y": np.array([0, 1.0, 0]), "z": np.array([0, 0, 1.0])}
    L_DIP, N_DIP, A_LOOP, N_LOOP, B = 10.0, 11, 3.0, 24, 0.05

    def probe(kind, ax, wave):
        n = axes[ax]
        ctx = PyNEC.nec_context()
        g = ctx.get_geometry()
        if kind == "dipole":
            p = n * L_DIP / 2 * MM
            g.wire(1, N_DIP, *(-p), *p, B * MM, 1, 1)
            seg = N_DIP // 2 + 1
        else:
            u = axes["yzx"["xyz".index(ax)]]
            v = np.cross(n, u)                  # u x v = n: increasing t is n's right-hand sense
            t = np.linspace(0, 2 * np.pi, N_LOOP + 1) + np.pi / N_LOOP
            pts = [A_LOOP * MM * (u * np.cos(s) + v * np.sin(s)) for s in t]
            pts[-1] = pts[0]
            for k in range(N_LOOP):
                g.wire(1, 1, *pts[k], *pts[k + 1], B * MM, 1, 1)
            seg = 1
        ctx.geometry_complete(0)
        ctx.fr_card(0, 1, f / 1e6, 0)
        ctx.ex_card(0, 1, seg, 0, 1.0, 0, 0, 0, 0, 0)
        ctx.xq_card(0)
        i_tx = np.array(ctx.get_structure_currents(0).get_current())[seg - 1]
        th, ph, et = WAVES[wave][0]
        ctx.ex_card(1, 1, 1, 0, th, ph, et, 0, 0, 0)
        ctx.xq_card(0)
        i_rx = np.array(ctx.get_structure_currents(1).get_current())[seg - 1]
        if kind == "dipole":
            return i_rx / i_tx / (L_DIP / 2 * MM)
        return eta0 * i_rx / i_tx / (-1j * w0 * N.MU0 * np.pi * (A_LOOP * MM) ** 2)

    lines = []
    for wave, ((th, ph, et), e_dir, h_dir) in WAVES.items():
        e = [probe("dipole", a, wave) for a in "xyz"]
        h = [probe("loop", a, wave) for a in "xyz"]
        fmt = lambda v: "(" + ", ".join(f"{x.real:+.3f}{x.imag:+.3f}j" for x in v) + ")"
        lines.append(f"{wave:9s} theta {th:4.0f} phi {ph:4.0f} eta {et:4.0f}: E (x,y,z) = {fmt(e)} "
                     f"V/m, expected {e_dir}; eta0*H = {fmt(h)}, expected {h_dir}")
    return lines


def header(args, wave_check):
    out = []
    w = out.append
    w("# Doubly-loaded (balanced) shielded loop in plane waves: NEC-2 (PyNEC) reference.")
    w("# Generated by: nice -n 19 python3 tests/reference/balanced_refs.py"
      + (" --only " + " ".join(args.only) if args.only else "")
      + (" --grid-check" if args.grid_check else "") + " > tests/data/balanced_refs.toml")
    w(f"# (python3 = {sys.executable}: a venv holding pip's PyNEC and numpy)")
    w(f"# PyNEC {importlib.metadata.version('PyNEC')} (nec2++), numpy {np.__version__}, python "
      f"{platform.python_version()}; date {datetime.date.today()}.")
    w("# Set-up (see the script's header): the probe alone in free space, loop in the x-z plane")
    w("# centred at the origin, normal y, axis z; two gaps centred at ring angles 0 (+x, load px)")
    w("# and pi (-x, load mx), each with its own bus and three-segment bridge, the load (LD 4) on")
    w("# the bridge's middle segment. thin: one round wire ring, 64 equal segments, 50 ohm loads.")
    w("# plates-D: nec2_refs.py's four-plate wire grid, extended thin-wire kernel, each load")
    w("# Z = 50 + j*50*tan(beta*l_stub), beta = 2*pi*f*sqrt(eps_eff)/c0.")
    if args.grid_check:
        w("# plates-D-rings16: the same grid with 16 rings per full plate (ring-count check).")
    w("# Waves: 1 V/m linear plane waves, NEC EX 1 (theta, phi, eta in degrees; the wave arrives")
    w("# from direction (theta, phi), E = cos(eta)*theta_hat + sin(eta)*phi_hat):")
    for name, ((th, ph, et), e_dir, h_dir) in WAVES.items():
        w(f"#   {name:9s} theta = {th:g}, phi = {ph:g}, eta = {et:g}: E along {e_dir}, "
          f"H along {h_dir}")
    w("# Checked with NEC (--check-waves: incident E and eta0*H at the origin measured by a short")
    w("# dipole along, and a small loop normal to, each axis; small-probe estimates):")
    for ln in wave_check:
        w("#   " + ln)
    w("# Currents (A, NEC's e^{jwt}, phase reference the loop's centre): i_px_* at the +x load,")
    w("# i_mx_* at the -x load, BOTH in the loop sense whose right-hand normal is +y (at +x the")
    w("# current flows -z, at -x it flows +z).")
    w("# diff_abs = |I_px + I_mx|/2: the circulating (magnetic) part; sum_abs = |I_px - I_mx|/2:")
    w("# the part flowing the same way up both sides (the electric part). (Named for the")
    w("# outputs read each in its own mirror-image sense, where these are the half difference")
    w("# and the half sum.)")
    w("# h_axial_e carries E along the axis too, so its sum_abs is the electric part that E drives")
    w("# (close to e_axial's), not a symmetry leak; e_cross's currents are grid-symmetry noise.")
    w("")
    w(f"gap_mm = {N.GAP}")
    w(f"l_stub_mm = {L_STUB}")
    w(f"eps_eff = {N.EPS_EFF}")
    w(f"z0_out_ohm = {N.Z0_OUT}")
    w('load = "50 + j*50*tan(2*pi*f*sqrt(eps_eff)/c0 * l_stub) (plates); 50 ohm (thin)"')
    w('circulation = "right-hand normal +y"')
    w("")
    return out


def case_toml(c, wave, freqs, res, nseg, info):
    (th, ph, et), e_dir, h_dir = WAVES[wave]
    ipx = np.array([res[f][wave][0] for f in freqs])
    imx = np.array([res[f][wave][1] for f in freqs])
    e = lambda xs: "[" + ", ".join(f"{x:.6e}" for x in xs) + "]"
    out = ["[[case]]", f"name = '{c['name']}'", f"variant = '{c['variant']}'", f"wave = '{wave}'",
           f"theta_deg = {th:g}", f"phi_deg = {ph:g}", f"eta_deg = {et:g}",
           f"e_dir = '{e_dir}'", f"h_dir = '{h_dir}'", f"diameter_mm = {c['D']}"]
    if c["variant"] == "thin":
        out += [f"wire_radius_mm = {B_THIN}", f"segments = {nseg}", "load_ohm = 50.0",
                "extended_kernel = false"]
    else:
        out += [f"rings_per_plate = {c['n_plate']}", f"rings_total = {info['rings_total']}",
                f"wire_radius_mm = {info['wire_radius_mm']:.5f}",
                f"segments_per_half_ring = {info['segments_per_half_ring']}",
                f"seg_max_mm = {c['seg_max']:.4f}",
                f"area_radius_factor = {info['area_radius_factor']:.6f}",
                f"gap_mm = {c['gap']}", f"l_stub_mm = {L_STUB}", f"eps_eff = {N.EPS_EFF}",
                "load = '50 + j*50*tan(2*pi*f*sqrt(eps_eff)/c0 * l_stub)'",
                f"segments = {nseg}", f"extended_kernel = {str(bool(c['ek'])).lower()}"]
    out += [f"freq_hz = [{', '.join(f'{f:.4g}' for f in freqs)}]",
            f"i_px_re = {e(ipx.real)}", f"i_px_im = {e(ipx.imag)}",
            f"i_mx_re = {e(imx.real)}", f"i_mx_im = {e(imx.imag)}",
            f"diff_abs = {e(np.abs(ipx + imx) / 2)}", f"sum_abs = {e(np.abs(ipx - imx) / 2)}", ""]
    return out


def plates_case(name, D, n_plate=None):
    c = N.case(name, D, n_plate=n_plate)
    c["probe_only"] = True
    c["ek"] = True
    c["l2"] = L_STUB
    return c


def run(c, freqs):
    res, nseg = {}, 0
    for f in freqs:
        t = time.time()
        res[f], nseg = solve(c, f)
        r = res[f]
        log(f"  {c['name']} {f / 1e6:7.1f} MHz ({nseg} segments, {time.time() - t:.1f} s): "
            + "  ".join(f"{w} diff {abs(a + b) / 2:.3e} sum {abs(a - b) / 2:.3e}"
                        for w, (a, b) in r.items()))
    return res, nseg


def thin_closed_form(res):
    """The thin ring's h waves at 100 MHz against the closed form (stderr)."""
    f = FREQS[0]
    w0 = 2 * np.pi * f
    a, b = A_THIN * N.MM, B_THIN * N.MM
    L = N.MU0 * a * (np.log(8 * a / b) - 2)
    H = 1 / (N.MU0 * N.C0)
    i_cf = w0 * N.MU0 * np.pi * a ** 2 * H / abs(1j * w0 * L + 2 * N.Z0_OUT)
    log(f"thin closed form at {f / 1e6:g} MHz: L = {L * 1e9:.4f} nH, |I| = {i_cf:.6e} A")
    for wave in ("h_axial_e", "h_cross_e"):
        ipx, imx = res[f][wave]
        log(f"  {wave}: |I_px|/cf = {abs(ipx) / i_cf:.5f}, |I_mx|/cf = {abs(imx) / i_cf:.5f}, "
            f"|I_px + I_mx|/2/cf = {abs(ipx + imx) / 2 / i_cf:.5f}")


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--only", nargs="*", help="variants to run: thin, plates-20, plates-10")
    ap.add_argument("--grid-check", action="store_true",
                    help="also plates-20 and plates-10 with 16 rings per plate")
    ap.add_argument("--check-waves", action="store_true")
    ap.add_argument("--header-only", action="store_true")
    args = ap.parse_args()
    t0 = time.time()
    wave_check = check_waves()
    for ln in wave_check:
        log(ln)
    if args.check_waves:
        return
    print("\n".join(header(args, wave_check)), flush=True)
    if args.header_only:
        return
    cases = [dict(name="thin", variant="thin", ek=False, R=A_THIN, D=2 * A_THIN),
             plates_case("plates-20", 20.0), plates_case("plates-10", 10.0)]
    names = args.only or [c["name"] for c in cases]
    for c in cases:
        if c["name"] not in names:
            continue
        log(f"case {c['name']}")
        res, nseg = run(c, FREQS)
        info = None
        if c["variant"] != "thin":
            _, info = build_plates(PyNEC.nec_context(), c)
        else:
            thin_closed_form(res)
        for wave in WAVES:
            print("\n".join(case_toml(c, wave, FREQS, res, nseg, info)), flush=True)
        log(f"  elapsed {time.time() - t0:.0f} s")
    for D in ((20.0, 10.0) if args.grid_check else ()):
        c = plates_case(f"plates-{D:g}-rings16", D, n_plate=16)
        log(f"case {c['name']}")
        res, nseg = run(c, FREQS)
        _, info = build_plates(PyNEC.nec_context(), c)
        for wave in WAVES:
            print("\n".join(case_toml(c, wave, FREQS, res, nseg, info)), flush=True)
        log(f"  elapsed {time.time() - t0:.0f} s")


if __name__ == "__main__":
    main()
