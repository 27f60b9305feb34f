"""Cycle segmentation of a sawtooth record.

Steps: robust levels from the amplitude histogram, hysteresis thresholds at
30 % and 70 % of the span, a Schmitt-trigger pass that finds every slow and
fast transition, the direction from which of the two is the slow one, reset
edges timed at the 50 % reference level by linear interpolation (a fraction
of a sample), and the ramp and retrace of each full cycle.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from .artefacts import Clipping, extremes, find_clipping, find_spikes, without_spikes
from .crossings import crossings_up, enter_leave, first_up_after, last_up_before
from .edges import (fast_corners, interpolate_crossing, local_crossing, slow_corners,
                    window_argext)
from .errors import NoFullCycleError, NotASawtoothError
from .levels import ramp_extremes, ramp_extremes_at, state_levels
from .noise import adc_step, estimate_noise_rms
from .results import Segmentation, StateLevels

#: Hysteresis thresholds as fractions of the span between the ramp levels.
LOWER_THRESHOLD_FRACTION = 0.30
UPPER_THRESHOLD_FRACTION = 0.70
#: Full cycles covering this share of the record need no second try at the levels.
WELL_COVERED = 0.75
#: A sawtooth's slow edge must take at least this many times as long as its fast edge.
MIN_EDGE_RATIO = 4.0
#: Below this 90-10 % time (samples) sampling cuts the edge's corners (or misses the edge
#: altogether): the ramp's ends come from the steady reset levels (``edges.fast_corners``).
FAST_EDGE_SAMPLES = 4.0


def _dwell_margin(period_samples: float) -> float:
    """How far a boundary must move to count: more than 3 samples and 1 % of the period,
    so noise and the gentle curvature of a loaded ramp never move one."""
    return max(3.0, 0.01 * period_samples)


def _skip_low_dwell(up10: tuple[np.ndarray, np.ndarray], up30: tuple[np.ndarray, np.ndarray],
                    start: np.ndarray, limit: np.ndarray, period_samples: float) -> np.ndarray:
    """Ramp starts moved past a dwell at the low level.

    Where the ramp's 10 % and 30 % upward crossings (``up10``, ``up30``), extrapolated
    along the ramp to the low level, lie well after the end of the retrace, the signal
    sat at the bottom first (a reset held by a one-shot, say): the ramp starts there
    instead.
    """
    t10 = first_up_after(up10, start)
    t30 = first_up_after(up30, start)
    t0 = t10 - 0.5 * (t30 - t10)
    ok = np.isfinite(t0) & (t30 < limit) & (t0 - start > _dwell_margin(period_samples))
    return np.where(ok, t0, start)


def _cut_high_plateau(up70: tuple[np.ndarray, np.ndarray], up90: tuple[np.ndarray, np.ndarray],
                      end: np.ndarray, limit: np.ndarray, period_samples: float) -> np.ndarray:
    """Ramp ends moved before a plateau at the high level (clipping, a current source
    out of headroom): the 70 % and 90 % upward crossings extrapolated to the high level."""
    t90 = last_up_before(up90, end)
    t70 = last_up_before(up70, end)
    t100 = t90 + 0.5 * (t90 - t70)
    ok = np.isfinite(t100) & (t70 > limit) & (end - t100 > _dwell_margin(period_samples))
    return np.where(ok, t100, end)


def _transitions(x: np.ndarray, lower: float, upper: float) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Schmitt-trigger transitions.

    Returns
    -------
    up_end, up_start, down_end, down_start : ndarray of int
        For each low-to-high transition, the first sample above ``upper``
        and the last sample below ``lower`` before it; likewise for
        high-to-low transitions.
    """
    enter_hi, leave_hi, enter_lo, leave_lo = enter_leave(x, lower, upper)
    if x.size and x[0] > upper:
        enter_hi = np.concatenate(([0], enter_hi))
    if x.size and x[0] < lower:
        enter_lo = np.concatenate(([0], enter_lo))
    ev_idx = np.concatenate((enter_hi, enter_lo))
    ev_lab = np.concatenate((np.ones(enter_hi.size, np.int8), np.zeros(enter_lo.size, np.int8)))
    order = np.argsort(ev_idx, kind="stable")
    ev_idx = ev_idx[order]
    ev_lab = ev_lab[order]
    if ev_idx.size == 0:
        e = np.zeros(0, dtype=np.int64)
        return e, e, e, e
    change = np.concatenate(([False], ev_lab[1:] != ev_lab[:-1]))
    up_end = ev_idx[change & (ev_lab == 1)]
    down_end = ev_idx[change & (ev_lab == 0)]
    # last sample below `lower` before each up transition, above `upper` before each down one
    k = np.searchsorted(leave_lo, up_end, side="left") - 1
    up_start = np.where(k >= 0, leave_lo[np.maximum(k, 0)], 0)
    k = np.searchsorted(leave_hi, down_end, side="left") - 1
    down_start = np.where(k >= 0, leave_hi[np.maximum(k, 0)], 0)
    return up_end, up_start, down_end, down_start


