"""What the bench adds to a record besides the ramp: isolated spikes and clipping.

A spike (EMI, a probe bumped) is one or two samples that jump away from both
neighbours and come straight back; a reset is a step that stays down. A spike
must never make or hide a reset, and must stay out of the fits: its samples
are found here, replaced by the straight line between their neighbours for
segmentation and fitting, and reported by time.

Clipping is a scope range too small for the signal: the samples stick at the
converter's extreme code (or, in a float export, at one extreme value) for
longer than the record's ordinary dwell on one code. Clipped samples are
never fitted; the figures that touch them are bounds, not values.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: A spike jumps away from both neighbours by more than this fraction of the ramp's
#: span (and :data:`SPIKE_NOISE_SIGMAS` noise sigmas).
SPIKE_FRACTION = 0.05
SPIKE_NOISE_SIGMAS = 10.0
#: A run at the record's extreme is clipping when it is longer than this many samples
#: and :data:`CLIP_DWELL_FACTOR` times the record's typical dwell on one value.
MIN_CLIP_RUN = 3
CLIP_DWELL_FACTOR = 3.0
#: ... and when it recurs: at least this many such runs.
MIN_CLIP_RUNS = 2


def find_spikes(x: np.ndarray, span_v: float, noise_v: float) -> np.ndarray:
    """Indices of isolated one- and two-sample spikes.

    A sample ``i`` is a spike when ``x[i] - x[i-1]`` and ``x[i] - x[i+1]`` have the
    same sign and both exceed ``max(SPIKE_FRACTION * span, SPIKE_NOISE_SIGMAS *
    noise)``; a pair ``i, i+1`` when both stand that far, on the same side, from
    ``x[i-1]`` and ``x[i+2]``. A reset fails the test: after it the signal stays down.
    """
    n = x.size
    if n < 5:
        return np.zeros(0, dtype=np.int64)
    thr = max(SPIKE_FRACTION * span_v, SPIKE_NOISE_SIGMAS * noise_v)
    c = x[1:-1]
    d1 = c - x[:-2]
    d2 = c - x[2:]
    one = ((d1 > thr) & (d2 > thr)) | ((d1 < -thr) & (d2 < -thr))
    a, b, left, right = x[1:-2], x[2:-1], x[:-3], x[3:]
    up = (a - left > thr) & (b - left > thr) & (a - right > thr) & (b - right > thr)
    down = (left - a > thr) & (left - b > thr) & (right - a > thr) & (right - b > thr)
    two = np.flatnonzero(up | down) + 1
    idx = np.concatenate((np.flatnonzero(one) + 1, two, two + 1))
    return np.unique(idx)


def without_spikes(x: np.ndarray, spikes: np.ndarray) -> np.ndarray:
    """A copy of ``x`` with the spike samples replaced by the line between their
    nearest good neighbours (``numpy.interp``); ``x`` itself when there are none."""
    if spikes.size == 0:
        return x
    good = np.ones(x.size, dtype=bool)
    good[spikes] = False
    out = np.array(x, dtype=float, copy=True)
    out[spikes] = np.interp(spikes, np.flatnonzero(good), x[good])
    return out


@dataclass(frozen=True)
class Clipping:
    """Where the record sticks at its extremes (true polarity).

    Attributes
    ----------
    top_v, bottom_v : float or None
        The level the record is clipped at, or None when that side is not clipped.
    mask : ndarray of bool
        True at every clipped sample.
    """

    top_v: float | None
    bottom_v: float | None
    mask: np.ndarray

    @property
    def any(self) -> bool:
        return self.top_v is not None or self.bottom_v is not None


def _runs(mask: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Starts and lengths of the runs of True in ``mask``."""
    m = np.concatenate(([False], mask, [False]))
    d = np.diff(m.astype(np.int8))
    starts = np.flatnonzero(d == 1)
    return starts, np.flatnonzero(d == -1) - starts


def typical_dwell(x: np.ndarray) -> float:
    """Median length of the runs of equal consecutive samples (1 for unquantised data)."""
    sub = x[: 2_000_000]
    eq = sub[1:] == sub[:-1]
    if not np.any(eq):
        return 1.0
    _, lengths = _runs(eq)
    # a run of k equal samples is k - 1 equalities; runs of one sample count as 1
    singles = max(int(sub.size - np.count_nonzero(eq) - lengths.size), 0)
    all_lengths = np.concatenate((lengths + 1, np.ones(singles)))
    return float(np.median(all_lengths))


def find_clipping(x: np.ndarray) -> Clipping:
    """Clipping at the record's top or bottom: runs at the extreme value longer than
    ``max(MIN_CLIP_RUN, CLIP_DWELL_FACTOR x typical dwell)``, at least
    :data:`MIN_CLIP_RUNS` of them."""
    mask = np.zeros(x.size, dtype=bool)
    if x.size < 16:
        return Clipping(None, None, mask)
    longest = max(MIN_CLIP_RUN, CLIP_DWELL_FACTOR * typical_dwell(x))
    levels: list[float | None] = []
    for v in (float(np.max(x)), float(np.min(x))):
        at = np.abs(x - v) <= 1e-12 * max(1.0, abs(v))
        starts, lengths = _runs(at)
        long_ = lengths > longest
        if np.count_nonzero(long_) >= MIN_CLIP_RUNS:
            mask |= at
            levels.append(v)
        else:
            levels.append(None)
    return Clipping(levels[0], levels[1], mask)
