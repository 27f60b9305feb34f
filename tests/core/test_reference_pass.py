"""The benchmark's plain-numpy reference (``benchmarks/reference_pass.py``) computes what the
engine's per-cycle kernel computes, so timing one against the other compares like with like.

Reference for both: ``numpy.polyfit`` of each cycle's window (ordinary least squares,
numpy's own), its residuals, and direct numpy means of the ramp's ends, written here.
The engine and the reference run on the same whole-sample ramps (the engine's
segmentation rounded inwards to whole samples), so they fit the same samples and must
agree to rounding: 1e-9 relative on slopes, intercepts and residual sums of squares, 1e-9
of the swing on the peaks and levels (measured: 2e-13 or better); in the phase bins, to a
sample that rounding puts one bin over.
"""

from __future__ import annotations

import dataclasses
import importlib.util
from pathlib import Path

import numpy as np
import pytest

from tests.support.synth import exponential, sawtooth
from trueslope.core.fit import cycle_pass
from trueslope.core.segment import segment

BENCH = Path(__file__).resolve().parents[2] / "benchmarks" / "reference_pass.py"


@pytest.fixture(scope="module")
def reference():
    spec = importlib.util.spec_from_file_location("reference_pass", BENCH)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def both(reference):
    cap = sawtooth(exponential(0.1), cycles=60, samples_per_ramp=1500, retrace_samples=12.7,
                   bits=10, noise_v=2e-3, seed=21)
    x, dt = cap.channels["CH1"], cap.sample_interval_s
    seg = segment(x, dt)
    s = np.ceil(seg.ramp_start_s / dt).astype(np.int64)
    e = np.floor(seg.ramp_end_s / dt).astype(np.int64) + 1
    whole = dataclasses.replace(seg, ramp_start_s=s * dt, ramp_end_s=(e - 1) * dt)
    trim, bins = 0.05, 499  # prime: few samples exactly on a bin edge, where rounding decides
    cyc, sums = cycle_pass(x, dt, 0.0, whole, trim, None, bins, groups=8)
    ref = reference.reference_pass(x, s, e, trim, bins, groups=8)
    return x, dt, s, e, trim, cyc, sums, ref


def test_per_cycle_figures_agree_with_the_engine_and_numpy_polyfit(both):
    x, dt, s, e, trim, cyc, sums, ref = both
    assert cyc.slope_v_per_s.size == s.size >= 50
    swing = float(np.max(x) - np.min(x))
    np.testing.assert_allclose(ref["slope"], cyc.slope_v_per_s * dt, rtol=1e-9)
    np.testing.assert_allclose(ref["intercept"], cyc.intercept_v, rtol=0, atol=1e-9 * swing)
    np.testing.assert_allclose(ref["ssr"], cyc.ssr_v2, rtol=1e-9)
    for key, ours in (("peak", cyc.peak_deviation_v), ("terminal_peak", cyc.terminal_peak_v),
                      ("start", cyc.start_v), ("end", cyc.end_v)):
        np.testing.assert_allclose(ref[key], ours, rtol=0, atol=1e-9 * swing, err_msg=key)
    for c in (0, 17, s.size - 1):  # numpy.polyfit of the same window
        n = e[c] - s[c]
        a = s[c] + int(np.ceil(trim * (n - 1)))
        b = s[c] + int(np.floor((1 - trim) * (n - 1))) + 1
        k = np.arange(a, b, dtype=float)
        p = np.polyfit(k, x[a:b], 1)
        resid = x[a:b] - np.polyval(p, k)
        assert ref["slope"][c] == pytest.approx(p[0], rel=1e-9)
        assert ref["ssr"][c] == pytest.approx(np.sum(resid ** 2), rel=1e-9)
        assert ref["peak"][c] == pytest.approx(np.max(np.abs(resid)), rel=1e-9)
        g = max(2, int(round(0.03 * n)))
        assert ref["start"][c] == pytest.approx(
            np.mean(x[s[c]:s[c] + g]) - p[0] * 0.5 * (g - 1), abs=1e-9 * swing)


def test_phase_sums_agree_with_the_engine(both):
    x, *_, sums, ref = both
    # The two compute a sample's phase with different roundings, so a sample on a bin's
    # border (or a ramp's last sample, at phase 1 give or take an ulp) can land one bin
    # apart (or into the spare bin): fewer than 1 sample in 5000 changes bins.
    diff = ref["count"] - sums.group_count
    lost = ref["count"].sum() - sums.group_count.sum()  # last samples past phase 1 by an ulp
    assert 0 <= lost <= ref["slope"].size
    assert np.abs(diff).sum() <= 2e-4 * sums.group_count.sum()  # measured: 9e-5
    swing = float(np.max(x) - np.min(x))
    np.testing.assert_allclose(ref["voltage"].sum(axis=1), sums.group_voltage_v.sum(axis=1),
                               rtol=0, atol=float(np.max(np.abs(x))) * np.abs(diff).sum() + 1e-9)
    np.testing.assert_allclose(ref["residual_sq"].sum(), sums.residual_sq_v2.sum(),
                               rtol=1e-3)
    assert swing > 0


def test_the_reference_segmentation_finds_the_same_cycles(both, reference):
    x, dt, s, e, *_ = both
    starts, stops = reference.reference_segment(x)
    assert starts.size == s.size
    # within a few samples of the engine's ramps (it steps a fixed 3 samples off each reset)
    assert np.max(np.abs(starts - s)) <= 6 and np.max(np.abs(stops - e)) <= 6
