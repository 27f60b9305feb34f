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
    Only the few places where consecutive samples jump by the threshold are examined.
    """
    n = x.size
    if n < 5:
        return np.zeros(0, dtype=np.int64)
    thr = max(SPIKE_FRACTION * span_v, SPIKE_NOISE_SIGMAS * noise_v)
    jumps = _jumps(x, thr)  # k where |x[k+1] - x[k]| > thr: resets and spikes
    out: list[np.ndarray] = []
    if jumps.size:
        d = _Steps(x)
        i = jumps[(jumps >= 1) & (jumps <= n - 2)]  # sample i with both neighbours
        # one sample: x[i] leaves x[i-1] by d[i-1] and x[i+1] leaves it by d[i], opposite
        one = i[(np.abs(d[i - 1]) > thr) & (np.sign(d[i - 1]) == -np.sign(d[i]))]
        out.append(one)
        # two samples i, i+1 away from x[i-1] and x[i+2] on the same side
        j = jumps[(jumps >= 0) & (jumps <= n - 4)] + 1  # first sample of the pair
        a, b, left, right = x[j], x[j + 1], x[j - 1], x[j + 2]
        up = (a - left > thr) & (b - left > thr) & (a - right > thr) & (b - right > thr)
        down = (left - a > thr) & (left - b > thr) & (right - a > thr) & (right - b > thr)
        pair = j[up | down]
        out += [pair, pair + 1]
    return np.unique(np.concatenate(out)) if out else np.zeros(0, dtype=np.int64)


def _jumps(x: np.ndarray, thr: float, block: int = 1 << 16) -> np.ndarray:
    """Every ``k`` with ``|x[k+1] - x[k]| > thr``, a cache-sized block at a time (no
    whole-record temporaries)."""
    found = []
    buf = np.empty(block)
    for a in range(0, x.size - 1, block):
        b = min(a + block, x.size - 1)
        d = np.subtract(x[a + 1:b + 1], x[a:b], out=buf[:b - a])
        np.abs(d, out=d)
        found.append(np.flatnonzero(d > thr) + a)
    return np.concatenate(found) if found else np.zeros(0, dtype=np.int64)


class _Steps:
    """``d[k] = x[k+1] - x[k]`` for the few ``k`` asked for, as if ``numpy.diff(x)``."""

    def __init__(self, x: np.ndarray) -> None:
        self.x = x

    def __getitem__(self, k):
        return self.x[k + 1] - self.x[k]


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


def typical_dwell(x: np.ndarray) -> float:
    """Mean length of the runs of equal consecutive samples (1 for unquantised data), from
    the first two million samples."""
    sub = x[: 2_000_000]
    changes = int(np.count_nonzero(sub[1:] != sub[:-1]))
    return sub.size / (changes + 1)


@dataclass(frozen=True)
class Extremes:
    """Where a record sits at its top and bottom values: those values, the indices of the
    samples there, and the record's typical dwell (see :func:`find_clipping`)."""

    top_v: float
    top_at: np.ndarray
    bottom_v: float
    bottom_at: np.ndarray
    dwell: float


def extremes(x: np.ndarray, block: int = 1 << 16) -> Extremes:
    """The samples at the record's extreme values, found a cache-sized block at a time."""
    top, bottom = float(np.max(x)), float(np.min(x))
    t_lim = top - 1e-12 * max(1.0, abs(top))
    b_lim = bottom + 1e-12 * max(1.0, abs(bottom))
    ups, downs = [], []
    for a in range(0, x.size, block):
        part = x[a:a + block]
        ups.append(np.flatnonzero(part >= t_lim) + a)
        downs.append(np.flatnonzero(part <= b_lim) + a)
    return Extremes(top, np.concatenate(ups), bottom, np.concatenate(downs), typical_dwell(x))


def find_clipping(x: np.ndarray, samples_per_code: float = 1.0,
                  at: Extremes | None = None) -> Clipping:
    """Clipping at the record's top or bottom: runs at the extreme value longer than
    ``max(MIN_CLIP_RUN, CLIP_DWELL_FACTOR x max(typical dwell, samples_per_code))``, at
    least :data:`MIN_CLIP_RUNS` of them.

    ``samples_per_code`` is how long the ramp takes to cross one ADC code (the step over
    the slope per sample): a ramp that merely reaches the top code sits there that long.
    ``at`` is :func:`extremes` of ``x`` when already found."""
    mask = np.zeros(x.size, dtype=bool)
    if x.size < 16:
        return Clipping(None, None, mask)
    at = at if at is not None else extremes(x)
    longest = max(MIN_CLIP_RUN, CLIP_DWELL_FACTOR * max(at.dwell, samples_per_code))
    levels: list[float | None] = []
    for v, idx in ((at.top_v, at.top_at), (at.bottom_v, at.bottom_at)):
        if idx.size <= MIN_CLIP_RUNS * longest:  # too few samples there for long runs
            levels.append(None)
            continue
        breaks = np.flatnonzero(np.diff(idx) != 1)
        lengths = np.diff(np.concatenate(([-1], breaks, [idx.size - 1])))
        if np.count_nonzero(lengths > longest) >= MIN_CLIP_RUNS:
            mask[idx] = True
            levels.append(v)
        else:
            levels.append(None)
    return Clipping(levels[0], levels[1], mask)
