"""Threshold crossings of a long record, found in one pass a cache-sized block at a time.

Used by the segmenter (:mod:`.segment`): the Schmitt-trigger transitions between the
30 % and 70 % thresholds, and the 10, 30, 70 and 90 % upward crossings that tell a dwell
at the bottom or a plateau at the top of a ramp.
"""

from __future__ import annotations

import numpy as np

from .edges import interpolate_crossing

#: Samples compared at a time when looking for threshold crossings: the block's boolean
#: arrays stay in the processor's cache, and no whole-record temporary is made.
CROSSING_BLOCK = 1 << 16


def changes(x: np.ndarray, levels: list[float], below: float | None = None
            ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Where the count of ``levels`` (ascending) that the record lies above changes.

    ``code[i]`` is the number of levels with ``x[i] > level``, less one where
    ``x[i] < below``. Returns every ``k`` with ``code[k] != code[k + 1]``, and the codes
    on either side. The record is read once, a cache-sized block at a time: each block is
    compared with every level while it is in the processor's cache, and only the changes
    (a few per cycle) are kept."""
    ks, before, after = [np.zeros(0, dtype=np.int64)], [np.zeros(0, np.int8)], [np.zeros(0, np.int8)]
    for a in range(0, max(x.size - 1, 0), CROSSING_BLOCK):
        part = x[a:a + CROSSING_BLOCK + 1]
        code = (part > levels[0]).view(np.int8)
        for level in levels[1:]:
            code = code + (part > level).view(np.int8)
        if below is not None:
            code = code - (part < below).view(np.int8)
        k = np.flatnonzero(code[1:] != code[:-1])
        ks.append(k + a)
        before.append(code[k])
        after.append(code[k + 1])
    return np.concatenate(ks), np.concatenate(before), np.concatenate(after)


def enter_leave(x: np.ndarray, lower: float, upper: float
                 ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """For ``c = x > upper``, then for ``c = x < lower`` (``lower < upper``): every
    ``i >= 1`` with ``c[i]`` and not ``c[i - 1]`` (entering), and every ``k`` with ``c[k]``
    and not ``c[k + 1]`` (the last sample before leaving), from one pass over the record.

    Returns ``(enter_high, leave_high, enter_low, leave_low)``."""
    k, was, now = changes(x, [upper], below=lower)  # code 1 above, -1 below, 0 between
    return (k[(now == 1) & (was != 1)] + 1, k[(was == 1) & (now != 1)],
            k[(now == -1) & (was != -1)] + 1, k[(was == -1) & (now != -1)])


def crossings_up(x: np.ndarray, levels: list[float]) -> list[tuple[np.ndarray, np.ndarray]]:
    """Every upward crossing of each of ``levels``, from one pass over the
    record: for each level, the index i of the first sample above it, and the fractional
    index where the segment (i-1, i) crosses."""
    if not levels:
        return []
    order = sorted(range(len(levels)), key=lambda j: levels[j])
    k, was, now = changes(x, [levels[j] for j in order])
    out: list[tuple[np.ndarray, np.ndarray]] = [(k, k)] * len(levels)
    for rank, j in enumerate(order):
        # x > the level of this rank exactly where the code is above the rank
        i = k[(was <= rank) & (now > rank)] + 1
        out[j] = (i, interpolate_crossing(x, i, levels[j]))
    return out


def first_up_after(crossings: tuple[np.ndarray, np.ndarray], t: np.ndarray) -> np.ndarray:
    """The first of ``crossings`` (from :func:`crossings_up`) at or after each ``t``."""
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
