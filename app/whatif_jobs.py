"""Background work of "What it would take": requirements and a proposed change's ramp.

:class:`RequirementsRequest` asks :func:`trueslope.core.whatif.requirements` what keeps
the measured ramp at a target nonlinearity (root finding: some tens of milliseconds); :class:`ChangeRequest` asks :func:`trueslope.core.whatif.predict_change`
for the ramp after a change (a millisecond for a shunt, up to a second for another
dielectric, whose absorbing network is solved to its periodic state). Both run on a :class:`~trueslope.app.jobs.JobRunner`
(the window never blocks on analysis work); the words are made in the worker from
:func:`trueslope.core.report.prose.requirements_text`.

:data:`CHANGES` lists the changes the window offers, each with the core change type it
builds (``trueslope.core.whatif``), and what the user must give for it.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from trueslope.core.absorption import DIELECTRIC_ABSORPTION
from trueslope.core.circuit import PROBE_10X_OHM, SCOPE_INPUT_OHM
from trueslope.core.report.numbers import pct
from trueslope.core.whatif import CapacitanceChange, DielectricChange, ShuntChange

from .jobs import CancelFn, ProgressFn

if TYPE_CHECKING:
    from trueslope.core.circuit import CircuitContext
    from trueslope.core.results import Diagnosis, Figures
    from trueslope.core.whatif import ChangePrediction, Requirements


@dataclass(frozen=True)
class ChangeKind:
    """A change the window offers.

    ``label`` words it in the list, ``short`` in the plots' key (``{value}`` stands for
    the value given); ``unit`` is the SI
    unit of the value the user types (None: no value, or ``"choice"`` for a pick from
    ``choices``, pairs of the value and its words); ``build(value)`` makes the core change.
    """

    key: str
    label: str
    short: str
    unit: str | None
    build: Callable[[Any], Any] = field(compare=False)
    placeholder: str = ""
    choices: tuple[tuple[str, str], ...] = ()


#: The changes offered, in the order of the list.
CHANGES: tuple[ChangeKind, ...] = (
    ChangeKind("probe-10x", "A 10x probe (10 MΩ) in place of a 1x probe (1 MΩ)",
               "10x probe in place of 1x", None,
               lambda _v: ShuntChange(SCOPE_INPUT_OHM, PROBE_10X_OHM)),
    ChangeKind("source-resistance", "A current source with this output resistance",
               "source output resistance {value}", "Ω", lambda r: ShuntChange(None, r),
               "e.g. 50M"),
    ChangeKind("capacitance", "Another timing capacitance (same current)",
               "timing capacitance {value}", "F", CapacitanceChange, "e.g. 22n"),
    ChangeKind("dielectric", "A capacitor of another dielectric (its typical absorption)",
               "{value} as the dielectric", "choice", DielectricChange, choices=tuple(
                   (r.dielectric, f"{r.dielectric} (typically {pct(r.low_pct)} to "
                                  f"{pct(r.high_pct)})") for r in DIELECTRIC_ABSORPTION)),
)


def change_kind(key: str) -> ChangeKind:
    return next(k for k in CHANGES if k.key == key)


@dataclass(frozen=True)
class RequirementsRequest:
    """What keeps ``figures``' ramp within ``target_pct`` (its diagnosis, its context)."""

    id: int
    figures: Figures = field(compare=False)
    diagnosis: Diagnosis = field(compare=False)
    context: CircuitContext | None = field(compare=False)
    target_pct: float = 0.1


def run_requirements(req: RequirementsRequest, progress: ProgressFn,
                     cancel: CancelFn) -> tuple[Requirements, list[str]]:
    """The requirements and their lines (worker thread)."""
    from trueslope.core.report.prose import requirements_text
    from trueslope.core.whatif import requirements

    progress(0.0)
    r = requirements(req.figures, req.diagnosis, req.context, req.target_pct)
    progress(1.0)
    return r, requirements_text(r)


@dataclass(frozen=True)
class ChangeRequest:
    """The ramp after ``change`` (a core change type); ``label`` words it for the plots."""

    id: int
    figures: Figures = field(compare=False)
    diagnosis: Diagnosis = field(compare=False)
    context: CircuitContext = field(compare=False)
    change: Any = field(compare=False)
    label: str = ""


@dataclass(frozen=True)
class ChangeAnswer:
    """A prediction, with the label of its change."""

    prediction: ChangePrediction
    label: str


def run_change(req: ChangeRequest, progress: ProgressFn, cancel: CancelFn) -> ChangeAnswer:
    """Predict the changed ramp (worker thread)."""
    from trueslope.core.whatif import predict_change

    progress(0.0)
    pred = predict_change(req.figures, req.diagnosis, req.context, req.change)
    progress(1.0)
    return ChangeAnswer(pred, req.label)


def residual_of(time_s: np.ndarray, voltage_v: np.ndarray,
                window: tuple[float, float]) -> tuple[np.ndarray, np.ndarray]:
    """A predicted ramp minus its least-squares line over the window fractions of its
    own ramp (the line ``predict_change`` measures its nonlinearity from), for drawing.

    Returns the times and the residual (volts) inside the window; empty arrays when
    the ramp has too few points there.
    """
    t = np.asarray(time_s, dtype=float)
    v = np.asarray(voltage_v, dtype=float)
    if t.size < 3 or not np.isfinite(t[-1]) or t[-1] <= 0:
        return np.zeros(0), np.zeros(0)
    end = t[-1]
    inside = (t >= window[0] * end) & (t <= window[1] * end) & np.isfinite(v)
    if np.count_nonzero(inside) < 3:
        return np.zeros(0), np.zeros(0)
    ti, vi = t[inside], v[inside]
    u = (ti - ti[0]) / (ti[-1] - ti[0])
    p = np.polyfit(u, vi, 1)
    return ti, vi - np.polyval(p, u)
