"""Reference values for the demo fixture's ports and predicted network (tests/fixture_network.rs),
from scikit-rf 2.2.0.

1. The fixture's sections as loopwright's model states them (written by
   `cargo run --release --example launch_geometry -- fixture > /tmp/lg/fixture.json`), cascaded
   by scikit-rf's own media: one port's launch into the uniform line (|S11|), and the whole
   fixture edge to edge (S11, S21) with the uniform line's loss. Calls, per section of Z0 Z,
   effective permittivity e, length l (m), loss alpha(f) = ac*sqrt(f/1e9) + ad*(f/1e9) Np/m:
       m = skrf.media.DefinedGammaZ0(frequency=freq, z0_port=50, z0=Z,
                                     gamma=alpha + 1j*2*pi*freq.f*sqrt(e)/c)
       m.line(l, unit="m"); cascade with **; load DefinedGammaZ0(..., z0_port=50).load(G)
2. The emitted Touchstone file read by scikit-rf: skrf.Network(path); s_db and s_deg at chosen
   points, the number of points and the reference impedance.

Run from the repository root:
    cargo run --release --example launch_geometry -- fixture > /tmp/lg/fixture.json
    python3 tests/reference/fixture_skrf.py /tmp/lg/fixture.json \
        out_examples/demo/fenwick-marsh-fixture/fenwick-marsh-fixture-predicted.s2p \
        > tests/data/fixture_skrf.toml
"""

import json
import sys
from math import pi, sqrt

import numpy as np
import skrf

C0 = 299_792_458.0


def media_net(freq, s):
    alpha = 0.0
    if s["kind"] == "lossy_line":
        u = freq.f / 1e9
        alpha = s["alpha_c_1ghz"] * np.sqrt(u) + s["alpha_d_1ghz"] * u
    gamma = alpha + 1j * 2 * pi * freq.f * sqrt(s["eps_eff"]) / C0
    med = skrf.media.DefinedGammaZ0(frequency=freq, z0_port=50, z0=s["z0"], gamma=gamma)
    return med.line(s["len_m"], unit="m")


def chain(freq, secs):
    net = media_net(freq, secs[0])
    for s in secs[1:]:
        net = net ** media_net(freq, s)
    return net


def arr(name, xs):
    return f"{name} = [" + ", ".join(repr(float(x)) for x in xs) + "]"


def sections_toml(name, secs):
    out = [f"{name} = ["]
    for s in secs:
        extra = ""
        if s["kind"] == "lossy_line":
            extra = f', alpha_c_1ghz = {s["alpha_c_1ghz"]!r}, alpha_d_1ghz = {s["alpha_d_1ghz"]!r}'
        out.append(f'  {{ kind = "{s["kind"]}", z0 = {s["z0"]!r}, eps_eff = {s["eps_eff"]!r}, '
                   f'len_m = {s["len_m"]!r}{extra} }},')
    out.append("]")
    return out


def main(json_path, s2p_path):
    g = json.load(open(json_path))
    m = g["model"]
    freq = skrf.Frequency(10, 3000, 300, unit="MHz")
    idx = list(range(0, len(freq.f), 15)) + [len(freq.f) - 1]
    out = [f"# Written by tests/reference/fixture_skrf.py (scikit-rf {skrf.__version__}); "
           "see the script for the calls.", ""]
    # 1a. One port into the uniform line.
    zl = m["z_load"]
    port = chain(freq, m["port_sections"])
    load = skrf.media.DefinedGammaZ0(frequency=freq, z0_port=50).load((zl - 50) / (zl + 50))
    s11 = (port ** load).s_db[:, 0, 0]
    out += ["[port]", f'fixture = "{g["fixture"]}"', f"z_load = {zl!r}"]
    out += sections_toml("sections", m["port_sections"])
    out += [arr("f_hz", freq.f[idx]), arr("s11_db", s11[idx]),
            f"worst_s11_db = {float(max(s11))!r}", ""]
    # 1b. The whole fixture.
    full = chain(freq, m["fixture_sections"])
    out += ["[network]"]
    out += sections_toml("sections", m["fixture_sections"])
    out += [arr("f_hz", freq.f[idx]), arr("s11_db", full.s_db[idx, 0, 0]),
            arr("s21_db", full.s_db[idx, 1, 0]), arr("s21_deg", full.s_deg[idx, 1, 0]), ""]
    # 2. The emitted file as scikit-rf reads it.
    n = skrf.Network(s2p_path)
    pick = [0, 50, 100, 150, 200]
    out += ["[file]", f'path = "{s2p_path}"', f"points = {len(n.f)}",
            f"z0 = {float(np.real(n.z0[0, 0]))!r}", arr("f_hz", n.f[pick]),
            arr("s11_db", n.s_db[pick, 0, 0]), arr("s21_db", n.s_db[pick, 1, 0]),
            arr("s21_deg", n.s_deg[pick, 1, 0]), arr("s22_db", n.s_db[pick, 1, 1])]
    print("\n".join(out))


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2])
