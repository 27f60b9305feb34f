"""One cause for a set of captures of one circuit: models with shared physical parameters.

Some causes look alike in one capture and separate across captures of the same
circuit taken at other rates, swings or part values (SOURCES.md [joint-fit]):

==========================  ===============================  =========================
model                       shared across the set            free in each capture
==========================  ===============================  =========================
``line``                    nothing                          start level, slope
``shunt-loading``           ``R`` (every capacitance given)  start level, slope
                            or ``tau = R C`` (none given)
``voltage-coefficient``     ``beta``, capacitance per volt    start level, slope
``relaxation-1``            one Dow branch: ``k``, ``tau``   start level, slope
``relaxation-2``            two branches                     start level, slope
``relaxation-spread``       branches spread evenly per       start level, slope
                            decade (their density)
``shunt-and-spread``        the shunt's and the spread's     start level, slope
                            (both at once, to first order)
==========================  ===============================  =========================

The shapes and their physics are in :mod:`relaxation`. Every capture's averaged cycle
is fitted over its fit window, weighted by the robust standard errors the one-capture
diagnosis uses (``diagnose.window_data``). For a trial of the shared parameters each
capture's start level and slope follow by linear least squares (variable projection,
Golub and Pereyra); :func:`scipy.optimize.least_squares` moves the shared parameters
from the best point of a grid. The criterion is ``BIC = chi2 + p ln n`` over all bins
of the set; the covariance of the shared parameters is ``(J^T J)^-1`` of the projected
residuals, widened by ``chi2 / dof`` where that exceeds 1, and the 95 % intervals are
``1.96`` standard errors (on the logarithm of a positive parameter).

A relaxation is absorption when the slope starts high and the ramp ends on the
comparator's trip level, a probe's compensation when it starts low or ends off that level
(``explain_levels``); without the levels the two cannot be told apart, and the result
names the check. When the best two causes are within
``diagnose.BIC_MARGIN`` the set has not decided, and :mod:`explain_next` says which
capture to take next. Numbers and codes only; ``report.explain_text`` words them.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from . import relaxation as rx
from .capture import CancelFn, ProgressFn, stop_if_cancelled
from .circuit import CircuitContext
from .diagnose import BIC_MARGIN, window_data
from .errors import AnalysisError
from .explain_levels import LevelCheck, level_check, relaxation_cause
from .explain_params import Parameter, covariance, parameters
from .fit import LegendreSeries
from .jsonable import ToDict
from .models import MAX_POLY_DEGREE
from .results import Analysis

#: The cause each model stands for; a relaxation is resolved by :func:`_relaxation_cause`.
MODEL_CAUSE = {"line": "linear", "shunt-loading": "shunt-loading",
               "voltage-coefficient": "voltage-coefficient",
               "relaxation-spread": "relaxation", "relaxation-1": "relaxation",
               "relaxation-2": "relaxation", "shunt-and-spread": "absorption-and-shunt"}
#: Largest absorption amplitude ``A = k / (1 - k)`` tried (k = 50 %).
MAX_AMPLITUDE = 1.0
#: How near the best other model one absorption branch must come for a second to be tried.
SECOND_BRANCH_BIC = 400.0


@dataclass(frozen=True)
class Member:
    """One capture of the set, as the models see it (measurement frame)."""

    name: str
    time_s: np.ndarray
    voltage_v: np.ndarray
    weight: np.ndarray
    ramp_time_s: float
    retrace_time_s: float
    slope_v_per_s: float
    span_v: float
    swing_v: float
    floor_pct: float
    window: tuple[float, float]
    capacitance_f: float | None
    trip_level_v: float | None
    band_s: tuple[float, float] = (0.0, 0.0)


@dataclass(frozen=True)
class ModelResult(ToDict):
    """One model fitted to the whole set.

    ``bic`` over every bin of the set; ``delta_bic`` above the best model's;
    ``chi2_per_dof``; ``parameters`` (physical, shared); ``theta`` the raw shared
    parameters (internal) and their ``covariance``; ``band_s`` the time constants an even
    spread of branches covers (``relaxation.spread_band``); ``curves_v`` each capture's fitted
    curve on its window's bins; ``coef`` each capture's (start level, slope scale).
    """

    model: str
    bic: float
    delta_bic: float
    chi2_per_dof: float
    parameters: tuple[Parameter, ...]
    theta: tuple[float, ...] = ()
    curves_v: tuple[np.ndarray, ...] = ()
    coef: tuple[tuple[float, float], ...] = ()
    covariance: np.ndarray | None = None
    band_s: tuple[float, float] = (0.0, 0.0)

    JSON_SKIP = ("theta", "curves_v", "coef", "covariance")


@dataclass(frozen=True)
class Explanation(ToDict):
    """Which cause explains every capture of a set.

    Attributes
    ----------
    captures : tuple of str
    cause : str
        ``"linear"``, ``"shunt-loading"``, ``"voltage-coefficient"``,
        ``"dielectric-absorption"``, ``"absorption-and-shunt"`` (both at once),
        ``"probe-compensation"``,
        ``"absorption-or-probe"`` (the levels needed to tell them are not given)
        or ``"undecided"`` (two causes within the margin).
    best_model, runner_up : str, str or None
        The model with the lowest BIC; the best model of another cause.
    evidence : float
        The runner-up's BIC minus the best's (``inf`` with one model).
    models : tuple of ModelResult
        Every model, best first.
    shared : str
        What the shunt shares: ``"resistance"`` (every capacitance given) or
        ``"time-constant"``.
    level_check : LevelCheck or None
    check : str or None
        A bench check that would decide: ``"probe-calibrator"``.
    next_capture : object or None
        ``explain_next.NextCapture`` when the set has not decided.
    absorption : object or None
        ``absorption.AbsorptionFigures`` of the fitted branches, for absorption.
    absorption_spread : object or None
        ``explain_next.AbsorptionSpread``: the 95 % range of its recovery figures.
    unexplained : tuple of str
        Captures whose own shape the set's model does not explain (:func:`_unexplained`):
        most often a capture of another circuit, or a second cause in it.
    """

    captures: tuple[str, ...]
    cause: str
    best_model: str
    runner_up: str | None
    evidence: float
    models: tuple[ModelResult, ...]
    shared: str
    level_check: LevelCheck | None = None
    check: str | None = None
    next_capture: object | None = None
    absorption: object | None = None
    absorption_spread: object | None = None
    unexplained: tuple[str, ...] = ()

    def model(self, name: str) -> ModelResult | None:
        """The result of one model, or None."""
        return next((m for m in self.models if m.model == name), None)


def member_of(analysis: Analysis, context: CircuitContext | None = None) -> Member | None:
    """The part of one analysis the set's fit uses; None when its window is not measurable."""
    data = window_data(analysis.averaged, analysis.figures, analysis.noise)
    if data is None:
        return None
    fig = analysis.figures
    mirrored = bool(analysis.averaged.mirrored)
    trip = None  # the level the ramp ends at, measurement frame
    if context is not None and context.low_threshold_v is not None:
        trip = -context.low_threshold_v if mirrored else context.high_threshold_v
    retrace = fig.retrace_time_s if math.isfinite(fig.retrace_time_s) else 0.0
    cap = None if context is None else context.effective_capacitance_f
    return Member(name=analysis.source, time_s=data.time_s, voltage_v=data.voltage_v,
                  weight=1.0 / data.stderr_v, ramp_time_s=data.ramp_time_s,
                  retrace_time_s=max(retrace, 0.0),
                  slope_v_per_s=float(analysis.averaged.fit.slope_v_per_s),
                  span_v=data.span_v, swing_v=float(abs(fig.amplitude_v)),
                  floor_pct=data.floor_pct,
                  window=(fig.window_start_s / data.ramp_time_s,
                          fig.window_end_s / data.ramp_time_s),
                  capacitance_f=cap, trip_level_v=trip)


