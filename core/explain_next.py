"""Which capture to take next when a set has not decided between two causes.

Each fitted model predicts the nonlinearity of a capture not yet taken: the first
capture of the set with its charging current, its capacitance or its swing changed
by a factor (:data:`CANDIDATES`). The causes scale differently (SOURCES.md
[voltage-coefficient], [absorption]): a shunt's bow follows ``T / (R C)``, so a new
current changes it and a new capacitance at the same current does not; a voltage
coefficient's follows the swing alone; absorption's follows the ramp time against
the branches' own time constants. The candidate whose two predictions differ most,
measured against the capture's resolution floor, is the one to take.

Predicted curves (measurement frame, from the ramp start, ``s`` the slope):

* shunt: ``s tau (1 - exp(-t / tau))`` up to the swing, ``tau = R C`` (``R`` kept);
* voltage coefficient: ``s relaxation.voltage_shape(t, beta, s)``, the ramp time
  ``(V + beta V^2 / 2) / s`` for a swing ``V``;
* relaxation: ``s relaxation.relaxation_shape(t, ...)`` over ``T = V / s``;

and the nonlinearity is that of the least-squares line (``numpy.polyfit``) over the
capture's fit window, % of the fitted span, as the engine measures it.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from . import relaxation as rx
from .circuit import PREDICTION_POINTS as POINTS
from .jsonable import ToDict

#: The causes whose branches are read as absorption (the probe cannot be ruled out in the second).
ABSORBING = ("dielectric-absorption", "absorption-and-shunt", "absorption-or-probe")
#: Draws of the branches behind the absorption figures' range.
SPREAD_SAMPLES = 100
#: The captures considered: (what changes, by which factor).
CANDIDATES = (("current", 0.25), ("current", 4.0), ("capacitance", 4.0),
              ("capacitance", 0.25), ("swing", 0.5))
#: A candidate decides when its two predictions differ by this many resolution floors.
DECIDES_FLOORS = 3.0


@dataclass(frozen=True)
class NextCapture(ToDict):
    """The capture that would best separate the two leading causes.

    ``change`` ``"current"``, ``"capacitance"`` or ``"swing"``, multiplied by
    ``factor``; ``models`` the two models compared, with ``predicted_pct`` their
    nonlinearity for that capture (None where the model's ramp would not reach its
    upper level); ``separation_pct`` their difference; ``floor_pct`` the resolution
    floor assumed (the first capture's); ``decides`` whether the difference is at
    least :data:`DECIDES_FLOORS` floors.
    """

    change: str
    factor: float
    models: tuple[str, str]
    predicted_pct: tuple[float | None, float | None]
    separation_pct: float
    floor_pct: float
    decides: bool


def _nonlinearity(t: np.ndarray, v: np.ndarray) -> float:
    u = (t - t[0]) / (t[-1] - t[0])
    p = np.polyfit(u, v, 1)
    span = float(p[0])
    return 100.0 * float(np.max(np.abs(v - np.polyval(p, u)))) / span if span > 0 else math.nan


def predicted_pct(model: str, theta: Sequence[float], member, change: str, factor: float,
                  by_resistance: bool, band_s: tuple[float, float] = (0.0, 0.0)
                  ) -> float | None:
    """The nonlinearity ``model`` predicts for ``member`` with ``change`` scaled by
    ``factor``, %; None when that ramp would never reach its upper level."""
    s, swing, tr = member.slope_v_per_s, member.swing_v, member.retrace_time_s
    c_scale = 1.0
    if change == "current":
        s *= factor
    elif change == "capacitance":
        s, c_scale, tr = s / factor, factor, tr * factor
    else:
        swing *= factor
    w0, w1 = member.window
    if model == "line":
        return 0.0
    if model in ("shunt-loading", "shunt-and-spread"):
        tau = math.exp(theta[0]) * (member.capacitance_f if by_resistance else 1.0) * c_scale
        if swing >= s * tau:
            return None
        T = -tau * math.log1p(-swing / (s * tau))
        t = np.linspace(w0 * T, w1 * T, POINTS)
        g = rx.shunt_shape(t, tau)
        if model == "shunt-and-spread":
            g = g - rx.relaxation_terms(t, rx.branches_of(model, theta, band_s), T, tr)
        return _nonlinearity(t, s * g)
    if model == "voltage-coefficient":
        beta = float(theta[0])
        T = (swing + beta * swing * swing / 2.0) / s
        t = np.linspace(w0 * T, w1 * T, POINTS)
        g = rx.voltage_shape(t, beta, s)
        return None if g is None or not T > 0 else _nonlinearity(t, s * g)
    branches = rx.branches_of(model, theta, band_s)
    T = swing / s
    t = np.linspace(w0 * T, w1 * T, POINTS)
    return _nonlinearity(t, s * rx.relaxation_shape(t, branches, T, tr))


def next_capture(best, rival, members: Sequence, by_resistance: bool) -> NextCapture | None:
    """The candidate capture that separates ``best`` from ``rival`` most (module docstring)."""
    base = members[0]
    floor = base.floor_pct
    top: NextCapture | None = None
    for change, factor in CANDIDATES:
        a = predicted_pct(best.model, best.theta, base, change, factor, by_resistance,
                          best.band_s)
        b = predicted_pct(rival.model, rival.theta, base, change, factor, by_resistance,
                          rival.band_s)
        if a is None and b is None:
            continue
        # a ramp that stalls under one model and not the other separates them outright
        sep = math.inf if (a is None) != (b is None) else abs(a - b)
        if not math.isfinite(sep) and top is not None and not math.isfinite(top.separation_pct):
            continue
        if top is None or sep > top.separation_pct:
            top = NextCapture(change, factor, (best.model, rival.model), (a, b), sep, floor,
                              sep >= DECIDES_FLOORS * floor)
    return top


def complete(explanation, members: Sequence, decided: bool):
    """The explanation with what follows from its cause: the capture to take next where
    the set has not decided, the absorption figures where the cause is absorption."""
    changes: dict = {}
    if not decided and explanation.runner_up is not None:
        best = explanation.model(explanation.best_model)
        rival = explanation.model(explanation.runner_up)
        changes["next_capture"] = next_capture(best, rival, members,
                                               explanation.shared == "resistance")
    if explanation.cause in ABSORBING:
        base = members[0]
        best = explanation.model(explanation.best_model)
        fig = absorption_of(best.model, best.theta, best.band_s, base)
        if fig is not None:
            changes["absorption"] = fig
            changes["absorption_spread"] = spread_of(best, base)
    return dataclasses.replace(explanation, **changes) if changes else explanation


@dataclass(frozen=True)
class AbsorptionSpread(ToDict):
    """The 95 % range of the absorption figures from the fitted branches' uncertainty:
    percentiles of :data:`SPREAD_SAMPLES` draws of the shared parameters from their
    covariance (seeded, so the same set gives the same range), %."""

    short_recovery_low_pct: float
    short_recovery_high_pct: float
    standard_recovery_low_pct: float
    standard_recovery_high_pct: float


def absorption_of(model: str, theta: Sequence[float], band_s: tuple[float, float], base):
    """The absorption figures (``absorption.absorption_figures``) of a relaxation model's
    branches (``relaxation.branches_of``) at the capture ``base``'s time scale,
    ``C_i / C = A / (1 + A)``. None when no branch gives charge back or the figures cannot
    be made."""
    from .absorption import absorption_figures
    from .errors import TrueslopeError
    branches = [(a / (1.0 + a), tau) for a, tau in rx.branches_of(model, theta, band_s)
                if a > 0]
    if not branches:
        return None
    reset = base.retrace_time_s if base.retrace_time_s > 0 else 1e-3 * base.ramp_time_s
    try:
        return absorption_figures(branches, base.ramp_time_s, reset,
                                  capacitance_f=base.capacitance_f)
    except (TrueslopeError, ValueError, OverflowError, np.linalg.LinAlgError):
        return None


def spread_of(best, base) -> AbsorptionSpread | None:
    """The range of the recovery figures over draws of the branches (class docstring)."""
    cov = best.covariance
    if cov is None or not np.all(np.isfinite(cov)):
        return None
    rng = np.random.default_rng(0)
    draws = rng.multivariate_normal(np.asarray(best.theta), cov, SPREAD_SAMPLES,
                                    check_valid="ignore")
    short, standard = [], []
    for theta in draws:
        fig = absorption_of(best.model, theta, best.band_s, base)
        short.append(fig.short_recovery_pct if fig is not None else 0.0)
        standard.append(fig.standard_recovery_pct if fig is not None else 0.0)
    lo, hi = 2.5, 97.5
    return AbsorptionSpread(float(np.percentile(short, lo)), float(np.percentile(short, hi)),
                            float(np.percentile(standard, lo)),
                            float(np.percentile(standard, hi)))
