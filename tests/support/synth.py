"""Small synthetic sawtooth captures for unit tests (test data, not references)."""

from __future__ import annotations

import numpy as np

from trueslope.core.capture import Capture

from .quantise import quantise


def sawtooth(shape, cycles=12, samples_per_ramp=2000, retrace_samples=0.0, dt=1e-6,
             phase=0.0, bits=None, full_scale=(-0.5, 5.5), noise_v=0.0, seed=0,
             falling=False, extra_channels=None):
    """A sawtooth whose ramp follows ``shape(u)`` for phase u in [0, 1).

    The period is ``samples_per_ramp + retrace_samples`` samples (need not be whole);
    the retrace is a straight fall from shape(1) to shape(0) over ``retrace_samples``.
    Noise of ``noise_v`` and an ADC of ``bits`` over ``full_scale`` (volts) as
    :func:`tests.support.quantise.quantise`.
    """
    period = samples_per_ramp + retrace_samples
    n = int(np.ceil((cycles + 0.0) * period))
    k = np.arange(n) + phase * period
    pos = np.mod(k, period)
    ramp = pos < samples_per_ramp
    u = pos / samples_per_ramp
    v = np.empty(n)
    v[ramp] = shape(u[ramp])
    if np.any(~ramp):
        f = (pos[~ramp] - samples_per_ramp) / max(retrace_samples, 1e-12)
        v[~ramp] = shape(np.ones(1))[0] + (shape(np.zeros(1))[0] - shape(np.ones(1))[0]) * f
    if falling:
        v = (full_scale[0] + full_scale[1]) - v
    v = quantise(v, bits, full_scale, noise_v, seed)
    ch = {"CH1": v}
    if extra_channels:
        ch.update(extra_channels(n, pos, samples_per_ramp))
    return Capture(source="synthetic.csv", channels=ch, sample_interval_s=dt)


def straight(v0=0.2, v1=4.2):
    return lambda u: v0 + (v1 - v0) * u


def exponential(y, swing=4.0):
    """v = V (1 - exp(-t/tau)) over a ramp that reaches y V = ``swing`` (exponential sweep)."""
    V = swing / y
    x = -np.log(1.0 - y)
    return lambda u: V * (1.0 - np.exp(-x * u))
