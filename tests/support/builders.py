"""Captures and averaged cycles built from model waveforms, for testing the diagnosis.

``averaged_from_model`` turns a noise-free model ``v(t)`` of one ramp plus a
per-bin noise into the ``AveragedCycle``, ``Figures`` and ``NoiseFloor`` that
the pipeline would hand to :func:`trueslope.core.diagnose.diagnose`, following
the definitions of ``core/linearity.py`` (weighted best-fit line over the
trimmed window, Savitzky-Golay systematic residual, floor of 4 standard
deviations of a smoothed point). ``capture_from_cycles`` strings per-cycle
model functions into a capture; ``dow_cycles`` integrates Dow-model ramps with
``scipy.integrate.solve_ivp``. ``tests/core/test_diagnose_builder.py`` checks
these builders against numpy and scipy.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import integrate, signal

from trueslope.core.capture import Capture
from trueslope.core.fit import fit_line
from trueslope.core.linearity import FLOOR_SIGMAS, SMOOTH_ORDER, smoothing_window
from trueslope.core.results import AveragedCycle, Figures, NoiseFloor

from .quantise import full_scale_for, quantise


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


def capture_from_cycles(cycles, dt, bits=None, noise_v=0.0, seed=0, phase_s=0.0,
                        margin=0.1):
    """A capture of consecutive ramps with an instant reset between them.

    ``cycles`` is a list of ``(duration_s, f)`` with ``f(t)`` the ramp voltage at
    ``t`` seconds from that ramp's start (vectorised). Gaussian noise, then an
    ADC of ``bits`` over the signal's range widened by ``margin`` at each end
    (as a scope with the trace filling most of the screen), both by
    :func:`tests.support.quantise.quantise`.
    """
    starts = np.concatenate(([0.0], np.cumsum([d for d, _ in cycles])))
    n = int(math.floor((starts[-1] - phase_s) / dt))
    t = phase_s + dt * np.arange(n)
    k = np.clip(np.searchsorted(starts, t, side="right") - 1, 0, len(cycles) - 1)
    v = np.empty(n)
    for i, (_, f) in enumerate(cycles):
        m = k == i
        if np.any(m):
            v[m] = f(t[m] - starts[i])
    v = quantise(v, bits, full_scale_for(v, margin), noise_v, seed)
    return Capture(source="model.csv", channels={"CH1": v}, sample_interval_s=dt)


def dow_cycles(current_a, c_f, branches, v_lo, v_hi, warmup=20, keep=12):
    """Ramps of a current into C with Dow-model R-C branches across it, by scipy solve_ivp.

    ``branches`` is a list of ``(r_ohm, c_f)``. Each ramp runs from ``v_lo`` until
    the main voltage reaches ``v_hi``; the reset then empties the main
    capacitance instantly and leaves the branches' charge as it was (a fast
    switch against the branches' series resistances). Returns the last ``keep``
    cycles as ``(duration_s, f)`` after ``warmup`` cycles of settling.
    Circuit equations: ``C dv/dt = I - sum (v - u_i) / R_i``,
    ``C_i du_i/dt = (v - u_i) / R_i``.
    """
    r = np.array([b[0] for b in branches], dtype=float)
    cb = np.array([b[1] for b in branches], dtype=float)

    def rhs(_t, y):
        v, u = y[0], y[1:]
        ib = (v - u) / r
        return np.concatenate(([(current_a - ib.sum()) / c_f], ib / cb))

    def top(_t, y):
        return y[0] - v_hi
    top.terminal = True
    top.direction = 1.0
    u = np.full(r.size, v_lo)
    horizon = 10.0 * c_f * (v_hi - v_lo) / current_a
    out = []
    for i in range(warmup + keep):
        sol = integrate.solve_ivp(rhs, (0.0, horizon), np.concatenate(([v_lo], u)),
                                  method="DOP853", events=top, dense_output=True,
                                  rtol=1e-10, atol=1e-13)
        t_end = float(sol.t_events[0][0])
        u = sol.sol(t_end)[1:]
        if i >= warmup:
            out.append((t_end, (lambda s: (lambda t: s(t)[0]))(sol.sol)))
    return out
