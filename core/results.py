"""Typed, frozen results of every step, each with ``to_dict()`` of plain JSON types.

All quantities are SI: seconds, volts, hertz, volts per second. Percentages
carry ``_pct`` in their name.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, fields
from typing import Any

import numpy as np

from .errors import TrueslopeWarning


def _plain(value: Any) -> Any:
    """Convert numpy scalars/arrays, tuples and NaN to plain JSON types."""
    if isinstance(value, np.ndarray):
        return [_plain(v) for v in value.tolist()]
    if isinstance(value, (np.floating, float)):
        f = float(value)
        return None if not math.isfinite(f) else f
    if isinstance(value, (np.integer,)):
        return int(value)
    if isinstance(value, (np.bool_,)):
        return bool(value)
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, dict):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, TrueslopeWarning):
        return str(value)
    if hasattr(value, "to_dict"):
        return value.to_dict()
    return value


class _ToDict:
    def to_dict(self) -> dict[str, Any]:
        return {f.name: _plain(getattr(self, f.name)) for f in fields(self)}  # type: ignore[arg-type]


@dataclass(frozen=True)
class LineFit(_ToDict):
    """Least-squares straight line ``v = intercept_v + slope_v_per_s * t``.

    Attributes
    ----------
    slope_v_per_s, intercept_v : float
        Fitted slope and the line's value at ``t = 0`` of the fit's time axis.
    slope_stderr_v_per_s, intercept_stderr_v : float
        Ordinary-least-squares standard errors.
    slope_ci95_v_per_s : (float, float)
        95 % confidence interval of the slope (Student t, n - 2 dof).
    residual_rms_v : float
        Root-mean-square residual (divided by n, not n - 2).
    n : int
        Number of points fitted.
    """

    slope_v_per_s: float
    intercept_v: float
    slope_stderr_v_per_s: float
    intercept_stderr_v: float
    slope_ci95_v_per_s: tuple[float, float]
    residual_rms_v: float
    n: int

    def at(self, t_s: Any) -> Any:
        """Value of the line at time(s) ``t_s``, volts."""
        return self.intercept_v + self.slope_v_per_s * np.asarray(t_s, dtype=float)


@dataclass(frozen=True)
class StateLevels(_ToDict):
    """Low and high state levels (IEEE Std 181 histogram method) and thresholds."""

    low_v: float
    high_v: float
    method: str
    lower_threshold_v: float
    upper_threshold_v: float

    @property
    def amplitude_v(self) -> float:
        return self.high_v - self.low_v


@dataclass(frozen=True)
class Segmentation(_ToDict):
    """Where the full cycles of a sawtooth lie in the record.

    Per-cycle arrays have one entry per full cycle; times are absolute, seconds.

    Attributes
    ----------
    direction : str
        ``"rising"`` (slow rise, fast reset downwards) or ``"falling"``.
    levels : StateLevels
        State levels of the ramp channel.
    reset_times_s : ndarray
        Mid-level crossing of every reset edge found, fraction-of-a-sample timing.
    ramp_start_s, ramp_end_s : ndarray
        Start and end of each full cycle's ramp segment.
    retrace_end_s : ndarray
        End of the retrace that follows each ramp (start of the next ramp).
    full_cycles, partial_cycles : int
        Counts; partial cycles at the ends of the record are left out.
    source : str
        ``"signal"`` or ``"sync"``: what the reset edges came from.
    """

    direction: str
    levels: StateLevels
    reset_times_s: np.ndarray
    ramp_start_s: np.ndarray
    ramp_end_s: np.ndarray
    retrace_end_s: np.ndarray
    full_cycles: int
    partial_cycles: int
    source: str = "signal"

    @property
    def ramp_time_s(self) -> np.ndarray:
        return self.ramp_end_s - self.ramp_start_s

    @property
    def retrace_time_s(self) -> np.ndarray:
        return self.retrace_end_s - self.ramp_end_s

    @property
    def period_s(self) -> np.ndarray:
        return self.retrace_end_s - self.ramp_start_s


@dataclass(frozen=True)
class CycleFigures(_ToDict):
    """Figures of one full cycle, fitted alone (includes its noise)."""

    index: int
    ramp_start_s: float
    ramp_time_s: float
    retrace_time_s: float
    period_s: float
    offset_v: float
    start_v: float
    end_v: float
    amplitude_v: float
    slope_v_per_s: float
    slope_ci95_v_per_s: tuple[float, float]
    peak_deviation_v: float
    nonlinearity_pct: float
    terminal_nonlinearity_pct: float
    residual_rms_v: float
    outlier: bool = False


@dataclass(frozen=True)
class AveragedCycle(_ToDict):
    """All full cycles averaged coherently, aligned on their reset edges.

    Points are phase bins of the ramp (ramp start = 0), placed in time by the
    mean ramp time. ``voltage_v`` has the true polarity; the residuals are in
    the measurement frame (mirrored for a falling ramp, so that the same
    physics gives the same sign).

    Attributes
    ----------
    time_s : ndarray
        Bin centre, seconds from the ramp start.
    voltage_v : ndarray
        Mean voltage in the bin.
    stderr_v : ndarray
        Standard error of that mean (noise of the bin / sqrt(count)).
    count : ndarray
        Samples averaged in the bin.
    in_window : ndarray of bool
        Bins inside the fit window.
    residual_v : ndarray
        Averaged voltage minus the best-fit line (measurement frame).
    smoothed_residual_v : ndarray
        The systematic part of ``residual_v`` (noise smoothed away).
    terminal_residual_v : ndarray
        Smoothed residual against the terminal line through the window's ends.
    ramp_time_s : float
        Mean ramp time the phase was scaled by.
    window_start_s, window_end_s : float
        Fit window, seconds from the ramp start.
    fit : LineFit
        Best-fit line over the window (measurement frame; time from ramp start).
    mirrored : bool
        True for a falling ramp.
    """

    time_s: np.ndarray
    voltage_v: np.ndarray
    stderr_v: np.ndarray
    count: np.ndarray
    in_window: np.ndarray
    residual_v: np.ndarray
    smoothed_residual_v: np.ndarray
    terminal_residual_v: np.ndarray
    ramp_time_s: float
    window_start_s: float
    window_end_s: float
    fit: LineFit
    mirrored: bool

    @property
    def measured_v(self) -> np.ndarray:
        """Averaged voltage in the measurement frame (mirrored when falling)."""
        return -self.voltage_v if self.mirrored else self.voltage_v


@dataclass(frozen=True)
class NoiseFloor(_ToDict):
    """What this capture can resolve.

    Attributes
    ----------
    noise_rms_v : float
        Random noise of one sample (quantisation included), volts RMS.
    adc_step_v : float or None
        Detected quantisation step; None when the samples are not on a grid.
    averaged_noise_rms_v : float
        Noise left on one point of the smoothed averaged residual.
    nonlinearity_floor_pct : float
        Smallest nonlinearity this capture resolves (3 sigma of the smoothed
        averaged residual, as % of the fitted span).
    """

    noise_rms_v: float
    adc_step_v: float | None
    averaged_noise_rms_v: float
    nonlinearity_floor_pct: float


@dataclass(frozen=True)
class Figures(_ToDict):
    """Summary figures of the capture, from the averaged cycle.

    See the README section "Measurement definitions" for every convention.
    """

    direction: str
    full_cycles: int
    partial_cycles: int
    frequency_hz: float
    period_s: float
    period_jitter_s: float
    ramp_time_s: float
    retrace_time_s: float
    offset_v: float
    start_v: float
    end_v: float
    amplitude_v: float
    slope_v_per_s: float
    slope_ci95_v_per_s: tuple[float, float]
    peak_deviation_v: float
    nonlinearity_pct: float
    terminal_nonlinearity_pct: float
    slope_error_pct: float
    displacement_error_pct: float
    transmission_error_pct: float
    midpoint_time_error_s: float
    midpoint_time_error_pct: float
    residual_rms_v: float
    noise_rms_v: float
    adc_step_v: float | None
    nonlinearity_floor_pct: float
    below_floor: bool
    trim_fraction: float
    window_start_s: float
    window_end_s: float
    fitted_span_v: float


@dataclass(frozen=True)
class Analysis:
    """Everything trueslope measured on one channel of one capture."""

    source: str
    channel: str
    samples: int
    sample_interval_s: float
    settings: Any  # Settings
    segmentation: Segmentation
    figures: Figures
    cycles: tuple[CycleFigures, ...]
    averaged: AveragedCycle
    noise: NoiseFloor
    diagnosis: Any = None  # trueslope.core.diagnose.Diagnosis
    context_check: Any = None  # trueslope.core.context.ContextCheck
    warnings: tuple[TrueslopeWarning, ...] = ()
    metadata: dict[str, str] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        """The flat JSON document of the command line's ``--json``."""
        d: dict[str, Any] = {
            "file": self.source,
            "channel": self.channel,
            "samples": self.samples,
            "sample_interval_s": self.sample_interval_s,
        }
        d.update(self.figures.to_dict())
        d["averaged_noise_rms_v"] = _plain(self.noise.averaged_noise_rms_v)
        d["segmentation_source"] = self.segmentation.source
        d["low_level_v"] = _plain(self.segmentation.levels.low_v)
        d["high_level_v"] = _plain(self.segmentation.levels.high_v)
        d["warnings"] = [str(w) for w in self.warnings]
        d["metadata"] = dict(self.metadata)
        d["diagnosis"] = None if self.diagnosis is None else self.diagnosis.to_dict()
        d["context_check"] = None if self.context_check is None else self.context_check.to_dict()
        d["cycles"] = [c.to_dict() for c in self.cycles]
        return d
