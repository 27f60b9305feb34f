"""Absorption or a probe's compensation: the one thing levels tell that shapes cannot.

A Dow branch and a probe's tail give the same shape at every rate
(``relaxation``); absorption leaves the trace on the comparator's levels, a probe's
tail moves the displayed ramp's end off the trip level by ``A s tau (1 + D e^(-T/tau))``
(``relaxation.probe_end_offset``; the end, because the fast reset overshoots its level
by the comparator's delay and the slow ramp hardly does). With the levels stated, the
fitted ends decide; a slope starting low is never absorption. SOURCES.md [probe-comp], [absorption].
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from . import relaxation as rx
from .jsonable import ToDict

#: A probe's start offset must exceed the level uncertainty by this factor to count.
LEVEL_MARGIN = 3.0
#: Uncertainty of a stated comparator level, as a fraction of the swing (common practice:
#: comparator levels from a reference and a divider of 0.1 % parts).
LEVEL_TOLERANCE_FRAC = 0.001


@dataclass(frozen=True)
class LevelCheck(ToDict):
    """Absorption or a probe's compensation, told by where the trace starts.

    ``measured_offset_v``: the fitted ramp's end minus the stated trip level
    (measurement frame, the set's weighted mean); ``probe_offset_v``: what a probe
    tail with the fitted branches would give there (absorption gives 0);
    ``uncertainty_v``; ``verdict`` ``"absorption"``, ``"probe"`` or ``"unclear"``.
    """

    measured_offset_v: float
    probe_offset_v: float
    uncertainty_v: float
    verdict: str


def level_check(best, members: Sequence, ends_v: Sequence[float]) -> LevelCheck | None:
    """Where the fitted curves of ``best`` (an ``explain.ModelResult`` of a relaxation)
    end (``ends_v``, each capture's model at its ramp time) against the stated trip levels
    of ``members`` (``explain.Member``); None when no capture states its levels."""
    rows = [(m, c, e) for m, c, e in zip(members, best.coef, ends_v)
            if m.trip_level_v is not None]
    if not rows:
        return None
    branches = rx.branches_of(best.model, best.theta, best.band_s)
    meas, pred, unc = [], [], []
    for m, (_, s), end in rows:
        meas.append(end - m.trip_level_v)
        pred.append(rx.probe_end_offset(branches, s, m.ramp_time_s, m.retrace_time_s))
        unc.append(LEVEL_TOLERANCE_FRAC * m.swing_v + m.floor_pct * m.span_v / 100.0)
    w = 1.0 / np.square(unc)
    measured = float(np.sum(w * meas) / np.sum(w))
    predicted = float(np.sum(w * pred) / np.sum(w))
    u = float(1.0 / math.sqrt(np.sum(w)))
    if abs(predicted) < LEVEL_MARGIN * u:
        verdict = "unclear"
    else:
        verdict = "probe" if abs(measured - predicted) < abs(measured) else "absorption"
    return LevelCheck(measured, predicted, u, verdict)


def relaxation_cause(best, check: LevelCheck | None) -> tuple[str, str | None]:
    """The cause of a fitted relaxation and the bench check that would decide it, if any."""
    amps = [p.value for p in best.parameters if p.name.startswith("amplitude")]
    if sum(amps) < 0:  # the slope starts low: absorption cannot do that
        return "probe-compensation", "probe-calibrator"
    if check is None or check.verdict == "unclear":
        return "absorption-or-probe", "probe-calibrator"
    return ("dielectric-absorption" if check.verdict == "absorption"
            else "probe-compensation"), None
