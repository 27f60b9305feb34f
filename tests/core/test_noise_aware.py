"""Noise-aware estimation: a straight ramp on an 8-bit scope is reported straight.

Check values: an 8-bit ADC over 6 V has a step q = 23.4 mV; the per-cycle
maximum |residual| of a perfectly straight ramp is then about q/2 plus noise
peaks, i.e. roughly 0.8 % of a 4 V span (the issue's figure); quantisation
noise is q / sqrt(12) RMS (Widrow's quantisation model, a textbook result).
"""

import numpy as np
import pytest

from trueslope.core.analysis import analyse
from trueslope.core.settings import Settings

from tests.support.synth import exponential, sawtooth, straight


@pytest.fixture(scope="module")
def straight_8bit():
    cap = sawtooth(straight(0.2, 4.2), cycles=16, samples_per_ramp=1000.3, bits=8,
                   full_scale=(-0.5, 5.5), noise_v=2.5e-3, seed=11)
    return analyse(cap, Settings())


def test_per_cycle_maximum_residual_overstates_a_straight_ramp(straight_8bit):
    per_cycle = np.array([c.nonlinearity_pct for c in straight_8bit.cycles])
    assert np.median(per_cycle) > 0.4  # the naive figure a cursor-and-max check gives


def test_summary_reports_the_systematic_shape_and_the_floor(straight_8bit):
    f = straight_8bit.figures
    assert f.nonlinearity_pct < 0.1
    assert f.below_floor is True
    assert 0 < f.nonlinearity_floor_pct < 0.2
    assert any(w.code == "below-resolution" for w in straight_8bit.warnings)


def test_adc_step_and_noise_detected(straight_8bit):
    f = straight_8bit.figures
    q = 6.0 / 256
    assert f.adc_step_v == pytest.approx(q, rel=1e-6)
    # random noise plus quantisation noise, q/sqrt(12) (Widrow), within a factor 1.5
    expected = np.hypot(2.5e-3, q / np.sqrt(12))
    assert expected / 1.5 < f.noise_rms_v < 1.5 * expected


def test_bowed_ramp_above_the_floor_is_measured_through_the_noise():
    # y = 0.05 exponential sweep: least-squares nonlinearity ~ (2/3) e_d, e_d ~ e_s/8
    # (SOURCES.md [sweep], derived); measured noiseless first, then at 8 bits with noise
    clean = analyse(sawtooth(exponential(0.05), cycles=16, samples_per_ramp=1000.3)).figures
    noisy = analyse(sawtooth(exponential(0.05), cycles=16, samples_per_ramp=1000.3, bits=8,
                             noise_v=2.5e-3, seed=3)).figures
    # reference: numpy.polyfit of the analytic curve over the same window (5 % trim)
    u = np.linspace(0.05, 0.95, 20001)
    v = exponential(0.05)(u)
    p = np.polyfit(u, v, 1)
    ref = 100 * np.max(np.abs(v - np.polyval(p, u))) / (p[0] * 0.9)
    assert clean.nonlinearity_pct == pytest.approx(ref, rel=0.01)
    assert noisy.nonlinearity_pct == pytest.approx(clean.nonlinearity_pct, abs=0.05 + 0.15 * clean.nonlinearity_pct)
    assert noisy.below_floor is False
    assert noisy.slope_error_pct == pytest.approx(clean.slope_error_pct, abs=1.0)