def segment(v: np.ndarray, sample_interval_s: float, t0_s: float = 0.0,
            sync: np.ndarray | None = None) -> Segmentation:
    """Find the full ramp cycles of a sawtooth record.

    Parameters
    ----------
    v : ndarray
        Ramp samples, volts.
    sample_interval_s : float
        Seconds between samples.
    t0_s : float
        Time of the first sample, seconds.
    sync : ndarray, optional
        Logic-level channel of the same length whose edges mark each reset.

    Returns
    -------
    Segmentation

    Raises
    ------
    NotASawtoothError
        Flat record, or rise and fall of similar speed (triangle, sine, square).
    NoFullCycleError
        Fewer than two reset edges in the record (a full cycle needs one at each end).

    Notes
    -----
    Isolated spikes are found and bridged first (``artefacts``), clipping is
    noted. The thresholds come from the steady cycles themselves: a first pass
    with levels from the record's histogram (its extremes, or its 5 % and 95 %
    points corrected for a uniform ramp, whichever finds more cycles), then a
    second with the medians of the cycles' own start and end levels, so a
    power-up or a settling probe at the start cannot pull the thresholds off.
    """
    raw = np.asarray(v, dtype=float)
    noise = estimate_noise_rms(raw)
    # one histogram gives the extremes and, without spikes, the candidate levels too
    quantiles = ramp_extremes_at(raw, (0.002, 0.05))
    lo, hi = quantiles[0]
    step = _check_not_flat(raw, lo, hi, noise)
    spikes = find_spikes(raw, hi - lo, noise)
    x = without_spikes(raw, spikes)
    if spikes.size:
        quantiles = ramp_extremes_at(x, (0.002, 0.05))
    ends = extremes(x)
    clip = find_clipping(x, at=ends)
    if sync is not None:
        lo, hi = ramp_extremes(x) if spikes.size else (lo, hi)
        seg = _segment_with_sync(x, np.asarray(sync, dtype=float), sample_interval_s, t0_s,
                                 _levels(lo, hi), noise, step)
        return dataclasses.replace(seg, spike_samples=spikes, clipped_top_v=clip.top_v,
                                   clipped_bottom_v=clip.bottom_v, noise_rms_v=noise,
                                   adc_step_v=step)
    best: Segmentation | None = None
    first_error: Exception | None = None
    for cand in _candidate_levels(*quantiles):
        if best is not None and _coverage(best, x.size, sample_interval_s) >= WELL_COVERED:
            break
        try:
            seg = _segment_signal(x, cand, sample_interval_s, t0_s, clip, noise, step)
        except (NoFullCycleError, NotASawtoothError) as exc:
            first_error = first_error or exc
            continue
        if best is None or seg.full_cycles > best.full_cycles:
            best = seg
    if best is None:
        raise first_error  # type: ignore[misc]
    # the steady cycles' own levels, where they find cycles the histogram's levels missed
    steady = None
    if _coverage(best, x.size, sample_interval_s) < WELL_COVERED:
        steady = _steady_levels(x, best, sample_interval_s, t0_s)
    if steady is not None:
        try:
            again = _segment_signal(x, steady, sample_interval_s, t0_s, clip, noise, step)
            if again.full_cycles > best.full_cycles:
                best = again
        except (NoFullCycleError, NotASawtoothError):
            pass
    # a ramp sits on its top and bottom codes for as long as it takes to cross one code:
    # only a run well beyond that is clipping
    ramp_samples = float(np.median(best.ramp_time_s)) / sample_interval_s
    per_sample = abs(best.levels.high_v - best.levels.low_v) / max(ramp_samples, 1.0)
    final = find_clipping(x, (step / per_sample) if step and per_sample > 0 else 1.0, ends)
    if (final.top_v, final.bottom_v) != (clip.top_v, clip.bottom_v):
        best = _segment_signal(x, best.levels, sample_interval_s, t0_s, final, noise, step)
    return dataclasses.replace(best, spike_samples=spikes, clipped_top_v=final.top_v,
                               clipped_bottom_v=final.bottom_v, noise_rms_v=noise, adc_step_v=step)


