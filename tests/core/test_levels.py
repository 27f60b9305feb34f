"""IEEE Std 181 histogram state levels on a synthetic two-level record.

Reference: IEEE Std 181 (transitions, pulses and related waveforms): the
histogram is split at the midpoint of its occupied range and each state level
is the mode (or mean) of its half (from memory; SOURCES.md [ieee181]).
"""

import numpy as np
import pytest

from trueslope.core.levels import ramp_extremes, state_levels


def _pulse_train(low=0.2, high=3.1, noise=0.01, n=20_000, seed=3):
    rng = np.random.default_rng(seed)
    x = np.where((np.arange(n) // 500) % 2 == 0, low, high).astype(float)
    # finite transitions: 20-sample linear edges, as a real pulse has
    k = np.ones(20) / 20
    x = np.convolve(x, k, mode="same")
    return x + rng.normal(0.0, noise, n)


@pytest.mark.parametrize("method", ["mode", "mean"])
def test_two_level_record(method):
    x = _pulse_train()
    lo, hi = state_levels(x, method)
    # each level within a histogram bin width (range / bins) of the truth
    bin_w = (x.max() - x.min()) / 256
    # the mean method also averages the edges' samples (4 % of the record here), which
    # pull each level towards the middle by about 1 % of the amplitude
    tol = max(bin_w, 0.01) if method == "mode" else 0.012 * 2.9 + 0.01
    assert lo == pytest.approx(0.2, abs=tol)
    assert hi == pytest.approx(3.1, abs=tol)


def test_mode_is_robust_to_overshoot():
    x = _pulse_train()
    x[500:510] += 1.0  # a ringing spike after an edge must not move the high level
    lo, hi = state_levels(x, "mode")
    assert hi == pytest.approx(3.1, abs=0.03)


def test_ramp_extremes_ignore_a_spike():
    t = np.linspace(0, 10, 10_000) % 1.0
    x = 0.5 + 4.0 * t
    x[1234] = 20.0
    lo, hi = ramp_extremes(x)
    assert lo == pytest.approx(0.5, abs=0.02)
    assert hi == pytest.approx(4.5, abs=0.02)
