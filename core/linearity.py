"""The coherent average of all cycles, its sweep errors, and the summary figures.

Definitions (stated in the README's "Measurement definitions"):

- fit window: each ramp trimmed by ``trim_fraction`` of its duration at each
  end, or an explicit window in seconds from the ramp start;
- best-fit line: least squares over the window (IEEE Std 1241 independently
  based line); terminal line: through the window's end points (IEEE Std 1241
  terminal-based line); SOURCES.md [ieee1241];
- peak deviation: largest |smoothed residual| of the averaged cycle against
  the best-fit line; ``nonlinearity_pct = 100 * peak / fitted span``;
- sweep errors (SOURCES.md [sweep]): slope error ``e_s = (v'(a) - v'(b)) / v'(a)``,
  displacement error ``e_d`` = largest deviation from the chord / swing,
  transmission error ``e_t = (v'(a) T - V_s) / (v'(a) T)``.

The per-cycle fits and the phase sums come from the kernel in ``fit``; the
noise model from ``noise``.
"""

from __future__ import annotations

import math

import numpy as np

from .errors import AnalysisError
from .fit import LEVEL_FRACTION, LegendreSeries, fit_line, window_bounds
from .noise import (SMOOTH_ORDER, excess_scatter, robust_sigma, savgol_filter, smoother_gain,
                    smoother_kept_fraction, smoothing_window)
from .results import (AveragedCycle, CycleArrays, Figures, LineFit, NoiseFloor,
                      PhaseSums, Segmentation, SweepErrors)
from .edges import interpolate_crossing
from .percycle import CycleList
from .tquantile import t_quantile_975

#: The resolution floor is this many standard deviations of the smoothed averaged residual.
FLOOR_SIGMAS = 4.0
#: Robust z-score beyond which a cycle is marked outlying.
OUTLIER_Z = 5.0
#: Interleaved groups of cycles whose averages give the resolution floor, and the fewest
#: cycles in a group for its average to mean something (fewer cycles: the floor comes
#: from the single average).
FLOOR_GROUPS = 8
MIN_CYCLES_PER_GROUP = 4
#: Bins' cycle-to-cycle spread below this fraction of the quantisation noise q/sqrt(12):
#: the converter is not dithered (the clock is locked to the ramp, the noise small).
LOCKED_DITHER = 0.3
#: Highest polynomial degree tried for the slope at the window's ends.
MAX_DERIVATIVE_DEGREE = 6


