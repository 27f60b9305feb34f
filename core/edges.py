"""Timing a fast edge of a sampled record: crossings, peaks, and the ramp's corners.

Shared by both segmenters (from the ramp's own edges and from a sync channel).
"""

from __future__ import annotations

import numpy as np


def interpolate_crossing(x: np.ndarray, i: np.ndarray, level: float) -> np.ndarray:
    """Fractional sample index where the segment from ``i - 1`` to ``i`` crosses ``level``.

    Linear interpolation, ``(i - 1) + (level - x[i-1]) / (x[i] - x[i-1])``,
    clipped to the segment; either direction of crossing.
    """
    a = x[i - 1]
    b = x[i]
    den = np.where(a != b, b - a, 1.0)
    return (i - 1) + np.clip((level - a) / den, 0.0, 1.0)


def local_crossing(x: np.ndarray, lo: np.ndarray, hi: np.ndarray, level: float,
                    which: str) -> np.ndarray:
    """Fractional index of the first or last downward crossing of ``level`` with the
    crossing sample i in (lo, hi], per window; NaN where there is none."""
    n = x.size
    lo = np.clip(lo, 0, n - 1)
    hi = np.clip(hi, 0, n - 1)
    w = int(np.max(hi - lo)) + 1 if lo.size else 1
    idx = np.minimum(lo[:, None] + np.arange(w)[None, :], n - 1)
    X = x[idx]
    below = X < level
    cross = below[:, 1:] & ~below[:, :-1]
    cross &= (idx[:, 1:] <= hi[:, None])
    has = cross.any(axis=1)
    if which == "first":
        j = np.argmax(cross, axis=1)
    else:
        j = cross.shape[1] - 1 - np.argmax(cross[:, ::-1], axis=1)
    i = idx[np.arange(idx.shape[0]), j + 1]
    out = interpolate_crossing(x, np.maximum(i, 1), level)
    return np.where(has, out, np.nan)


def window_argext(x: np.ndarray, starts: np.ndarray, width: int, kind: str) -> np.ndarray:
    """Index of the max (or min) of x over [start, start + width) for each start."""
    n = x.size
    starts = np.clip(starts, 0, max(0, n - 1))
    offs = np.arange(width)
    idx = np.minimum(starts[:, None] + offs[None, :], n - 1)
    vals = x[idx]
    j = np.argmax(vals, axis=1) if kind == "max" else np.argmin(vals, axis=1)
    return idx[np.arange(idx.shape[0]), j]


def _local_lines(xm: np.ndarray, first: np.ndarray, m: int) -> tuple[np.ndarray, np.ndarray]:
    """Least-squares line ``a + b k`` through the ``m`` samples from each ``first``.

    Centred sums, ``b = sum (k - kbar)(y - ybar) / sum (k - kbar)^2``. Where the ``m``
    samples lie inside the record, ``k - kbar`` is ``j - (m - 1) / 2`` for ``j < m``,
    exactly (the sums of whole numbers are exact in floating point), so those rows share
    one row of centred indices and one ``sum (k - kbar)^2``; rows cut by either end of
    the record (their indices clipped) are worked out in full."""
    n = xm.size
    first = np.asarray(first, dtype=np.int64)
    inside = (first >= 0) & (first <= n - m)
    a = np.empty(first.shape)
    b = np.empty(first.shape)
    if np.any(inside):
        f = first[inside]
        d = np.arange(m) - 0.5 * (m - 1)  # k - kbar, the same for every row
        y = xm[f[:, None] + np.arange(m)[None, :]]
        yb = y.mean(axis=1)
        y -= yb[:, None]
        y *= d[None, :]
        sxx = float((d * d).sum())
        bi = y.sum(axis=1) / (sxx if sxx > 0 else 1.0)
        b[inside] = bi
        a[inside] = yb - bi * (f + 0.5 * (m - 1))
    if not np.all(inside):
        out = ~inside
        idx = np.clip(first[out][:, None] + np.arange(m)[None, :], 0, n - 1)
        k = idx.astype(float)
        y = xm[idx]
        kb, yb = k.mean(axis=1), y.mean(axis=1)
        sxx_o = ((k - kb[:, None]) ** 2).sum(axis=1)
        bo = ((k - kb[:, None]) * (y - yb[:, None])).sum(axis=1) / np.where(sxx_o > 0, sxx_o, 1.0)
        b[out] = bo
        a[out] = yb - bo * kb
    return a, b


def _line_samples(period_samples: float) -> int:
    return int(np.clip(0.1 * period_samples, 3, 20))


