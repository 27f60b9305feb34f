"""What it would take: the circuit a target nonlinearity needs, and what a change would do.

From a measured ramp (its :class:`~.results.Figures` and :class:`~.results.Diagnosis`)
and what the user states of the circuit, the same physics the diagnosis fits
answers the practitioner's next question with numbers (``report.prose`` words them):

- :func:`requirements`: the smallest total shunt across the capacitor (or the
  smallest ``R C`` when the capacitance is not stated), the largest voltage
  coefficient, and the longest ramp time with the measured shunt, that keep the
  least-squares nonlinearity over the same fit window at a target;
- :func:`predict_change`: the ramp after a change of the shunt (e.g. a 10x probe
  in place of a 1x, a current source's output resistance), of the capacitance, or of
  the capacitor's dielectric (its typical absorption, ``whatif_absorption``): its
  nonlinearity, slope and curve;
- the largest absorption a dielectric may have for the target (``Requirements``).

Measurement frame throughout: a falling ramp is mirrored, as in ``selfcheck``.
Shunt: SOURCES.md [loading]; voltage coefficient: SOURCES.md [voltage-coefficient];
both solved for the target by Brent's method (``rootfind.brentq``) on a log scale (each
nonlinearity is monotone in its parameter).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .circuit import PREDICTION_POINTS, CircuitContext, predict_ramp
from .errors import AnalysisError
from .jsonable import ToDict
from .rootfind import brentq
from .results import Diagnosis, Figures
from . import whatif_absorption as wa
from .shapes import falling_capacitance

#: Target least-squares nonlinearity when none is given, %.
DEFAULT_TARGET_PCT = 0.1
#: Points of a predicted curve returned for drawing.
CURVE_POINTS = 201
_LOG_XTOL = 1e-13


@dataclass(frozen=True)
class Requirements(ToDict):
    """What keeps the least-squares nonlinearity over the fit window at the target.

    Attributes
    ----------
    target_nonlinearity_pct, measured_nonlinearity_pct : float
        The target and the measured nonlinearity, % of the fitted span.
    target_met : bool
        The measured nonlinearity is at or below the target.
    window_start_frac, window_end_frac : float
        The fit window, fractions of the ramp time.
    v0_v, v1_v : float
        The swing in the measurement frame (a falling ramp mirrored), volts.
    held : str
        What stays fixed as the shunt changes: ``"current"`` (stated) or
        ``"ramp-time"`` (the measured one).
    min_shunt_ohm : float or None
        Smallest total resistance across the capacitor (source output
        resistance, leakage and probe in parallel); None without a capacitance.
    min_time_constant_s : float
        Smallest ``R C`` (with the ramp time held, the same for any C).
    max_voltage_coefficient_per_v : float
        Largest ``beta`` of ``C = C0 (1 - beta V)`` at constant current over the swing, 1/V.
    measured_tau_s, measured_shunt_ohm : float or None
        The shunt the diagnosis found (signature ``shunt-loading``), s and ohms.
    max_ramp_time_s : float or None
        Longest ramp time at which the measured ``R C`` keeps the target (a
        shunt's bow grows with ``T / (R C)``, so the ramp must be this short or
        shorter); None without a measured shunt.
    max_absorption_pct : float
        Largest standard recovery figure of the capacitor's dielectric that keeps the
        target with the measured shunt (``whatif_absorption.max_absorption_pct``), %;
        NaN when the shunt alone exceeds the target.
    """

    target_nonlinearity_pct: float
    measured_nonlinearity_pct: float
    target_met: bool
    window_start_frac: float
    window_end_frac: float
    v0_v: float
    v1_v: float
    held: str
    min_shunt_ohm: float | None
    min_time_constant_s: float
    max_voltage_coefficient_per_v: float
    measured_tau_s: float | None
    measured_shunt_ohm: float | None
    max_ramp_time_s: float | None
    max_absorption_pct: float = math.nan


@dataclass(frozen=True)
class ShuntChange(ToDict):
    """One resistance across the capacitor replaced by another, ohms (None: absent).

    ``ShuntChange(1e6, 10e6)``: a 1x probe (scope input) swapped for a 10x probe.
    """

    old_ohm: float | None
    new_ohm: float | None

    def __post_init__(self) -> None:
        for v in (self.old_ohm, self.new_ohm):
            if v is not None and not (math.isfinite(v) and v > 0):
                raise AnalysisError(f"a shunt must be a positive number of ohms, got {v!r}")


@dataclass(frozen=True)
class CapacitanceChange(ToDict):
    """The timing capacitor replaced by ``new_f`` farads at the same current (whatever is
    across it stays)."""

    new_f: float

    def __post_init__(self) -> None:
        if not (math.isfinite(self.new_f) and self.new_f > 0):
            raise AnalysisError(f"a capacitance must be a positive number of farads, "
                                f"got {self.new_f!r}")


@dataclass(frozen=True)
class DielectricChange(ToDict):
    """The timing capacitor replaced by one of the same value whose dielectric absorbs
    typically for ``dielectric`` (a row of ``absorption.DIELECTRIC_ABSORPTION``)."""

    dielectric: str

    def __post_init__(self) -> None:
        wa.typical_pct(self.dielectric)  # refuses an unknown name


Change = ShuntChange | CapacitanceChange | DielectricChange


@dataclass(frozen=True)
class ChangePrediction(ToDict):
    """The ramp after a change, true polarity, times from the ramp start.

    Attributes
    ----------
    measured_shunt_ohm, new_shunt_ohm : float
        Total shunt before (measured; ``inf`` when none was found) and after, ohms.
    remainder_clamped : bool
        The old resistance was lower than the measured total, so nothing else was
        left across the capacitor (the remainder taken as open).
    current_a : float
        Charging current used: stated, or implied by the measured ramp and shunt.
    ramp_time_s, slope_v_per_s, nonlinearity_pct : float
        Predicted ramp time (``inf``: never reaches the end level), least-squares
        slope and nonlinearity over the same window fractions.
    time_s, voltage_v : numpy.ndarray
        The predicted averaged ramp, to draw over the measured one.
    """

    measured_shunt_ohm: float
    new_shunt_ohm: float
    remainder_clamped: bool
    current_a: float
    ramp_time_s: float
    slope_v_per_s: float
    nonlinearity_pct: float
    time_s: np.ndarray
    voltage_v: np.ndarray


def _frame(figures: Figures) -> tuple[float, float, float, tuple[float, float]]:
    """Sign, swing (v0 < v1, measurement frame) and fit window fractions."""
    sign = -1.0 if figures.direction == "falling" else 1.0
    a, b = sign * figures.start_v, sign * figures.end_v
    T = figures.ramp_time_s
    if not (math.isfinite(T) and T > 0 and a != b):
        raise AnalysisError("the ramp has no time or no swing to work from")
    window = (figures.window_start_s / T, figures.window_end_s / T)
    return sign, min(a, b), max(a, b), window


def _current_for_time(k: float, R: float, v0: float, v1: float) -> float:
    """The current that takes ``R C`` from v0 to v1 in ``T = k R C``:
    ``T = R C ln((I R - v0) / (I R - v1))`` solved for I."""
    return (math.exp(k) * v1 - v0) / (R * math.expm1(k))


def _shunt_nl_at_k(k: float, v0: float, v1: float, window: tuple[float, float]) -> float:
    """Nonlinearity of a shunted ramp with ``T / (R C) = k`` (``predict_ramp``, R = C = 1)."""
    return predict_ramp(_current_for_time(k, 1.0, v0, v1), 1.0, v0, v1, 1.0,
                        window).nonlinearity_pct


def _solve_log(f, guess: float, grows: bool, lo_limit: float = 0.0,
               hi_limit: float = math.inf) -> float:
    """Root of ``f`` (monotone, ``grows``: increasing) by brentq on ``log x``, bracketed from ``guess``."""
    def g(y: float) -> float:
        v = f(math.exp(y))
        return v if math.isfinite(v) else 1e300  # no ramp to the end level: bow unbounded

    lo = hi = math.log(guess)
    lo_min = math.log(lo_limit) if lo_limit > 0 else -math.inf
    hi_max = math.log(hi_limit) if math.isfinite(hi_limit) else math.inf
    for _ in range(200):
        glo, ghi = g(lo), g(hi)
        if glo * ghi <= 0:
            break
        below = (glo < 0) == grows  # both values on the side where x must grow
        if below:
            lo, hi = hi, min(hi + 1.0, hi_max - 1e-12)
        else:
            hi, lo = lo, max(lo - 1.0, lo_min + 1e-12)
    else:
        return math.nan
    if g(lo) * g(hi) > 0:
        return math.nan
    return math.exp(brentq(g, lo, hi, xtol=_LOG_XTOL, rtol=4 * np.finfo(float).eps))


def vc_nonlinearity_pct(beta_per_v: float, v0: float, v1: float,
                        window: tuple[float, float]) -> float:
    """Least-squares nonlinearity of a constant current into ``C0 (1 - beta V)`` from v0 to v1.

    Exact form (SOURCES.md [voltage-coefficient], ``shapes.falling_capacitance``):
    with ``W = 1 - beta V``, ``V - v0 = (W0 / beta) (1 - sqrt(1 - 2 g x))``,
    ``g = (1 - (W1 / W0)^2) / 2``, ``x = t / T``; fitted over the window like
    ``circuit.predict_ramp``. Independent of the current.
    """
    w0, w1 = 1.0 - beta_per_v * v0, 1.0 - beta_per_v * v1
    if not (w0 > 0 and w1 > 0):
        return math.nan
    g = 0.5 * (1.0 - (w1 / w0) ** 2)
    x = np.linspace(window[0], window[1], PREDICTION_POINTS)
    v = falling_capacitance(g, x)
    u = (x - x[0]) / (x[-1] - x[0])
    p = np.polyfit(u, v, 1)
    resid = v - np.polyval(p, u)
    return 100.0 * float(np.max(np.abs(resid))) / float(p[0])


def _measured_tau(diagnosis: Diagnosis) -> float | None:
    if diagnosis.signature == "shunt-loading" and diagnosis.tau_s and diagnosis.tau_s > 0:
        return float(diagnosis.tau_s)
    return None


def requirements(figures: Figures, diagnosis: Diagnosis, context: CircuitContext | None = None,
                 target_nonlinearity_pct: float = DEFAULT_TARGET_PCT) -> Requirements:
    """What keeps the least-squares nonlinearity over the measured fit window at a target.

    Parameters
    ----------
    figures, diagnosis : Figures, Diagnosis
        The measured ramp (swing, ramp time, fit window, nonlinearity) and its cause.
    context : CircuitContext, optional
        The capacitance (``effective_capacitance_f``) turns the time constant into
        a resistance; a stated current is held instead of the ramp time.
    target_nonlinearity_pct : float
        Target least-squares nonlinearity, % of the fitted span.

    Returns
    -------
    Requirements
        The shunt: ``predict_ramp(...).nonlinearity_pct(R) = target`` solved for R
        (SOURCES.md [loading]); with the ramp time held it depends on
        ``k = T / (R C)`` only (small-error rule ``~ 100 k w / 12`` %, w the window
        width). The voltage coefficient: :func:`vc_nonlinearity_pct` ``= target``.
        The ramp time: ``k* R C`` of the measured shunt.

    Raises
    ------
    AnalysisError
        The target is not positive, or the ramp has no time or swing.
    """
    t = float(target_nonlinearity_pct)
    if not (math.isfinite(t) and t > 0):
        raise AnalysisError(f"the target nonlinearity must be positive, got {t!r} %")
    _, v0, v1, window = _frame(figures)
    T = figures.ramp_time_s
    width = window[1] - window[0]
    C = context.effective_capacitance_f if context is not None else None
    I = context.effective_current_a if context is not None else None

    k_star = _solve_log(lambda k: _shunt_nl_at_k(k, v0, v1, window) - t,
                        12.0 * t / 100.0 / width, grows=True)
    min_tau = T / k_star if k_star > 0 else math.nan
    held = "ramp-time"
    min_r = None
    if C is not None:
        min_r = min_tau / C
        if I is not None:
            held = "current"
            r_floor = v1 / I if v1 > 0 else 0.0  # below it the ramp never reaches v1
            min_r = _solve_log(lambda R: predict_ramp(I, C, v0, v1, R, window).nonlinearity_pct - t,
                               max(min_r, 2.0 * r_floor) if math.isfinite(min_r) else
                               2.0 * r_floor + (v1 - v0) / I, grows=False, lo_limit=r_floor)
            min_tau = min_r * C

    # the voltage coefficient keeps C positive over the swing: beta V < 1
    beta_cap = 1.0 / v1 if v1 > 0 else math.inf
    beta_guess = min(12.0 * t / 100.0 / ((v1 - v0) * width), 0.5 * beta_cap)
    beta = _solve_log(lambda b: vc_nonlinearity_pct(b, v0, v1, window) - t, beta_guess,
                      grows=True, hi_limit=beta_cap)

    tau = _measured_tau(diagnosis)
    shunt = diagnosis.equivalent_shunt_ohm if tau is not None else None
    if shunt is None and tau is not None and C is not None:
        shunt = tau / C
    nl = figures.nonlinearity_pct
    # absorption: only I / C, R C and I R matter, so C = 1 with R = tau stands for any C
    i_unit = (_current_for_time(T / tau, tau, v0, v1) if tau is not None
              else (v1 - v0) / T)
    max_da = wa.max_absorption_pct(t, i_unit, 1.0, v0, v1, tau, _reset_s(figures), window)
    return Requirements(
        target_nonlinearity_pct=t, measured_nonlinearity_pct=nl,
        target_met=bool(math.isfinite(nl) and nl <= t),
        window_start_frac=window[0], window_end_frac=window[1], v0_v=v0, v1_v=v1, held=held,
        min_shunt_ohm=min_r, min_time_constant_s=min_tau,
        max_voltage_coefficient_per_v=beta, measured_tau_s=tau, measured_shunt_ohm=shunt,
        max_ramp_time_s=k_star * tau if tau is not None else None, max_absorption_pct=max_da)


def _reset_s(figures: Figures) -> float:
    r = figures.retrace_time_s
    return float(r) if math.isfinite(r) and r > 0 else 1e-3 * figures.ramp_time_s


def predict_change(figures: Figures, diagnosis: Diagnosis, context: CircuitContext,
                   change: Change) -> ChangePrediction:
    """The ramp after a change: a shunt (:class:`ShuntChange`), the capacitance
    (:class:`CapacitanceChange`) or the capacitor's dielectric (:class:`DielectricChange`).

    A shunt: below. Another capacitance or dielectric keeps the measured shunt (none
    unless the diagnosis is ``shunt-loading``) and the current; the new dielectric's
    typical absorption (``whatif_absorption``) replaces whatever the old part had, and
    another capacitance is taken as absorbing no more than the measured ramp showed
    (a ramp diagnosed with absorption or a voltage coefficient is refused: name the
    dielectric instead). Every figure over the same window fractions.
    """
    if isinstance(change, ShuntChange):
        return _shunt_change(figures, diagnosis, context, change)
    C = context.effective_capacitance_f if context is not None else None
    if C is None:
        raise AnalysisError("a change of the capacitor needs the capacitance")
    sign, v0, v1, window = _frame(figures)
    T = figures.ramp_time_s
    tau = _measured_tau(diagnosis)
    r = tau / C if tau is not None else None
    I = context.effective_current_a
    if I is None:
        I = _current_for_time(T / tau, r, v0, v1) if tau is not None else C * (v1 - v0) / T
    branches: list[tuple[float, float]] = []
    if isinstance(change, CapacitanceChange):
        if diagnosis.signature not in ("linear", "shunt-loading"):
            raise AnalysisError("another capacitance is predicted for a straight or "
                                "shunt-loaded ramp; for absorption, choose a dielectric")
        C = change.new_f + (context.probe_capacitance_f or 0.0)
    else:
        branches = wa.branches_for(wa.typical_pct(change.dielectric),
                                   max(_reset_s(figures), 1e-9))
    T_new, t, v, slope, nl = wa.absorbing_ramp(I, C, v0, v1, r, branches, _reset_s(figures),
                                               window)
    return ChangePrediction(
        measured_shunt_ohm=r if r is not None else math.inf,
        new_shunt_ohm=r if r is not None else math.inf, remainder_clamped=False,
        current_a=I, ramp_time_s=T_new, slope_v_per_s=sign * slope, nonlinearity_pct=nl,
        time_s=t, voltage_v=sign * v)


def _shunt_change(figures: Figures, diagnosis: Diagnosis, context: CircuitContext,
                  change: ShuntChange) -> ChangePrediction:
    """The ramp after one resistance across the capacitor is replaced by another.

    ``R_new = 1 / (1/R_measured - 1/R_old + 1/R_new_part)`` (conductances in
    parallel, SOURCES.md [loading]); the remainder ``1/R_measured - 1/R_old`` is
    taken as zero when negative. ``R_measured`` is ``diagnosis.tau_s / C`` for a
    shunt-loading signature, else open. The current is the stated one, else the
    one that gives the measured ramp time with the measured shunt; the ramp runs
    between the measured levels and is fitted over the same window fractions.

    Raises
    ------
    AnalysisError
        No capacitance is stated, or the ramp has no time or swing.
    """
    C = context.effective_capacitance_f if context is not None else None
    if C is None:
        raise AnalysisError("a change of shunt needs the capacitance")
    sign, v0, v1, window = _frame(figures)
    T = figures.ramp_time_s
    tau = _measured_tau(diagnosis)
    r_meas = tau / C if tau is not None else math.inf
    g_rest = 1.0 / r_meas - (1.0 / change.old_ohm if change.old_ohm else 0.0)
    # a remainder within rounding of zero is the old part alone, not a clamp
    clamped = g_rest < -1e-9 / r_meas if math.isfinite(r_meas) else g_rest < 0
    g_new = max(g_rest, 0.0) + (1.0 / change.new_ohm if change.new_ohm else 0.0)
    r_new = 1.0 / g_new if g_new > 0 else math.inf
    I = context.effective_current_a
    if I is None:
        I = (_current_for_time(T / (r_meas * C), r_meas, v0, v1) if math.isfinite(r_meas)
             else C * (v1 - v0) / T)
    pred = predict_ramp(I, C, v0, v1, r_new if math.isfinite(r_new) else None, window)
    t_end = pred.ramp_time_s if math.isfinite(pred.ramp_time_s) else T
    time_s = np.linspace(0.0, t_end, CURVE_POINTS)
    if math.isfinite(r_new):
        tau_new = r_new * C
        v = v0 - (I * r_new - v0) * np.expm1(-time_s / tau_new)
    else:
        v = v0 + I / C * time_s
    return ChangePrediction(
        measured_shunt_ohm=r_meas, new_shunt_ohm=r_new, remainder_clamped=bool(clamped),
        current_a=I, ramp_time_s=pred.ramp_time_s, slope_v_per_s=sign * pred.slope_v_per_s,
        nonlinearity_pct=pred.nonlinearity_pct, time_s=time_s, voltage_v=sign * v)
