"""Pass/fail limits on the figures of a capture: the limits file and the judgement.

The limits file
---------------
A TOML file (read with the standard library's ``tomllib``). Its only tables are
``[limits.<key>]``, one per limited figure; an optional top-level ``name`` string
names the set. ``<key>`` is a field of the capture's figures (the same name as in
the JSON document: ``nonlinearity_pct``, ``slope_v_per_s``, ``frequency_hz``...)
or ``signature`` (the diagnosis)::

    # limits for the 1 kHz ramp board, film parts
    name = "1 kHz ramp board, film"

    [limits.nonlinearity_pct]
    max = 0.5

    [limits.slope_v_per_s]
    min = "9.5k"      # strings take SI prefixes, in the figure's unit
    max = "10.5k"

    [limits.frequency_hz]
    nominal = "1k"
    within_pct = 2    # nominal +- 2 % of its size

    [limits.signature]
    equals = "linear"             # or: one_of = ["linear", "shunt-loading"]

Options of a number figure: ``min`` and/or ``max``, or ``nominal`` with
``within_pct`` (both, and neither with ``min``/``max``). A value is a number in
the figure's SI unit (the unit is the end of its name: ``_v`` volts, ``_s``
seconds, ``_hz`` hertz, ``_v_per_s`` volts per second, ``_pct`` percent) or a
string with an SI prefix and optionally that unit (``"9.5k"``, ``"9.5 kV/s"``,
``"50 us"``, ``"0.5 %"``). ``min`` may not exceed ``max``. Options of ``signature``
and ``direction``: ``equals`` (a string) or ``one_of`` (a list of strings), from
the signatures ``linear``, ``shunt-loading``, ``voltage-coefficient``,
``dielectric-absorption``, ``unclassified`` and the directions ``rising``,
``falling``. A figure that is a flag or an interval (``below_floor``,
``slope_ci95_v_per_s``, ``bounds``) cannot be limited.

Judgement
---------
Each limit gives ``"pass"``, ``"fail"`` or ``"undecided"`` (cannot be decided from
this capture): no finite value; a nonlinearity figure (``nonlinearity_pct``,
``terminal_nonlinearity_pct``, ``peak_deviation_v``) measured below the capture's
resolution floor is judged as "at most the floor", so a ``max`` tighter than the
floor is undecided, never passed; a figure that clipping makes a bound (listed in
the figures' ``bounds``) is judged as a bound (a lower bound already above a
``max`` fails, one inside the limits is undecided); a signature expected to be a
bend the capture does not resolve (diagnosis ``linear`` with the nonlinearity below
the floor) is undecided. Overall: ``"fail"`` if any limit fails, else ``"undecided"`` if any
is, else ``"pass"``.
"""

from __future__ import annotations

import dataclasses
import math
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .diagnose import SIGNATURES
from .errors import LimitsError, SettingsError
from .jsonable import ToDict
from .results import Analysis, Figures
from .units import parse_quantity

#: Largest limits file read, bytes (a limits file is a few lines).
MAX_LIMITS_BYTES = 256 * 1024
#: Keys limited by a word rather than a number, with the words allowed.
WORD_FIGURES: dict[str, tuple[str, ...]] = {"signature": tuple(SIGNATURES),
                                           "direction": ("rising", "falling")}
#: Number figures judged against the resolution floor, with the floor's scale to them.
FLOORED = ("nonlinearity_pct", "terminal_nonlinearity_pct", "peak_deviation_v")
NUMBER_OPTIONS = ("min", "max", "nominal", "within_pct")
WORD_OPTIONS = ("equals", "one_of")


def _number_figures() -> tuple[str, ...]:
    out = []
    for f in dataclasses.fields(Figures):
        if str(f.type).replace(" ", "") in ("float", "int", "float|None") \
                and f.name not in WORD_FIGURES:
            out.append(f.name)
    return tuple(out)


#: Every figure a number limit may be put on.
NUMBER_FIGURES: tuple[str, ...] = _number_figures()


def figure_unit(figure: str) -> str:
    """The SI unit of a figure, from the end of its name (``""`` for counts and fractions)."""
    for suffix, unit in (("_v_per_s", "V/s"), ("_hz", "Hz"), ("_pct", "%"), ("_v", "V"),
                         ("_s", "s")):
        if figure.endswith(suffix):
            return unit
    return ""


