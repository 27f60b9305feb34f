"""SI values with prefixes: user input, display, and units in column names.

Three jobs, one table of prefixes:

* :func:`parse_si` reads what a technician types (``47n``, ``4.7uF``, ``1 MΩ``,
  ``4k7``, ``10%``) into a plain float in the base unit;
* :func:`format_si` writes a value back with a prefix for display
  (``4.700 mV``, ``12.50 µs``);
* :func:`parse_column_unit` splits a column header such as ``t (us)``,
  ``CH1 [mV]`` or ``Voltage/mV`` into a clean name, the quantity and the
  factor to SI seconds or volts.

Values are stored in SI base units everywhere else in trueslope; prefixes are
for people only.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from .errors import SettingsError, UnknownUnitError

MICRO = "\u00b5"  # MICRO SIGN, the character we display
_GREEK_MU = "\u03bc"  # GREEK SMALL LETTER MU, typed by some keyboards and tools

#: Prefix letter to factor, as accepted in user input. ``K`` is taken as kilo
#: because resistor values are commonly written that way (common practice).
PREFIXES: dict[str, float] = {
    "f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, MICRO: 1e-6, _GREEK_MU: 1e-6,
    "m": 1e-3, "k": 1e3, "K": 1e3, "M": 1e6, "G": 1e9, "T": 1e12,
}

#: Prefixes used for display, largest first (engineering notation, steps of 1000).
_DISPLAY = [(12, "T"), (9, "G"), (6, "M"), (3, "k"), (0, ""), (-3, "m"),
            (-6, MICRO), (-9, "n"), (-12, "p"), (-15, "f")]

_NUMBER = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"
_NUMBER_RE = re.compile(rf"^\s*({_NUMBER})\s*(.*?)\s*$")
# "4k7" = 4.7 k, "2n2" = 2.2 n: the prefix stands where the decimal point would.
_CODE_RE = re.compile(r"^\s*([+-]?\d+)([fpnumkKMGT\u00b5\u03bc])(\d+)\s*(.*?)\s*$")

#: Spellings of unit names that mean the same unit in user input.
_UNIT_ALIASES: dict[str, tuple[str, ...]] = {
    "s": ("seconds", "second", "secs", "sec", "s"),
    "\u03a9": ("ohms", "ohm", "Ohms", "Ohm", "\u2126", "\u03a9"),
    "Hz": ("Hz", "hz"),
    "%": ("%",),
}

#: Unit symbols accepted after a number when no unit is expected.
_KNOWN_SYMBOLS = frozenset(
    [a for names in _UNIT_ALIASES.values() for a in names]
    + ["F", "H", "V", "A", "W", "Hz", "Sa/s", "S/s", "sps", "SPS", "V/s", "A/s", "C"])

_EXAMPLES = "e.g. 47n, 4.7u, 3.3k, 10M, 1e-6"


def _normalise(text: str) -> str:
    return text.replace(_GREEK_MU, MICRO).replace("\u2126", "\u03a9")


def _bad_value(text: str, unit: str | None, why: str = "") -> SettingsError:
    in_unit = f" in {unit}" if unit else ""
    reason = f" ({why})" if why else ""
    return SettingsError(
        f"cannot read {text!r} as a value{in_unit}{reason}: expected a number with an "
        f"optional SI prefix (f p n u {MICRO} m k M G T){' and unit ' + unit if unit else ''}, "
        f"{_EXAMPLES}, or a percentage such as 10%")


def parse_quantity(text: str) -> tuple[float, str]:
    """Split ``"2.5 GSa/s"`` into the prefixed value and the bare unit.

    Parameters
    ----------
    text : str
        A number, optionally followed by an SI prefix and a unit name.

    Returns
    -------
    value : float
        The number times its prefix factor (``2.5e9`` above).
    unit : str
        What follows the prefix (``"Sa/s"``); ``""`` when there is none,
        ``"%"`` for a percentage (the value is then *not* divided by 100).

    Raises
    ------
    SettingsError
        No number at the start of the text.

    Notes
    -----
    A single letter after the number is read as a prefix when it is one
    (``"3m"`` is 3e-3, not 3 metres). A longer suffix is a prefix plus a unit
    when its first letter is a prefix and the rest is not empty
    (``"ms"`` -> milli + ``s``), otherwise a unit alone (``"s"``, ``"Hz"``,
    ``"Sa/s"``). So ``"1 Ms"`` means a megasecond: write ``ms`` for milli.
    """
    if not isinstance(text, str):
        raise _bad_value(repr(text), None, "not text")
    s = _normalise(text)
    m = _CODE_RE.match(s)
    if m:
        number = float(f"{m.group(1)}.{m.group(3)}")
        return number * PREFIXES[m.group(2)], m.group(4)
    m = _NUMBER_RE.match(s)
    if not m:
        raise _bad_value(text, None)
    number = float(m.group(1))
    suffix = m.group(2)
    if not suffix:
        return number, ""
    if suffix[0] in PREFIXES and (len(suffix) == 1 or suffix[1:].strip()):
        rest = suffix[1:].strip()
        # "1 T" is tera; "1 m" is milli; "1 mV" is milli + V.
        return number * PREFIXES[suffix[0]], rest
    return number, suffix


def parse_si(text: str, unit: str | None = None) -> float:
    """Read a value typed by a user, with an optional SI prefix and unit.

    Parameters
    ----------
    text : str
        For example ``"47n"``, ``"1.2m"``, ``"3.3k"``, ``"10M"`` (mega),
        ``"12p"``, ``"4.7uF"``, ``"4.7µF"``, ``"1 MΩ"``, ``"4k7"``, ``"10%"``,
        ``"1e-6"``. A point is the decimal separator.
    unit : str, optional
        The unit expected (``"s"``, ``"F"``, ``"Ω"``, ``"V"``, ``"%"``...). When
        given, the text may end with that unit (or a common spelling of it,
        e.g. ``sec`` or ``ohm``) and must not carry another one. With
        ``unit="%"`` a bare number is a percentage too.

    Returns
    -------
    float
        The value in the base unit: ``"47n"`` -> ``4.7e-08``; percentages as
        fractions, ``"10%"`` -> ``0.10``.

    Raises
    ------
    SettingsError
        The text is not a finite number with an optional prefix and the
        expected unit; the message shows what is accepted.
    """
    if not isinstance(text, str):
        raise _bad_value(repr(text), unit, "not text")
    raw = text
    s = _normalise(text).strip()
    if not s:
        raise _bad_value(raw, unit, "empty")
    if "," in s and "." not in s and re.fullmatch(r"[+-]?\d+,\d+\D*", s):
        raise _bad_value(raw, unit, "use a point as the decimal separator")
    want = _normalise(unit).strip() if unit else ""
    percent = s.endswith("%")
    if percent:
        if want not in ("", "%"):
            raise _bad_value(raw, unit, "a percentage is not a value in " + want)
        s = s[:-1].rstrip()
    elif want:
        for spelling in sorted(_UNIT_ALIASES.get(want, (want,)) + (want,), key=len, reverse=True):
            if s.endswith(spelling):
                s = s[: -len(spelling)].rstrip()
                break
    if not s:
        raise _bad_value(raw, unit, "no number")
    try:
        value, rest = parse_quantity(s)
    except SettingsError:
        raise _bad_value(raw, unit) from None
    if rest and (want or percent):
        # With an expected unit only a prefix may remain: "2u" -> 2e-6 s.
        raise _bad_value(raw, unit, f"unexpected {rest!r}")
    if rest and rest not in _KNOWN_SYMBOLS:
        raise _bad_value(raw, unit, f"{rest!r} is not a unit trueslope knows")
    if not math.isfinite(value):
        raise _bad_value(raw, unit, "not a finite number")
    if percent or want == "%":
        value /= 100.0
    return float(value)


def format_si(value: float, unit: str, digits: int = 4) -> str:
    """Write a value with an SI prefix for display.

    Parameters
    ----------
    value : float
        In the base unit (volts, seconds, hertz...).
    unit : str
        Unit symbol appended after the prefix (``"V"``, ``"s"``, ``"Hz"``).
    digits : int, optional
        Significant digits shown, default 4.

    Returns
    -------
    str
        ``4.7e-3, "V"`` -> ``"4.700 mV"``; ``1.25e-5, "s"`` -> ``"12.50 µs"``;
        ``1000, "Hz"`` -> ``"1.000 kHz"``; ``0`` -> ``"0.000 V"``; NaN -> ``"—"``;
        infinities -> ``"∞ V"`` / ``"-∞ V"``. Outside femto to tera the value is
        written in scientific notation.
    """
    try:
        v = float(value)
    except (TypeError, ValueError):
        return "\u2014"
    digits = max(1, int(digits))
    unit = unit or ""
    if math.isnan(v):
        return "\u2014"
    if math.isinf(v):
        return f"{'-' if v < 0 else ''}\u221e {unit}".rstrip()
    if v == 0.0:
        return f"{0.0:.{digits - 1}f} {unit}".rstrip()
    # Round once, in decimal, then move the point: exact, and a carry such as
    # 999.96 m -> 1.000 lands on the right prefix.
    mantissa, exponent = f"{abs(v):.{digits - 1}e}".split("e")
    e10 = int(exponent)
    exp3 = 3 * math.floor(e10 / 3)
    prefix = dict(_DISPLAY).get(exp3)
    sign = "-" if v < 0 else ""
    if prefix is None:
        return f"{sign}{mantissa}e{e10:+03d} {unit}".rstrip()
    figures = mantissa.replace(".", "")
    whole = e10 - exp3 + 1  # digits before the point: 1, 2 or 3
    figures = figures.ljust(whole, "0")
    text = figures[:whole] + ("." + figures[whole:] if len(figures) > whole else "")
    return f"{sign}{text} {prefix}{unit}".rstrip()


# --------------------------------------------------------------------------
# Units in column names

@dataclass(frozen=True)
class ColumnUnit:
    """What a column header says about its values.

    Attributes
    ----------
    name : str
        The header without its unit (``"CH1 (mV)"`` -> ``"CH1"``); may be empty.
    quantity : str or None
        ``"time"``, ``"voltage"`` or None when the header names no unit.
    scale : float
        Factor from the file's values to SI seconds or volts (``1e-3`` for mV).
    unit : str
        The unit as written in the header, ``""`` when none.
    """

    name: str
    quantity: str | None
    scale: float
    unit: str = ""


_TIME_UNITS: dict[str, float] = {}
for _names, _f in (
        (("s", "sec", "secs", "second", "seconds"), 1.0),
        (("ms", "msec", "msecs", "millisecond", "milliseconds"), 1e-3),
        (("us", MICRO + "s", "usec", "usecs", MICRO + "sec", "microsecond", "microseconds"), 1e-6),
        (("ns", "nsec", "nsecs", "nanosecond", "nanoseconds"), 1e-9)):
    for _n in _names:
        _TIME_UNITS[_n] = _f
_VOLT_UNITS: dict[str, float] = {}
for _names, _f in (
        (("v", "volt", "volts"), 1.0),
        (("mv", "millivolt", "millivolts"), 1e-3),
        (("uv", MICRO + "v", "microvolt", "microvolts"), 1e-6),
        (("kv", "kilovolt", "kilovolts"), 1e3)):
    for _n in _names:
        _VOLT_UNITS[_n] = _f

#: Units accepted in column names, for messages.
ACCEPTED_COLUMN_UNITS = (f"time: s, ms, us ({MICRO}s), ns; "
                         f"voltage: V, mV, uV ({MICRO}V), kV")

_BRACKET_RE = re.compile(r"^(.*?)\s*[\(\[\{]\s*([^\(\)\[\]\{\}]*?)\s*[\)\]\}]\s*$")
_SLASH_RE = re.compile(r"^(.*?\S)\s*/\s*([^/\s]+)\s*$")


def lookup_column_unit(token: str) -> tuple[str, float] | None:
    """Quantity and factor of a unit token as written in a header, or None.

    Case does not matter (``MS`` in a shouted header is milliseconds), except
    that a two-letter token starting with a capital ``M`` (``MV``, ``Ms``) is
    refused: it would mean mega, which no oscilloscope export uses, and
    guessing milli could be wrong by a factor of 10^9.
    """
    t = _normalise(token).strip().rstrip(".")
    if not t:
        return None
    if len(t) == 2 and t[0] == "M" and t[1] in "VvSs" and t != t.upper():
        return None
    if t in ("MV",):
        return None
    key = t.lower().replace(MICRO.lower(), MICRO)
    if key in _TIME_UNITS:
        return "time", _TIME_UNITS[key]
    if key in _VOLT_UNITS:
        return "voltage", _VOLT_UNITS[key]
    return None


def parse_column_unit(header: str) -> ColumnUnit:
    """Split a column header into name, quantity and scale to SI.

    Accepted forms: a unit in brackets at the end (``time [s]``, ``t (us)``,
    ``CH1 (mV)``, ``Zeit{ms}``), a unit after a slash (``Voltage/mV``), or a
    header that is a unit alone (``V``, ``s``). Units: s, ms, us, µs, ns for
    time; V, mV, uV, µV, kV for voltage (and spelled-out forms such as
    ``volts``, ``msec``).

    Parameters
    ----------
    header : str
        The header text as found in the file (quotes and spaces are removed).

    Returns
    -------
    ColumnUnit
        Clean name, ``"time"``/``"voltage"``/None, factor to seconds or volts.

    Raises
    ------
    UnknownUnitError
        Brackets at the end hold something that is not one of the accepted
        units (``CH1 (furlong)``). The error carries no file or line; readers
        add them.

    Notes
    -----
    After a slash, a token that is not a unit is kept as part of the name
    (``CH1/CH2`` is a name), because a slash is also ordinary punctuation.
    """
    s = header.strip().strip('"').strip("'").strip()
    m = _BRACKET_RE.match(s)
    if m:
        name, token = m.group(1).strip(), m.group(2).strip()
        if not token:
            return ColumnUnit(name, None, 1.0, "")
        found = lookup_column_unit(token)
        if found is None:
            mega = (f" ({token!r} would mean mega; write m for milli)"
                    if token[:1] == "M" and len(token) == 2 else "")
            raise UnknownUnitError(
                f"unknown unit {token!r}{mega} in column name {s!r}; accepted units are "
                f"{ACCEPTED_COLUMN_UNITS} (a column without a unit is read as volts)")
        return ColumnUnit(name, found[0], found[1], token)
    m = _SLASH_RE.match(s)
    if m:
        found = lookup_column_unit(m.group(2))
        if found is not None:
            return ColumnUnit(m.group(1).strip(), found[0], found[1], m.group(2))
    found = lookup_column_unit(s)
    if found is not None:
        return ColumnUnit(s, found[0], found[1], s)
    return ColumnUnit(s, None, 1.0, "")
