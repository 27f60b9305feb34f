"""Circuit context and the prototype self-check: is the ramp what the parts say?

The user may state what they know of the circuit (all optional): the timing
capacitance, the charging current (or the set resistor and the reference
voltage it is set from), the probe's resistance and capacitance, and a
tolerance. :func:`check_context` then puts each figure the parts predict
beside the one measured, with a verdict and the likely cause when they
disagree.

The stated circuit is a current ``I`` into ``C_eff = C + C_probe`` with the
probe's resistance ``R`` across it (REFERENCES.md, "Loading and probes")::

    dV/dt = I / C_eff - V / (R C_eff)
    V(t)  = I R - (I R - V0) exp(-t / (R C_eff))          (R finite)
    t(V0 -> V1) = R C_eff ln((I R - V0) / (I R - V1))     (C_eff (V1 - V0) / I without R)

in the measurement frame (a falling ramp mirrored; the resistance returns
to the capture's 0 V). The thresholds ``V0``, ``V1`` are the measured start
and end levels unless the user gives the comparator levels. The expected
slope and nonlinearity are those of the least-squares line over the same
fraction of the predicted ramp as the measured fit window.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from .errors import SettingsError
from .results import Figures, _plain
from .units import format_si, parse_si

if TYPE_CHECKING:  # diagnose imports this module
    from .diagnose import Diagnosis

#: Default tolerance of the stated part values, fraction.
DEFAULT_TOLERANCE = 0.10
#: Measured figures that come from fitting a shape (the shunt, the nonlinearity)
#: are never judged tighter than this, whatever the parts' tolerance.
SHAPE_TOLERANCE_MIN = 0.25
#: An equivalent shunt "matches" a reference resistance within this factor.
MATCH_FACTOR = 1.3
#: Input resistance of a 10x passive probe with its scope, and of a 1x probe or
#: a scope input alone (common practice; REFERENCES.md, "Loading and probes").
PROBE_10X_OHM = 10e6
SCOPE_INPUT_OHM = 1e6
#: Points of the predicted curve used for its least-squares nonlinearity.
PREDICTION_POINTS = 4001


@dataclass(frozen=True)
class CircuitContext:
    """What the user knows of the circuit, SI units, every field optional.

    Attributes
    ----------
    capacitance_f : float or None
        Timing capacitance, farads.
    current_a : float or None
        Charging current, amperes.
    set_resistor_ohm, reference_v : float or None
        A current set by a reference voltage across a resistor:
        ``I = reference_v / set_resistor_ohm`` when ``current_a`` is not given.
    probe_resistance_ohm, probe_capacitance_f : float or None
        The probe (or scope input) across the capacitor.
    tolerance_frac : float
        Tolerance of the stated values, fraction (default 0.10).
    low_threshold_v, high_threshold_v : float or None
        Comparator levels the ramp runs between (true polarity), volts; the
        measured start and end levels when not given.

    Raises
    ------
    SettingsError
        A value is not finite and positive (the reference voltage may be
        negative), or the tolerance is not between 0 and 1.
    """

    capacitance_f: float | None = None
    current_a: float | None = None
    set_resistor_ohm: float | None = None
    reference_v: float | None = None
    probe_resistance_ohm: float | None = None
    probe_capacitance_f: float | None = None
    tolerance_frac: float = DEFAULT_TOLERANCE
    low_threshold_v: float | None = None
    high_threshold_v: float | None = None

    def __post_init__(self) -> None:
        for name in ("capacitance_f", "current_a", "set_resistor_ohm", "probe_resistance_ohm"):
            v = getattr(self, name)
            if v is not None and not (math.isfinite(v) and v > 0):
                raise SettingsError(f"{name} must be a positive number, got {v!r}")
        if self.probe_capacitance_f is not None and not (
                math.isfinite(self.probe_capacitance_f) and self.probe_capacitance_f >= 0):
            raise SettingsError(
                f"probe_capacitance_f must be zero or positive, got {self.probe_capacitance_f!r}")
        if self.reference_v is not None and not (math.isfinite(self.reference_v)
                                                 and self.reference_v != 0):
            raise SettingsError(f"reference_v must be a non-zero number, got {self.reference_v!r}")
        t = self.tolerance_frac
        if not (math.isfinite(t) and 0 < t < 1):
            raise SettingsError(f"tolerance must be between 0 and 100 %, got {100 * t:g} %")
        lo, hi = self.low_threshold_v, self.high_threshold_v
        for name, v in (("low_threshold_v", lo), ("high_threshold_v", hi)):
            if v is not None and not math.isfinite(v):
                raise SettingsError(f"{name} must be a finite number, got {v!r}")
        if (lo is None) != (hi is None):
            raise SettingsError("give both comparator thresholds, or neither")
        if lo is not None and lo == hi:
            raise SettingsError(f"the two thresholds must differ, both are {lo} V")

    @property
    def effective_current_a(self) -> float | None:
        """The charging current: ``current_a``, else ``|reference_v| / set_resistor_ohm``, amperes."""
        if self.current_a is not None:
            return self.current_a
        if self.set_resistor_ohm is not None and self.reference_v is not None:
            return abs(self.reference_v) / self.set_resistor_ohm
        return None

    @property
    def effective_capacitance_f(self) -> float | None:
        """Capacitance at the ramp node, the probe's added: ``C + C_probe``, farads."""
        if self.capacitance_f is None:
            return None
        return self.capacitance_f + (self.probe_capacitance_f or 0.0)

    @property
    def is_empty(self) -> bool:
        """True when nothing about the circuit is stated (the tolerance alone does not count)."""
        return all(getattr(self, n) is None for n in (
            "capacitance_f", "current_a", "set_resistor_ohm", "reference_v",
            "probe_resistance_ohm", "probe_capacitance_f", "low_threshold_v",
            "high_threshold_v"))

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON types, the derived current and capacitance included."""
        return {
            "capacitance_f": self.capacitance_f,
            "current_a": self.current_a,
            "set_resistor_ohm": self.set_resistor_ohm,
            "reference_v": self.reference_v,
            "probe_resistance_ohm": self.probe_resistance_ohm,
            "probe_capacitance_f": self.probe_capacitance_f,
            "tolerance_frac": self.tolerance_frac,
            "low_threshold_v": self.low_threshold_v,
            "high_threshold_v": self.high_threshold_v,
            "effective_current_a": self.effective_current_a,
            "effective_capacitance_f": self.effective_capacitance_f,
        }


def _opt(option: str, text: Any, unit: str) -> float | None:
    if text is None:
        return None
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        return float(text)
    if isinstance(text, str) and not text.strip():
        return None
    try:
        return parse_si(str(text), unit)
    except SettingsError as exc:
        raise SettingsError(f"--{option}: {exc}") from None


def parse_context(capacitance: str | None = None, current: str | None = None,
                  set_resistor: str | None = None, reference: str | None = None,
                  probe: str | None = None, tolerance: str | None = None,
                  thresholds: str | None = None) -> CircuitContext | None:
    """Build the circuit context from what the user typed.

    Parameters
    ----------
    capacitance : str, optional
        Timing capacitance, e.g. ``"47n"`` or ``"4.7uF"``.
    current : str, optional
        Charging current, e.g. ``"1.2m"``.
    set_resistor, reference : str, optional
        Resistor and reference voltage that set the current, e.g. ``"3.3k"``
        and ``"1.25"``; the current is ``reference / set_resistor`` when
        ``current`` is not given.
    probe : str, optional
        Probe resistance, optionally with its capacitance: ``"10M,12p"`` or
        ``"1M"``.
    tolerance : str, optional
        ``"10%"`` (a bare number is a percentage too); default 10 %.
    thresholds : str, optional
        The comparator levels the ramp runs between, ``"0.05,4"`` volts.

    Returns
    -------
    CircuitContext or None
        None when nothing is given.

    Raises
    ------
    SettingsError
        A value cannot be read; the message names the option (``--capacitance``...).
    """
    probe_r = probe_c = None
    if probe is not None and str(probe).strip():
        parts = [p.strip() for p in str(probe).split(",")]
        if len(parts) > 2 or not parts[0]:
            raise SettingsError(
                f"--probe: cannot read {probe!r}: expected the probe's resistance, optionally "
                f"with its capacitance, e.g. 10M,12p or 1M")
        probe_r = _opt("probe", parts[0], "\u03a9")
        if len(parts) == 2 and parts[1]:
            probe_c = _opt("probe", parts[1], "F")
    lo = hi = None
    if thresholds is not None and str(thresholds).strip():
        parts = [p.strip() for p in str(thresholds).split(",")]
        if len(parts) != 2:
            raise SettingsError(f"--thresholds: cannot read {thresholds!r}: expected two "
                                f"levels in volts, e.g. 0.05,4")
        lo, hi = (_opt("thresholds", p, "V") for p in parts)
    values = dict(
        capacitance_f=_opt("capacitance", capacitance, "F"),
        current_a=_opt("current", current, "A"),
        set_resistor_ohm=_opt("set-resistor", set_resistor, "\u03a9"),
        reference_v=_opt("reference", reference, "V"),
        probe_resistance_ohm=probe_r, probe_capacitance_f=probe_c,
        low_threshold_v=lo, high_threshold_v=hi)
    tol = _opt("tolerance", tolerance, "%")
    if all(v is None for v in values.values()):
        if tol is not None:
            _check_tolerance(tol)
        return None
    if (values["set_resistor_ohm"] is None) != (values["reference_v"] is None) \
            and values["current_a"] is None:
        missing = "--reference" if values["reference_v"] is None else "--set-resistor"
        raise SettingsError(f"{missing} is needed too: the current is the reference voltage "
                            f"divided by the set resistor")
    try:
        return CircuitContext(tolerance_frac=DEFAULT_TOLERANCE if tol is None else tol, **values)
    except SettingsError as exc:
        raise SettingsError(f"{_option_of(str(exc))}: {exc}") from None


def _check_tolerance(tol: float) -> None:
    if not (0 < tol < 1):
        raise SettingsError(f"--tolerance: must be between 0 and 100 %, got {100 * tol:g} %")


_OPTIONS = {"capacitance_f": "--capacitance", "current_a": "--current",
            "set_resistor_ohm": "--set-resistor", "reference_v": "--reference",
            "probe_resistance_ohm": "--probe", "probe_capacitance_f": "--probe",
            "tolerance": "--tolerance", "threshold": "--thresholds"}


def _option_of(message: str) -> str:
    for key, opt in _OPTIONS.items():
        if key in message:
            return opt
    return "circuit context"


# ----------------------------------------------------------------------------- the check

@dataclass(frozen=True)
class CheckItem:
    """One expected figure beside the measured one.

    Attributes
    ----------
    name : str
        E.g. ``"slope"``, ``"ramp time"``.
    expected, measured : float or None
        In SI units (``unit``); None where it cannot be worked out.
    unit : str
        ``"V/s"``, ``"s"``, ``"Hz"``, ``"Ω"``, ``"%"``, ``"A"``, ``"F"``.
    verdict : str
        ``"within tolerance"``, ``"outside"`` or ``"not checked"``.
    deviation_pct : float or None
        ``100 (measured - expected) / expected``.
    likely_cause : str
        Why they differ, when outside (empty otherwise); for an item that is
        not checked, what it is.
    """

    name: str
    expected: float | None
    measured: float | None
    unit: str
    verdict: str
    deviation_pct: float | None
    likely_cause: str = ""

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "expected": _plain(self.expected),
                "measured": _plain(self.measured), "unit": self.unit,
                "verdict": self.verdict, "deviation_pct": _plain(self.deviation_pct),
                "likely_cause": self.likely_cause}


@dataclass(frozen=True)
class ContextCheck:
    """The prototype self-check.

    Attributes
    ----------
    items : tuple of CheckItem
    probe_match : str
        What the equivalent shunt found looks like: ``"10x probe (about 10
        Mohm)"``, ``"1x probe or scope input (about 1 Mohm)"``, ``"neither"``,
        or ``"no shunt loading found"``.
    probe_predicted_nonlinearity_pct : float or None
        Least-squares nonlinearity the stated probe alone would cause over
        the fit window, % of the span (None without a probe resistance and a
        capacitance).
    measured_nonlinearity_pct : float
    probe_explains_bow : bool
        True when a bow above the resolution is measured and the stated
        probe predicts it (within the shape tolerance or the floor).
    summary : str
        Two or three sentences.
    """

    items: tuple[CheckItem, ...]
    probe_match: str
    probe_predicted_nonlinearity_pct: float | None
    measured_nonlinearity_pct: float
    probe_explains_bow: bool
    summary: str

    def to_dict(self) -> dict[str, Any]:
        return {"items": [i.to_dict() for i in self.items], "probe_match": self.probe_match,
                "probe_predicted_nonlinearity_pct": _plain(self.probe_predicted_nonlinearity_pct),
                "measured_nonlinearity_pct": _plain(self.measured_nonlinearity_pct),
                "probe_explains_bow": bool(self.probe_explains_bow), "summary": self.summary}


@dataclass(frozen=True)
class Prediction:
    """The ramp the stated circuit would make (measurement frame).

    Attributes
    ----------
    ramp_time_s : float
        Time from the low to the high threshold; ``inf`` when the stated
        resistance stops the ramp below the high threshold.
    slope_v_per_s : float
        Least-squares slope over the window.
    nonlinearity_pct : float
        Least-squares nonlinearity over the window, % of the fitted span.
    initial_slope_v_per_s : float
        ``I / C_eff - V0 / (R C_eff)``.
    """

    ramp_time_s: float
    slope_v_per_s: float
    nonlinearity_pct: float
    initial_slope_v_per_s: float


def predict_ramp(current_a: float, capacitance_f: float, v0: float, v1: float,
                 shunt_ohm: float | None = None, window: tuple[float, float] = (0.0, 1.0),
                 ) -> Prediction:
    """The ramp of a current into a capacitance with an optional resistance across it.

    Parameters
    ----------
    current_a : float
        Charging current I, amperes.
    capacitance_f : float
        Node capacitance C, farads.
    v0, v1 : float
        Start and end levels (measurement frame, ``v1 > v0``), volts.
    shunt_ohm : float, optional
        Resistance R across the capacitor, ohms; None for none.
    window : (float, float)
        Fit window as fractions of the ramp time.

    Returns
    -------
    Prediction
        Ramp time ``R C ln((I R - v0) / (I R - v1))`` (``C (v1 - v0) / I``
        without R); the slope and nonlinearity of the least-squares line
        fitted (``numpy.polyfit``) to the exact exponential over the window.
    """
    I, C = float(current_a), float(capacitance_f)
    if shunt_ohm is None or not math.isfinite(shunt_ohm):
        T = C * (v1 - v0) / I
        return Prediction(ramp_time_s=T, slope_v_per_s=I / C, nonlinearity_pct=0.0,
                          initial_slope_v_per_s=I / C)
    R = float(shunt_ohm)
    tau = R * C
    v_inf = I * R
    s0 = (v_inf - v0) / tau
    if v_inf <= v1:
        return Prediction(ramp_time_s=math.inf, slope_v_per_s=math.nan,
                          nonlinearity_pct=math.nan, initial_slope_v_per_s=s0)
    T = tau * math.log((v_inf - v0) / (v_inf - v1))
    t = np.linspace(window[0] * T, window[1] * T, PREDICTION_POINTS)
    # V = v_inf - (v_inf - v0) exp(-t/tau), written with expm1 so a tau of hours
    # against a ramp of microseconds keeps its digits
    v = v0 - (v_inf - v0) * np.expm1(-t / tau)
    p = np.polyfit(t - t[0], v, 1)
    resid = v - np.polyval(p, t - t[0])
    span = p[0] * (t[-1] - t[0])
    nl = 100.0 * float(np.max(np.abs(resid))) / span if span > 0 else math.nan
    return Prediction(ramp_time_s=T, slope_v_per_s=float(p[0]), nonlinearity_pct=nl,
                      initial_slope_v_per_s=s0)


def probe_match(shunt_ohm: float | None) -> str:
    """Which familiar input an equivalent shunt resistance looks like."""
    if shunt_ohm is None or not math.isfinite(shunt_ohm):
        return "no shunt loading found"
    if PROBE_10X_OHM / MATCH_FACTOR <= shunt_ohm <= PROBE_10X_OHM * MATCH_FACTOR:
        return "10x probe (about 10 Mohm)"
    if SCOPE_INPUT_OHM / MATCH_FACTOR <= shunt_ohm <= SCOPE_INPUT_OHM * MATCH_FACTOR:
        return "1x probe or scope input (about 1 Mohm)"
    return "neither"


def _dev(expected: float | None, measured: float | None) -> float | None:
    if expected is None or measured is None or not (math.isfinite(expected)
                                                      and math.isfinite(measured)) \
            or expected == 0:
        return None
    return 100.0 * (measured - expected) / expected


def _item(name: str, expected: float | None, measured: float | None, unit: str,
          tol: float, low_cause: str, high_cause: str) -> CheckItem:
    dev = _dev(expected, measured)
    if dev is None:
        if expected is not None and math.isinf(expected):
            return CheckItem(name, expected, measured, unit, "outside", None, high_cause)
        return CheckItem(name, expected, measured, unit, "not checked", None, "")
    if abs(dev) <= 100.0 * tol:
        return CheckItem(name, expected, measured, unit, "within tolerance", dev, "")
    return CheckItem(name, expected, measured, unit, "outside", dev,
                     low_cause if dev < 0 else high_cause)


def _slope_causes(diagnosis: Any, cap_given: bool, probe_c_given: bool) -> tuple[str, str]:
    sig = getattr(diagnosis, "signature", None)
    low = ["the capacitance is above its marked value"]
    if not probe_c_given:
        low.insert(0, "capacitance in parallel that is not stated (probe, cable, board: "
                      "state the probe's R and C in the circuit context)")
    low.append("the current is below the stated value (the current source running out of "
               "headroom, set resistor high, reference low)")
    if sig == "shunt-loading":
        r = getattr(diagnosis, "equivalent_shunt_ohm", None)
        low.insert(0, "part of the current leaks through the shunt found"
                   + (f" ({format_si(r, 'Ω', 3)})" if r else ""))
    if sig == "dielectric-absorption":
        low.append("the absorption branches add capacitance")
    high = ["the capacitance is below its marked value (tolerance; a class 2 ceramic loses "
            "capacitance under DC bias)",
            "the current is above the stated value (set resistor low, reference high)"]
    if sig == "voltage-coefficient":
        high.insert(0, "the voltage coefficient found lowers the capacitance along the ramp")
    return "; or ".join(low), "; or ".join(high)


def _nl_cause(diagnosis: Any, probe_r: float | None) -> str:
    sig = getattr(diagnosis, "signature", None)
    r = getattr(diagnosis, "equivalent_shunt_ohm", None)
    if sig == "shunt-loading":
        return ("a lower resistance than the stated probe's is across the capacitor"
                + (f" (equivalent {format_si(r, 'Ω', 3)})" if r else "")
                + ": the current source's output resistance, leakage, or a scope input")
    if sig == "voltage-coefficient":
        return "the capacitance changes with voltage (class 2 ceramic) or the current does"
    if sig == "dielectric-absorption":
        return "dielectric absorption in the timing capacitor (or a mis-compensated probe)"
    if sig == "unclassified":
        return "a shape the stated parts do not explain (see the diagnosis)"
    return "the bow has a cause other than the stated parts"


def check_context(figures: Figures, diagnosis: Diagnosis | None,
                  context: CircuitContext) -> ContextCheck:
    """Put what the stated parts predict beside what was measured.

    Parameters
    ----------
    figures : Figures
        Measured figures of the capture.
    diagnosis : Diagnosis or None
        The curvature diagnosis (for the equivalent shunt and the causes).
    context : CircuitContext

    Returns
    -------
    ContextCheck
        Items: slope (``I / C_eff``, or the least-squares slope of the
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
    items: list[CheckItem] = []
    low_c, high_c = _slope_causes(diagnosis, C is not None,
                                  context.probe_capacitance_f is not None)
    pred = predict_ramp(I, C, v0, v1, R, window) if I is not None and C is not None else None
    if pred is not None:
        items.append(_item("slope", pred.slope_v_per_s, slope_meas, "V/s", tol, low_c, high_c))
        t_high = ("the ramp takes longer than I/C gives: " + low_c if not math.isinf(
            pred.ramp_time_s) else "the stated probe resistance would stop the ramp below the "
            "upper threshold, so the circuit does not run on the stated values")
        items.append(_item("ramp time", pred.ramp_time_s, T_meas, "s", tol,
                           "the ramp is faster than I/C gives: " + high_c, t_high))
        period = pred.ramp_time_s + figures.retrace_time_s
        items.append(_item("period", period, figures.period_s, "s", tol,
                           "follows the ramp time (the retrace is taken as measured)",
                           "follows the ramp time (the retrace is taken as measured)"))
        freq = 1.0 / period if period > 0 and math.isfinite(period) else 0.0
        items.append(_item("frequency", freq, figures.frequency_hz, "Hz", tol,
                           "follows the ramp time: the ramp is slower than predicted",
                           "follows the ramp time: the ramp is faster than predicted"))
    elif C is not None:
        implied = slope_meas * C
        items.append(CheckItem("implied current", None, implied, "A", "not checked", None,
                               "measured slope × stated capacitance"))
    elif I is not None:
        implied = I / slope_meas if slope_meas > 0 else math.nan
        items.append(CheckItem("implied capacitance", None, implied, "F", "not checked", None,
                               "stated current / measured slope"))

    shunt = getattr(diagnosis, "equivalent_shunt_ohm", None)
    if shunt is None and C is not None and getattr(diagnosis, "signature", None) == \
            "shunt-loading" and getattr(diagnosis, "tau_s", None):
        shunt = diagnosis.tau_s / C
    if R is not None or shunt is not None:
        items.append(_item(
            "equivalent shunt", R, shunt, "Ω", shape_tol,
            "another resistance is in parallel with the probe: the current source's output "
            "resistance, leakage across the capacitor, or a scope input",
            "the probe's resistance is higher than stated, or the bend has another cause"))
        if R is not None and shunt is None:
            items[-1] = CheckItem("equivalent shunt", R, None, "Ω", "not checked", None,
                                  "no shunt loading found in the ramp's shape")

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
        margin = max(shape_tol * max(expected_nl, 0.0), floor if math.isfinite(floor) else 0.0)
        dev = _dev(expected_nl, nl_meas)
        if math.isfinite(expected_nl) and abs(nl_meas - expected_nl) <= margin:
            verdict, cause = "within tolerance", ""
        else:
            verdict = "outside"
            cause = (_nl_cause(diagnosis, R) if nl_meas > expected_nl else
                     "the probe's resistance is higher than stated, or the probe was not on "
                     "the node during the capture")
        items.append(CheckItem("nonlinearity", expected_nl, nl_meas, "%", verdict, dev, cause))
    explains = bool(bow and probe_nl is not None and math.isfinite(probe_nl)
                    and abs(nl_meas - probe_nl) <= max(shape_tol * nl_meas, floor))
    match = probe_match(shunt)
    return ContextCheck(items=tuple(items), probe_match=match,
                        probe_predicted_nonlinearity_pct=probe_nl,
                        measured_nonlinearity_pct=nl_meas, probe_explains_bow=explains,
                        summary=_summary(items, match, probe_nl, nl_meas, bow, explains, tol,
                                         shunt))


def _summary(items: list[CheckItem], match: str, probe_nl: float | None, nl_meas: float,
             bow: bool, explains: bool, tol: float, shunt: float | None) -> str:
    checked = [i for i in items if i.verdict != "not checked"]
    out = [i for i in checked if i.verdict == "outside"]
    parts = []
    if checked:
        if out:
            def how(i: CheckItem) -> str:
                if i.name == "nonlinearity" or i.deviation_pct is None:
                    return (f"{i.name} ({i.measured:.2g} % measured against {i.expected:.2g} %)"
                            if i.name == "nonlinearity" else i.name)
                return f"{i.name} ({i.deviation_pct:+.3g} %)"
            first = out[0]
            parts.append(f"{len(checked) - len(out)} of {len(checked)} figures agree with the "
                         f"stated parts within {100 * tol:.3g} %; outside: "
                         f"{', '.join(how(i) for i in out)}. Likely cause of the first: "
                         f"{first.likely_cause}.")
        else:
            parts.append(f"All {len(checked)} figures agree with the stated parts within "
                         f"their tolerance.")
    else:
        implied = [i for i in items if i.name.startswith("implied") and i.measured is not None]
        lead = ""
        if implied:
            i = implied[0]
            lead = (f"The {i.name} is {format_si(i.measured, i.unit, 3)} ({i.likely_cause}). ")
        parts.append(f"{lead}To check the ramp against the parts, give both the capacitance "
                     f"and the current (or the set resistor and the reference).")
    if shunt is not None:
        parts.append(f"The equivalent shunt, {format_si(shunt, 'Ω', 3)}, looks like: {match}.")
    if probe_nl is not None:
        if not bow:
            parts.append(f"The stated probe alone predicts {probe_nl:.2g} % nonlinearity; the "
                         f"measured {nl_meas:.2g} % is within the capture's resolution.")
        elif explains:
            parts.append(f"The stated probe alone predicts {probe_nl:.2g} % nonlinearity, as "
                         f"measured ({nl_meas:.2g} %): the probe explains the bow.")
        else:
            parts.append(f"The stated probe alone predicts {probe_nl:.2g} % nonlinearity, "
                         f"against {nl_meas:.2g} % measured: the probe does not explain the "
                         f"bow.")
    return " ".join(parts)
