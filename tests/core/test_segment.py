"""Cycle segmentation: direction, shapes that are not sawtooths, partial cycles,
fraction-of-a-sample reset timing and the sync channel. Tolerances are in
sample periods."""

import numpy as np
import pytest

from trueslope.core.analysis import analyse
from trueslope.core.errors import NoFullCycleError, NotASawtoothError
from trueslope.core.segment import segment
from trueslope.core.settings import Settings

from tests.support.synth import sawtooth, straight


def test_rising_and_falling_detected():
    up = segment(sawtooth(straight(), cycles=6).channels["CH1"], 1e-6)
    down = segment(sawtooth(straight(), cycles=6, falling=True).channels["CH1"], 1e-6)
    assert up.direction == "rising" and down.direction == "falling"


def test_reset_edges_timed_to_a_fraction_of_a_sample():
    spr = 997.37  # a period that is not a whole number of samples
    cap = sawtooth(straight(), cycles=15, samples_per_ramp=spr, retrace_samples=2.0, phase=0.3)
    seg = segment(cap.channels["CH1"], 1e-6)
    periods = np.diff(seg.reset_times_s) / 1e-6
    assert np.max(np.abs(periods - (spr + 2.0))) < 0.05  # samples
    f = analyse(cap, Settings()).figures
    assert f.frequency_hz == pytest.approx(1.0 / ((spr + 2.0) * 1e-6), rel=1e-5)
    assert f.period_jitter_s < 0.05e-6
    assert f.retrace_time_s == pytest.approx(2.0e-6, abs=0.5e-6)
    assert f.ramp_time_s == pytest.approx(spr * 1e-6, abs=1e-6)


def test_partial_cycles_left_out_and_counted():
    cap = sawtooth(straight(), cycles=8.5, samples_per_ramp=1000, phase=0.4)
    seg = segment(cap.channels["CH1"], 1e-6)
    assert seg.partial_cycles == 2
    # every full cycle's ramp lies wholly inside the record
    assert seg.ramp_start_s[0] > 0 and seg.retrace_end_s[-1] < cap.duration_s
    assert seg.full_cycles in (7, 8)


def test_noise_and_8_bit_steps_do_not_split_cycles():
    cap = sawtooth(straight(), cycles=20, samples_per_ramp=500, bits=8, noise_v=3e-3, seed=5)
    seg = segment(cap.channels["CH1"], 1e-6)
    assert seg.full_cycles == 18  # 20 ramps: the first and last have no reset on one side
    assert np.all(np.abs(np.diff(seg.reset_times_s) / 1e-6 - 500) < 0.5)


def _wave(kind, n=20_000, period=1000):
    u = (np.arange(n) % period) / period
    if kind == "triangle":
        return 1.0 + 4.0 * np.abs(2 * u - 1)
    if kind == "square":
        return np.where(u < 0.5, 0.0, 3.3)
    if kind == "sine":
        return 2.0 + 2.0 * np.sin(2 * np.pi * u)
    if kind == "dc":
        return np.full(n, 1.25) + np.random.default_rng(0).normal(0, 1e-3, n)
    raise ValueError(kind)


@pytest.mark.parametrize("kind,words", [("triangle", "triangle"), ("sine", "triangle or sine"),
                                        ("square", "square"), ("dc", "no ramp")])
def test_not_a_sawtooth_is_reported(kind, words):
    with pytest.raises(NotASawtoothError, match=words):
        segment(_wave(kind), 1e-6)


def test_fewer_than_two_resets_is_no_full_cycle():
    cap = sawtooth(straight(), cycles=1.5, samples_per_ramp=1000, phase=0.2)
    with pytest.raises(NoFullCycleError):
        analyse(cap, Settings())


def _sync(n, pos, spr):
    # logic-level pulse high during the first 2 % of each period (reset command)
    return {"sync": np.where(pos < 0.02 * spr, 3.3, 0.0)}


def test_sync_channel_segmentation_matches_the_signal():
    cap = sawtooth(straight(), cycles=12, samples_per_ramp=1000, noise_v=2e-3,
                   extra_channels=_sync)
    by_signal = analyse(cap, Settings(channel="CH1"))
    by_sync = analyse(cap, Settings(channel="CH1", sync_channel="sync"))
    assert by_sync.segmentation.source == "sync"
    assert by_sync.figures.frequency_hz == pytest.approx(by_signal.figures.frequency_hz, rel=1e-4)
    assert by_sync.figures.slope_v_per_s == pytest.approx(by_signal.figures.slope_v_per_s, rel=2e-3)


def test_default_channel_is_the_first_holding_a_sawtooth():
    cap = sawtooth(straight(), cycles=6, samples_per_ramp=1000,
                   extra_channels=lambda n, pos, spr: {"supply": np.full(n, 12.0)})
    chans = dict(cap.channels)
    ordered = {"supply": chans["supply"], "CH1": chans["CH1"]}
    from trueslope.core.capture import Capture
    cap2 = Capture(source="two.csv", channels=ordered, sample_interval_s=1e-6)
    assert analyse(cap2).channel == "CH1"


def _held_ramp(u):
    # 8 % of each period held at the bottom after the reset, 5 % clipped at the top
    # before it; straight 0.5 V -> 4.5 V in between
    r = np.clip((u - 0.08) / 0.87, 0.0, 1.0)
    return 0.5 + 4.0 * r


def test_dwell_after_reset_and_plateau_before_it_are_not_ramp():
    spr = 1000
    cap = sawtooth(_held_ramp, cycles=10, samples_per_ramp=spr, noise_v=2e-3, seed=4)
    f = analyse(cap, Settings()).figures
    assert f.ramp_time_s == pytest.approx(0.87 * spr * 1e-6, abs=3e-6)  # 3 samples
    assert f.retrace_time_s == pytest.approx(0.13 * spr * 1e-6, abs=3e-6)
    assert f.slope_v_per_s == pytest.approx(4.0 / (0.87 * spr * 1e-6), rel=2e-3)
    assert f.start_v == pytest.approx(0.5, abs=0.02)
    assert f.end_v == pytest.approx(4.5, abs=0.02)
    assert f.nonlinearity_pct < 0.1


def test_a_broken_cycle_is_marked_and_left_out_of_the_average():
    # a glitch drops the sixth ramp back to the bottom at half height (below the upper
    # threshold, so not a reset): one long broken cycle among straight ones
    spr = 1000
    base = sawtooth(straight(0.2, 4.2), cycles=12, samples_per_ramp=spr, noise_v=1e-3, seed=2)
    v = base.channels["CH1"].copy()
    k = 5 * spr + spr // 2  # halfway up the sixth ramp
    v[k:k + spr] = 0.2 + 4.0 * np.arange(spr) / spr + np.random.default_rng(0).normal(0, 1e-3, spr)
    from trueslope.core.capture import Capture
    cap = Capture(source="glitch.csv", channels={"CH1": v[: 12 * spr]}, sample_interval_s=1e-6)
    a = analyse(cap, Settings())
    flagged = [c.index for c in a.cycles if c.outlier]
    assert len(flagged) == 1
    f = a.figures
    assert f.slope_v_per_s == pytest.approx(4.0 / 1e-3, rel=2e-3)
    assert f.ramp_time_s == pytest.approx(1e-3, abs=3e-6)
    assert f.nonlinearity_pct < 0.1
    assert any(w.code == "outlying-cycles" and "left out" in w.message for w in a.warnings)