@dataclass(frozen=True)
class Limit(ToDict):
    """One limited figure, values in the figure's SI unit.

    ``low``/``high`` are the ``min``/``max`` given, or ``nominal`` -+ ``within_pct`` %
    of ``|nominal|``; None where open. ``one_of`` holds the allowed words of a word
    figure (``signature``, ``direction``), empty for a number figure.
    """

    figure: str
    low: float | None = None
    high: float | None = None
    nominal: float | None = None
    within_pct: float | None = None
    one_of: tuple[str, ...] = ()


@dataclass(frozen=True)
class Limits(ToDict):
    """A limits file: where it came from, its optional name, its limits in file order."""

    source: str
    name: str
    limits: tuple[Limit, ...]


@dataclass(frozen=True)
class LimitResult(ToDict):
    """One limit judged on one capture.

    Attributes
    ----------
    figure : str
    verdict : str
        ``"pass"``, ``"fail"`` or ``"undecided"``.
    value : float, str or None
        The measured figure (SI, figure's unit) or word; None when there is none.
    judged_as : str
        ``"value"``; ``"floor"`` (below the resolution floor: judged as at most
        ``floor``); ``"lower-bound"`` / ``"upper-bound"`` (clipping); ``"none"`` (no
        finite value); ``"unresolved"`` (a signature the capture cannot resolve).
    floor : float or None
        The resolution floor in the figure's unit, for the floored figures.
    low, high : float or None
        The limits; ``one_of`` the allowed words.
    bound : float or None
        The limit crossed, when the verdict is ``"fail"`` (number figures).
    excess, excess_pct : float or None
        By how much it fails: beyond ``bound`` in the figure's unit (positive), and
        as % of ``|bound|``; None unless it fails.
    """

    figure: str
    verdict: str
    value: float | str | None
    judged_as: str
    floor: float | None
    low: float | None
    high: float | None
    one_of: tuple[str, ...]
    bound: float | None = None
    excess: float | None = None
    excess_pct: float | None = None


@dataclass(frozen=True)
class LimitVerdict(ToDict):
    """Every limit of a limits file judged on one capture, and the overall verdict
    (``"fail"`` if any fails, else ``"undecided"`` if any is, else ``"pass"``)."""

    source: str
    verdict: str
    results: tuple[LimitResult, ...]
    passed: int
    failed: int
    undecided: int


# ------------------------------------------------------------------ reading

def _fail(path: Path, key: str, why: str) -> LimitsError:
    where = f"{path.name}: {key}: " if key else f"{path.name}: "
    return LimitsError(where + why, field=key or None, path=path)


def _number(path: Path, key: str, raw: Any, unit: str) -> float:
    if isinstance(raw, bool) or not isinstance(raw, (int, float, str)):
        raise _fail(path, key, f"expected a number or a string such as \"9.5k\", got "
                               f"{type(raw).__name__}")
    if isinstance(raw, str):
        try:
            value, rest = parse_quantity(raw.strip())
        except SettingsError:
            raise _fail(path, key, f"cannot read {raw!r} as a number with an optional SI "
                                   f"prefix (e.g. \"9.5k\", \"50u\")") from None
        if rest and rest != unit:
            want = f" (this figure is in {unit})" if unit else " (this figure has no unit)"
            raise _fail(path, key, f"{raw!r} carries the unit {rest!r}{want}")
    else:
        value = float(raw)
    if not math.isfinite(value):
        raise _fail(path, key, f"{raw!r} is not a finite number")
    return float(value)


def _word_limit(path: Path, figure: str, table: dict) -> Limit:
    allowed = WORD_FIGURES[figure]
    unknown = [k for k in table if k not in WORD_OPTIONS]
    if unknown:
        raise _fail(path, f"limits.{figure}.{unknown[0]}",
                    f"unknown option (a {figure} takes equals or one_of)")
    if len(table) != 1:
        raise _fail(path, f"limits.{figure}", "give exactly one of equals or one_of")
    option, raw = next(iter(table.items()))
    key = f"limits.{figure}.{option}"
    words = [raw] if option == "equals" else raw
    if option == "equals" and not isinstance(raw, str):
        raise _fail(path, key, "expected a string")
    if not isinstance(words, list) or not words or not all(isinstance(w, str) for w in words):
        raise _fail(path, key, "expected a non-empty list of strings")
    for w in words:
        if w not in allowed:
            raise _fail(path, key, f"{w!r} is not a {figure} (one of {', '.join(allowed)})")
    return Limit(figure=figure, one_of=tuple(dict.fromkeys(words)))


