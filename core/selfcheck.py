"""The self-check: is the ramp what the stated parts say?

:func:`check_context` puts each figure the stated circuit predicts
(``circuit.predict_ramp``) beside the one measured, with a verdict against the
tolerance and, when they disagree, the codes of the likely causes (``report``
words them). Measurement frame: a falling ramp is mirrored; the thresholds are
the measured start and end levels unless the user gives the comparator's.
The expected slope and nonlinearity are those of the least-squares line over
the same fraction of the predicted ramp as the measured fit window.
"""

from __future__ import annotations

import dataclasses
import math

from .circuit import CircuitContext, predict_ramp, probe_match
from .results import CheckItem, ContextCheck, Diagnosis, Figures

#: Verdicts that count as agreeing with the stated parts, and those that count against.
AGREES = frozenset({"within tolerance", "explained by the parts", "below resolution"})
DISAGREES = frozenset({"outside", "more than the parts explain", "less than the parts predict"})
#: Measured figures that come from fitting a shape (the shunt, the nonlinearity)
#: are never judged tighter than this, whatever the parts' tolerance.
SHAPE_TOLERANCE_MIN = 0.25


def _dev(expected: float | None, measured: float | None) -> float | None:
    if expected is None or measured is None or not (math.isfinite(expected)
                                                      and math.isfinite(measured)) \
            or expected == 0:
        return None
    return 100.0 * (measured - expected) / expected


def _item(name: str, expected: float | None, measured: float | None, unit: str,
          tol: float, low: tuple[str, ...], high: tuple[str, ...]) -> CheckItem:
    dev = _dev(expected, measured)
    if dev is None:
        if expected is not None and math.isinf(expected):
            return CheckItem(name, expected, measured, unit, "outside", None, high)
        return CheckItem(name, expected, measured, unit, "not checked", None)
    if abs(dev) <= 100.0 * tol:
        return CheckItem(name, expected, measured, unit, "within tolerance", dev)
    return CheckItem(name, expected, measured, unit, "outside", dev, low if dev < 0 else high)


def _slope_causes(signature: str, probe_c_given: bool, curvature: str = "convex"
                  ) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """Codes of why the slope is low and why it is high, likeliest first."""
    low = ["capacitance-high", "current-low"]
    if signature == "voltage-coefficient" and curvature == "concave":
        low.insert(0, "voltage-coefficient-raises-capacitance")
    if not probe_c_given:
        low.insert(0, "unstated-capacitance")
    if signature == "shunt-loading":
        low.insert(0, "shunt-leaks-current")
    if signature == "dielectric-absorption":
        low.append("absorption-adds-capacitance")
    high = ["capacitance-low", "current-high"]
    if signature == "voltage-coefficient" and curvature != "concave":
        high.insert(0, "voltage-coefficient-lowers-capacitance")
    return tuple(low), tuple(high)


def _nl_cause(signature: str) -> str:
    return {"shunt-loading": "nl-lower-resistance", "voltage-coefficient": "nl-voltage-coefficient",
            "dielectric-absorption": "nl-absorption",
            "unclassified": "nl-unexplained"}.get(signature, "nl-other-cause")


def _signed(item: CheckItem, sign: float) -> CheckItem:
    """The item with its values in true polarity (the deviation is sign-free)."""
    if sign > 0:
        return item
    return dataclasses.replace(
        item, expected=None if item.expected is None else sign * item.expected,
        measured=None if item.measured is None else sign * item.measured)


def _nonlinearity_item(expected: float, measured: float, floor: float, shape_tol: float,
                       signature: str) -> CheckItem:
    """The measured bow against the one the stated parts predict, judged against the floor.

    Verdicts: ``"below resolution"`` (neither the measured nor the predicted bow is above
    what the capture resolves), ``"explained by the parts"`` (they agree within the shape
    tolerance or the floor), ``"more than the parts explain"`` (with the cause) and
    ``"less than the parts predict"`` (the stated probe was not on the node, or is
    larger than stated).
    """
    dev = _dev(expected, measured)
    f = floor if math.isfinite(floor) else 0.0
    if measured <= f and (not math.isfinite(expected) or expected <= f):
        return CheckItem("nonlinearity", expected, measured, "%", "below resolution", dev)
    margin = max(shape_tol * max(expected, 0.0), f)
    if math.isfinite(expected) and abs(measured - expected) <= margin:
        return CheckItem("nonlinearity", expected, measured, "%", "explained by the parts", dev)
    if not math.isfinite(expected) or measured > expected:
        return CheckItem("nonlinearity", expected, measured, "%", "more than the parts explain",
                         dev, (_nl_cause(signature),))
    return CheckItem("nonlinearity", expected, measured, "%", "less than the parts predict",
                     dev, ("probe-not-on-node",))


