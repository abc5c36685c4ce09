# Shared helpers of the openEMS (FDTD) reference scripts of the launches
# (tests/reference/launch_fdtd.py, tests/reference/fixture_fdtd.py): mesh lines, the DFT of
# the probes' records and the three-plane (Bloch) wave split of a periodic feed line. Plain
# numpy; the band defaults are the callers'.
import math
import os

import numpy as np

C0 = 299792458.0
FREQS = np.arange(1, 61) * 50e6  # 50 MHz .. 3 GHz, 50 MHz steps


def mesh_lines(lo, hi, fixed, regions, dmax, ratio=1.3, secondary=(), samples=400001):
    """Mesh lines from lo to hi through the `fixed` lines (and through the `secondary` lines
    that are not within 0.8 cell of another), cell size d inside each (a, b, d) region,
    growing by at most about `ratio` per cell away from it, never above dmax; the cell-size
    profile is sampled at `samples` points."""
    xs = np.linspace(lo, hi, samples)
    h = np.full_like(xs, dmax)
    for a, b, d in regions:
        dist = np.maximum(np.maximum(a - xs, xs - b), 0.0)
        h = np.minimum(h, d + (ratio - 1.0) * dist)
    hs = lambda x: float(np.interp(x, xs, h))  # noqa: E731
    fx = sorted(set([lo, hi] + [f for f in fixed if lo <= f <= hi]))
    merged = [fx[0]]
    for f in fx[1:]:
        if f - merged[-1] < 0.3 * hs(f):
            if f == hi:
                merged[-1] = hi
            continue
        merged.append(f)
    for s in sorted(secondary):
        if lo < s < hi and min(abs(s - m) for m in merged) >= 0.8 * hs(s):
            merged.append(s)
    merged.sort()
    lines = [merged[0]]
    for a, b in zip(merged[:-1], merged[1:]):
        seg = np.linspace(a, b, 4001)
        inv = 1.0 / np.interp(seg, xs, h)
        cum = np.concatenate([[0.0], np.cumsum(0.5 * (inv[1:] + inv[:-1]) * np.diff(seg))])
        n = max(1, int(math.ceil(cum[-1] - 0.4)))
        targets = np.linspace(0.0, cum[-1], n + 1)[1:]
        lines.extend(np.interp(targets, cum, seg))
    return np.array(lines)


def circle(xc, yc, r, n):
    a = np.linspace(0, 2 * np.pi, n, endpoint=False)
    return [list(xc + r * np.cos(a)), list(yc + r * np.sin(a))]


def rect(x0, x1, y0, y1):
    return [[x0, x1, x1, x0], [y0, y0, y1, y1]]


def dft(t, v, freqs):
    # the one-sided DFT of openEMS.utilities.DFT_time2freq (pulse), vectorised
    return 2 * (t[1] - t[0]) * np.exp(-2j * np.pi * np.outer(freqs, t)) @ v


def read_set(sim, name):
    """Spectra at the set's three planes: V, and I as the mean of the two current probes
    half a cell either side of the plane; also the run's end time and the middle voltage
    probe's last 5 % relative to its peak (dB: what the record leaves out)."""
    def load(fn):
        a = np.loadtxt(os.path.join(sim, fn), comments="%")
        return a[:, 0], a[:, 1]
    v = np.array([dft(*load(f"{name}_v{n}"), FREQS) for n in range(3)])
    i = np.array([0.5 * (dft(*load(f"{name}_i{n}a"), FREQS) + dft(*load(f"{name}_i{n}b"), FREQS))
                  for n in range(3)])
    t, v1 = load(f"{name}_v1")
    tail = float(20 * np.log10(np.abs(v1[-max(2, len(v1) // 20):]).max() / np.abs(v1).max()))
    return v, i, float(t[-1]), tail


def bloch_theta(x):
    """Phase per pitch from three equivalent planes of a periodic line: x[0] + x[2] =
    2 cos(theta) x[1] for any mix of the forward and backward waves (lossless: real)."""
    return np.arccos(np.clip(np.real((x[0] + x[2]) / (2 * x[1])), -1.0, 1.0))


def smooth(y, band_):
    """y(f) fitted as a + b f^2 over a band (a quasi-TEM line's eps_eff and Zb), evaluated at
    every frequency: the three-plane values are ill-conditioned at low frequency."""
    sel = (FREQS >= band_[0] - 1) & (FREQS <= band_[1] + 1)
    b, a = np.polyfit((FREQS[sel] / 1e9) ** 2, np.real(y[sel]), 1)
    return a + b * (FREQS / 1e9) ** 2


def split(x, theta):
    """Forward and backward amplitudes at the middle plane: x_k = F e^{-j theta k} +
    R e^{+j theta k} at k = -1, 0, +1 (least squares)."""
    fw, bw = np.empty(len(FREQS), complex), np.empty(len(FREQS), complex)
    k = np.array([-1.0, 0.0, 1.0])
    for n, th in enumerate(theta):
        m = np.stack([np.exp(-1j * th * k), np.exp(1j * th * k)], axis=1)
        fw[n], bw[n] = np.linalg.lstsq(m, x[:, n], rcond=None)[0]
    return fw, bw


def line_waves(v, i, p_m, band_eps, band_zb, theta=None):
    """Waves of one probe set: the line's eps_eff (from theta per pitch, smoothed), forward
    and backward voltage waves at the middle plane, and its Bloch impedance F_V/F_I (eps_eff
    fitted over band_eps, the impedance over band_zb)."""
    w = 2 * np.pi * FREQS
    eps_raw = (bloch_theta(v) * C0 / (w * p_m)) ** 2
    eps = smooth(eps_raw, band_eps)
    if theta is None:
        theta = w * p_m * np.sqrt(eps) / C0
    fv, rv = split(v, theta)
    fi, ri = split(i, theta)
    zb_raw = fv / fi
    return dict(eps=eps, eps_raw=eps_raw, theta=theta, fv=fv, rv=rv, fi=fi, ri=ri,
                zb=smooth(zb_raw, band_zb), zb_raw=zb_raw, gamma_bloch=rv / fv, v=v[1], i=i[1])


def reflection(d, zb):
    """Reflection at the set's middle plane from V and I there, re the line's impedance zb:
    well conditioned at every frequency (the three-plane split of the voltages alone is not
    at low frequency, where the planes are a small fraction of a wavelength apart)."""
    return (d["v"] - zb * d["i"]) / (d["v"] + zb * d["i"])


def db(x):
    return 20 * np.log10(np.abs(x))


def arr(vals, fmt="{:.3f}"):
    return "[" + ", ".join(fmt.format(v) for v in vals) + "]"


def band(x, lo=100e6, hi=3e9):
    sel = (FREQS >= lo - 1) & (FREQS <= hi + 1)
    return x[sel], FREQS[sel]


def worst(x, lo=100e6, hi=3e9):
    v, f = band(db(x), lo, hi)
    k = int(np.argmax(v))
    return float(v[k]), float(f[k])


def bandmed(x, lo, hi):
    v, _ = band(np.real(x), lo, hi)
    return float(np.median(v))
