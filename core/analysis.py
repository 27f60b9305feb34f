"""The pipeline's entry point: ``analyse(capture, settings) -> Analysis``.

Calls only, one module per step::

    segment.segment (spikes bridged, clipping noted) -> fit.cycle_pass
    -> steady.steady_state (an unsteady start or end left out)
    -> linearity.build_cycles (outliers marked) -> fit.cycle_pass over the cycles left
    out, their sums taken away -> linearity.average_cycle -> linearity.sweep_errors -> linearity.summarise
    -> diagnose.diagnose -> selfcheck.check_context
"""

from __future__ import annotations

import dataclasses
import math
import warnings
from pathlib import Path

import numpy as np

from .artefacts import without_spikes
from .capture import (MAX_ABS_VOLTS, SAMPLE_INTERVAL_RANGE_S, CancelFn, Capture, ProgressFn,
                      stop_if_cancelled)
from .diagnose import diagnose
from .errors import (AnalysisError, Cancelled, NoFullCycleError, NotASawtoothError,
                     TrueslopeError, TrueslopeWarning)
from .fit import cycle_pass, without
from .linearity import average_cycle, build_cycles, floor_groups, summarise, sweep_errors
from .noise import adc_step, estimate_noise_rms
from .results import Analysis, Figures, Segmentation
from .segment import segment
from .selfcheck import check_context
from .settings import Settings
from .steady import ClipWindow, clip_window, steady_state, subset, subset_cycles
from .units import format_si

#: Most phase bins of the averaged cycle.
MAX_PHASE_BINS = 2000
#: Share of the progress bar taken by reading the file in :func:`load_and_analyse`.
LOAD_SHARE = 0.5


def _pick_channel(capture: Capture, settings: Settings, cancel: CancelFn | None
                  ) -> tuple[str, np.ndarray, Segmentation | None]:
    """The requested channel, or the first non-time column that holds a sawtooth."""
    if settings.channel is not None:
        name, v = capture.channel(settings.channel)
        _check_ranges(capture, v)
        return name, v, None
    skip = set()
    if settings.sync_channel is not None:
        skip.add(capture.channel(settings.sync_channel)[0])
    first_error: Exception | None = None
    for name in capture.channel_names:
        if name in skip:
            continue
        stop_if_cancelled(cancel)
        v = capture.channels[name]
        _check_ranges(capture, v)
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


def _times(times_s: np.ndarray, most: int = 5) -> str:
    shown = ", ".join(format_si(float(t), "s", 4) for t in times_s[:most])
    return shown + (f" and {times_s.size - most} more" if times_s.size > most else "")