def _number_limit(path: Path, figure: str, table: dict) -> Limit:
    unit = figure_unit(figure)
    unknown = [k for k in table if k not in NUMBER_OPTIONS]
    if unknown:
        raise _fail(path, f"limits.{figure}.{unknown[0]}",
                    "unknown option (a number figure takes min, max, or nominal with "
                    "within_pct)")
    if not table:
        raise _fail(path, f"limits.{figure}", "no limit given (min, max, or nominal with "
                                             "within_pct)")
    got = {k: _number(path, f"limits.{figure}.{k}", v, "%" if k == "within_pct" else unit)
           for k, v in table.items()}
    if ("nominal" in got) != ("within_pct" in got):
        missing = "within_pct" if "nominal" in got else "nominal"
        raise _fail(path, f"limits.{figure}", f"nominal and within_pct go together: "
                                             f"{missing} is missing")
    if "nominal" in got:
        if "min" in got or "max" in got:
            raise _fail(path, f"limits.{figure}", "give min/max or nominal with within_pct, "
                                                 "not both")
        nominal, within = got["nominal"], got["within_pct"]
        if not within >= 0.0:
            raise _fail(path, f"limits.{figure}.within_pct",
                        f"must be zero or more, got {within:g}")
        half = abs(nominal) * within / 100.0
        return Limit(figure=figure, low=nominal - half, high=nominal + half, nominal=nominal,
                     within_pct=within)
    low, high = got.get("min"), got.get("max")
    if low is not None and high is not None and low > high:
        raise _fail(path, f"limits.{figure}", f"min ({low:g}) is above max ({high:g})")
    return Limit(figure=figure, low=low, high=high)


def read_limits(path: str | Path) -> Limits:
    """Read a limits file (format in the module docstring).

    Parameters
    ----------
    path : str or Path
        The TOML file.

    Returns
    -------
    Limits

    Raises
    ------
    LimitsError
        The file cannot be read or is not TOML; a key is not a figure or an option;
        a value is not a number (or word) it may be; min > max; nominal without
        within_pct... One line, starting with the file's name, then the key.
    """
    p = Path(path)
    try:
        if not p.is_file():
            raise _fail(p, "", "not a readable file")
        if p.stat().st_size > MAX_LIMITS_BYTES:
            raise _fail(p, "", f"larger than {MAX_LIMITS_BYTES // 1024} KiB: not a limits file")
        data = tomllib.loads(p.read_bytes().decode("utf-8"))
    except LimitsError:
        raise
    except UnicodeDecodeError:
        raise _fail(p, "", "not UTF-8 text") from None
    except tomllib.TOMLDecodeError as exc:
        raise _fail(p, "", f"not valid TOML ({str(exc).splitlines()[0]})") from None
    except OSError as exc:
        raise _fail(p, "", f"cannot be read ({exc.strerror or type(exc).__name__})") from None
    for key in data:
        if key not in ("name", "limits"):
            raise _fail(p, key, "unknown key (a limits file holds name and [limits.<figure>] "
                                "tables)")
    name = data.get("name", "")
    if not isinstance(name, str):
        raise _fail(p, "name", "expected a string")
    table = data.get("limits")
    if not isinstance(table, dict) or not table:
        raise _fail(p, "limits", "no [limits.<figure>] table found")
    out = []
    for figure, spec in table.items():
        key = f"limits.{figure}"
        if figure not in NUMBER_FIGURES and figure not in WORD_FIGURES:
            hint = (" (a flag or an interval cannot be limited)"
                    if figure in {f.name for f in dataclasses.fields(Figures)} else "")
            raise _fail(p, key, f"unknown figure{hint}")
        if not isinstance(spec, dict):
            raise _fail(p, key, "expected a table ([limits." + figure + "] with min, max...)")
        out.append(_word_limit(p, figure, spec) if figure in WORD_FIGURES
                   else _number_limit(p, figure, spec))
    return Limits(source=str(p), name=name, limits=tuple(out))


# ------------------------------------------------------------------ judging

def _finite(x: Any) -> bool:
    return x is not None and not isinstance(x, bool) and math.isfinite(float(x))


def _floor_of(figure: str, analysis: Analysis) -> float | None:
    f = analysis.figures
    if figure not in FLOORED or not _finite(f.nonlinearity_floor_pct):
        return None
    if figure == "peak_deviation_v":
        return f.nonlinearity_floor_pct / 100.0 * abs(f.fitted_span_v)
    return float(f.nonlinearity_floor_pct)