def _levels(lo: float, hi: float) -> StateLevels:
    span = hi - lo
    return StateLevels(low_v=lo, high_v=hi, method="histogram extremes",
                       lower_threshold_v=lo + LOWER_THRESHOLD_FRACTION * span,
                       upper_threshold_v=lo + UPPER_THRESHOLD_FRACTION * span)


def _coverage(seg: Segmentation, n: int, dt: float) -> float:
    """Share of the record that the full cycles cover."""
    return float(np.sum(seg.period_s)) / max(n * dt, 1e-300)


def _check_not_flat(x: np.ndarray, lo: float, hi: float, noise: float) -> float | None:
    """Refuse a record with no ramp in it: its span within a few noise sigmas or ADC steps.
    Returns the ADC step found (None when the samples are not on a grid)."""
    found = adc_step(x)
    step = found or 0.0
    span = hi - lo
    if not span > max(8.0 * noise, 6.0 * step, 1e-12):
        raise NotASawtoothError(
            f"no ramp: the signal is flat within the noise (it spans {span:.3g} V against "
            f"{noise:.3g} V RMS noise{f' and {step:.3g} V steps' if step else ''}); is this "
            f"the right channel?")
    return found


def _candidate_levels(outer: tuple[float, float], tails: tuple[float, float]
                      ) -> list[StateLevels]:
    """Levels to try first: the histogram's extremes, and its 5 % and 95 % points
    (``tails``) widened as for a uniform ramp (robust to a power-up or a flat stretch)."""
    lo, hi = outer
    q5, q95 = tails
    w = (q95 - q5) / 0.9
    out = [_levels(lo, hi)]
    if w > 0:
        out.append(_levels(q5 - 0.05 * w, q95 + 0.05 * w))
    return out


def _steady_levels(x: np.ndarray, seg: Segmentation, dt: float, t0: float
                   ) -> StateLevels | None:
    """The medians of the cycles' own start and end levels (true polarity), or None
    when there are too few cycles to say."""
    if seg.full_cycles < 3:
        return None
    n = x.size
    i0 = np.clip(np.round((seg.ramp_start_s - t0) / dt).astype(np.int64), 0, n - 1)
    i1 = np.clip(np.round((seg.ramp_end_s - t0) / dt).astype(np.int64), 0, n - 1)
    a, b = float(np.median(x[i0])), float(np.median(x[i1]))
    lo, hi = min(a, b), max(a, b)
    if not hi > lo:
        return None
    return StateLevels(low_v=lo, high_v=hi, method="median of the cycles' start and end levels",
                       lower_threshold_v=lo + LOWER_THRESHOLD_FRACTION * (hi - lo),
                       upper_threshold_v=lo + UPPER_THRESHOLD_FRACTION * (hi - lo))


