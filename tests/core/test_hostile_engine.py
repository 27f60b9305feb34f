"""Hostile values reaching the engine: refused in one line naming the file, never a crash.

Issue 9: amplitudes of 1e200 V broke the end-slope fit, a sample interval of 1e300 s gave
NaN figures with exit 0, absurd circuit values broke the ramp prediction. The bench ranges
are the project's own (core/capture.py, core/circuit.py: a high-voltage probe reaches tens of
kilovolts; a sample interval between a femtosecond and a few hours); the checks here are
that every such input ends in a member of the error family whose message names the file, or
in finite figures.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from trueslope.core.analysis import analyse
from trueslope.core.capture import Capture
from trueslope.core.circuit import CircuitContext, parse_context, predict_ramp
from trueslope.core.errors import AnalysisError, SettingsError, TrueslopeError
from trueslope.core.settings import Settings

from tests.support.synth import sawtooth, straight


def _ramp(scale: float = 1.0, dt: float = 1e-6) -> Capture:
    k = np.arange(20_000)
    return Capture(source="bench/odd.csv", channels={"CH1": scale * (k % 1000) / 1000.0},
                   sample_interval_s=dt)


@pytest.mark.parametrize("scale, dt, words", [
    (1e200, 1e-6, "outside any bench's range"),
    (1e160, 1e-6, "outside any bench's range"),
    (1.0, 1e300, "sample interval"),
    (1.0, 1e-300, "sample interval"),
    (1.0, math.inf, "sample interval"),
])
def test_values_outside_any_bench_are_refused_naming_the_file(scale, dt, words, recwarn):
    with pytest.raises(AnalysisError) as err:
        analyse(_ramp(scale, dt))
    text = str(err.value)
    assert text.startswith("odd.csv: ") and words in text and "\n" not in text
    assert not [w for w in recwarn if issubclass(w.category, RuntimeWarning)]


def test_a_non_finite_sample_is_refused():
    cap = _ramp()
    cap.channels["CH1"][500] = np.nan
    with pytest.raises(AnalysisError, match="odd.csv: .*not finite"):
        analyse(cap)


@pytest.mark.parametrize("scale", [1e-9, 1e-3, 1.0, 1e4])
def test_small_and_large_bench_ramps_measure_alike(scale):
    # scale-free inside the bench range: the slope scales, the nonlinearity does not
    a = analyse(_ramp(scale))
    assert a.figures.slope_v_per_s == pytest.approx(scale * 1e3, rel=1e-9)
    assert a.figures.nonlinearity_pct < 1e-6


def test_engine_refusals_name_the_file():
    # a triangle is not a sawtooth; the segmenter's message gains the file name
    k = np.arange(20_000)
    tri = np.abs((k % 1000) - 500) / 500.0
    with pytest.raises(TrueslopeError) as err:
        analyse(Capture(source="/tmp/tri.csv", channels={"CH1": tri}, sample_interval_s=1e-6))
    assert str(err.value).startswith("tri.csv: ")


def test_flat_record_says_no_ramp():
    flat = 1.2 + np.random.default_rng(1).normal(0, 2e-3, 20_000)
    with pytest.raises(TrueslopeError, match="flat.csv: no ramp: the signal is flat"):
        analyse(Capture(source="flat.csv", channels={"CH1": flat}, sample_interval_s=1e-6))


@pytest.mark.parametrize("kwargs, field", [
    (dict(capacitance="1e-300", current="1.2m", probe="10M"), "capacitance"),
    (dict(capacitance="47n", current="1e300"), "current"),
    (dict(capacitance="47n", current="1m", probe="1e-300"), "probe"),
    (dict(capacitance="47n", current="1m", probe="10M,1"), "probe"),
    (dict(capacitance="47n", set_resistor="1e-9", reference="1.25"), "set_resistor"),
    (dict(capacitance="47n", current="1m", thresholds="4,0.05"), "thresholds"),
    (dict(capacitance="47n", current="1m", thresholds="0,1e9"), "thresholds"),
    (dict(tolerance="5%"), "tolerance"),
])
def test_absurd_circuit_values_are_refused_with_the_range(kwargs, field):
    with pytest.raises(SettingsError) as err:
        parse_context(**kwargs)
    assert err.value.field == field
    assert "\n" not in str(err.value)


def test_bipolar_thresholds_in_order_are_accepted():
    ctx = parse_context(capacitance="47n", current="1m", thresholds="-1,1")
    assert (ctx.low_threshold_v, ctx.high_threshold_v) == (-1.0, 1.0)


@pytest.mark.parametrize("tau_over_ramp", [2.0, 1e3, 1e6, 1e9, 1e12])
def test_prediction_is_well_conditioned_at_any_time_scale(tau_over_ramp):
    # the exact exponential of a current into R || C (SOURCES.md [loading]); for tau much
    # longer than the ramp the least-squares nonlinearity tends to (2/3) e_d ~ e_s / 12
    c, v0, v1 = 1e-9, 0.0, 1.0
    i = 1e-3
    r = tau_over_ramp * (v1 - v0) / i  # tau = R C, ramp about C V / I
    p = predict_ramp(i, c, v0, v1, r)
    assert math.isfinite(p.slope_v_per_s) and math.isfinite(p.nonlinearity_pct)
    # (with I R below the upper level the ramp never gets there: an infinite ramp time)
    assert math.isinf(predict_ramp(i, c, v0, v1, 0.5 * (v1 - v0) / i).ramp_time_s)
    if tau_over_ramp >= 1e3:
        e_s = (v1 - v0) / (i * r)
        assert p.nonlinearity_pct == pytest.approx(100 * e_s / 12, rel=0.02)


def test_check_with_extreme_but_bench_values_stays_finite():
    cap = sawtooth(straight(0.2, 4.2), cycles=8, samples_per_ramp=500, noise_v=1e-3, seed=2)
    ctx = CircuitContext(capacitance_f=1e-15, current_a=100.0, probe_resistance_ohm=1.0)
    a = analyse(cap, Settings(context=ctx))
    for item in a.context_check.items:
        for v in (item.expected, item.measured, item.deviation_pct):
            assert v is None or isinstance(v, float)
