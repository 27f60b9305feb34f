"""Sweep errors and linearity figures against closed forms.

Sources:
- Millman and Taub, *Pulse, Digital and Switching Waveforms*, chapter on voltage
  time-base generators: definitions of the slope, displacement and
  transmission errors (from memory, agreeing with course notes), and the
  small-error relations e_d ~ e_s/8, e_t ~ e_s/2 for an exponential sweep.
- Exact values for the exponential sweep from the closed forms in
  SOURCES.md [sweep] (derived): y = V_s/V, x = -ln(1-y), e_s = y,
  e_t = 1 - (1 - e^-x)/x, e_d = (1/y)(1 - y/x) - ln(x/y)/x.
"""

import math

import numpy as np
import pytest

from trueslope.core.analysis import analyse
from trueslope.core.settings import Settings

from tests.support.synth import exponential, sawtooth, straight


def exact_errors(y):
    x = -math.log(1.0 - y)
    e_s = y
    e_t = 1.0 - (1.0 - math.exp(-x)) / x
    e_d = (1.0 / y) * (1.0 - y / x) - math.log(x / y) / x
    return e_s, e_d, e_t


def test_closed_forms_reproduce_the_reference_sheet_values():
    # SOURCES.md [sweep], y = 0.1: e_s = 0.100000, e_d = 0.013168, e_t = 0.050878
    e_s, e_d, e_t = exact_errors(0.1)
    assert (e_s, round(e_d, 6), round(e_t, 6)) == (0.1, 0.013168, 0.050878)


@pytest.mark.parametrize("y", [0.1, 0.03])
def test_exponential_sweep_errors(y):
    cap = sawtooth(exponential(y), cycles=8, samples_per_ramp=4000)
    a = analyse(cap, Settings(trim_fraction=0.0))
    f = a.figures
    e_s, e_d, e_t = exact_errors(y)
    assert f.slope_error_pct == pytest.approx(100 * e_s, rel=0.01)
    assert f.displacement_error_pct == pytest.approx(100 * e_d, rel=0.01)
    assert f.transmission_error_pct == pytest.approx(100 * e_t, rel=0.015)
    # the terminal-based INL equals the displacement error (SOURCES.md [sweep], derived)
    assert f.terminal_nonlinearity_pct == pytest.approx(100 * e_d, rel=0.01)
    # least-squares max residual ~ (2/3) e_d for a near-parabolic bow: y = 0.1 -> 0.8871 %
    if y == 0.1:
        assert f.nonlinearity_pct == pytest.approx(0.8871, rel=0.01)
    assert f.direction == "rising"


def test_small_error_relations_of_the_textbook():
    # Millman and Taub: for small errors e_d ~ e_s/8 and e_t ~ e_s/2
    cap = sawtooth(exponential(0.01), cycles=6, samples_per_ramp=4000)
    f = analyse(cap, Settings(trim_fraction=0.0)).figures
    assert f.displacement_error_pct == pytest.approx(f.slope_error_pct / 8, rel=0.03)
    assert f.transmission_error_pct == pytest.approx(f.slope_error_pct / 2, rel=0.03)


def test_rule_of_thumb_mid_level_crossing():
    # common practice (no source): a ramp of about 0.9 ms whose mid-level crossing is
    # 16 us late against the chord has about 1.8 % displacement error.
    T = 0.9e-3
    spr = 2000
    k = 4 * 16e-6 / T  # parabolic bow v = V (u - k u (1 - u)): mid crossing k T / 4 late
    cap = sawtooth(lambda u: 4.0 * (u - k * u * (1 - u)), cycles=8, samples_per_ramp=spr,
                   dt=T / spr)
    f = analyse(cap, Settings(trim_fraction=0.0)).figures
    dt = T / spr
    assert f.ramp_time_s == pytest.approx(T, abs=2 * dt)
    assert f.midpoint_time_error_s == pytest.approx(16e-6, abs=2 * dt)
    assert abs(f.displacement_error_pct) == pytest.approx(1.8, abs=0.1)
    assert f.displacement_error_pct < 0  # bows below the chord: convex, slope rising
    assert f.slope_error_pct < 0


def test_falling_ramp_measured_on_its_mirror_image():
    rising = analyse(sawtooth(exponential(0.05), cycles=6), Settings()).figures
    falling = analyse(sawtooth(exponential(0.05), cycles=6, falling=True), Settings()).figures
    assert falling.direction == "falling"
    # to 1e-5, ten times finer than the slope's printed precision: this noiseless record's
    # samples sit exactly on bin and window edges, so a last-bit difference in the
    # generator's exp (numpy's vectorised exp rounds differently on different processors)
    # moves a sample across an edge: 3.2e-6 seen on one machine, below 1e-6 on another
    assert falling.slope_v_per_s == pytest.approx(-rising.slope_v_per_s, rel=1e-5)
    # the same to 1e-3: this record has exactly 2000 samples per period, so samples fall
    # exactly on the averaged cycle's phase-bin edges and a rounding of 1e-18 s in a ramp
    # start moves one between bins; and the end slopes come from a fit weighted by the
    # bins' spread, floating-point cancellation only in a noiseless record
    assert falling.slope_error_pct == pytest.approx(rising.slope_error_pct, rel=1e-3)
    assert falling.nonlinearity_pct == pytest.approx(rising.nonlinearity_pct, rel=1e-3)
    lo, hi = falling.slope_ci95_v_per_s
    assert lo < falling.slope_v_per_s < hi < 0


def test_straight_ramp_figures():
    cap = sawtooth(straight(0.2, 4.2), cycles=10, samples_per_ramp=1000, dt=1e-6)
    f = analyse(cap, Settings()).figures
    assert f.slope_v_per_s == pytest.approx(4.0 / 1e-3, rel=1e-6)
    # the reset is instantaneous, between samples 999 and 1000 of each period: no
    # sampling shows when within that interval; the engine places an unresolved edge at
    # its 50 % crossing (unbiased for a free-running clock, tests/core/test_bench_reality.py),
    # here half a sample before the first sample of the ramp: half a sample's rise (2 mV)
    assert f.start_v == pytest.approx(0.2, abs=0.5 * 4e-3 * 1.01)
    assert f.end_v == pytest.approx(4.2, abs=5e-3)  # last sample at u = 999/1000
    assert f.offset_v == pytest.approx(0.2, abs=0.5 * 4e-3 * 1.01)
    assert f.nonlinearity_pct < 1e-6
    assert f.slope_error_pct == pytest.approx(0.0, abs=1e-6)
    assert f.frequency_hz == pytest.approx(1e3, rel=1e-6)


def test_explicit_window_in_seconds():
    cap = sawtooth(exponential(0.1), cycles=6, samples_per_ramp=2000, dt=1e-6)
    a = analyse(cap, Settings(window_s=(0.2e-3, 1.0e-3)))
    assert a.figures.window_start_s == pytest.approx(0.2e-3)
    assert a.figures.window_end_s == pytest.approx(1.0e-3)
    t = a.averaged.time_s[a.averaged.in_window]
    assert t.min() >= 0.2e-3 and t.max() <= 1.0e-3