def _segment_signal(x: np.ndarray, levels: StateLevels, sample_interval_s: float,
                    t0_s: float, clip: Clipping, noise: float, step: float | None
                    ) -> Segmentation:
    """Segment from the ramp's own fast edges with the thresholds of ``levels``."""
    n = x.size
    lo, hi = levels.low_v, levels.high_v
    span = hi - lo
    lower, upper = levels.lower_threshold_v, levels.upper_threshold_v
    up_end, up_start, down_end, down_start = _transitions(x, lower, upper)
    # drop transitions that started before the record (no last-sample-on-the-other-side)
    if up_end.size < 2 and down_end.size < 2:
        raise NoFullCycleError(
            "fewer than two reset edges in the record: a full cycle needs a reset at each "
            "end; capture at least one whole cycle between two resets (a longer time base "
            "or a faster ramp)")
    up_dur = float(np.median(up_end - up_start)) if up_end.size else np.inf
    down_dur = float(np.median(down_end - down_start)) if down_end.size else np.inf
    if up_dur >= MIN_EDGE_RATIO * down_dur:
        direction = "rising"
    elif down_dur >= MIN_EDGE_RATIO * up_dur:
        direction = "falling"
    else:
        shape = ("both edges are fast: it looks like a square or pulse wave"
                 if max(up_dur, down_dur) < 0.05 * n / max(1, up_end.size) else
                 "it rises and falls at similar rates: it looks like a triangle or sine wave")
        raise NotASawtoothError(
            f"not a sawtooth: {shape} (rise {up_dur:.0f} samples, fall {down_dur:.0f} "
            "samples between the 30 % and 70 % levels)")

    if direction == "falling":
        # measure on the mirror image, where the ramp rises and resets downwards
        x = -x
        lo_m = -hi
        # the thresholds are symmetric (30 % / 70 %), so the mirror's transitions are the
        # original ones with rise and fall swapped
        up_end, up_start, down_end, down_start = down_end, down_start, up_end, up_start
    else:
        lo_m = lo
    mid = lo_m + 0.5 * span
    if down_end.size < 2:
        raise NoFullCycleError(
            "fewer than two reset edges in the record: a full cycle needs a reset at each "
            "end")
    # keep resets whose fast edge started inside the record
    keep = down_start > 0
    down_end, down_start = down_end[keep], down_start[keep]
    if down_end.size < 2:
        raise NoFullCycleError("fewer than two complete reset edges in the record")

    # reset time: the last 50 % crossing at or before the first sample below the lower
    # threshold, searched only near each fast edge
    fast = int(np.max(down_end - down_start)) if down_end.size else 1
    approx_period = float(np.median(np.diff(down_end))) if down_end.size > 1 else float(n)
    width = int(min(max(4, 2 * fast + int(0.02 * approx_period)), max(4, int(0.25 * approx_period))))
    t50 = local_crossing(x, down_start, down_end, mid, "last")
    ok = np.isfinite(t50)
    down_end, down_start, t50 = down_end[ok], down_start[ok], t50[ok]
    if down_end.size < 2:
        raise NoFullCycleError("fewer than two clean reset edges in the record")
    reset_idx = t50
    top, bottom = clip.top_v is not None, clip.bottom_v is not None
    if direction == "falling":
        top, bottom = bottom, top
    return _build(x, lo_m, span, levels, direction, "signal", sample_interval_s, t0_s,
                  reset_idx, np.ceil(t50).astype(np.int64), down_start, down_end, width,
                  float(np.median(np.diff(reset_idx))), noise, step, clipped=(bottom, top))


def _build(xm: np.ndarray, lo_m: float, span: float, levels: StateLevels, direction: str,
           source: str, dt: float, t0: float, reset_idx: np.ndarray, i50: np.ndarray,
           before: np.ndarray, after: np.ndarray, width: int,
           period_samples: float, noise: float, step: float | None,
           clipped: tuple[bool, bool] = (False, False)) -> Segmentation:
    """Retrace extent and ramp boundaries of every cycle, shared by both segmenters.

    Parameters
    ----------
    xm : ndarray
        The ramp in the measurement frame (rising, resetting downwards).
    lo_m, span : float
        Low level (measurement frame) and span between the levels, volts.
    reset_idx : ndarray
        Fractional sample index of each reset edge.
    i50 : ndarray of int
        First sample after each reset edge's 50 % crossing.
    before, after : ndarray of int
        Samples bounding each fast edge (the last one above the upper
        threshold and the first below the lower one, or the sync edge twice).
    width : int
        How far, in samples, to look around each edge for its crossings.
    clipped : (bool, bool)
        The record is clipped at its low / high level (measurement frame): a flat
        stretch there is the clipping, not a dwell or a plateau, and stays in the ramp.

    The retrace runs from the fast edge's 90 % crossing to its 10 % crossing,
    each extrapolated along the edge (by 1/8 of the 90-10 % time) to the
    levels, to a fraction of a sample; where the crossings are not clean, the
    peak before and the trough after the edge stand in. A dwell at the low
    level after the reset and a plateau at the high level before it belong to
    the retrace.
    """
    n = xm.size
    t90 = local_crossing(xm, before - width, i50, lo_m + 0.9 * span, "last")
    t10 = local_crossing(xm, i50 - 1, after + width, lo_m + 0.1 * span, "first")
    fall = t10 - t90
    ext = 0.125 * fall
    ok = np.isfinite(fall)
    edge = int((after - before).max(initial=0))
    peak = window_argext(xm, before - width + 1, width + edge, "max").astype(float)
    trough = window_argext(xm, np.maximum(peak.astype(np.int64), before), width + 1 + edge,
                            "min").astype(float)
    peak = np.where(ok, t90 - ext, peak)
    trough = np.where(ok, t10 + ext, trough)
    tol = 4.0 * noise + (step or 0.0) + 1e-3 * span
    fast = ok & (fall < FAST_EDGE_SAMPLES)
    if np.any(ok & ~fast):
        peak, trough = slow_corners(xm, peak, trough, t90, t10, lo_m, span, ok & ~fast,
                                    period_samples, tol)
    if np.any(fast):
        peak, trough = fast_corners(xm, peak, trough, t90, t10, fast, period_samples, tol)
    trough = np.maximum(trough, peak + 1e-3)
    # the 10 % and 30 % upward crossings for a dwell at the bottom, the 70 % and 90 % ones
    # for a plateau at the top (one pass over the record for all that are needed)
    fractions = ((0.1, 0.3) if not clipped[0] else ()) + ((0.7, 0.9) if not clipped[1] else ())
    up = dict(zip(fractions, crossings_up(xm, [lo_m + f * span for f in fractions])))
    starts = trough if clipped[0] else _skip_low_dwell(up[0.1], up[0.3], trough,
                                                       np.append(peak[1:], n), period_samples)
    ends = peak[1:] if clipped[1] else _cut_high_plateau(up[0.7], up[0.9], peak[1:],
                                                         starts[:-1], period_samples)
    ramp_start = t0 + starts[:-1] * dt
    ramp_end = t0 + ends * dt
    retrace_end = t0 + starts[1:] * dt
    good = ramp_end > ramp_start
    if not np.any(good):
        raise NoFullCycleError("no full ramp between two reset edges")
    return Segmentation(
        direction=direction, levels=levels, reset_times_s=t0 + reset_idx * dt,
        ramp_start_s=ramp_start[good], ramp_end_s=ramp_end[good],
        retrace_end_s=retrace_end[good], full_cycles=int(np.count_nonzero(good)),
        partial_cycles=int(peak[0] > 2) + int(trough[-1] < n - 3), source=source)


