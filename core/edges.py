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


def corners(xm: np.ndarray, peak: np.ndarray, trough: np.ndarray, t90: np.ndarray,
             t10: np.ndarray, lo_m: float, span: float, resolved: np.ndarray,
             sharp: np.ndarray, period_samples: float, tol_v: float
             ) -> tuple[np.ndarray, np.ndarray]:
    """The ramp's ends where its own line meets the edge.

    The end: a line through a few ramp samples before the edge meets the edge's
    tangent at its 90 % crossing (the slope of the sample interval holding the
    crossing). For a linear fall the tangent is the edge itself; for an
    exponential one (a switch discharging the capacitor) it meets the ramp within
    a few hundredths of the time constant of the switching instant, where
    extrapolating the 90-10 % crossings as if the fall were linear lands a sixth
    of a time constant early. The start, at edges sharper than
    :data:`trueslope.core.segment.SHARP_EDGE_SAMPLES`: a line through a few ramp samples after the edge
    meets the edge's chord through its 90 % and 10 % crossings (sampling cuts a
    fast edge's corners, which biases the extrapolation by up to half a sample).
    Elsewhere the extrapolated crossings stand.
    """
    n = xm.size
    m = int(np.clip(0.1 * period_samples, 3, 20))

    def line(first: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        idx = np.clip(first[:, None] + np.arange(m)[None, :], 0, n - 1)
        k = idx.astype(float)
        y = xm[idx]
        kb, yb = k.mean(axis=1), y.mean(axis=1)
        sxx = ((k - kb[:, None]) ** 2).sum(axis=1)
        b = ((k - kb[:, None]) * (y - yb[:, None])).sum(axis=1) / np.where(sxx > 0, sxx, 1.0)
        return yb - b * kb, b

    def meet(a: np.ndarray, b: np.ndarray, t_e: np.ndarray, v_e,
             c: np.ndarray) -> np.ndarray:
        with np.errstate(divide="ignore", invalid="ignore"):
            return (v_e - c * t_e - a) / (b - c)

    t90s = np.where(resolved, t90, 1.0)
    i = np.clip(np.ceil(t90s).astype(np.int64), 1, n - 1)
    c90 = xm[i] - xm[i - 1]
    end_first = np.floor(t90s).astype(np.int64) - 2 - m
    t_end = meet(*line(end_first), t90s, lo_m + 0.9 * span, c90)
    near = 2.0 * np.maximum(np.where(resolved, t10 - t90, 1.0), 1.0)
    # at a sharp edge the interval holding the 90 % crossing may hold the corner too, and
    # the crossings themselves are cut by the corners: the edge's line is the steepest
    # sample interval of the edge instead
    k0 = np.floor(np.where(sharp, t90, 0.0)).astype(np.int64) - 1
    w = int(np.max(np.where(sharp, np.ceil(t10) - np.floor(t90), 0.0), initial=0)) + 2
    idx = np.clip(k0[:, None] + np.arange(w)[None, :], 0, n - 2)
    drops = xm[idx + 1] - xm[idx]
    j = idx[np.arange(idx.shape[0]), np.argmin(drops, axis=1)]
    c = np.where(sharp, xm[j + 1] - xm[j], -1.0)
    t_steep = meet(*line(end_first), j.astype(float), xm[j], c)
    t_end = np.where(sharp, t_steep, t_end)
    ok_e = (resolved & np.isfinite(t_end) & ((c90 < 0) | sharp) & (end_first > 0)
            & (np.abs(t_end - peak) < near))
    start_first = np.ceil(np.where(sharp, trough, 0.0)).astype(np.int64) + 1
    t_start = meet(*line(start_first), j.astype(float), xm[j], c)
    ok_s = sharp & np.isfinite(t_start) & (np.abs(t_start - trough) < near)
    start = np.where(ok_s, t_start, trough)
    # the ramp starts where the signal has joined its line: a retrace that approaches the
    # low level slowly (an exponential discharge) keeps the samples after an edge-based
    # estimate above the line; the start moves past the last of them
    first = np.ceil(start).astype(np.int64)
    a, b = line(first + 3)
    look = 4
    k = np.clip(first[:, None] + np.arange(-1, look)[None, :], 0, n - 1)
    above = (xm[k] - (a[:, None] + b[:, None] * k)) > tol_v
    last = np.where(above.any(axis=1),
                    k[np.arange(k.shape[0]), look - np.argmax(above[:, ::-1], axis=1)], -1)
    start = np.where(resolved & (last >= 0), np.maximum(start, last.astype(float)), start)
    return np.where(ok_e, t_end, peak), start
