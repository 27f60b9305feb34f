"""Threshold crossings of a long record, found in one pass a cache-sized block at a time.

Used by the segmenter (:mod:`.segment`): the Schmitt-trigger transitions between the
30 % and 70 % thresholds; the 10, 50 and 90 % downward crossings that time each reset
edge (:func:`crossing_in` picks each edge's own from the list, where gathering every
edge's window of samples cost more at 100 000 cycles); and the 10, 30, 70 and 90 % upward
crossings that tell a dwell at the bottom or a plateau at the top of a ramp.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .edges import interpolate_crossing

#: Samples compared at a time when looking for threshold crossings: the block's boolean
#: arrays stay in the processor's cache, and no whole-record temporary is made.
CROSSING_BLOCK = 1 << 16


def changes(x: np.ndarray, above: list[float], below: list[float] = ()
            ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Where the counts of levels the record lies above, and below, change.

    ``code[i] = #{a in above: x[i] > a} + K #{b in below: x[i] < b}`` with
    ``K = len(above) + 1`` (both lists ascending). Returns every ``k`` with
    ``code[k] != code[k + 1]``, and the codes on either side. The record is read once, a
    cache-sized block at a time: each block is compared with every level while it is in
    the processor's cache, and only the changes (a few per cycle) are kept."""
    scale = len(above) + 1
    ks, before, after = [np.zeros(0, dtype=np.int64)], [np.zeros(0, np.int8)], [np.zeros(0, np.int8)]
    for a in range(0, max(x.size - 1, 0), CROSSING_BLOCK):
        part = x[a:a + CROSSING_BLOCK + 1]
        code = np.zeros(part.shape, dtype=np.int8)
        for level in above:
            code += (part > level).view(np.int8)
        for level in below:
            low = (part < level).view(np.int8)
            code += low * np.int8(scale) if scale > 1 else low
        k = np.flatnonzero(code[1:] != code[:-1])
        ks.append(k + a)
        before.append(code[k])
        after.append(code[k + 1])
    return np.concatenate(ks), np.concatenate(before), np.concatenate(after)


@dataclass(frozen=True)
class Crossings:
    """Where a record crosses some levels, each level under a key of the caller's.

    Attributes
    ----------
    up : dict
        For each key, every ``i`` with ``x[i] > level`` and not ``x[i - 1] > level``.
    down : dict
        For each key, every ``i`` with ``x[i] < level`` and not ``x[i - 1] < level``.
    """

    up: dict[float, np.ndarray]
    down: dict[float, np.ndarray]


def find_crossings(x: np.ndarray, up: dict[float, float], down: dict[float, float]
                   ) -> Crossings:
    """Every upward crossing of the levels ``up`` and downward crossing of the levels
    ``down`` (``{key: level}``), from one pass over the record."""
    ups = sorted(up, key=lambda key: up[key])
    downs = sorted(down, key=lambda key: down[key])
    k, was, now = changes(x, [up[key] for key in ups], [down[key] for key in downs])
    scale = len(ups) + 1
    was_a, now_a = was % scale, now % scale
    was_b, now_b = was // scale, now // scale
    nb = len(downs)
    # x > the above-level of rank r where the first count exceeds r; x < the below-level
    # of rank r (ascending) where the second count reaches nb - r
    out_up = {key: k[(was_a <= r) & (now_a > r)] + 1 for r, key in enumerate(ups)}
    out_down = {key: k[(was_b < nb - r) & (now_b >= nb - r)] + 1 for r, key in enumerate(downs)}
    return Crossings(out_up, out_down)


def enter_leave(x: np.ndarray, lower: float, upper: float
                ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """For ``c = x > upper``, then for ``c = x < lower`` (``lower < upper``): every
    ``i >= 1`` with ``c[i]`` and not ``c[i - 1]`` (entering), and every ``k`` with ``c[k]``
    and not ``c[k + 1]`` (the last sample before leaving), from one pass over the record.

    Returns ``(enter_high, leave_high, enter_low, leave_low)``."""
    k, was, now = changes(x, [upper], [lower])  # code: 1 above, 2 below, 0 between
    hi_was, hi_now = was == 1, now == 1
    lo_was, lo_now = was == 2, now == 2
    return (k[hi_now & ~hi_was] + 1, k[hi_was & ~hi_now],
            k[lo_now & ~lo_was] + 1, k[lo_was & ~lo_now])


def with_fractions(x: np.ndarray, i: np.ndarray, level: float) -> tuple[np.ndarray, np.ndarray]:
    """Crossing samples ``i`` and where each segment ``(i - 1, i)`` crosses ``level``."""
    return i, interpolate_crossing(x, i, level)


def crossing_in(x: np.ndarray, found: np.ndarray, level: float, lo: np.ndarray,
                hi: np.ndarray, which: str) -> np.ndarray:
    """Fractional index of the first or last of the crossings ``found`` (of ``level``,
    from :func:`find_crossings`) whose crossing sample lies in ``(lo, hi]`` (both clipped
    to the record), per window; NaN where there is none. With the downward crossings of
    ``level`` this is :func:`~trueslope.core.edges.local_crossing` without gathering every
    window's samples."""
    n = x.size
    lo = np.clip(lo, 0, n - 1)
    hi = np.clip(hi, 0, n - 1)
    if found.size == 0:
        return np.full(lo.shape, np.nan)
    if which == "first":
        j = np.searchsorted(found, lo, side="right")
        i = found[np.minimum(j, found.size - 1)]
        has = (j < found.size) & (i <= hi)
    else:
        j = np.searchsorted(found, hi, side="right") - 1
        i = found[np.maximum(j, 0)]
        has = (j >= 0) & (i > lo)
    out = interpolate_crossing(x, np.maximum(i, 1), level)
    return np.where(has, out, np.nan)


def first_up_after(crossings: tuple[np.ndarray, np.ndarray], t: np.ndarray) -> np.ndarray:
    """The first of ``crossings`` (from :func:`with_fractions`) at or after each ``t``."""
    i, f = crossings
    if i.size == 0:
        return np.full(t.shape, np.nan)
    j = np.searchsorted(i, t, side="left")
    return np.where(j < i.size, f[np.minimum(j, i.size - 1)], np.nan)


def last_up_before(crossings: tuple[np.ndarray, np.ndarray], t: np.ndarray) -> np.ndarray:
    """The last of ``crossings`` at or before each ``t``."""
    i, f = crossings
    if i.size == 0:
        return np.full(t.shape, np.nan)
    j = np.searchsorted(i, t, side="right") - 1
    return np.where(j >= 0, f[np.maximum(j, 0)], np.nan)
