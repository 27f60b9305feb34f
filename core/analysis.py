"""The pipeline's entry point: ``analyse(capture, settings) -> Analysis``.

Calls only, one module per step::

    segment.segment -> fit.cycle_pass -> linearity.build_cycles (outliers marked)
    -> linearity.average_cycle -> linearity.sweep_errors -> linearity.summarise
    -> diagnose.diagnose -> selfcheck.check_context
"""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path

import numpy as np

from .capture import CancelFn, Capture, ProgressFn, stop_if_cancelled
from .diagnose import diagnose
from .errors import AnalysisError, NoFullCycleError, NotASawtoothError, TrueslopeWarning
from .fit import cycle_pass
from .linearity import average_cycle, build_cycles, summarise, sweep_errors
from .noise import adc_step, estimate_noise_rms
from .results import Analysis, Segmentation
from .segment import segment
from .selfcheck import check_context
from .settings import Settings

#: Most phase bins of the averaged cycle.
MAX_PHASE_BINS = 2000
#: Share of the progress bar taken by reading the file in :func:`load_and_analyse`.
LOAD_SHARE = 0.5


def _pick_channel(capture: Capture, settings: Settings, cancel: CancelFn | None
                  ) -> tuple[str, np.ndarray, Segmentation | None]:
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
        stop_if_cancelled(cancel)
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


def _warnings(capture: Capture, seg: Segmentation, nl: float, floor: float, n_out: int,
              left_out: bool) -> tuple[TrueslopeWarning, ...]:
    out = list(capture.warnings)
    if nl < floor:
        out.append(TrueslopeWarning(
            "below-resolution",
            f"the nonlinearity ({nl:.3g} %) is below what this capture can resolve "
            f"({floor:.3g} %): the ramp is straight to within the noise"))
    if seg.full_cycles < 3:
        out.append(TrueslopeWarning(
            "few-cycles", f"only {seg.full_cycles} full cycle(s): figures rest on little data"))
    if n_out:
        out.append(TrueslopeWarning(
            "outlying-cycles", f"{n_out} cycle(s) differ markedly from the rest (marked in "
                               f"the cycle list)"
                               + (" and are left out of the averaged figures" if left_out else "")))
    return tuple(out)


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
    dt, t0 = capture.sample_interval_s, capture.t0_s
    if settings.sync_channel is not None:
        seg = segment(v, dt, t0, sync=capture.channel(settings.sync_channel)[1])
    elif seg is None:
        seg = segment(v, dt, t0)
    report(0.15)
    mirrored = seg.direction == "falling"
    x = -v if mirrored else v
    if settings.window_s is not None and settings.window_s[0] >= float(np.min(seg.ramp_time_s)):
        raise AnalysisError(
            f"the fit window starts at {settings.window_s[0]:.4g} s, after the end of the "
            f"shortest ramp ({np.min(seg.ramp_time_s):.4g} s)")
    bins = phase_bins_for(float(np.mean(seg.ramp_time_s)) / dt, settings)
    trim, window = settings.trim_fraction, settings.window_s
    cyc, sums = cycle_pass(x, dt, t0, seg, trim, window, bins,
                           progress=lambda f: report(0.15 + 0.7 * f), cancel=cancel)
    cycles = build_cycles(cyc, seg, -1.0 if mirrored else 1.0)
    keep = ~np.array([c.outlier for c in cycles], dtype=bool)
    n_out = int(np.count_nonzero(~keep))
    if n_out and np.count_nonzero(keep) >= 2:
        # an outlying cycle (a false trigger, a glitch) would bend the coherent average:
        # average the others; every cycle stays in the cycle list, marked
        sub = dataclasses.replace(seg, ramp_start_s=seg.ramp_start_s[keep],
                                  ramp_end_s=seg.ramp_end_s[keep],
                                  retrace_end_s=seg.retrace_end_s[keep])
        cyc, sums = cycle_pass(x, dt, t0, sub, trim, window, bins,
                               progress=lambda f: report(0.85 + 0.05 * f), cancel=cancel)
    else:
        keep = np.ones(len(cycles), dtype=bool)
    av, noise = average_cycle(sums, float(np.mean(seg.ramp_time_s[keep])), trim, window,
                              mirrored, estimate_noise_rms(x), adc_step(v))
    figures = summarise(seg, keep, cyc, av, noise, sweep_errors(av), trim)
    diagnosis = diagnose(av, figures, noise, settings.context)
    context_check = (check_context(figures, diagnosis, settings.context)
                     if settings.context is not None else None)
    report(1.0)
    return Analysis(source=capture.source, channel=name, samples=capture.samples,
                    sample_interval_s=dt, settings=settings, segmentation=seg,
                    figures=figures, cycles=cycles, averaged=av, noise=noise,
                    diagnosis=diagnosis, context_check=context_check,
                    warnings=_warnings(capture, seg, figures.nonlinearity_pct,
                                       noise.nonlinearity_floor_pct, n_out,
                                       bool(np.count_nonzero(keep) < len(cycles))),
                    metadata=dict(capture.metadata))


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