# ------------------------------------------------------------------ the shapes
def _shape(model: str, theta: np.ndarray, m: Member, slope: float,
           by_resistance: bool) -> np.ndarray | None:
    t = m.time_s
    if model == "line":
        return t
    if model == "shunt-loading":
        tau = math.exp(theta[0]) * (m.capacitance_f if by_resistance else 1.0)
        return rx.shunt_shape(t, tau)
    if model == "voltage-coefficient":
        return rx.voltage_shape(t, float(theta[0]), slope)
    if model == "shunt-and-spread":
        tau = math.exp(theta[0]) * (m.capacitance_f if by_resistance else 1.0)
        return rx.shunt_shape(t, tau) - rx.relaxation_terms(
            t, rx.branches_of(model, theta, m.band_s), m.ramp_time_s, m.retrace_time_s)
    return rx.relaxation_shape(t, rx.branches_of(model, theta, m.band_s), m.ramp_time_s,
                               m.retrace_time_s)


def _project(model: str, theta: np.ndarray, m: Member, by_resistance: bool
             ) -> tuple[np.ndarray, np.ndarray, np.ndarray] | None:
    """Weighted residual, coefficients (start level, slope) and curve of one capture."""
    slope = m.slope_v_per_s
    w2 = m.weight * m.weight
    # the voltage shape depends on the slope it scales: two fixed-point steps
    for _ in range(2 if model == "voltage-coefficient" else 1):
        g = _shape(model, theta, m, slope, by_resistance)
        if g is None or not np.all(np.isfinite(g)):
            return None
        # weighted least squares of v ~ a + b g by its normal equations, g centred
        g0 = float(w2 @ g) / float(w2.sum())
        gc = g - g0
        sgg = float(w2 @ (gc * gc))
        if not sgg > 0:
            return None
        b = float(w2 @ (gc * m.voltage_v)) / sgg
        a = float(w2 @ m.voltage_v) / float(w2.sum()) - b * g0
        slope = b if b > 0 else slope
    curve = a + b * g
    return (m.voltage_v - curve) * m.weight, np.array([a, b]), curve


