"""Checks of the test builders in ``tests/support/builders.py`` against numpy and scipy."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from tests.support.builders import averaged_from_model, capture_from_cycles, dow_cycles


def _ramp(t):
    return 0.1 + 4000.0 * t


def test_builder_line_matches_scipy_linregress():
    # reference: scipy.stats.linregress on the same window
    av, fig, _ = averaged_from_model(_ramp, 1e-3, sigma_v=2e-3, seed=4)
    inw = av.in_window
    ref = stats.linregress(av.time_s[inw], av.measured_v[inw])
    assert av.fit.slope_v_per_s == pytest.approx(ref.slope, rel=1e-10)
    assert fig.fitted_span_v == pytest.approx(ref.slope * 0.9e-3, rel=1e-10)


def test_builder_floor_tracks_the_noise():
    _, f1, _ = averaged_from_model(_ramp, 1e-3, sigma_v=1e-3)
    _, f2, _ = averaged_from_model(_ramp, 1e-3, sigma_v=4e-3)
    assert f2.nonlinearity_floor_pct == pytest.approx(4 * f1.nonlinearity_floor_pct, rel=1e-3)
    # a straight ramp's smoothed residual stays below its own floor (4 sigma; numpy's normal)
    assert f1.nonlinearity_pct < f1.nonlinearity_floor_pct


def test_dow_cycles_settle_to_the_slope_of_the_total_capacitance():
    # closed form (circuit theory): once a fast branch (tau << ramp) follows the
    # voltage, the slope is I / (C + C_b); checked late in the ramp
    cyc = dow_cycles(100e-6, 10e-9, [(20e3, 1e-9)], 0.05, 4.0, warmup=5, keep=2)
    T, f = cyc[-1]
    t = np.linspace(0.8 * T, 0.95 * T, 50)
    slope = np.polyfit(t, f(t), 1)[0]
    assert slope == pytest.approx(100e-6 / 11e-9, rel=1e-3)


def test_capture_from_cycles_quantises_to_the_stated_bits():
    cap = capture_from_cycles([(1e-3, _ramp)] * 3, 1e-6, bits=8, noise_v=1e-3, seed=2)
    v = cap.channels["CH1"]
    steps = np.diff(np.unique(v))
    assert np.unique(v).size <= 256
    assert np.allclose(steps / steps.min(), np.round(steps / steps.min()))
