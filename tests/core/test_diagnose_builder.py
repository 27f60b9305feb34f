"""Builder of averaged cycles from a model waveform, for testing the diagnosis alone.

``averaged_from_model`` turns a noise-free model ``v(t)`` of one ramp plus a
per-bin noise into the ``AveragedCycle``, ``Figures`` and ``NoiseFloor`` that
the pipeline would hand to :func:`trueslope.core.diagnose.diagnose`, following
the definitions of ``core/linearity.py`` (weighted best-fit line over the
trimmed window, Savitzky-Golay systematic residual, floor of 4 standard
deviations of a smoothed point). The tests below check the builder itself
against numpy and scipy.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import signal, stats

from trueslope.core.fit import fit_line
from trueslope.core.linearity import FLOOR_SIGMAS, SMOOTH_ORDER, smoothing_window
from trueslope.core.results import AveragedCycle, Figures, NoiseFloor


def averaged_from_model(model, ramp_time_s, bins=1000, sigma_v=1e-3, trim=0.05, seed=0,
                        retrace_s=None, count=16):
    """(AveragedCycle, Figures, NoiseFloor) for ``v = model(t)``, t in seconds from the ramp start.

    ``sigma_v`` is the standard error of each bin's mean (scalar or array).
    """
    T = float(ramp_time_s)
    t = (np.arange(bins) + 0.5) / bins * T
    rng = np.random.default_rng(seed)
    sig = np.broadcast_to(np.asarray(sigma_v, dtype=float), t.shape).copy()
    v = np.asarray(model(t), dtype=float) + rng.normal(0.0, 1.0, bins) * sig
    ta, tb = trim * T, (1 - trim) * T
    inw = (t >= ta) & (t <= tb)
    fit = fit_line(t[inw], v[inw])
    resid = v - fit.at(t)
    W = smoothing_window(int(inw.sum()))
    sm = np.full(bins, np.nan)
    sm[inw] = signal.savgol_filter(resid[inw], W, SMOOTH_ORDER, mode="interp")
    gain = float(np.sqrt(np.sum(signal.savgol_coeffs(W, SMOOTH_ORDER) ** 2)))
    span = abs(fit.slope_v_per_s * (tb - ta))
    floor = 100.0 * FLOOR_SIGMAS * float(np.sqrt(np.mean(sig[inw] ** 2))) * gain / span
    peak = float(np.nanmax(np.abs(sm)))
    tw = t[inw]
    chord = sm[inw][0] + (sm[inw][-1] - sm[inw][0]) * (tw - tw[0]) / (tw[-1] - tw[0])
    av = AveragedCycle(time_s=t, voltage_v=v, stderr_v=sig, count=np.full(bins, count),
                       in_window=inw, residual_v=resid, smoothed_residual_v=sm,
                       terminal_residual_v=np.full(bins, np.nan),
                       ramp_time_s=T, window_start_s=ta, window_end_s=tb, fit=fit,
                       mirrored=False)
    av.terminal_residual_v[inw] = sm[inw] - chord
    retrace = 0.02 * T if retrace_s is None else retrace_s
    period = T + retrace
    nl = 100.0 * peak / span
    noise = NoiseFloor(noise_rms_v=float(sig.mean() * math.sqrt(count)), adc_step_v=None,
                       averaged_noise_rms_v=float(sig.mean() * gain),
                       nonlinearity_floor_pct=floor)
    start_v = float(model(np.array([0.0]))[0])
    end_v = float(model(np.array([T]))[0])
    fig = Figures(
        direction="rising", full_cycles=count, partial_cycles=0, frequency_hz=1 / period,
        period_s=period, period_jitter_s=0.0, ramp_time_s=T, retrace_time_s=retrace,
        offset_v=fit.intercept_v, start_v=start_v, end_v=end_v, amplitude_v=end_v - start_v,
        slope_v_per_s=fit.slope_v_per_s, slope_ci95_v_per_s=fit.slope_ci95_v_per_s,
        peak_deviation_v=peak, nonlinearity_pct=nl, terminal_nonlinearity_pct=math.nan,
        slope_error_pct=math.nan, displacement_error_pct=math.nan,
        transmission_error_pct=math.nan, midpoint_time_error_s=math.nan,
        midpoint_time_error_pct=math.nan, residual_rms_v=fit.residual_rms_v,
        noise_rms_v=noise.noise_rms_v, adc_step_v=None, nonlinearity_floor_pct=floor,
        below_floor=bool(nl < floor), trim_fraction=trim, window_start_s=ta, window_end_s=tb,
        fitted_span_v=span)
    return av, fig, noise


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