class _SetFit:
    """The residual vector of one model over the set, for least_squares."""

    def __init__(self, model: str, members: Sequence[Member], by_resistance: bool) -> None:
        self.model, self.members, self.by_resistance = model, members, by_resistance
        self.n = int(sum(m.time_s.size for m in members))
        self.big = np.full(self.n, 1e6)

    def residuals(self, theta: np.ndarray) -> np.ndarray:
        parts = []
        for m in self.members:
            out = _project(self.model, np.asarray(theta, dtype=float), m, self.by_resistance)
            if out is None:
                return self.big
            parts.append(out[0])
        return np.concatenate(parts)

    def cost(self, theta: Sequence[float]) -> float:
        r = self.residuals(np.asarray(theta, dtype=float))
        return float(r @ r)


def _refine(fit: _SetFit, start: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    from scipy import optimize
    start = np.clip(start, lo + 1e-9 * (hi - lo), hi - 1e-9 * (hi - lo))
    try:
        res = optimize.least_squares(fit.residuals, start, bounds=(lo, hi), x_scale="jac",
                                     method="trf", xtol=1e-8, ftol=1e-9, max_nfev=80)
    except (ValueError, np.linalg.LinAlgError):
        return start
    return res.x if fit.cost(res.x) <= fit.cost(start) else start


def _grid_start(fit: _SetFit, grids: list[np.ndarray]) -> np.ndarray:
    mesh = np.meshgrid(*grids, indexing="ij")
    points = np.column_stack([g.ravel() for g in mesh])
    costs = [fit.cost(p) for p in points]
    return points[int(np.argmin(costs))]


def _fit_model(model: str, members: Sequence[Member], by_resistance: bool,
               seed: np.ndarray | None = None) -> tuple[np.ndarray, _SetFit]:
    """The shared parameters of one model, best of a grid refined by least squares."""
    fit = _SetFit(model, members, by_resistance)
    t_lo = min(m.ramp_time_s for m in members)
    t_hi = max(m.ramp_time_s for m in members)
    if model == "line":
        return np.zeros(0), fit
    scale = 1.0 / float(np.median([m.capacitance_f for m in members])) if by_resistance else 1.0
    lo_sh, hi_sh = math.log(0.02 * t_lo * scale), math.log(1e5 * t_hi * scale)
    if model == "shunt-loading":
        lo, hi = np.array([lo_sh]), np.array([hi_sh])
        start = _grid_start(fit, [np.linspace(lo[0], hi[0], 48)])
        return _refine(fit, start, lo, hi), fit
    if model == "shunt-and-spread":
        lo, hi = np.array([lo_sh, math.log(1e-6)]), np.array([hi_sh, math.log(0.2)])
        start = _grid_start(fit, [np.linspace(lo[0], hi[0], 20), np.linspace(lo[1], hi[1], 16)])
        return _refine(fit, start, lo, hi), fit
    if model == "voltage-coefficient":
        reach = max(m.slope_v_per_s * m.time_s[-1] for m in members)
        lo, hi = np.array([-0.49 / reach]), np.array([20.0 / reach])
        z = np.concatenate([-np.geomspace(0.45, 1e-5, 16), np.geomspace(1e-5, 10.0, 24)])
        start = _grid_start(fit, [z / reach])
        return _refine(fit, start, lo, hi), fit
    bin_s = min(float(np.median(np.diff(m.time_s))) for m in members)
    ltau_lo, ltau_hi = math.log(max(0.5 * bin_s, 1e-12)), math.log(3.0 * t_hi)
    amps = np.concatenate([-np.geomspace(0.3, 1e-5, 12), np.geomspace(1e-5, MAX_AMPLITUDE, 14)])
    lo1, hi1 = np.array([-0.5, ltau_lo]), np.array([MAX_AMPLITUDE, ltau_hi])
    if model == "relaxation-spread":
        lo, hi = np.log([1e-6]), np.log([0.2])
        start = _grid_start(fit, [np.linspace(lo[0], hi[0], 30)])
        return _refine(fit, start, lo, hi), fit
    if model == "relaxation-1":
        start = _grid_start(fit, [amps, np.linspace(ltau_lo, ltau_hi, 24)])
        return _refine(fit, start, lo1, hi1), fit
    one = seed if seed is not None else _fit_model("relaxation-1", members, by_resistance)[0]
    lo, hi = np.concatenate([lo1, lo1]), np.concatenate([hi1, hi1])
    best, best_cost = None, math.inf
    for ratio in (0.1, 0.3, 3.0, 10.0):
        for share in (0.5, -0.5):
            start = np.array([one[0], one[1], one[0] * share, one[1] + math.log(ratio)])
            x = _refine(fit, np.clip(start, lo, hi), lo, hi)
            c = fit.cost(x)
            if c < best_cost:
                best, best_cost = x, c
    return best, fit


# ------------------------------------------------------------------ the set's answer
def _worth_a_second_branch(results: list[ModelResult]) -> bool:
    """A second branch is fitted only where one branch comes near the best other model
    (within :data:`SECOND_BRANCH_BIC`): elsewhere it cannot win and costs the most."""
    one = next((r for r in results if r.model == "relaxation-1"), None)
    others = [r.bic for r in results if r.model != "relaxation-1"]
    return one is not None and (not others or one.bic <= min(others) + SECOND_BRANCH_BIC)


def fit_set(members: Sequence[Member], progress: ProgressFn | None = None,
            cancel: CancelFn | None = None) -> tuple[list[ModelResult], bool]:
    """Every model fitted to the set, best first, and whether the shunt shares ``R``;
    ``progress(fraction)`` after each model, ``cancel()`` polled before each (raising
    :class:`~trueslope.core.errors.Cancelled`)."""
    by_resistance = all(m.capacitance_f is not None for m in members)
    n = int(sum(m.time_s.size for m in members))
    if members[0].band_s == (0.0, 0.0):
        band = rx.spread_band(members)
        members = [dataclasses.replace(m, band_s=band) for m in members]
    band = members[0].band_s
    results: list[ModelResult] = []
    seed = None
    for i, model in enumerate(MODEL_CAUSE):
        stop_if_cancelled(cancel, "explaining")
        if progress is not None:
            progress(0.9 * i / len(MODEL_CAUSE))
        if model == "relaxation-2" and not _worth_a_second_branch(results):
            continue
        theta, fit = _fit_model(model, members, by_resistance, seed)
        if model == "relaxation-1":
            seed = theta
        chi2 = fit.cost(theta)
        p = 2 * len(members) + theta.size
        dof = n - p
        cov = covariance(fit.residuals, fit.n, theta, dof, chi2)
        outs = [_project(model, theta, m, by_resistance) for m in members]
        if any(o is None for o in outs) or not math.isfinite(chi2):
            continue
        results.append(ModelResult(
            model=model, bic=chi2 + p * math.log(n), delta_bic=0.0,
            chi2_per_dof=chi2 / max(dof, 1), parameters=parameters(model, theta, cov,
                                                                   by_resistance),
            theta=tuple(float(v) for v in theta), curves_v=tuple(o[2] for o in outs),
            coef=tuple((float(o[1][0]), float(o[1][1])) for o in outs), covariance=cov,
            band_s=band))
    results.sort(key=lambda r: r.bic)
    top = results[0].bic
    return [dataclasses.replace(r, delta_bic=r.bic - top) for r in results], by_resistance


def _ends(best: ModelResult, members: Sequence[Member], by_resistance: bool) -> list[float]:
    """Each capture's fitted curve at its ramp's end (the model extrapolated past the
    window's last bin)."""
    out = []
    for m, (a, b) in zip(members, best.coef):
        at_end = dataclasses.replace(m, time_s=np.array([m.ramp_time_s]))
        g = _shape(best.model, np.asarray(best.theta), at_end, b, by_resistance)
        out.append(float(a + b * g[0]) if g is not None else math.nan)
    return out


def _unexplained(best: ModelResult, members: Sequence[Member], by_resistance: bool
                 ) -> tuple[str, ...]:
    """The captures the set's model leaves a shape in: on its own, the capture's catch-all
    (a Legendre series of the degree chosen by BIC, as the one-capture diagnosis fits)
    beats the shared model by more than ``BIC_MARGIN`` after its extra parameters."""
    out = []
    for m in members:
        got = _project(best.model, np.asarray(best.theta), m, by_resistance)
        top = min(MAX_POLY_DEGREE, m.time_s.size - 3)
        if got is None or top < 2:
            continue
        series = LegendreSeries(m.time_s / m.ramp_time_s, m.voltage_v, m.weight, top)
        d = series.best_degree(2)
        excess = float(got[0] @ got[0]) - float(series.chi2[d])
        if excess - (d + 1 - 2) * math.log(m.time_s.size) > BIC_MARGIN:
            out.append(m.name)
    return tuple(out)


def explain(analyses: Sequence[Analysis],
            contexts: Sequence[CircuitContext | None] | None = None,
            progress: ProgressFn | None = None, cancel: CancelFn | None = None
            ) -> Explanation:
    """Which cause explains every capture of a set, with its shared parameters.

    Parameters
    ----------
    analyses : sequence of Analysis
        Captures of one circuit (other rates, swings or part values), each analysed.
    contexts : sequence of CircuitContext or None, optional
        What is known of each capture's circuit: the capacitance lets the shunt
        share its resistance (give it for every capture or for none), the comparator
        levels tell absorption from a probe's compensation.
    progress, cancel : callable, optional
        ``progress(fraction)`` as the models are fitted; ``cancel()`` polled between
        them, True stops with :class:`~trueslope.core.errors.Cancelled`.

    Returns
    -------
    Explanation

    Raises
    ------
    AnalysisError
        No capture, contexts not one per capture, capacitance given for some
        captures only, or a capture whose fit window cannot be measured.
    """
    if not analyses:
        raise AnalysisError("explaining needs at least one capture")
    contexts = list(contexts) if contexts is not None else [None] * len(analyses)
    if len(contexts) != len(analyses):
        raise AnalysisError(f"{len(contexts)} circuit descriptions for {len(analyses)} captures")
    members = []
    for a, c in zip(analyses, contexts):
        m = member_of(a, c)
        if m is None:
            raise AnalysisError(f"{a.source}: the fit window holds too few points to "
                                f"compare its shape with the others")
        members.append(m)
    band = rx.spread_band(members)
    members = [dataclasses.replace(m, band_s=band) for m in members]
    given = [m.capacitance_f is not None for m in members]
    if any(given) and not all(given):
        raise AnalysisError("give the capacitance for every capture or for none: the shunt's "
                            "resistance is shared only when every capacitance is known")
    with np.errstate(all="ignore"):
        results, by_resistance = fit_set(members, progress, cancel)
    best = results[0]
    cause_of = {r.model: MODEL_CAUSE[r.model] for r in results}
    rival = next((r for r in results[1:] if cause_of[r.model] != cause_of[best.model]), None)
    evidence = rival.bic - best.bic if rival is not None else math.inf
    check, level = None, None
    cause = cause_of[best.model]
    if cause in ("relaxation", "absorption-and-shunt"):
        level = level_check(best, members, _ends(best, members, by_resistance))
        cause, check = relaxation_cause(best, level)
        if best.model == "shunt-and-spread" and cause == "dielectric-absorption":
            cause = "absorption-and-shunt"
    decided = evidence > BIC_MARGIN
    explanation = Explanation(
        captures=tuple(m.name for m in members), cause=cause if decided else "undecided",
        best_model=best.model, runner_up=rival.model if rival else None, evidence=evidence,
        models=tuple(results), shared="resistance" if by_resistance else "time-constant",
        level_check=level, check=check,
        unexplained=_unexplained(best, members, by_resistance))
    from . import explain_next
    return explain_next.complete(explanation, members, decided)
