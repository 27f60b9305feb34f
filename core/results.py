"""Typed, frozen results of every step, each with ``to_dict()`` of plain JSON types.

All quantities are SI: seconds, volts, hertz, volts per second. Percentages
carry ``_pct`` in their name.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from collections.abc import Sequence
from typing import Any

import numpy as np

from .errors import TrueslopeWarning
from .jsonable import ToDict
from .settings import Settings


@dataclass(frozen=True)
class LineFit(ToDict):
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
class StateLevels(ToDict):
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
class Segmentation(ToDict):
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
    spike_samples : ndarray of int
        Isolated spikes found (sample indices), kept out of segmentation and fits.
    clipped_top_v, clipped_bottom_v : float or None
        Where the record is clipped (true polarity), or None.
    unsteady_start_s, unsteady_end_s : (float, float) or None
        A start (power-up, settling) or end (generator switched off) left out
        because the waveform there is not the steady one: its time span.
    noise_rms_v, adc_step_v : float or None
        The record's sample noise and ADC step as segmentation found them (not measured again).
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
    spike_samples: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    clipped_top_v: float | None = None
    clipped_bottom_v: float | None = None
    unsteady_start_s: tuple[float, float] | None = None
    unsteady_end_s: tuple[float, float] | None = None
    noise_rms_v: float | None = None
    adc_step_v: float | None = None

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
class CycleFigures(ToDict):
    """Figures of one full cycle, fitted alone (includes its noise); ``outlier`` and
    ``excluded`` (left out by hand) cycles are not in the average."""

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
    excluded: bool = False


@dataclass(frozen=True)
class AveragedCycle(ToDict):
    """All full cycles averaged coherently, aligned on their reset edges.

    Points are phase bins of the ramp (ramp start = 0), placed in time by the
    mean ramp time. ``voltage_v`` has the true polarity; the residuals are in
    the measurement frame (mirrored for a falling ramp, so that the same
    physics gives the same sign).

    ``time_s`` bin centres (seconds from the ramp start); ``voltage_v`` the mean
    voltage in each bin, ``stderr_v`` its standard error, ``count`` the samples in
    it; ``in_window`` the bins inside the fit window (``window_start_s`` to
    ``window_end_s``); ``residual_v`` the averaged voltage minus the best-fit line
    ``fit`` (measurement frame, time from the ramp start), ``smoothed_residual_v``
    its systematic part, ``terminal_residual_v`` the same against the end-point
    line; ``ramp_time_s`` the mean ramp time the phase is scaled by; ``mirrored``
    True for a falling ramp. The ``*_true_v`` properties give the residuals as
    trace minus line in true volts, for display.
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

    @property
    def residual_true_v(self) -> np.ndarray:
        """Trace minus line in true volts (the residual un-mirrored)."""
        return -self.residual_v if self.mirrored else self.residual_v

    @property
    def smoothed_residual_true_v(self) -> np.ndarray:
        """The systematic residual, trace minus line in true volts."""
        return -self.smoothed_residual_v if self.mirrored else self.smoothed_residual_v


@dataclass(frozen=True)
class NoiseFloor(ToDict):
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
        Smallest nonlinearity this capture resolves (4 sigma of the smoothed
        averaged residual, as % of the fitted span).
    """

    noise_rms_v: float
    adc_step_v: float | None
    averaged_noise_rms_v: float
    nonlinearity_floor_pct: float


@dataclass(frozen=True)
class Figures(ToDict):
    """Summary figures of the capture, from the averaged cycle.

    See the README section "Measurement definitions" for every convention.
    ``bounds`` names the figures that touch clipped samples: bounds, not values.
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
    bounds: tuple[str, ...] = ()




@dataclass(frozen=True)
class CycleArrays:
    """Per-cycle figures of the kernel pass, one array entry per full cycle, in the
    measurement frame (mirrored for a falling ramp); turned into
    :class:`CycleFigures` in true polarity by ``linearity.build_cycles``.

    Ramp start (absolute) and duration; the least-squares line over the
    cycle's window (intercept at the ramp start) with its slope's OLS standard
    error and degrees of freedom; the largest |residual| against the best-fit
    and the terminal line and each line's rise across the window; the start
    and end levels (local means moved along the slope); the residual sum of
    squares (V^2) and the samples in the window.
    """

    ramp_start_s: np.ndarray
    ramp_time_s: np.ndarray
    slope_v_per_s: np.ndarray
    intercept_v: np.ndarray
    slope_stderr_v_per_s: np.ndarray
    dof: np.ndarray
    peak_deviation_v: np.ndarray
    terminal_peak_v: np.ndarray
    fitted_span_v: np.ndarray
    terminal_span_v: np.ndarray
    start_v: np.ndarray
    end_v: np.ndarray
    ssr_v2: np.ndarray
    window_samples: np.ndarray