def average_cycle(sums: PhaseSums, ramp_time_s: float, trim: float,
                  window_s: tuple[float, float] | None, mirrored: bool,
                  noise_fallback_v: float, step_v: float | None,
                  limits_s: tuple[float | None, float | None] | None = None
                  ) -> tuple[AveragedCycle, NoiseFloor]:
    """Build the averaged cycle, fit its line, smooth its residual, find the noise floor.

    Parameters
    ----------
    sums : PhaseSums
        From :func:`trueslope.core.fit.cycle_pass`.
    ramp_time_s : float
        Mean ramp time the phase is scaled by, seconds.
    trim, window_s
        The fit window (see :class:`~trueslope.core.settings.Settings`).
    mirrored : bool
        True for a falling ramp (the sums are in the mirrored frame).
    noise_fallback_v : float
        Noise of one sample to use when too few bins hold two or more samples.
    step_v : float or None
        ADC step found in the samples.
    limits_s : (float or None, float or None), optional
        Earliest start and latest end of the fit window (clipping).
    """
    n = sums.count
    keep = n > 0
    cnt = n[keep]
    u = sums.phase[keep] / cnt
    y = sums.voltage_v[keep] / cnt
    rm = sums.residual_v[keep] / cnt
    var = np.maximum(sums.residual_sq_v2[keep] / cnt - rm * rm, 0.0)
    multi = cnt >= 2
    if np.count_nonzero(multi) >= 0.5 * cnt.size:
        noise_rms = float(np.sqrt(np.sum(var[multi] * cnt[multi]) / np.sum(cnt[multi])))
        sd = np.sqrt(np.where(multi, var, noise_rms ** 2))
    else:
        noise_rms = float(noise_fallback_v)
        sd = np.full(cnt.size, noise_rms)
    stderr = np.maximum(sd, 1e-15) / np.sqrt(cnt)
    t = u * ramp_time_s
    ta, tb = window_bounds(ramp_time_s, trim, window_s, limits_s)
    ta, tb = float(ta), float(tb)
    inw = (t >= ta) & (t <= tb)
    if np.count_nonzero(inw) < SMOOTH_ORDER + 3:
        raise AnalysisError("the fit window holds too few points of the averaged cycle")
    fit = fit_line(t[inw], y[inw], weights=cnt[inw])
    resid = y - fit.at(t)
    W = smoothing_window(int(np.count_nonzero(inw)))
    # smooth over the window widened by half a smoothing length where the ramp allows,
    # so the window's edges get centred estimates (the reset edges stay outside)
    iw = np.flatnonzero(inw)
    ext = slice(max(0, iw[0] - W // 2), min(t.size, iw[-1] + 1 + W // 2))
    sm = savgol_filter(resid[ext], W, SMOOTH_ORDER)[inw[ext]]
    tw = t[inw]
    rw = resid[inw]
    smooth_full = np.full(resid.shape, np.nan)
    smooth_full[inw] = sm
    curve = fit.at(tw) + sm
    point_sd_random = float(np.sqrt(np.mean(stderr[inw] ** 2)))
    # Bins whose samples agree across cycles (a whole number of samples per period, little
    # noise against the ADC step) get a near-zero spread; floor them at half the typical
    # bin before comparing, so a few such bins cannot blow the ratio up.
    stderr = np.maximum(stderr, 0.5 * float(np.median(stderr[inw])))
    ratio = excess_scatter(rw - sm, stderr[inw], W)
    if ratio > 1.0:
        stderr = stderr * ratio
    chord_b = (curve[-1] - curve[0]) / (tw[-1] - tw[0])
    term_full = np.full(resid.shape, np.nan)
    term_full[inw] = curve - (curve[0] + chord_b * (tw - tw[0]))
    # noise left on one point of the smoothed residual, from this one average: the bins'
    # spread, or the residual's scatter about its smoothing if larger
    point_sd = max(point_sd_random,
                   float(np.std(rw - sm)) / math.sqrt(smoother_kept_fraction(W)))
    sm_sd = point_sd * smoother_gain(W)
    groups = _group_spread(sums, keep, t, ramp_time_s, fit, ext, inw, W)
    if groups is not None:
        # the data's own spread of averages: independent groups of cycles, each averaged
        # and smoothed alike, scatter about each other as much as noise moves the whole
        # average (times sqrt(groups)). Where the cycles agree sample for sample (a clock
        # locked to the ramp and too little noise to dither the converter) they agree
        # across groups too and show nothing of what averaging cannot remove: the single
        # average's estimate stands then.
        locked = step_v is not None and float(np.median(sd)) < LOCKED_DITHER * step_v / math.sqrt(12)
        sm_sd = max(groups, sm_sd) if locked else groups
    span = abs(fit.slope_v_per_s * (tb - ta))
    floor = 100.0 * FLOOR_SIGMAS * sm_sd / span if span > 0 else math.inf
    noise = NoiseFloor(noise_rms_v=noise_rms, adc_step_v=step_v,
                       averaged_noise_rms_v=sm_sd, nonlinearity_floor_pct=floor)
    av = AveragedCycle(time_s=t, voltage_v=-y if mirrored else y, stderr_v=stderr, count=cnt,
                       in_window=inw, residual_v=resid, smoothed_residual_v=smooth_full,
                       terminal_residual_v=term_full, ramp_time_s=ramp_time_s,
                       window_start_s=ta, window_end_s=tb, fit=fit, mirrored=mirrored)
    return av, noise


def floor_groups(cycles: int) -> int:
    """Groups of cycles for the resolution floor: :data:`FLOOR_GROUPS` when each holds
    :data:`MIN_CYCLES_PER_GROUP` cycles or more, else 1 (no groups)."""
    return FLOOR_GROUPS if cycles >= FLOOR_GROUPS * MIN_CYCLES_PER_GROUP else 1


def _group_spread(sums: PhaseSums, keep: np.ndarray, t: np.ndarray, ramp_time_s: float,
                  fit: LineFit, ext: slice, inw: np.ndarray, window: int) -> float | None:
    """RMS over the window of the standard error of the smoothed averaged residual, from the
    spread of the groups' own smoothed averages; None without groups."""
    if sums.group_count is None or sums.group_count.shape[0] < 2:
        return None
    g = sums.group_count.shape[0]
    with np.errstate(divide="ignore", invalid="ignore"):
        yg = sums.group_voltage_v[:, keep] / sums.group_count[:, keep]
        # each group's bins sit at that group's own mean phase (a bin a sample wide holds
        # different phases in different groups)
        tg = sums.group_phase[:, keep] / sums.group_count[:, keep] * ramp_time_s
    te = t[ext]
    rg = yg[:, ext] - fit.at(tg[:, ext])
    for row in rg:  # a bin a group missed: the line between its neighbours
        bad = ~np.isfinite(row)
        if np.all(bad):
            return None
        if np.any(bad):
            row[bad] = np.interp(te[bad], te[~bad], row[~bad])
    smg = savgol_filter(rg, window, SMOOTH_ORDER, axis=1)[:, inw[ext]]
    se = np.std(smg, axis=0, ddof=1) / math.sqrt(g)
    return float(np.sqrt(np.mean(se * se)))


def sweep_errors(av: AveragedCycle) -> SweepErrors:
    """Sweep errors of the smoothed averaged ramp over its window (measurement frame).

    The end slopes ``v'(a)``, ``v'(b)`` are the line's slope plus the derivative
    of a Legendre series fitted to the residual, weighted by the bins' standard
    errors, of the degree (0 to :data:`MAX_DERIVATIVE_DEGREE`) with the lowest
    Bayesian information criterion: a ramp straight within its noise gets
    exactly the line's slope at both ends.
    """
    inw = av.in_window
    tw = av.time_s[inw]
    curve = av.fit.at(tw) + av.smoothed_residual_v[inw]
    series = LegendreSeries(tw, av.residual_v[inw], 1.0 / np.maximum(av.stderr_v[inw], 1e-300),
                            min(MAX_DERIVATIVE_DEGREE, tw.size - 2))
    da, db = series.end_derivatives(series.best_degree(0))
    d_a = av.fit.slope_v_per_s + da
    d_b = av.fit.slope_v_per_s + db
    ta, tb = float(tw[0]), float(tw[-1])
    swing = float(curve[-1] - curve[0])
    chord = curve[0] + swing / (tb - ta) * (tw - ta)
    dev = curve - chord
    k = int(np.argmax(np.abs(dev)))
    full = d_a * (tb - ta)
    # the chord crosses the mid level mid-window; the ramp crosses it at:
    mid = 0.5 * (curve[0] + curve[-1])
    above = np.flatnonzero(curve >= mid)
    if above.size and above[0] > 0:
        f = float(interpolate_crossing(curve, above[:1], mid)[0])
        t_cross = float(np.interp(f, np.arange(tw.size), tw))
    else:
        t_cross = math.nan
    return SweepErrors(
        start_slope_v_per_s=d_a, end_slope_v_per_s=d_b,
        slope_error_pct=100.0 * (d_a - d_b) / d_a if d_a != 0 else math.nan,
        displacement_error_pct=100.0 * float(dev[k]) / swing if swing != 0 else math.nan,
        transmission_error_pct=100.0 * (full - swing) / full if full != 0 else math.nan,
        midpoint_time_error_s=t_cross - 0.5 * (ta + tb))


def end_levels(av: AveragedCycle) -> tuple[float, float]:
    """Start and end levels of the averaged ramp (measurement frame), volts.

    A line through the first (last) ``LEVEL_FRACTION`` of the ramp, evaluated
    at the ramp's start (end).
    """
    t = av.time_s
    y = av.measured_v
    T = av.ramp_time_s
    out = []
    for m, at in (((t <= LEVEL_FRACTION * T), 0.0), ((t >= (1 - LEVEL_FRACTION) * T), T)):
        if np.count_nonzero(m) < 3:
            order = np.argsort(np.abs(t - at))[:3]
            m = np.zeros(t.size, bool)
            m[order] = True
        tb, ta_ = t[m], y[m]
        if np.ptp(tb) > 0:
            p = np.polyfit(tb, ta_, 1, w=np.sqrt(av.count[m]))
            out.append(float(np.polyval(p, at)))
        else:
            out.append(float(np.mean(ta_)))
    return out[0], out[1]


def robust_outliers(series: list[tuple[np.ndarray, float, float]]) -> np.ndarray:
    """Mark cycles lying more than ``OUTLIER_Z`` robust standard deviations from the median.

    Parameters
    ----------
    series : list of (values, relative_floor, absolute_floor)
        Each figure with the smallest spread worth calling a difference: the
        robust scale (:func:`trueslope.core.noise.robust_sigma`) is raised to
        ``relative_floor x |median|`` and ``absolute_floor``, so that
        near-identical cycles of a clean capture are not marked for
        differences nobody would act on.
    """
    n = series[0][0].size
    flag = np.zeros(n, dtype=bool)
    if n < 5:
        return flag
    for s, rel, absf in series:
        med = np.median(s)
        scale = max(robust_sigma(s), rel * abs(med), absf, 1e-300)
        flag |= np.abs(s - med) > OUTLIER_Z * scale
    return flag


def slope_ci(fit: LineFit, slopes: np.ndarray) -> tuple[float, float]:
    """95 % interval of the mean slope: the spread of the per-cycle slopes (Student t),
    never narrower than the pooled least-squares interval."""
    half_ols = 0.5 * (fit.slope_ci95_v_per_s[1] - fit.slope_ci95_v_per_s[0])
    half = half_ols
    if slopes.size >= 3:
        sd = float(np.std(slopes, ddof=1))
        half = max(half, float(t_quantile_975(slopes.size - 1)) * sd / math.sqrt(slopes.size))
    b = fit.slope_v_per_s
    return b - half, b + half


def build_cycles(cyc: CycleArrays, seg: Segmentation, sign: float,
                 dt: float = 0.0) -> CycleList:
    """Per-cycle figures in true polarity, outlying ones marked (records built when read).

    A ramp time is never called outlying for less than :data:`OUTLIER_Z` sample periods
    ``dt``: edge timing is quantised to the sampling, however identical the cycles."""
    dof = np.maximum(cyc.dof, 1)
    # a t quantile per distinct window length (a handful), not per cycle
    dofs, where = np.unique(dof, return_inverse=True)
    tq = t_quantile_975(dofs)[where]
    with np.errstate(divide="ignore", invalid="ignore"):  # a flat cycle has no span: NaN
        nl = 100.0 * cyc.peak_deviation_v / np.abs(cyc.fitted_span_v)
        tnl = 100.0 * cyc.terminal_peak_v / np.abs(cyc.terminal_span_v)
    # floors: 0.2 % of slope or ramp time, 0.05 percentage points (+10 %) of nonlinearity
    out_flag = robust_outliers([(cyc.slope_v_per_s, 2e-3, 0.0), (cyc.ramp_time_s, 2e-3, dt),
                                (nl, 0.1, 0.05)])
    b = sign * cyc.slope_v_per_s
    h = tq * cyc.slope_stderr_v_per_s
    start = sign * cyc.start_v
    end = sign * cyc.end_v
    n = b.size
    return CycleList(ramp_start_s=cyc.ramp_start_s,
                     ramp_time_s=cyc.ramp_time_s, retrace_time_s=seg.retrace_time_s,
                     period_s=seg.period_s, offset_v=sign * cyc.intercept_v, start_v=start,
                     end_v=end, amplitude_v=np.abs(end - start), slope_v_per_s=b,
                     slope_ci_low_v_per_s=b - h, slope_ci_high_v_per_s=b + h,
                     peak_deviation_v=cyc.peak_deviation_v, nonlinearity_pct=nl,
                     terminal_nonlinearity_pct=tnl,
                     residual_rms_v=np.sqrt(cyc.ssr_v2 / cyc.window_samples),
                     outlier=out_flag, excluded=np.zeros(n, dtype=bool))


def summarise(seg: Segmentation, kept: np.ndarray, cyc: CycleArrays, av: AveragedCycle,
              noise: NoiseFloor, sweep: SweepErrors, trim: float,
              bounds: tuple[str, ...] = ()) -> Figures:
    """The summary figures of a capture, in true polarity.

    Parameters
    ----------
    seg : Segmentation
    kept : ndarray of bool
        Cycles that went into the average (outliers left out).
    cyc : CycleArrays
        The kernel's figures of the kept cycles.
    av, noise, sweep
        The averaged cycle, its noise floor and sweep errors.
    trim : float
        The trim fraction in force.
    bounds : tuple of str
        Figures that touch clipped samples (bounds, not values).
    """
    sign = -1.0 if av.mirrored else 1.0
    fit = av.fit
    fitted_span = abs(fit.slope_v_per_s * (av.window_end_s - av.window_start_s))
    peak = float(np.nanmax(np.abs(av.smoothed_residual_v[av.in_window])))
    nl = 100.0 * peak / fitted_span if fitted_span > 0 else math.nan
    start_m, end_m = end_levels(av)
    lo_ci, hi_ci = slope_ci(fit, cyc.slope_v_per_s)
    ci = sorted((sign * lo_ci, sign * hi_ci))
    periods = np.diff(seg.reset_times_s)
    period = float(np.mean(periods))
    return Figures(
        direction=seg.direction, full_cycles=seg.full_cycles, partial_cycles=seg.partial_cycles,
        frequency_hz=1.0 / period, period_s=period,
        period_jitter_s=float(np.std(periods, ddof=1)) if periods.size > 1 else 0.0,
        ramp_time_s=av.ramp_time_s, retrace_time_s=float(np.mean(seg.retrace_time_s[kept])),
        offset_v=sign * fit.intercept_v, start_v=sign * start_m, end_v=sign * end_m,
        amplitude_v=abs(end_m - start_m), slope_v_per_s=sign * fit.slope_v_per_s,
        slope_ci95_v_per_s=(float(ci[0]), float(ci[1])),
        peak_deviation_v=peak, nonlinearity_pct=nl,
        terminal_nonlinearity_pct=abs(sweep.displacement_error_pct),
        slope_error_pct=sweep.slope_error_pct,
        displacement_error_pct=sweep.displacement_error_pct,
        transmission_error_pct=sweep.transmission_error_pct,
        midpoint_time_error_s=sweep.midpoint_time_error_s,
        midpoint_time_error_pct=100.0 * sweep.midpoint_time_error_s / av.ramp_time_s,
        residual_rms_v=float(math.sqrt(np.sum(cyc.ssr_v2) / np.sum(cyc.window_samples))),
        noise_rms_v=noise.noise_rms_v, adc_step_v=noise.adc_step_v,
        nonlinearity_floor_pct=noise.nonlinearity_floor_pct,
        below_floor=bool(nl < noise.nonlinearity_floor_pct),
        trim_fraction=trim, window_start_s=av.window_start_s,
        window_end_s=av.window_end_s, fitted_span_v=fitted_span, bounds=bounds)
