"""The segmenter's one-pass threshold crossings and local lines equal their direct definitions.

``crossings.crossings_up`` (upward crossings of several levels at once) and
``crossings.enter_leave`` (entering and leaving the bands above and below the Schmitt
thresholds) read the record once, a block at a time, through a count of the levels it lies
above. Reference: the definition written out with numpy boolean arrays over the whole
record (``c = x > level``; entering where ``c[i] and not c[i - 1]``), on random walks with
ties (values rounded, levels taken from the samples themselves), levels in any order,
records shorter and longer than a block.
"""

from __future__ import annotations

import numpy as np
import pytest

from trueslope.core import crossings


def _walk(seed: int, n: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return np.round(rng.normal(size=n).cumsum() * rng.uniform(0.1, 3.0), seed % 3)


@pytest.mark.parametrize("seed,n", [(0, 2), (1, 17), (2, 5000), (3, crossings.CROSSING_BLOCK + 1),
                                    (4, 3 * crossings.CROSSING_BLOCK + 7), (5, 250_000)])
def test_upward_crossings_of_several_levels_at_once(seed, n):
    x = _walk(seed, n)
    rng = np.random.default_rng(seed + 100)
    levels = list(rng.choice(x, 3)) + [float(np.median(x))]  # ties with samples; any order
    for (i, frac), level in zip(crossings.crossings_up(x, levels), levels):
        c = x > level
        want = np.flatnonzero(c[1:] & ~c[:-1]) + 1
        assert np.array_equal(i, want)
        if i.size:
            assert np.all((frac >= i - 1) & (frac <= i))  # within the crossing segment


@pytest.mark.parametrize("seed,n", [(6, 3), (7, 4000), (8, 2 * crossings.CROSSING_BLOCK + 3),
                                    (9, 300_000)])
def test_entering_and_leaving_the_bands_beyond_both_thresholds(seed, n):
    x = _walk(seed, n)
    lo, hi = np.quantile(x, [0.3, 0.7])
    lo, hi = float(x[np.argmin(np.abs(x - lo))]), float(x[np.argmin(np.abs(x - hi))])
    if not lo < hi:
        hi = lo + 1.0
    got = crossings.enter_leave(x, lo, hi)
    want = []
    for c in (x > hi, x < lo):
        want += [np.flatnonzero(c[1:] & ~c[:-1]) + 1, np.flatnonzero(c[:-1] & ~c[1:])]
    for g, w in zip(got, want):
        assert np.array_equal(g, w)


def test_local_lines_equal_the_centred_sums_written_out():
    """``edges._local_lines`` shares one row of centred indices between the rows that lie
    inside the record: the same lines, to the last bit, as the centred least-squares sums
    written out for every row (reference: the textbook formula ``b = sum (k - kbar)(y -
    ybar) / sum (k - kbar)^2``, ``a = ybar - b kbar``, with numpy), rows cut by the ends of
    the record included."""
    from trueslope.core.edges import _local_lines
    rng = np.random.default_rng(2)
    for trial in range(60):
        n = int(rng.integers(5, 5000))
        m = int(rng.integers(3, 21))
        xm = np.round(rng.normal(size=n).cumsum(), 2)
        first = rng.integers(-m - 3, n + 3, size=int(rng.integers(1, 300)))
        idx = np.clip(first[:, None] + np.arange(m)[None, :], 0, n - 1)
        k = idx.astype(float)
        y = xm[idx]
        kb, yb = k.mean(axis=1), y.mean(axis=1)
        sxx = ((k - kb[:, None]) ** 2).sum(axis=1)
        b = ((k - kb[:, None]) * (y - yb[:, None])).sum(axis=1) / np.where(sxx > 0, sxx, 1.0)
        got_a, got_b = _local_lines(xm, first, m)
        assert np.array_equal(got_b, b) and np.array_equal(got_a, yb - b * kb), trial