@dataclass(frozen=True)
class PhaseSums:
    """Sums over every ramp sample, binned by phase ``u = (t - ramp start) / ramp time``.
    One entry per phase bin, added to block by block: the count of samples,
    the sums of u, of the samples (measurement frame), of their residuals
    about their own cycle's line, and of the squared residuals; and the count, the
    sum of u and of the samples per bin in each of a few interleaved groups of cycles.
    """

    count: np.ndarray
    phase: np.ndarray
    voltage_v: np.ndarray
    residual_v: np.ndarray
    residual_sq_v2: np.ndarray
    group_count: np.ndarray | None = None
    group_voltage_v: np.ndarray | None = None
    group_phase: np.ndarray | None = None


@dataclass(frozen=True)
class SweepErrors(ToDict):
    """Sweep (time-base) errors of the smoothed averaged ramp over the fit window.

    Definitions: SOURCES.md [sweep]; measurement frame.

    ``start_slope_v_per_s`` and ``end_slope_v_per_s`` are v'(a) and v'(b);
    slope error ``100 (v'(a) - v'(b)) / v'(a)``; displacement error 100 x the
    deviation from the chord at its largest / swing (positive when the ramp
    bows above the chord); transmission error ``100 (v'(a) T - swing) /
    (v'(a) T)``; ``midpoint_time_error_s`` how late (+) the ramp crosses the
    window's mid level against the chord.
    """

    start_slope_v_per_s: float
    end_slope_v_per_s: float
    slope_error_pct: float
    displacement_error_pct: float
    transmission_error_pct: float
    midpoint_time_error_s: float


@dataclass(frozen=True)
class ShapeDescription(ToDict):
    """What an unexplained shape looks like, in numbers (the words are the report's).

    ``kind`` is ``"bow"`` (one bend), ``"s-bend"`` (the curvature changes
    sign) or ``"wavy"`` (with about ``bumps`` bumps); ``peak_pct`` the largest
    deviation from the best-fit line, % of the span; the ``*_fraction``
    fields say where along the ramp (0 = start, 1 = end; for
    ``peak_in_window_fraction``, along the fit window) the deviation peaks
    and the slope is steepest and flattest.
    """

    kind: str
    bumps: int
    peak_pct: float
    peak_at_fraction: float
    steepest_at_fraction: float
    flattest_at_fraction: float
    peak_in_window_fraction: float