def slow_corners(xm: np.ndarray, peak: np.ndarray, trough: np.ndarray, t90: np.ndarray,
                 t10: np.ndarray, lo_m: float, span: float, slow: np.ndarray,
                 period_samples: float, tol_v: float) -> tuple[np.ndarray, np.ndarray]:
    """The ramp's ends at edges resolved over several samples.

    The end: a line through a few ramp samples before the edge meets the edge's
    tangent at its 90 % crossing (the slope of the sample interval holding the
    crossing). For a linear fall the tangent is the edge itself; for an exponential
    one (a switch discharging the capacitor) it meets the ramp within a few
    hundredths of the time constant of the switching instant, where extrapolating
    the 90-10 % crossings as if the fall were linear lands a sixth of a time
    constant early. The start: the extrapolated 10 % crossing, moved past the last
    sample still above the ramp's own line (a discharge that approaches the low
    level slowly keeps them there).
    """
    n = xm.size
    m = _line_samples(period_samples)
    t90s = np.where(slow, t90, 1.0)
    i = np.clip(np.ceil(t90s).astype(np.int64), 1, n - 1)
    c90 = xm[i] - xm[i - 1]
    end_first = np.floor(t90s).astype(np.int64) - 2 - m
    a, b = _local_lines(xm, end_first, m)
    with np.errstate(divide="ignore", invalid="ignore"):
        t_end = (lo_m + 0.9 * span - c90 * t90s - a) / (b - c90)
    near = 2.0 * np.maximum(np.where(slow, t10 - t90, 1.0), 1.0)
    ok_e = slow & np.isfinite(t_end) & (c90 < 0) & (end_first > 0) & (np.abs(t_end - peak) < near)
    first = np.ceil(trough).astype(np.int64)
    a, b = _local_lines(xm, first + 3, m)
    look = 4
    k = np.clip(first[:, None] + np.arange(-1, look)[None, :], 0, n - 1)
    above = (xm[k] - (a[:, None] + b[:, None] * k)) > tol_v
    last = np.where(above.any(axis=1),
                    k[np.arange(k.shape[0]), look - np.argmax(above[:, ::-1], axis=1)], -1)
    start = np.where(slow & (last >= 0), np.maximum(trough, last.astype(float)), trough)
    return np.where(ok_e, t_end, peak), start


def _uniform_low_end(v: np.ndarray) -> float:
    """Lower end of a uniform spread from its values: ``min - (max - min) / (n - 1)`` for
    a few values, from the 10 % and 90 % points (robust to a stray) for many."""
    if v.size < 10:
        return float(np.min(v) - np.ptp(v) / max(v.size - 1, 1))
    q10, q90 = np.percentile(v, [10, 90])
    return float(q10 - 0.1 * (q90 - q10) / 0.8)


def fast_corners(xm: np.ndarray, peak: np.ndarray, trough: np.ndarray, t90: np.ndarray,
                 t10: np.ndarray, fast: np.ndarray, period_samples: float, tol_v: float
                 ) -> tuple[np.ndarray, np.ndarray]:
    """The ramp's ends at edges a few samples fast or faster, from the steady reset levels.

    Sampling shows little of a fast reset: it cuts the edge's corners, so its
    crossings are biased by up to half a sample, and an edge faster than a sample
    shows nothing at all. But a comparator resets at the same levels every cycle,
    and a clock that runs free of the ramp lands the first sample on each new ramp a
    different fraction of a sample after the reset: the ramp's local line at that
    sample takes values spread uniformly above the start level ``L``
    (:func:`_uniform_low_end` estimates ``L``); likewise the last samples before the
    resets below the end level ``H``. Each ramp then starts where its line reaches
    ``L`` and ends where it reaches ``H``, between its last and first samples on the
    line. A clock locked to the ramp gives those samples themselves, which is all
    that sampling can say then.
    """
    n = xm.size
    m = _line_samples(period_samples)
    look = 4
    rows = np.arange(peak.size)
    i0 = np.ceil(np.where(fast, t10, 0.0)).astype(np.int64)
    j0 = np.floor(np.where(fast, t90, 0.0)).astype(np.int64)
    # the first sample on the new ramp's line, and the last on the old one's
    # (the lines are fitted clear of the edge: a discharge's tail can last a few samples)
    a, b = _local_lines(xm, i0 + look, m)
    k = np.clip(i0[:, None] + np.arange(look)[None, :], 0, n - 1)
    on = np.abs(xm[k] - (a[:, None] + b[:, None] * k)) <= tol_v
    i = np.where(on.any(axis=1), k[rows, np.argmax(on, axis=1)], i0 + look)
    a, b = _local_lines(xm, j0 - look - m + 1, m)
    k = np.clip(j0[:, None] - np.arange(look)[None, :], 0, n - 1)
    on = np.abs(xm[k] - (a[:, None] + b[:, None] * k)) <= tol_v
    j = np.where(on.any(axis=1), k[rows, np.argmax(on, axis=1)], j0 - look)
    ok = fast & (j - m >= 0) & (i + m < n) & (j < i)
    if np.count_nonzero(ok) < 3:
        return peak, trough
    a2, b2 = _local_lines(xm, i, m)
    a3, b3 = _local_lines(xm, j - m + 1, m)
    v_first = a2 + b2 * i
    v_last = a3 + b3 * j
    lo = _uniform_low_end(v_first[ok])
    hi = -_uniform_low_end(-v_last[ok])
    with np.errstate(divide="ignore", invalid="ignore"):
        start = i - (v_first - lo) / b2
        end = j + (hi - v_last) / b3
    # the ramp starts between the last sample off its line and the first on it, and ends
    # between the last sample on the old line and the first off it
    # (strictly inside the interval, so the sample off the line is never in the ramp)
    start = np.clip(np.where(np.isfinite(start), start, i), i - 1 + 1e-6, i)
    end = np.clip(np.where(np.isfinite(end), end, j), j, np.minimum(j + 1 - 1e-6, start))
    return np.where(ok, end, peak), np.where(ok, start, trough)