def _segment_with_sync(x: np.ndarray, s: np.ndarray, dt: float, t0: float,
                       levels: StateLevels, noise: float, step: float | None) -> Segmentation:
    """Segment from the edges of a logic-level sync channel."""
    n = x.size
    if s.size != n:
        raise NoFullCycleError("the sync channel has a different length from the ramp")
    s_lo, s_hi = state_levels(s, "mode")
    if not s_hi - s_lo > 8.0 * max(estimate_noise_rms(s), 1e-12):
        raise NoFullCycleError("the sync channel shows no logic edges")
    s_mid = 0.5 * (s_lo + s_hi)
    band = 0.1 * (s_hi - s_lo)
    up_end, _, down_end, _ = _transitions(s, s_mid - band, s_mid + band)
    # pick the sync polarity at which the ramp jumps: compare the ramp just before and after
    span = levels.high_v - levels.low_v
    best = None
    for edges in (up_end, down_end):
        if edges.size < 2:
            continue
        period = float(np.median(np.diff(edges)))
        g = max(2, int(0.05 * period))
        before = x[np.clip(edges - g, 0, n - 1)]
        after = x[np.clip(edges + g, 0, n - 1)]
        jump = float(np.median(after - before))
        if best is None or abs(jump) > abs(best[1]):
            best = (edges, jump, period)
    if best is None or abs(best[1]) < 0.3 * span:
        raise NoFullCycleError(
            "the sync channel's edges do not line up with the ramp's resets; "
            "check the sync channel choice")
    edges, jump, period = best
    direction = "rising" if jump < 0 else "falling"
    xm = x if direction == "rising" else -x
    # fractional edge time at the sync channel's 50 % level
    reset_idx = interpolate_crossing(s, np.clip(edges, 1, n - 1), s_mid)
    width = max(4, int(0.1 * period))
    keep = (edges - width > 0) & (edges + 2 * width < n)
    edges, reset_idx = edges[keep], reset_idx[keep]
    if edges.size < 2:
        raise NoFullCycleError("fewer than two full cycles between sync edges")
    lo_m = levels.low_v if direction == "rising" else -levels.high_v
    # the ramp's own fast edge near each sync edge gives the retrace's extent
    t50 = local_crossing(xm, edges - width, edges + width, lo_m + 0.5 * span, "last")
    i50 = np.where(np.isfinite(t50), np.ceil(np.nan_to_num(t50)), edges).astype(np.int64)
    return _build(xm, lo_m, span, levels, direction, "sync", dt, t0, reset_idx, i50,
                  edges, edges, width, float(period), noise, step)