@dataclass(frozen=True)
class Diagnosis(ToDict):
    """What the shape of the averaged ramp says about its cause (``report`` words it).

    Attributes
    ----------
    signature, reason : str
        ``"linear"``, ``"shunt-loading"``, ``"voltage-coefficient"``,
        ``"dielectric-absorption"`` or ``"unclassified"``; why: for ``linear``
        ``"no-clear-margin"`` or ``"below-resolution"``, for ``unclassified``
        ``"relaxation-low"`` (slope starting low), ``"no-model-fits"``,
        ``"not-measurable"`` or ``"fit-failed"``, else empty.
    strength, curvature : float, str
        Peak deviation of the chosen model from the best-fit line over the
        resolution floor (below 1: not above the noise); ``"concave"`` (slope
        falling along the ramp), ``"convex"`` or ``"none"``.
    tau_s, tau_fraction, equivalent_shunt_ohm, probe_match : float or None, str
        Time constant (``R C`` of a shunt; relaxation time of absorption or of a
        slope starting low), s; over the ramp time; ``tau_s / (C + C_probe)`` for
        a shunt when C is known, and what it looks like (``circuit.probe_match``).
    voltage_coefficient_per_v, vc_form : float or None, str or None
        Fractional change of the slope per volt at the ramp start, 1/V; which
        form: ``"exp"`` (current rising with V), ``"sqrt"`` (C falling with V),
        ``"undecided"`` between those, ``"growing"`` (C growing with V, concave).
    slope_change_pct, bow_pct, floor_pct : float or None
        The shunt's slope fall across the window; the model's largest distance
        from the line; the resolution floor used; % (of the fitted span).
    closest_cause, closest_cause_pct : str or None, float or None
        For ``linear``: the nearest cause and how far it would bend the ramp;
        for ``unclassified``: the nearest and what it leaves; % of the span.
    shape, window_points, model_scores, evidence : ShapeDescription or None, int, ...
        For ``unclassified`` with no model: the shape in numbers; bins fitted; BIC
        of every model (lower is better); the line's minus the best curved's.
    unexplained_pct : float or None
        The peak systematic residual the winner leaves, % of the span.
    also_consistent, also_tau_s, also_voltage_coefficient_per_v : tuple, float or None
        Other causes explaining the shape with a BIC within ``diagnose.BIC_MARGIN``
        of the signature's, likeliest first; such a cause's time constant (shunt
        ``R C`` or absorption), s, or voltage coefficient as above, 1/V.
    """

    signature: str
    reason: str
    strength: float
    curvature: str
    tau_s: float | None = None
    tau_fraction: float | None = None
    equivalent_shunt_ohm: float | None = None
    probe_match: str = "none"
    voltage_coefficient_per_v: float | None = None
    vc_form: str | None = None
    slope_change_pct: float | None = None
    bow_pct: float | None = None
    floor_pct: float = float("nan")
    closest_cause: str | None = None
    closest_cause_pct: float | None = None
    shape: ShapeDescription | None = None
    window_points: int = 0
    model_scores: dict[str, float] = field(default_factory=dict)
    evidence: float = 0.0
    unexplained_pct: float | None = None
    also_consistent: tuple[str, ...] = ()
    also_tau_s: float | None = None
    also_voltage_coefficient_per_v: float | None = None


@dataclass(frozen=True)
class CheckItem(ToDict):
    """One figure the stated parts predict, beside the one measured.
    ``name`` is one of slope, ramp time, period, frequency, equivalent shunt,
    nonlinearity, implied current, implied capacitance; ``expected`` and
    ``measured`` are in ``unit`` (SI; None where unknown); ``verdict`` is
    "within tolerance", "outside" or "not checked"; ``deviation_pct`` is
    ``100 (measured - expected) / expected``; ``causes`` are the codes of the
    likely causes when outside (what it is, when not checked), worded by ``report``;
    ``basis`` says what ``expected`` is: "predicted" by the parts, or the "stated probe".
    """

    name: str
    expected: float | None
    measured: float | None
    unit: str
    verdict: str
    deviation_pct: float | None
    causes: tuple[str, ...] = ()
    basis: str = "predicted"


@dataclass(frozen=True)
class ContextCheck(ToDict):
    """The self-check: the stated circuit against the capture.
    Attributes
    ----------
    items : tuple of CheckItem
    tolerance_frac : float
        Tolerance of the stated values.
    equivalent_shunt_ohm : float or None
        The shunt found in the ramp's shape with the stated capacitance.
    probe_match : str
        What that shunt looks like (:func:`trueslope.core.circuit.probe_match`).
    probe_predicted_nonlinearity_pct : float or None
        Least-squares nonlinearity the stated probe alone would cause over the
        fit window (None without a probe resistance and a capacitance).
    measured_nonlinearity_pct : float
    bow_resolved : bool
        The measured nonlinearity is above the resolution floor.
    probe_explains_bow : bool
        A bow is resolved and the stated probe predicts it.
    """

    items: tuple[CheckItem, ...]
    tolerance_frac: float
    equivalent_shunt_ohm: float | None
    probe_match: str
    probe_predicted_nonlinearity_pct: float | None
    measured_nonlinearity_pct: float
    bow_resolved: bool
    probe_explains_bow: bool


@dataclass(frozen=True)
class Analysis:
    """Everything measured on one channel of one capture (``report.analysis_document``
    turns it into the JSON document of ``--json`` and the window's export)."""

    source: str
    channel: str
    samples: int
    sample_interval_s: float
    settings: Settings
    segmentation: Segmentation
    figures: Figures
    cycles: Sequence[CycleFigures]  # a percycle.CycleList: records built when read
    averaged: AveragedCycle
    noise: NoiseFloor
    diagnosis: Diagnosis
    context_check: ContextCheck | None = None
    warnings: tuple[TrueslopeWarning, ...] = ()
    metadata: dict[str, str] = field(default_factory=dict)