def _warnings(capture: Capture, seg: Segmentation, figures: Figures, n_out: int,
              left_out: bool, clip: ClipWindow | None, settings: Settings,
              shortest_ramp_s: float, by_hand: int = 0) -> tuple[TrueslopeWarning, ...]:
    """The warnings of an analysis, each with its code from ``errors.WARNING_CODES``."""
    out = list(capture.warnings)
    nl, floor = figures.nonlinearity_pct, figures.nonlinearity_floor_pct
    t0 = capture.t0_s
    if seg.unsteady_start_s is not None:
        a, b = seg.unsteady_start_s
        out.append(TrueslopeWarning(
            "unsteady-start", f"the record starts before the ramp is steady (a power-up or a "
                              f"probe settling): {format_si(a, 's', 4)} to {format_si(b, 's', 4)} "
                              f"was left out"))
    if seg.unsteady_end_s is not None:
        a, b = seg.unsteady_end_s
        out.append(TrueslopeWarning(
            "unsteady-end", f"the record ends after the ramp stops being steady (the "
                            f"generator switched off or changed): {format_si(a, 's', 4)} to "
                            f"{format_si(b, 's', 4)} was left out"))
    if seg.spike_samples.size:
        times = t0 + seg.spike_samples * capture.sample_interval_s
        out.append(TrueslopeWarning(
            "glitches", f"{seg.spike_samples.size} isolated spike sample(s) at {_times(times)} "
                        f"(interference?) were bridged: they make no reset and are kept out "
                        f"of the fits"))
    if clip is not None:
        level = seg.clipped_top_v if seg.clipped_top_v is not None else seg.clipped_bottom_v
        out.append(TrueslopeWarning(
            "clipped", f"the record is clipped at {format_si(level or 0.0, 'V', 4)} (the "
                       f"scope's range is too small): about {100 * clip.lost_fraction:.3g} % "
                       f"of each ramp is lost; the fit window runs "
                       f"{format_si(figures.window_start_s, 's', 4)} to "
                       f"{format_si(figures.window_end_s, 's', 4)} from the ramp start so no "
                       f"clipped sample is fitted, and {', '.join(figures.bounds)} are bounds, "
                       f"not values"))
    if settings.window_s is not None and settings.window_s[1] > shortest_ramp_s:
        out.append(TrueslopeWarning(
            "window-clipped", f"the fit window asked for ends at "
                              f"{format_si(settings.window_s[1], 's', 4)}, past the end of the "
                              f"shortest ramp ({format_si(shortest_ramp_s, 's', 4)}): each ramp "
                              f"is fitted up to its own end"))
    if nl < floor:
        out.append(TrueslopeWarning(
            "below-resolution",
            f"the nonlinearity ({nl:.3g} %) is below what this capture can resolve "
            f"({floor:.3g} %): the ramp is straight to within the noise"))
    if seg.full_cycles == 1:
        out.append(TrueslopeWarning(
            "single-cycle", "only one full cycle: there is no spread between cycles to "
                            "estimate, so the slope's interval is the least-squares one of that "
                            "cycle, no cycle can be judged an outlier, and the resolution floor "
                            "rests on the sample-to-sample noise alone"))
    elif seg.full_cycles < 3:
        out.append(TrueslopeWarning(
            "few-cycles", f"only {seg.full_cycles} full cycles: figures rest on little data"))
    if by_hand:
        out.append(TrueslopeWarning(
            "excluded-cycles", f"{by_hand} cycle(s) left out of the averaged figures by hand "
                               f"(marked in the cycle list)"))
    if n_out:
        out.append(TrueslopeWarning(
            "outlying-cycles", f"{n_out} cycle(s) differ markedly from the rest (marked in "
                               f"the cycle list)"
                               + (" and are left out of the averaged figures" if left_out else "")))
    return tuple(out)


def _check_ranges(capture: Capture, v: np.ndarray) -> None:
    """Refuse samples and intervals outside any bench's range (see ``capture``)."""
    lo_dt, hi_dt = SAMPLE_INTERVAL_RANGE_S
    dt = capture.sample_interval_s
    if not (math.isfinite(dt) and lo_dt <= dt <= hi_dt):
        raise AnalysisError(f"the sample interval, {dt:.4g} s, is outside any bench's range "
                            f"({lo_dt:g} s to {hi_dt:g} s): check the time column or the "
                            f"interval given")
    # two reductions, no whole-record temporaries: a NaN makes both NaN, an infinity one
    lo, hi = (float(np.min(v)), float(np.max(v))) if v.size else (0.0, 0.0)
    if not (math.isfinite(lo) and math.isfinite(hi)):
        raise AnalysisError("the channel holds samples that are not finite numbers")
    peak = max(abs(lo), abs(hi))
    if peak > MAX_ABS_VOLTS:
        raise AnalysisError(f"a sample of {peak:.4g} V is outside any bench's range (within "
                            f"{MAX_ABS_VOLTS:g} V of zero): check the column's unit or the "
                            f"probe's scaling")


#: Figures that must be finite numbers for a result to be reported at all.
_HEADLINE = ("frequency_hz", "period_s", "ramp_time_s", "slope_v_per_s", "start_v", "end_v",
             "amplitude_v", "nonlinearity_pct", "nonlinearity_floor_pct")


