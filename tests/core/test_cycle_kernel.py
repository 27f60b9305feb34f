"""The per-cycle kernel against scipy.stats.linregress, cycle by cycle.

``cycle_pass`` fits every cycle from prefix sums over blocks of the record;
here each cycle's window is cut out independently (the samples whose time from
the ramp start lies in [a, b]) and fitted by ``scipy.stats.linregress``
(reference: SciPy, ordinary least squares with the slope's standard error on
n - 2 degrees of freedom). The kernel's intercept is the line's value at the
ramp start (its time reference), so the reference fit is made in time from the
ramp start.

Tolerances. Both sides are float64 arithmetic on the same samples, so they
agree to rounding, not to a statistical tolerance: 1e-9 relative on slope,
intercept (relative to the line's swing over the window), slope standard error
and residual sum of squares; measured on these captures (numpy 2.4.6, scipy 1.17.1,
at the commit that added this file): at worst 5e-12 on slope and intercept.
The kernel's sums are differences of running sums over a block of the record,
each carrying a rounding error of about eps times the running sum of squares
(eps = 2.2e-16); the residual sum of squares is the small difference
``syy - L ybar**2 - b sxy`` of such sums, so it is compared with an absolute
floor of 1e3 eps times the record's sum of squares as well (measured worst:
5.2e2 eps times it, on the noiseless straight ramp, where the residual is
rounding alone; quantised samples are sums of few-bit numbers and come out
almost exact). The standard error and the residual RMS inherit that floor.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from tests.support.synth import exponential, sawtooth, straight
from trueslope.core.fit import cycle_pass
from trueslope.core.segment import segment

EPS = np.finfo(float).eps
REL = 1e-9

#: name -> (sawtooth keyword arguments, trim fraction, explicit window in seconds or None)
CAPTURES = {
    "straight": (dict(shape=straight(), cycles=12, samples_per_ramp=2000, retrace_samples=40),
                 0.05, None),
    "bowed": (dict(shape=exponential(0.2), cycles=12, samples_per_ramp=2000,
                   retrace_samples=40), 0.05, None),
    # 45 cycles of 2040 samples: 91 800 samples, so the kernel works in two blocks
    "noisy_quantised": (dict(shape=exponential(0.05), cycles=45, samples_per_ramp=2000,
                             retrace_samples=40, bits=8, noise_v=4e-3, seed=11), 0.05, None),
    "falling": (dict(shape=exponential(0.1), cycles=12, samples_per_ramp=1500,
                     retrace_samples=30, falling=True, bits=10, noise_v=1e-3, seed=3),
                0.05, None),
    # 1234.567 + 25.25 samples a period: the sample clock drifts against the ramp
    "non_integer_period": (dict(shape=straight(0.3, 3.9), cycles=14, samples_per_ramp=1234.567,
                                retrace_samples=25.25, phase=0.37, bits=12, noise_v=5e-4,
                                seed=5), 0.1, None),
    "explicit_window": (dict(shape=exponential(0.15), cycles=12, samples_per_ramp=2000,
                             retrace_samples=40, noise_v=1e-3, seed=8), 0.05,
                        (150e-6, 1700e-6)),
}


def _run(name):
    kwargs, trim, window = CAPTURES[name]
    cap = sawtooth(**kwargs)
    v, dt, t0 = cap.channels["CH1"], cap.sample_interval_s, cap.t0_s
    seg = segment(v, dt, t0)
    x = -v if seg.direction == "falling" else v  # the measurement frame, as analyse() does
    cyc, _ = cycle_pass(x, dt, t0, seg, trim, window, bins=256)
    return cap, seg, x, trim, window, cyc


def _window(T, trim, window):
    if window is None:
        return trim * T, (1.0 - trim) * T
    return window[0], min(window[1], T)


@pytest.mark.parametrize("name", list(CAPTURES))
def test_every_cycle_matches_scipy_linregress(name):
    cap, seg, x, trim, window, cyc = _run(name)
    dt, t0 = cap.sample_interval_s, cap.t0_s
    assert seg.direction == ("falling" if name == "falling" else "rising")
    assert cyc.slope_v_per_s.size == seg.ramp_start_s.size >= 10
    t = t0 + dt * np.arange(x.size)
    record_ssq = float(np.sum(x ** 2))
    for c, (rs, re) in enumerate(zip(seg.ramp_start_s, seg.ramp_end_s)):
        a, b = _window(re - rs, trim, window)
        rel_t = t - rs
        # no sample within a millionth of a sample of a window edge: the window is unambiguous
        assert np.min(np.abs(rel_t - a)) > 1e-6 * dt and np.min(np.abs(rel_t - b)) > 1e-6 * dt
        m = (rel_t >= a) & (rel_t <= b)
        tw, yw = rel_t[m], x[m]
        ref = stats.linregress(tw, yw)  # reference: scipy.stats.linregress
        resid = yw - (ref.intercept + ref.slope * tw)
        ssr = float(np.sum(resid ** 2))
        where = f"{name}, cycle {c}"
        assert cyc.window_samples[c] == tw.size, where
        assert cyc.dof[c] == tw.size - 2, where
        assert cyc.slope_v_per_s[c] == pytest.approx(ref.slope, rel=REL), where
        swing = abs(ref.slope) * (b - a)
        assert cyc.intercept_v[c] == pytest.approx(ref.intercept, rel=0, abs=REL * swing), where
        ssr_floor = 1e3 * EPS * record_ssq
        assert cyc.ssr_v2[c] == pytest.approx(ssr, rel=REL, abs=ssr_floor), where
        # standard error of the slope: sqrt(ssr / (n - 2) / sum (t - tbar)**2)
        se_abs = np.sqrt(ssr_floor / (tw.size - 2) / np.sum((tw - tw.mean()) ** 2))
        assert cyc.slope_stderr_v_per_s[c] == pytest.approx(ref.stderr, rel=REL, abs=se_abs), where
        # residual RMS over the window, and the largest |residual| (numpy on the reference line)
        rms = np.sqrt(cyc.ssr_v2[c] / cyc.window_samples[c])
        assert rms == pytest.approx(np.sqrt(ssr / tw.size), rel=REL,
                                    abs=np.sqrt(ssr_floor / tw.size)), where
        assert cyc.peak_deviation_v[c] == pytest.approx(np.max(np.abs(resid)), rel=1e-6,
                                            abs=1e-9 * swing), where
        assert cyc.fitted_span_v[c] == pytest.approx(ref.slope * (b - a), rel=REL), where


def test_the_absolute_floor_is_far_below_the_residuals_it_guards():
    # the absolute floor matters only on the noiseless straight ramp: on every other capture
    # the residual sum of squares is 1e4 times the floor or more (measured: 1.8e4 at least),
    # so the comparison above still resolves it to 1e-4 relative or better
    for name in CAPTURES:
        if name == "straight":
            continue
        _, _, x, _, _, cyc = _run(name)
        floor = 1e3 * EPS * float(np.sum(x ** 2))
        assert np.min(cyc.ssr_v2) > 1e4 * floor, name


def test_the_noisy_capture_spans_more_than_one_block():
    # the block boundary is exercised: the kernel's blocks are at least 50 000 samples
    # (core/linearity.py), so 91 800 samples need two
    cap, *_ = _run("noisy_quantised")
    assert cap.samples > 2 * 45_000