def check_context(figures: Figures, diagnosis: Diagnosis,
                  context: CircuitContext) -> ContextCheck:
    """Put what the stated parts predict beside what was measured.

    Parameters
    ----------
    figures : Figures
        Measured figures of the capture.
    diagnosis : Diagnosis
        The curvature diagnosis (for the equivalent shunt and the causes).
    context : CircuitContext

    Returns
    -------
    ContextCheck
        Verdicts: "within tolerance", "outside", "not checked", and for the
        nonlinearity those of :func:`_nonlinearity_item`. Items: slope (``I / C_eff``, or the least-squares slope of the
        loaded exponential when a probe resistance is given), ramp time
        between the thresholds, period (predicted ramp time + measured
        retrace), frequency, equivalent shunt (against the probe's
        resistance), nonlinearity (against the stated probe's), and the
        implied current or capacitance when only one of them is given.
        Slope, times and frequency are judged against ``tolerance_frac``;
        the shunt and the nonlinearity against ``max(tolerance_frac,
        SHAPE_TOLERANCE_MIN)`` (and the resolution floor for the
        nonlinearity).
    """
    tol = context.tolerance_frac
    shape_tol = max(tol, SHAPE_TOLERANCE_MIN)
    sign = -1.0 if figures.direction == "falling" else 1.0
    if context.low_threshold_v is not None and context.high_threshold_v is not None:
        a, b = sign * context.low_threshold_v, sign * context.high_threshold_v
    else:
        a, b = sign * figures.start_v, sign * figures.end_v
    v0, v1 = min(a, b), max(a, b)
    T_meas = figures.ramp_time_s
    window = (figures.window_start_s / T_meas, figures.window_end_s / T_meas) if T_meas > 0 \
        else (0.05, 0.95)
    I = context.effective_current_a
    C = context.effective_capacitance_f
    R = context.probe_resistance_ohm
    slope_meas = abs(figures.slope_v_per_s)
    sig = diagnosis.signature
    items: list[CheckItem] = []
    low_c, high_c = _slope_causes(sig, context.probe_capacitance_f is not None,
                                  diagnosis.curvature)
    pred = predict_ramp(I, C, v0, v1, R, window) if I is not None and C is not None else None
    if pred is not None:
        # slopes keep their true sign (a falling ramp's are negative); the verdict compares
        # magnitudes, which is what the parts set
        items.append(_signed(_item("slope", pred.slope_v_per_s, slope_meas, "V/s", tol,
                                   low_c, high_c), sign))
        t_high = (("ramp-slower-than-ic",) + low_c if not math.isinf(pred.ramp_time_s)
                  else ("probe-stops-ramp",))
        items.append(_item("ramp time", pred.ramp_time_s, T_meas, "s", tol,
                           ("ramp-faster-than-ic",) + high_c, t_high))
        period = pred.ramp_time_s + figures.retrace_time_s
        items.append(_item("period", period, figures.period_s, "s", tol,
                           ("follows-ramp-time",), ("follows-ramp-time",)))
        freq = 1.0 / period if period > 0 and math.isfinite(period) else 0.0
        items.append(_item("frequency", freq, figures.frequency_hz, "Hz", tol,
                           ("ramp-slower",), ("ramp-faster",)))
    elif C is not None:
        items.append(CheckItem("implied current", None, slope_meas * C, "A", "not checked",
                               None, ("implied-current",)))
    elif I is not None:
        implied = I / slope_meas if slope_meas > 0 else math.nan
        items.append(CheckItem("implied capacitance", None, implied, "F", "not checked", None,
                               ("implied-capacitance",)))

    shunt = diagnosis.equivalent_shunt_ohm
    if shunt is None and C is not None and sig == "shunt-loading" and diagnosis.tau_s:
        shunt = diagnosis.tau_s / C
    if R is not None or shunt is not None:
        if R is not None and shunt is None:
            items.append(CheckItem("equivalent shunt", R, None, "Ω", "not checked", None,
                                   ("no-shunt-found",), basis="stated probe"))
        else:
            items.append(dataclasses.replace(
                _item("equivalent shunt", R, shunt, "Ω", shape_tol, ("another-resistance",),
                      ("probe-higher-or-other-cause",)), basis="stated probe"))

    # nonlinearity the stated probe alone would cause, against the one measured
    nl_meas = figures.nonlinearity_pct
    floor = figures.nonlinearity_floor_pct
    bow = math.isfinite(nl_meas) and math.isfinite(floor) and nl_meas > floor
    probe_nl = None
    if R is not None and C is not None:
        I_probe = I
        if I_probe is None:  # the current that gives the measured slope with the probe's loss
            I_probe = slope_meas * C + 0.5 * (v0 + v1) / R
        probe_pred = pred if pred is not None else predict_ramp(I_probe, C, v0, v1, R, window)
        probe_nl = probe_pred.nonlinearity_pct
    expected_nl = probe_nl if probe_nl is not None else (0.0 if (I is not None and C is not None)
                                                         else None)
    if expected_nl is not None and math.isfinite(nl_meas):
        items.append(_nonlinearity_item(expected_nl, nl_meas, floor, shape_tol, sig))
    explains = bool(bow and probe_nl is not None and math.isfinite(probe_nl)
                    and abs(nl_meas - probe_nl) <= max(shape_tol * nl_meas, floor))
    return ContextCheck(items=tuple(items), tolerance_frac=tol, equivalent_shunt_ohm=shunt,
                        probe_match=probe_match(shunt),
                        probe_predicted_nonlinearity_pct=probe_nl,
                        measured_nonlinearity_pct=nl_meas, bow_resolved=bool(bow),
                        probe_explains_bow=explains)