def _named(exc: TrueslopeError, source: str) -> TrueslopeError:
    """The same refusal, its message starting with the file's name."""
    name = Path(source).name
    text = str(exc)
    if not name or text.startswith(name):
        return exc
    try:
        return type(exc)(f"{name}: {text}")
    except TypeError:  # an error class with other arguments: leave it as it was
        return exc


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
        Its headline figures are always finite numbers.

    Raises
    ------
    NotASawtoothError, NoFullCycleError, AnalysisError, ChannelNotFoundError, Cancelled
        Every message starts with the capture's file name.
    """
    try:
        with np.errstate(all="ignore"), warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            result = _analyse(capture, settings or Settings(), progress, cancel)
    except Cancelled:
        raise
    except TrueslopeError as exc:
        raise _named(exc, capture.source) from None
    except (ArithmeticError, ValueError, np.linalg.LinAlgError) as exc:
        # a numeric breakdown on a record the checks let through: a refusal, not a crash
        raise AnalysisError(f"{Path(capture.source).name}: the record cannot be measured "
                            f"(the computation broke down: {type(exc).__name__})") from None
    bad = [k for k in _HEADLINE if not math.isfinite(getattr(result.figures, k))]
    if bad:
        raise AnalysisError(f"{Path(capture.source).name}: the record cannot be measured: "
                            f"{', '.join(bad)} came out as no finite number")
    return result


def _analyse(capture: Capture, settings: Settings, progress: ProgressFn | None,
             cancel: CancelFn | None) -> Analysis:
    """The measurement itself, without :func:`analyse`'s guards (numpy quiet, the file
    named in every refusal, finite headline figures)."""
    report = progress or (lambda f: None)
    report(0.0)
    name, v, seg = _pick_channel(capture, settings, cancel)
    dt, t0 = capture.sample_interval_s, capture.t0_s
    if settings.sync_channel is not None:
        seg = segment(v, dt, t0, sync=capture.channel(settings.sync_channel)[1])
    elif seg is None:
        seg = segment(v, dt, t0)
    report(0.15)
    mirrored = seg.direction == "falling"
    clean = without_spikes(np.asarray(v, dtype=float), seg.spike_samples)
    x = -clean if mirrored else clean
    clip = None
    clipped_at = [c for c in (seg.clipped_top_v, seg.clipped_bottom_v) if c is not None]
    if clipped_at:
        mask = np.zeros(clean.size, dtype=bool)
        for level in clipped_at:
            mask |= np.abs(clean - level) <= 1e-12 * max(1.0, abs(level))
        clip = clip_window(mask, seg, dt, t0)
    limits = None if clip is None else (clip.start_limit_s, clip.end_limit_s)
    if settings.window_s is not None and settings.window_s[0] >= float(np.min(seg.ramp_time_s)):
        raise AnalysisError(
            f"the fit window starts at {settings.window_s[0]:.4g} s, after the end of the "
            f"shortest ramp ({np.min(seg.ramp_time_s):.4g} s)")
    bins = phase_bins_for(float(np.mean(seg.ramp_time_s)) / dt, settings)
    trim, window = settings.trim_fraction, settings.window_s

    def kernel(s: Segmentation, lo: float, span: float, member: np.ndarray | None = None):
        return cycle_pass(x, dt, t0, s, trim, window, bins, limits_s=limits, cancel=cancel,
                          progress=lambda f: report(lo + span * f), groups=groups,
                          member=member)

    seg_all = seg
    n_all = seg.ramp_start_s.size
    groups = floor_groups(n_all)
    cyc, sums = kernel(seg, 0.15, 0.6)
    # the raw record's noise is the measurement frame's unless spikes were bridged (a
    # mirror changes no difference's size); its ADC step is the same samples'
    noise_v = seg.noise_rms_v
    if noise_v is None or seg.spike_samples.size:
        noise_v = estimate_noise_rms(x)
    step = seg.adc_step_v if seg.noise_rms_v is not None else adc_step(v)
    steady = steady_state(x, dt, t0, seg, cyc, noise_v, step)
    seg = dataclasses.replace(subset(seg, steady.keep), unsteady_start_s=steady.start_s,
                              unsteady_end_s=steady.end_s)
    cyc_all = subset_cycles(cyc, steady.keep)
    cycles = build_cycles(cyc_all, seg, -1.0 if mirrored else 1.0, dt)
    keep = ~cycles.outlier
    n_out = int(np.count_nonzero(~keep))
    if not (n_out and np.count_nonzero(keep) >= 2):
        keep = np.ones(len(cycles), dtype=bool)
    by_hand = np.zeros(len(cycles), dtype=bool)
    by_hand[[i for i in settings.excluded_cycles if i < len(cycles)]] = True
    if np.any(by_hand):
        if np.count_nonzero(keep & ~by_hand) < 1:
            raise AnalysisError("every cycle is left out: keep at least one")
        keep &= ~by_hand
        cycles = cycles.with_excluded(by_hand)
    kept = np.flatnonzero(steady.keep)[keep]  # places in the whole record's list
    if kept.size < n_all:
        # outlying cycles (a false trigger, a glitch) and unsteady ones would bend the
        # coherent average: average the others; outliers stay in the cycle list, marked.
        # Each cycle's sums are its own, so the few left out are summed again and taken
        # away (each keeps its group, so the groups stay interleaved across the record)
        gone = np.ones(n_all, dtype=bool)
        gone[kept] = False
        part = gone if np.count_nonzero(gone) <= kept.size else ~gone
        sub = dataclasses.replace(seg_all, ramp_start_s=seg_all.ramp_start_s[part],
                                  ramp_end_s=seg_all.ramp_end_s[part],
                                  retrace_end_s=seg_all.retrace_end_s[part])
        _, some = kernel(sub, 0.75, 0.15, np.flatnonzero(part) % groups)
        sums = without(sums, some) if part is gone else some
        if floor_groups(kept.size) == 1:
            sums = dataclasses.replace(sums, group_count=None, group_voltage_v=None,
                                       group_phase=None)
    cyc = subset_cycles(cyc_all, keep)
    av, noise = average_cycle(sums, float(np.mean(seg.ramp_time_s[keep])), trim, window,
                              mirrored, noise_v, step, limits_s=limits)
    bounds: tuple[str, ...] = ()
    if clip is not None:
        bounds = (("start_v",) if clip.at_start else ()) + (("end_v",) if clip.at_end else ()) \
            + ("amplitude_v", "ramp_time_s")
    figures = summarise(seg, keep, cyc, av, noise, sweep_errors(av), trim, bounds)
    diagnosis = diagnose(av, figures, noise, settings.context)
    context_check = (check_context(figures, diagnosis, settings.context)
                     if settings.context is not None else None)
    report(1.0)
    warnings = _warnings(capture, seg, figures, n_out,
                         bool(np.count_nonzero(keep | by_hand) < len(cycles)), clip, settings,
                         float(np.min(seg.ramp_time_s)), int(np.count_nonzero(by_hand)))
    return Analysis(source=capture.source, channel=name, samples=capture.samples,
                    sample_interval_s=dt, settings=settings, segmentation=seg,
                    figures=figures, cycles=cycles, averaged=av, noise=noise,
                    diagnosis=diagnosis, context_check=context_check,
                    warnings=warnings, metadata=dict(capture.metadata))


def load_and_analyse(path: str | Path, settings: Settings | None = None,
                     sample_interval_s: float | None = None,
                     progress: ProgressFn | None = None, cancel: CancelFn | None = None
                     ) -> tuple[Capture, Analysis]:
    """Read a capture file and measure it; reading takes the first :data:`LOAD_SHARE`
    of the progress. Returns the capture (for drawing) and its analysis."""
    from .io import load_capture
    p = progress or (lambda f: None)
    cap = load_capture(path, sample_interval_s=sample_interval_s,
                       progress=lambda f: p(LOAD_SHARE * f), cancel=cancel)
    return cap, analyse(cap, settings, progress=lambda f: p(LOAD_SHARE + (1 - LOAD_SHARE) * f),
                        cancel=cancel)


def analyse_file(path: str | Path, settings: Settings | None = None,
                 sample_interval_s: float | None = None,
                 progress: ProgressFn | None = None, cancel: CancelFn | None = None) -> Analysis:
    """:func:`load_and_analyse` without the capture."""
    return load_and_analyse(path, settings, sample_interval_s, progress, cancel)[1]
