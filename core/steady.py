"""Which cycles are the steady waveform, and what clipping takes from each ramp.

A record often begins before the ramp generator has settled (a power-up with
the capacitor starting from 0 V, a 10x probe still settling on its
compensation) or ends after it stopped (the generator switched off). Those
stretches are not the waveform being measured: the cycles at the record's ends
whose levels or slope differ from the steady ones, and a start or end that
leaves the steady levels or goes longer than one and a half periods without a
reset, are left out and reported with their time span. A cycle in the middle
that differs is an outlier (``linearity``), marked but kept in the list.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from .results import CycleArrays, Segmentation

#: A cycle is unsteady when its start or end level is off the median by more than this
#: fraction of the amplitude (and :data:`LEVEL_NOISE_SIGMAS` noise sigmas, two ADC steps).
LEVEL_FRACTION = 0.01
LEVEL_NOISE_SIGMAS = 6.0
#: ... or its slope off the median by more than this fraction (and 5 standard errors).
SLOPE_FRACTION = 0.01
#: The partial cycles at the record's ends may leave the steady levels by this fraction
#: of the amplitude (reset undershoot, noise) before the end counts as unsteady.
EDGE_EXCURSION_FRACTION = 0.05
#: An end of the record longer than this many periods without a reset is unsteady.
GAP_PERIODS = 1.5


@dataclass(frozen=True)
class SteadyState:
    """The steady cycles and the stretches left out.

    Attributes
    ----------
    keep : ndarray of bool
        Per full cycle: part of the steady waveform.
    start_s, end_s : (float, float) or None
        Absolute time span of an unsteady start or end, or None.
    """

    keep: np.ndarray
    start_s: tuple[float, float] | None
    end_s: tuple[float, float] | None


def _run(flags: np.ndarray) -> int:
    """Length of the run of True at the start of ``flags``."""
    off = np.flatnonzero(~flags)
    return int(off[0]) if off.size else int(flags.size)


def steady_state(x: np.ndarray, dt: float, t0: float, seg: Segmentation, cyc: CycleArrays,
                 noise_v: float, step_v: float | None) -> SteadyState:
    """Find the unsteady start and end of a record.

    Parameters
    ----------
    x : ndarray
        The record in the measurement frame (mirrored when falling), spikes bridged.
    dt, t0 : float
        Sample interval and first-sample time, seconds.
    seg : Segmentation
    cyc : CycleArrays
        The kernel's figures of every full cycle (measurement frame).
    noise_v, step_v : float
        Sample noise and ADC step, volts.
    """
    n = cyc.slope_v_per_s.size
    keep = np.ones(n, dtype=bool)
    if n == 0:
        return SteadyState(keep, None, None)
    lo, hi = float(np.median(cyc.start_v)), float(np.median(cyc.end_v))
    amp = abs(hi - lo)
    if n >= 5:
        tol = max(LEVEL_FRACTION * amp, LEVEL_NOISE_SIGMAS * noise_v, 2.0 * (step_v or 0.0))
        b = float(np.median(cyc.slope_v_per_s))
        se = float(np.median(cyc.slope_stderr_v_per_s))
        tol_b = max(SLOPE_FRACTION * abs(b), 5.0 * se)
        odd = ((np.abs(cyc.start_v - lo) > tol) | (np.abs(cyc.end_v - hi) > tol)
               | (np.abs(cyc.slope_v_per_s - b) > tol_b))
        lead, trail = _run(odd), _run(odd[::-1])
        if lead + trail < n / 2:
            keep[:lead] = False
            keep[n - trail:] = False
    kept = np.flatnonzero(keep)
    first_start = float(seg.ramp_start_s[kept[0]])
    last_end = float(seg.retrace_end_s[kept[-1]])
    period = float(np.median(seg.period_s))
    margin = EDGE_EXCURSION_FRACTION * amp + LEVEL_NOISE_SIGMAS * noise_v
    resets = seg.reset_times_s

    def strays(a_s: float, b_s: float) -> bool:
        i0 = int(np.clip(np.ceil((a_s - t0) / dt), 0, x.size))
        i1 = int(np.clip(np.floor((b_s - t0) / dt), i0, x.size))
        part = x[i0:i1]
        return bool(part.size) and bool(np.min(part) < lo - margin or np.max(part) > hi + margin)

    # before the first steady cycle: up to the reset that starts it
    before = resets[resets <= first_start]
    head_end = float(before[-1]) if before.size else first_start
    prev = before[-2] if before.size >= 2 else t0
    start = None
    if (not keep[0] or (head_end - t0) > GAP_PERIODS * period
            or strays(t0, min(head_end, float(prev) + 0.9 * period) if before.size >= 2
                      else head_end)):
        start = (t0, first_start)
    after = resets[resets >= last_end - 0.5 * period]
    tail_start = float(after[0]) if after.size else last_end
    t_last = t0 + (x.size - 1) * dt
    end = None
    if (not keep[-1] or (t_last - tail_start) > GAP_PERIODS * period
            or strays(tail_start + 0.1 * period, t_last)):
        end = (last_end, t_last)
    return SteadyState(keep, start, end)


def subset(seg: Segmentation, keep: np.ndarray) -> Segmentation:
    """The segmentation of the kept cycles; reset edges outside them are dropped too, so
    the period and frequency come from the steady waveform alone."""
    if np.all(keep):
        return seg
    rs, re = seg.ramp_start_s[keep], seg.retrace_end_s[keep]
    period = float(np.median(seg.period_s))
    r = seg.reset_times_s
    in_span = (r >= rs[0] - period) & (r <= re[-1])
    return dataclasses.replace(seg, ramp_start_s=rs, ramp_end_s=seg.ramp_end_s[keep],
                               retrace_end_s=re, full_cycles=int(np.count_nonzero(keep)),
                               reset_times_s=r[in_span])


def subset_cycles(cyc: CycleArrays, keep: np.ndarray) -> CycleArrays:
    """The kernel's figures of the kept cycles."""
    return CycleArrays(**{f.name: getattr(cyc, f.name)[keep]
                          for f in dataclasses.fields(CycleArrays)})


