"""The circuit the user describes, and the ramp it would make.

The user may state what they know of the circuit (all optional): the timing
capacitance, the charging current (or the set resistor and the reference
voltage it is set from), the probe's resistance and capacitance, a tolerance
and the comparator's thresholds. This module holds that description
(:class:`CircuitContext`), reads it from typed text (:func:`parse_context`,
errors naming the field, never a command-line option or a form label), and
predicts the ramp it gives (:func:`predict_ramp`). It imports nothing else of
trueslope's but the error family and the unit parser: a leaf.

The stated circuit is a current ``I`` into ``C_eff = C + C_probe`` with the
probe's resistance ``R`` across it (SOURCES.md [loading])::

    dV/dt = I / C_eff - V / (R C_eff)
    V(t)  = I R - (I R - V0) exp(-t / (R C_eff))          (R finite)
    t(V0 -> V1) = R C_eff ln((I R - V0) / (I R - V1))     (C_eff (V1 - V0) / I without R)
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from .errors import SettingsError
from .jsonable import ToDict
from .units import format_si, parse_si

#: Default tolerance of the stated part values, fraction.
DEFAULT_TOLERANCE = 0.10
#: Measured figures that come from fitting a shape (the shunt, the nonlinearity)
#: are never judged tighter than this, whatever the parts' tolerance.
SHAPE_TOLERANCE_MIN = 0.25
#: An equivalent shunt "matches" a reference resistance within this factor.
MATCH_FACTOR = 1.3
#: Input resistance of a 10x passive probe with its scope, and of a 1x probe or
#: a scope input alone (common practice; SOURCES.md [loading]).
PROBE_10X_OHM = 10e6
SCOPE_INPUT_OHM = 1e6
#: What a bench circuit can hold: (lowest, highest, unit) of each stated value. Outside
#: them a number is a typing slip (a missing prefix, an exponent too many), not a part.
BENCH_RANGES = {
    "capacitance_f": (1e-15, 10.0, "F"),
    "current_a": (1e-15, 100.0, "A"),
    "set_resistor_ohm": (1e-3, 1e12, "\u03a9"),
    "probe_resistance_ohm": (1.0, 1e15, "\u03a9"),
    "probe_capacitance_f": (0.0, 1e-6, "F"),
    "reference_v": (1e-6, 1e5, "V"),
}
#: Comparator thresholds lie within this many volts of zero.
MAX_THRESHOLD_V = 1e5
#: Points of the predicted curve used for its least-squares nonlinearity.
PREDICTION_POINTS = 4001


@dataclass(frozen=True)
class CircuitContext(ToDict):
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

    JSON_EXTRA: ClassVar[tuple[str, ...]] = ("effective_current_a", "effective_capacitance_f")

    def __post_init__(self) -> None:
        for name in ("capacitance_f", "current_a", "set_resistor_ohm", "probe_resistance_ohm"):
            v = getattr(self, name)
            if v is not None and not (math.isfinite(v) and v > 0):
                raise SettingsError(f"must be a positive number, got {v!r}", FIELD_OF[name])
            lo, hi, unit = BENCH_RANGES[name]
            if v is not None and not lo <= v <= hi:
                raise SettingsError(f"{format_si(v, unit, 4)} is outside any bench's range "
                                    f"({format_si(lo, unit, 3)} to {format_si(hi, unit, 3)})",
                                    FIELD_OF[name])
        c = self.probe_capacitance_f
        if c is not None and not (math.isfinite(c) and 0 <= c <= BENCH_RANGES["probe_capacitance_f"][1]):
            raise SettingsError(f"the probe's capacitance must be between 0 and "
                                f"{format_si(BENCH_RANGES['probe_capacitance_f'][1], 'F', 3)}, "
                                f"got {c!r} F", "probe")
        r = self.reference_v
        if r is not None and not (math.isfinite(r) and r != 0):
            raise SettingsError(f"must be a non-zero number, got {r!r}", "reference")
        if r is not None and not (BENCH_RANGES["reference_v"][0] <= abs(r)
                                  <= BENCH_RANGES["reference_v"][1]):
            raise SettingsError(f"{format_si(r, 'V', 4)} is outside any bench's range "
                                f"(1 µV to 100 kV)", "reference")
        t = self.tolerance_frac
        if not (math.isfinite(t) and 0 < t < 1):
            raise SettingsError(f"must be between 0 and 100 %, got {100 * t:g} %", "tolerance")
        lo, hi = self.low_threshold_v, self.high_threshold_v
        for v in (lo, hi):
            if v is not None and not (math.isfinite(v) and abs(v) <= MAX_THRESHOLD_V):
                raise SettingsError(f"must be numbers within {MAX_THRESHOLD_V:g} V of zero, "
                                    f"got {v!r}", "thresholds")
        if (lo is None) != (hi is None):
            raise SettingsError("give both comparator thresholds, or neither", "thresholds")
        if lo is not None and hi is not None and not lo < hi:
            raise SettingsError(f"give the lower level first (LOW,HIGH): {lo:g} V is not below "
                                f"{hi:g} V", "thresholds")
        if self.set_resistor_ohm is not None and self.reference_v is None \
                and self.current_a is None:
            raise SettingsError("the reference voltage is needed too: the current is the "
                                "reference voltage divided by the set resistor", "reference")
        if self.reference_v is not None and self.set_resistor_ohm is None \
                and self.current_a is None:
            raise SettingsError("the set resistor is needed too: the current is the "
                                "reference voltage divided by the set resistor", "set_resistor")

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


#: The field each stated value belongs to, as :class:`SettingsError` names it.
FIELD_OF = {"capacitance_f": "capacitance", "current_a": "current",
            "set_resistor_ohm": "set_resistor", "reference_v": "reference",
            "probe_resistance_ohm": "probe", "probe_capacitance_f": "probe",
            "tolerance_frac": "tolerance", "low_threshold_v": "thresholds",
            "high_threshold_v": "thresholds"}


def _value(field: str, text: object, unit: str) -> float | None:
    if text is None:
        return None
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        return float(text)
    if isinstance(text, str) and not text.strip():
        return None
    try:
        return parse_si(str(text), unit)
    except SettingsError as exc:
        raise SettingsError(exc.message, field) from None


def _pair(field: str, text: object, expected: str) -> list[str] | None:
    if text is None or not str(text).strip():
        return None
    parts = [p.strip() for p in str(text).split(",")]
    if len(parts) > 2 or not parts[0]:
        raise SettingsError(f"cannot read {text!r}: expected {expected}", field)
    return parts


def parse_context(capacitance: object = None, current: object = None,
                  set_resistor: object = None, reference: object = None,
                  probe: object = None, tolerance: object = None,
                  thresholds: object = None) -> CircuitContext | None:
    """Build the circuit context from what the user typed (text with SI prefixes, or numbers).

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
        Probe resistance, optionally with its capacitance: ``"10M,12p"`` or ``"1M"``.
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
        A value cannot be read; ``field`` names the parameter it came from.
    """
    probe_r = probe_c = None
    parts = _pair("probe", probe, "the probe's resistance, optionally with its capacitance, "
                                  "e.g. 10M,12p or 1M")
    if parts:
        probe_r = _value("probe", parts[0], "\u03a9")
        if len(parts) == 2 and parts[1]:
            probe_c = _value("probe", parts[1], "F")
    lo = hi = None
    parts = _pair("thresholds", thresholds, "two levels in volts, e.g. 0.05,4")
    if parts:
        if len(parts) != 2:
            raise SettingsError(f"cannot read {thresholds!r}: expected two levels in volts, "
                                f"e.g. 0.05,4", "thresholds")
        lo, hi = (_value("thresholds", p, "V") for p in parts)
    values = dict(
        capacitance_f=_value("capacitance", capacitance, "F"),
        current_a=_value("current", current, "A"),
        set_resistor_ohm=_value("set_resistor", set_resistor, "\u03a9"),
        reference_v=_value("reference", reference, "V"),
        probe_resistance_ohm=probe_r, probe_capacitance_f=probe_c,
        low_threshold_v=lo, high_threshold_v=hi)
    tol = _value("tolerance", tolerance, "%")
    if all(v is None for v in values.values()):
        if tol is not None:
            raise SettingsError("a tolerance alone checks nothing: give the capacitance and the "
                                "current (or the set resistor and the reference) as well",
                                "tolerance")
        return None
    return CircuitContext(tolerance_frac=DEFAULT_TOLERANCE if tol is None else tol, **values)


@dataclass(frozen=True)
class Prediction(ToDict):
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
    # fitted on the window mapped onto [0, 1], so any time scale is well conditioned
    width = float(t[-1] - t[0])
    if not width > 0:
        return Prediction(ramp_time_s=T, slope_v_per_s=s0, nonlinearity_pct=math.nan,
                          initial_slope_v_per_s=s0)
    u = (t - t[0]) / width
    p = np.polyfit(u, v - v0, 1)
    resid = (v - v0) - np.polyval(p, u)
    span = float(p[0])
    nl = 100.0 * float(np.max(np.abs(resid))) / span if span > 0 else math.nan
    return Prediction(ramp_time_s=T, slope_v_per_s=span / width, nonlinearity_pct=nl,
                      initial_slope_v_per_s=s0)


def probe_match(shunt_ohm: float | None) -> str:
    """Which familiar input an equivalent shunt resistance looks like, as a code.

    Returns
    -------
    str
        ``"probe-10x"`` (within :data:`MATCH_FACTOR` of 10 Mohm),
        ``"scope-input"`` (of 1 Mohm: a 1x probe or the scope input alone),
        ``"neither"``, or ``"none"`` when no shunt was found.
    """
    if shunt_ohm is None or not math.isfinite(shunt_ohm):
        return "none"
    if PROBE_10X_OHM / MATCH_FACTOR <= shunt_ohm <= PROBE_10X_OHM * MATCH_FACTOR:
        return "probe-10x"
    if SCOPE_INPUT_OHM / MATCH_FACTOR <= shunt_ohm <= SCOPE_INPUT_OHM * MATCH_FACTOR:
        return "scope-input"
    return "neither"
