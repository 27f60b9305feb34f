"""A plain-numpy reference for the speed of the analysis: the least work that gives the
per-cycle figures and the phase-binned sums, written the straightforward way.

It is the yardstick of ``bench_core.py`` (the engine's time is printed as a multiple of
this one's, measured in the same run) and it is checked against the engine in
``tests/core/test_reference_pass.py``. It imports nothing from trueslope.

* :func:`reference_segment`: reset edges where the record falls through the middle of its
  range and stays below it for more than 16 samples, in blocks of a million samples; each
  ramp runs from a few samples after one reset to a few samples before the next.
* :func:`reference_pass`: every cycle's least-squares line over its trimmed window from
  ``numpy.add.reduceat`` sums of ``v`` and ``j v`` with the index sums in closed form; the
  residual sum of squares and the largest residual against that line and against the line
  through the window's end means (``numpy.add.reduceat``, ``numpy.maximum.reduceat``);
  start and end levels from the means of the ramp's first and last 3 %; the samples, their
  phases and residuals binned by phase with ``numpy.bincount`` (five of them) per
  interleaved group of cycles. Cycles are handled in blocks of about 64 k samples, so a
  block's arrays stay in the processor's cache.
"""

from __future__ import annotations

import numpy as np

BLOCK = 1 << 16


def reference_segment(v: np.ndarray, guard: int = 3) -> tuple[np.ndarray, np.ndarray]:
    """First and one-past-last sample of every full ramp of a rising sawtooth.

    Resets are the samples where ``v`` falls through ``(min + max) / 2`` and stays below
    for more than 16 samples; a ramp runs
    from ``guard`` samples after one reset to ``guard`` samples before the next.
    """
    lo = hi = float(v[0])
    for a in range(0, v.size, 1 << 20):
        part = v[a:a + (1 << 20)]
        lo, hi = min(lo, float(part.min())), max(hi, float(part.max()))
    mid = 0.5 * (lo + hi)
    falls, rises = [], []
    for a in range(0, v.size - 1, 1 << 20):
        part = v[a:a + (1 << 20) + 1]
        above = part >= mid
        falls.append(np.flatnonzero(above[:-1] & ~above[1:]) + a + 1)
        rises.append(np.flatnonzero(~above[:-1] & above[1:]) + a + 1)
    falls, rises = np.concatenate(falls), np.concatenate(rises)
    # noise on the ramp crosses the middle both ways within a few samples; a reset falls
    # through it and stays below for half a ramp
    nxt = np.searchsorted(rises, falls)
    back = np.where(nxt < rises.size, rises[np.minimum(nxt, rises.size - 1)] - falls, v.size)
    resets = falls[back > 16]
    return resets[:-1] + guard, resets[1:] - guard


def reference_pass(v: np.ndarray, starts: np.ndarray, stops: np.ndarray, trim: float,
                   bins: int, groups: int = 8) -> dict[str, np.ndarray]:
    """Per-cycle figures (per sample of index) and phase sums of the ramps
    ``[starts[c], stops[c])`` (whole samples), trimmed by ``trim`` (at least 3 %) at
    each end.

    Returns
    -------
    dict
        ``slope`` (V per sample), ``intercept`` (V at the ramp's first sample), ``ssr``,
        ``peak``, ``terminal_peak``, ``start``, ``end`` per cycle; ``count``,
        ``phase``, ``voltage``, ``residual``, ``residual_sq`` per group and phase bin.
    """
    n = starts.size
    length = stops - starts
    w0 = starts + np.ceil(trim * (length - 1)).astype(np.int64)
    w1 = starts + np.floor((1 - trim) * (length - 1)).astype(np.int64) + 1
    out = {k: np.empty(n) for k in ("slope", "intercept", "ssr", "peak", "terminal_peak",
                                     "start", "end")}
    width = bins + 1
    sums = {k: np.zeros(groups * width) for k in ("count", "phase", "voltage", "residual",
                                                  "residual_sq")}
    kk = np.arange(BLOCK + int(length.max()) + 1, dtype=float)
    c0 = 0
    while c0 < n:
        c1 = max(c0 + 1, int(np.searchsorted(stops, starts[c0] + BLOCK, side="right")))
        c1 = min(c1, n)
        base, end = int(starts[c0]), int(stops[c1 - 1])
        x = v[base:end]
        m = x.size
        k = kk[:m]
        a, b = w0[c0:c1] - base, w1[c0:c1] - base
        s, e = starts[c0:c1] - base, stops[c0:c1] - base
        own = np.diff(s, append=m)
        win = np.empty(2 * a.size, dtype=np.int64)
        win[0::2], win[1::2] = a, b
        cut = win if win[-1] < m else win[:-1]
        L = (b - a).astype(float)
        sy = np.add.reduceat(x, cut)[0::2]
        sky = np.add.reduceat(k * x, cut)[0::2]
        kbar = a + 0.5 * (L - 1)
        slope = (sky - kbar * sy) / (L * (L * L - 1) / 12)
        at0 = sy / L - slope * kbar
        r = x - np.repeat(at0, own) - np.repeat(slope, own) * k
        r2 = r * r
        out["ssr"][c0:c1] = np.add.reduceat(r2, cut)[0::2]
        out["peak"][c0:c1] = np.maximum.reduceat(np.abs(r), cut)[0::2]
        h = np.maximum(1, (b - a) // 50)
        g = np.maximum(2, np.round(0.03 * (e - s)).astype(np.int64))
        ends = np.empty(8 * a.size, dtype=np.int64)
        ends[0::8], ends[1::8], ends[2::8], ends[3::8] = s, s + g, a, a + h
        ends[4::8], ends[5::8], ends[6::8], ends[7::8] = b - h, b, e - g, e
        ends = ends if ends[-1] < m else ends[:-1]  # in order for a trim of 3 % or more
        part = np.add.reduceat(x, ends)
        head, tail = part[2::8] / h, part[4::8] / h
        tslope = (tail - head) / (L - h)
        t0 = head - tslope * (a + 0.5 * (h - 1))
        rt = x - np.repeat(t0, own) - np.repeat(tslope, own) * k
        out["terminal_peak"][c0:c1] = np.maximum.reduceat(np.abs(rt), cut)[0::2]
        out["start"][c0:c1] = part[0::8] / g - slope * (0.5 * (g - 1))
        out["end"][c0:c1] = part[6::8] / g + slope * (0.5 * (g - 1))
        out["slope"][c0:c1] = slope
        out["intercept"][c0:c1] = at0 + slope * s
        # phase of every sample of its cycle: 0 to 1 over the ramp (its last sample in the
        # last bin), past the ramp the spare bin
        inv = 1.0 / (e - s - 1)
        u = (k + base) * np.repeat(inv, own) - np.repeat((s + base) * inv, own)
        gi = np.minimum((u * bins).astype(np.int64), bins)
        gi[e - 1] = bins - 1
        gi += np.repeat((np.arange(c0, c1) % groups) * width, own)
        size = groups * width
        sums["count"] += np.bincount(gi, minlength=size)
        sums["phase"] += np.bincount(gi, u, size)
        sums["voltage"] += np.bincount(gi, x, size)
        sums["residual"] += np.bincount(gi, r, size)
        sums["residual_sq"] += np.bincount(gi, r2, size)
        c0 = c1
    out.update({k: s.reshape(groups, width)[:, :bins] for k, s in sums.items()})
    return out
