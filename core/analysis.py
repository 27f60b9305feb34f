"""The pipeline's entry point: ``analyse(capture, settings) -> Analysis``."""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path

import numpy as np

from .capture import CancelFn, Capture, ProgressFn
from .errors import AnalysisError, Cancelled, NoFullCycleError, NotASawtoothError, TrueslopeWarning
from .linearity import (adc_step, average_cycle, build_cycles, cycle_pass, end_levels,
                        slope_ci)
from .results import Analysis, Figures
from .segment import estimate_noise_rms, segment
from .settings import Settings

#: Most phase bins of the averaged cycle.
MAX_PHASE_BINS = 2000


def _pick_channel(capture: Capture, settings: Settings, cancel: CancelFn | None):
    """The requested channel, or the first non-time column that holds a sawtooth."""
    if settings.channel is not None:
        name, v = capture.channel(settings.channel)
        return name, v, None
    skip = set()
    if settings.sync_channel is not None:
        skip.add(capture.channel(settings.sync_channel)[0])
    first_error: Exception | None = None
    for name in capture.channel_names:
        if name in skip:
            continue
        if cancel is not None and cancel():
            raise Cancelled("analysis cancelled")
        v = capture.channels[name]
        try:
            seg = segment(v, capture.sample_interval_s, capture.t0_s)
        except (NotASawtoothError, NoFullCycleError) as exc:
            first_error = first_error or exc
            continue
        return name, v, seg
    if len(capture.channel_names) - len(skip) > 1:
        raise NotASawtoothError(
            f"{Path(capture.source).name}: none of the channels "
            f"({', '.join(n for n in capture.channel_names if n not in skip)}) holds a "
            f"sawtooth with two or more full cycles (first channel: {first_error})")
    raise type(first_error)(f"{Path(capture.source).name}: {first_error}") if first_error else \
        AnalysisError("the capture holds no channel to measure")


def phase_bins_for(ramp_samples: float, settings: Settings) -> int:
    """Bins of the averaged cycle: about one per sample of a ramp, at most ``MAX_PHASE_BINS``."""
    if settings.phase_bins is not None:
        return int(settings.phase_bins)
    return int(min(MAX_PHASE_BINS, max(16, math.floor(ramp_samples))))


