"""Background work of "Explain": one cause for several bench captures, run on a worker.

:class:`ExplainRequest` carries the measured analyses of the chosen captures and each
capture's circuit context (from the settings it was measured with). :func:`run_explain`
calls :func:`trueslope.core.explain.explain` (a fraction of a second to a few
seconds) and prepares what the panel draws: for every capture, its averaged ramp
minus its best-fit line over the fit window, and the set model's curve minus the same
line, both in percent of the fitted span over the normalised ramp time. The words are
:func:`trueslope.core.report.explain_text.explanation_lines`, made here so the GUI
thread only shows them. It goes through :class:`~trueslope.app.jobs.JobRunner`, so a
newer request cancels the older one and a late answer is dropped by its id.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from trueslope.core.capture import stop_if_cancelled

from .jobs import CancelFn, ProgressFn

if TYPE_CHECKING:
    from trueslope.core.circuit import CircuitContext
    from trueslope.core.explain import Explanation
    from trueslope.core.results import Analysis


@dataclass(frozen=True)
class ExplainRequest:
    """Explain a set of measured captures.

    Attributes
    ----------
    id : int
        Given by :meth:`JobRunner.new_id`.
    analyses : tuple of Analysis
        The captures, each measured with its own settings.
    contexts : tuple of CircuitContext or None
        Each capture's circuit values, in the same order.
    left_out : tuple of str
        Chosen captures that had no measurement to explain (paths), for the panel's note.
    """

    id: int
    analyses: tuple = field(compare=False)
    contexts: tuple = field(compare=False)
    left_out: tuple[str, ...] = ()


@dataclass(frozen=True)
class CaptureCurves:
    """One capture as the panel draws it, measurement frame, percent of its fitted span.

    ``u`` the bins' time over the ramp time (0 = ramp start); ``residual_pct`` the
    averaged ramp minus its best-fit line; ``model_pct`` the set model's curve minus
    the same line (empty when the model has no curve for it); ``unexplained`` True
    when the set's model does not explain this capture's shape.
    """

    name: str
    u: np.ndarray
    residual_pct: np.ndarray
    model_pct: np.ndarray
    unexplained: bool


@dataclass(frozen=True)
class ExplainAnswer:
    """The explanation, its lines (verdict first), the captures line and the curves."""

    explanation: Explanation
    lines: tuple[str, ...]
    captures_line: str
    curves: tuple[CaptureCurves, ...]
    left_out: tuple[str, ...] = ()


def curves_for(analysis: Analysis, context: CircuitContext | None, model_curve_v,
               unexplained: bool) -> CaptureCurves | None:
    """The residual and the model's curve of one capture, minus its best-fit line."""
    from trueslope.core.explain import member_of

    m = member_of(analysis, context)
    if m is None:
        return None
    span = float(analysis.figures.fitted_span_v)
    line = analysis.averaged.fit.at(m.time_s)  # measurement frame, like member_of
    scale = 100.0 / span if span > 0 else np.nan
    model = np.asarray(model_curve_v, dtype=float) if model_curve_v is not None else np.zeros(0)
    model_pct = (model - line) * scale if model.shape == m.time_s.shape else np.zeros(0)
    return CaptureCurves(Path(analysis.source).name, m.time_s / m.ramp_time_s,
                         (m.voltage_v - line) * scale, model_pct, unexplained)


def run_explain(req: ExplainRequest, progress: ProgressFn, cancel: CancelFn) -> ExplainAnswer:
    """Explain the set and prepare its curves (runs on a worker thread).

    Raises
    ------
    AnalysisError
        The set cannot be explained (no capture, capacitance for some only, a capture
        whose fit window is too short); the panel shows the message.
    Cancelled
        The request was cancelled before or after the fit.
    """
    from trueslope.core.explain import explain
    from trueslope.core.report.explain_text import captures_line, explanation_lines

    progress(0.0)
    stop_if_cancelled(cancel, "explaining")
    e = explain(list(req.analyses), list(req.contexts), progress, cancel)
    stop_if_cancelled(cancel, "explaining")
    progress(0.9)
    best = e.model(e.best_model)
    out = []
    for k, (a, c) in enumerate(zip(req.analyses, req.contexts)):
        curve = best.curves_v[k] if best is not None and k < len(best.curves_v) else None
        got = curves_for(a, c, curve, a.source in e.unexplained)
        if got is not None:
            out.append(got)
    progress(1.0)
    return ExplainAnswer(e, tuple(explanation_lines(e)), captures_line(e), tuple(out),
                         req.left_out)