@dataclass(frozen=True)
class ClipWindow:
    """What clipping takes from the ramps (measurement frame).

    Attributes
    ----------
    start_limit_s, end_limit_s : float or None
        Earliest window start and latest window end, seconds from the ramp start,
        that keep every clipped sample out of the fit.
    lost_fraction : float
        Median share of a clipped ramp's samples that are clipped.
    at_start, at_end : bool
        Clipping cuts the ramp's start (low end) or its end (high end).
    """

    start_limit_s: float | None
    end_limit_s: float | None
    lost_fraction: float
    at_start: bool
    at_end: bool


def clip_window(mask: np.ndarray, seg: Segmentation, dt: float, t0: float) -> ClipWindow:
    """Where clipped samples lie in each ramp, and the fit window that avoids them all."""
    ps = (seg.ramp_start_s - t0) / dt
    pe = (seg.ramp_end_s - t0) / dt
    r0 = np.clip(np.ceil(ps).astype(np.int64), 0, mask.size)
    r1 = np.clip(np.floor(pe).astype(np.int64) + 1, 0, mask.size)
    ci = np.flatnonzero(mask)
    j0, j1 = np.searchsorted(ci, r0), np.searchsorted(ci, r1)
    counts = j1 - j0
    mid = 0.5 * (ps + pe)
    start_lim = end_lim = None
    lost = 0.0
    clipped = counts > 0
    if np.any(clipped):
        lost = float(np.median(counts[clipped] / np.maximum(r1 - r0, 1)[clipped]))
        # clipped samples in a ramp's second half cut its end, in its first half its start
        m = np.ceil(mid).astype(np.int64)
        late = np.searchsorted(ci, m)
        has_late = clipped & (late < j1)
        early = late - 1
        has_early = clipped & (early >= j0)
        if np.any(has_late):
            f = ci[late[has_late]]
            end_lim = float(np.min((f - 1 - ps[has_late]) * dt))
        if np.any(has_early):
            e = ci[early[has_early]]
            start_lim = float(np.max((e + 1 - ps[has_early]) * dt))
    return ClipWindow(start_lim, end_lim, lost, start_lim is not None, end_lim is not None)