def analyse(capture: Capture, settings: Settings | None = None,
            progress: ProgressFn | None = None, cancel: CancelFn | None = None) -> Analysis:
    """Measure the linearity of every ramp cycle of a capture.

    Parameters
    ----------
    capture : Capture
        The record (from :func:`trueslope.core.io.load_capture` or built in memory).
    settings : Settings, optional
        Fit window, channel choice, circuit context; defaults documented there.
    progress : callable(float), optional
        Called with the fraction done, 0 to 1.
    cancel : callable() -> bool, optional
        Polled between blocks; returning True raises :class:`Cancelled`.

    Returns
    -------
    Analysis

    Raises
    ------
    NotASawtoothError, NoFullCycleError, AnalysisError, ChannelNotFoundError, Cancelled
    """
    settings = settings or Settings()
    report = progress or (lambda f: None)
    report(0.0)
    name, v, seg = _pick_channel(capture, settings, cancel)
    dt = capture.sample_interval_s
    t0 = capture.t0_s
    if settings.sync_channel is not None:
        _, sync = capture.channel(settings.sync_channel)
        seg = segment(v, dt, t0, sync=sync)
    elif seg is None:
        seg = segment(v, dt, t0)
    report(0.15)
    warnings: list[TrueslopeWarning] = list(capture.warnings)
    mirrored = seg.direction == "falling"
    sign = -1.0 if mirrored else 1.0
    x = -v if mirrored else v
    ramp_T = seg.ramp_time_s
    T_mean = float(np.mean(ramp_T))
    if settings.window_s is not None and settings.window_s[0] >= float(np.min(ramp_T)):
        raise AnalysisError(
            f"the fit window starts at {settings.window_s[0]:.4g} s, after the end of the "
            f"shortest ramp ({np.min(ramp_T):.4g} s)")
    bins = phase_bins_for(T_mean / dt, settings)
    cyc, acc = cycle_pass(x, dt, t0, seg, settings.trim_fraction, settings.window_s, bins,
                          progress=lambda f: report(0.15 + 0.7 * f), cancel=cancel)
    cycles = build_cycles(cyc, seg, sign)
    keep = ~np.array([c.outlier for c in cycles], dtype=bool)
    n_out = int(np.count_nonzero(~keep))
    if n_out and np.count_nonzero(keep) >= 2:
        # an outlying cycle (a false trigger, a glitch) would bend the coherent average:
        # average the others; every cycle stays in the cycle list, marked
        sub = dataclasses.replace(seg, ramp_start_s=seg.ramp_start_s[keep],
                                  ramp_end_s=seg.ramp_end_s[keep],
                                  retrace_end_s=seg.retrace_end_s[keep])
        T_mean = float(np.mean(sub.ramp_time_s))
        cyc_avg, acc = cycle_pass(x, dt, t0, sub, settings.trim_fraction, settings.window_s,
                                  bins, progress=lambda f: report(0.85 + 0.05 * f), cancel=cancel)
    else:
        keep = np.ones(len(cycles), dtype=bool)
        cyc_avg = cyc
    step = adc_step(v)
    res = average_cycle(acc, T_mean, settings.trim_fraction, settings.window_s, mirrored,
                        estimate_noise_rms(x), step)
    av, noise = res.averaged, res.noise
    fit = av.fit

    # sweep errors on the smoothed averaged curve over the window (measurement frame)
    tw, curve = res.t_win, res.smooth_v
    ta, tb = float(tw[0]), float(tw[-1])
    swing = float(curve[-1] - curve[0])
    d_a, d_b = res.derivative_a, res.derivative_b
    e_s = (d_a - d_b) / d_a if d_a != 0 else math.nan
    chord = curve[0] + swing / (tb - ta) * (tw - ta)
    dev = curve - chord
    k = int(np.argmax(np.abs(dev)))
    e_d = float(dev[k]) / swing if swing != 0 else math.nan
    full = d_a * (tb - ta)
    e_t = (full - swing) / full if full != 0 else math.nan
    mid_level = 0.5 * (curve[0] + curve[-1])
    above = np.flatnonzero(curve >= mid_level)
    if above.size and above[0] > 0:
        j = int(above[0])
        f = (mid_level - curve[j - 1]) / (curve[j] - curve[j - 1])
        t_cross = tw[j - 1] + f * (tw[j] - tw[j - 1])
    else:
        t_cross = math.nan
    mid_err = float(t_cross - 0.5 * (ta + tb))

    fitted_span = abs(fit.slope_v_per_s * (av.window_end_s - av.window_start_s))
    peak = float(np.nanmax(np.abs(av.smoothed_residual_v[av.in_window])))
    nl = 100.0 * peak / fitted_span if fitted_span > 0 else math.nan
    start_m, end_m = end_levels(av)
    lo_ci, hi_ci = slope_ci(fit, cyc_avg.slope)
    slope_true = sign * fit.slope_v_per_s
    ci = tuple(sorted((sign * lo_ci, sign * hi_ci)))
    resets = seg.reset_times_s
    periods = np.diff(resets)
    period = float(np.mean(periods))
    jitter = float(np.std(periods, ddof=1)) if periods.size > 1 else 0.0
    below = bool(nl < noise.nonlinearity_floor_pct)
    if below:
        warnings.append(TrueslopeWarning(
            "below-resolution",
            f"the nonlinearity ({nl:.3g} %) is below what this capture can resolve "
            f"({noise.nonlinearity_floor_pct:.3g} %): the ramp is straight to within the noise"))
    if seg.full_cycles < 3:
        warnings.append(TrueslopeWarning(
            "few-cycles", f"only {seg.full_cycles} full cycle(s): figures rest on little data"))
    if n_out:
        left_out = (" and are left out of the averaged figures"
                    if np.count_nonzero(keep) < len(cycles) else "")
        warnings.append(TrueslopeWarning(
            "outlying-cycles", f"{n_out} cycle(s) differ markedly from the rest (marked in "
                               f"the cycle list){left_out}"))

    figures = Figures(
        direction=seg.direction, full_cycles=seg.full_cycles, partial_cycles=seg.partial_cycles,
        frequency_hz=1.0 / period, period_s=period, period_jitter_s=jitter,
        ramp_time_s=T_mean, retrace_time_s=float(np.mean(seg.retrace_time_s[keep])),
        offset_v=sign * fit.intercept_v, start_v=sign * start_m, end_v=sign * end_m,
        amplitude_v=abs(end_m - start_m), slope_v_per_s=slope_true,
        slope_ci95_v_per_s=(float(ci[0]), float(ci[1])),
        peak_deviation_v=peak, nonlinearity_pct=nl,
        terminal_nonlinearity_pct=100.0 * abs(e_d),
        slope_error_pct=100.0 * e_s, displacement_error_pct=100.0 * e_d,
        transmission_error_pct=100.0 * e_t,
        midpoint_time_error_s=mid_err, midpoint_time_error_pct=100.0 * mid_err / T_mean,
        residual_rms_v=float(math.sqrt(np.sum(cyc_avg.ssr) / np.sum(cyc_avg.n_win))),
        noise_rms_v=noise.noise_rms_v, adc_step_v=noise.adc_step_v,
        nonlinearity_floor_pct=noise.nonlinearity_floor_pct, below_floor=below,
        trim_fraction=settings.trim_fraction, window_start_s=av.window_start_s,
        window_end_s=av.window_end_s, fitted_span_v=fitted_span)

    diagnosis = context_check = None
    try:  # the diagnosis step is optional until its module exists
        from . import diagnose as _diag
    except ImportError:  # pragma: no cover
        _diag = None
    if _diag is not None and hasattr(_diag, "diagnose"):
        diagnosis = _diag.diagnose(av, figures, noise, settings.context)
        if settings.context is not None:
            from .context import check_context
            context_check = check_context(figures, diagnosis, settings.context)
    report(1.0)
    return Analysis(source=capture.source, channel=name, samples=capture.samples,
                    sample_interval_s=dt, settings=settings, segmentation=seg,
                    figures=figures, cycles=cycles, averaged=av, noise=noise,
                    diagnosis=diagnosis, context_check=context_check,
                    warnings=tuple(warnings), metadata=dict(capture.metadata))


def analyse_file(path: str | Path, settings: Settings | None = None,
                 sample_interval_s: float | None = None,
                 progress: ProgressFn | None = None, cancel: CancelFn | None = None) -> Analysis:
    """Load a capture file and analyse it (loading is the first half of the progress)."""
    from .io import load_capture
    p = progress or (lambda f: None)
    cap = load_capture(path, sample_interval_s=sample_interval_s,
                       progress=lambda f: p(0.5 * f), cancel=cancel)
    return analyse(cap, settings, progress=lambda f: p(0.5 + 0.5 * f), cancel=cancel)
