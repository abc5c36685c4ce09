"""Reference values for the launch budget (tests/launch_budget.rs), from scikit-rf.

Each case is a launch as loopwright's line-section model states it (written by
`cargo run --release --example launch_geometry -- <probe> <stackup> <signal layer>`): a
cascade of lossless lines and open shunt stubs between a 50 ohm port and a load of the
handle line's Z0. scikit-rf builds the same cascade with its own media and gives |S11|.
This checks the cascade arithmetic and the budget's verdict; it shares the sections
(the model), not the arithmetic.

Calls, for a section of characteristic impedance Z, effective permittivity e and length l:
    freq = skrf.Frequency(10, 3000, 300, unit="MHz")
    m = skrf.media.DefinedGammaZ0(frequency=freq, z0_port=50, z0=Z,
                                  gamma=1j * 2 * pi * freq.f * sqrt(e) / c)
    line:       m.line(l, unit="m")
    open stub:  m.shunt_delay_open(l, unit="m")
    load:       skrf.media.DefinedGammaZ0(frequency=freq, z0_port=50).load(
                    (z_load - 50) / (z_load + 50))
    network = sections[0] ** sections[1] ** ... ** load;  s11_db = network.s_db[:, 0, 0]

Run (scikit-rf 2.2.0, numpy, Python 3.11):
    for c in "FM-R10 common-4l-1.6 3" "FM-R10 common-4l-1.6 2" "FM-R5 slim-4l-0.8 3" \
             "FM-R20 slim-4l-0.8 2"; do set -- $c
      cargo run --release --example launch_geometry -- $1 $2 $3 > /tmp/lg/$1-$2-L$3.json
    done
    python3 tests/reference/launch_skrf.py /tmp/lg/*.json > tests/data/launch_skrf.toml
"""

import json
import os
import sys
from math import pi, sqrt

import skrf

C0 = 299_792_458.0


def case(path):
    g = json.load(open(path))
    m = g["model"]
    freq = skrf.Frequency(10, 3000, 300, unit="MHz")
    nets = []
    for s in m["sections"]:
        gamma = 1j * 2 * pi * freq.f * sqrt(s["eps_eff"]) / C0
        med = skrf.media.DefinedGammaZ0(frequency=freq, z0_port=50, z0=s["z0"], gamma=gamma)
        if s["kind"] == "line":
            nets.append(med.line(s["len_m"], unit="m"))
        else:
            nets.append(med.shunt_delay_open(s["len_m"], unit="m"))
    zl = m["z_load"]
    load = skrf.media.DefinedGammaZ0(frequency=freq, z0_port=50).load((zl - 50) / (zl + 50))
    net = nets[0]
    for n in nets[1:]:
        net = net ** n
    net = net ** load
    s11 = net.s_db[:, 0, 0]
    name = os.path.basename(path).removesuffix(".json")
    out = [f"[[case]]", f'name = "{name}"', f'probe = "{g["probe"]}"',
           f'stackup = "{g["stackup"]}"', f'signal_layer = {g["signal_layer"]}',
           f"z_load = {zl!r}"]
    out.append("sections = [")
    for s in m["sections"]:
        out.append(f'  {{ kind = "{s["kind"]}", z0 = {s["z0"]!r}, eps_eff = {s["eps_eff"]!r}, '
                   f'len_m = {s["len_m"]!r} }},')
    out.append("]")
    idx = list(range(0, len(freq.f), 15)) + [len(freq.f) - 1]
    out.append("f_hz = [" + ", ".join(f"{float(freq.f[i])!r}" for i in idx) + "]")
    out.append("s11_db = [" + ", ".join(f"{float(s11[i])!r}" for i in idx) + "]")
    out.append(f"worst_s11_db = {float(max(s11))!r}")
    return "\n".join(out)


if __name__ == "__main__":
    print("# Written by tests/reference/launch_skrf.py (scikit-rf "
          f"{skrf.__version__}); see the script for the calls.\n")
    print("\n\n".join(case(p) for p in sys.argv[1:]))