def _bound_kind(figure: str, analysis: Analysis) -> str:
    """Which way clipping biases a figure: the true value lies beyond the measured one."""
    rising = analysis.figures.direction == "rising"
    if figure == "start_v":
        return "upper-bound" if rising else "lower-bound"
    if figure == "end_v":
        return "lower-bound" if rising else "upper-bound"
    return "lower-bound"  # amplitude, ramp time: part of the ramp is hidden


def _crossed(limit: Limit, v: float) -> tuple[float, float] | None:
    """(bound, excess) of the first limit ``v`` lies beyond, or None."""
    if limit.high is not None and v > limit.high:
        return limit.high, v - limit.high
    if limit.low is not None and v < limit.low:
        return limit.low, limit.low - v
    return None


def _result(limit: Limit, verdict: str, value: Any, judged_as: str, floor: float | None,
            crossed: tuple[float, float] | None = None) -> LimitResult:
    bound = excess = excess_pct = None
    if verdict == "fail" and crossed is not None:
        bound, excess = crossed
        excess_pct = 100.0 * excess / abs(bound) if bound != 0.0 else None
    return LimitResult(figure=limit.figure, verdict=verdict, value=value, judged_as=judged_as,
                       floor=floor, low=limit.low, high=limit.high, one_of=limit.one_of,
                       bound=bound, excess=excess, excess_pct=excess_pct)


def _judge_word(limit: Limit, analysis: Analysis) -> LimitResult:
    if limit.figure == "direction":
        word = analysis.figures.direction
        return _result(limit, "pass" if word in limit.one_of else "fail", word, "value", None)
    d = analysis.diagnosis
    if d.signature in limit.one_of:
        return _result(limit, "pass", d.signature, "value", None)
    if d.signature == "linear" and (d.reason == "below-resolution"
                                    or analysis.figures.below_floor):
        return _result(limit, "undecided", d.signature, "unresolved", None)
    if d.signature == "unclassified" and d.reason in ("not-measurable", "fit-failed"):
        return _result(limit, "undecided", d.signature, "unresolved", None)
    return _result(limit, "fail", d.signature, "value", None)


def judge_limit(limit: Limit, analysis: Analysis) -> LimitResult:
    """One limit on one analysis (rules in the module docstring)."""
    if limit.one_of:
        return _judge_word(limit, analysis)
    raw = getattr(analysis.figures, limit.figure)
    floor = _floor_of(limit.figure, analysis)
    if not _finite(raw):
        return _result(limit, "undecided", None, "none", floor)
    v = float(raw)
    if limit.figure in analysis.figures.bounds:
        kind = _bound_kind(limit.figure, analysis)
        # a lower bound only ever fails a max; an upper bound only ever fails a min
        if kind == "lower-bound" and limit.high is not None and v > limit.high:
            return _result(limit, "fail", v, kind, floor, (limit.high, v - limit.high))
        if kind == "upper-bound" and limit.low is not None and v < limit.low:
            return _result(limit, "fail", v, kind, floor, (limit.low, limit.low - v))
        passes = (limit.high is None if kind == "lower-bound" else limit.low is None) and \
            _crossed(limit, v) is None
        return _result(limit, "pass" if passes else "undecided", v, kind, floor)
    if floor is not None and v < floor:
        # the true figure is known only to be at most the floor: judge [0, floor]
        if limit.low is not None and floor < limit.low:
            return _result(limit, "fail", v, "floor", floor, (limit.low, limit.low - floor))
        decided = (limit.high is None or floor <= limit.high) and \
            (limit.low is None or limit.low <= 0.0)
        return _result(limit, "pass" if decided else "undecided", v, "floor", floor)
    crossed = _crossed(limit, v)
    return _result(limit, "fail" if crossed else "pass", v, "value", floor, crossed)


def overall(verdicts: list[str] | tuple[str, ...]) -> str:
    """``"fail"`` if any fails, else ``"undecided"`` if any is, else ``"pass"``."""
    if "fail" in verdicts:
        return "fail"
    return "undecided" if "undecided" in verdicts else "pass"


def judge(analysis: Analysis, limits: Limits) -> LimitVerdict:
    """Judge every limit of ``limits`` on ``analysis``.

    Returns
    -------
    LimitVerdict
        One :class:`LimitResult` per limit in file order, the counts, and the overall
        verdict.
    """
    results = tuple(judge_limit(lim, analysis) for lim in limits.limits)
    verdicts = [r.verdict for r in results]
    return LimitVerdict(source=limits.source, verdict=overall(verdicts), results=results,
                        passed=verdicts.count("pass"), failed=verdicts.count("fail"),
                        undecided=verdicts.count("undecided"))
