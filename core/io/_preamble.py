"""Sample interval stated in the preamble of a capture (key/value lines).

Split from :mod:`._assemble`, which calls :func:`interval_from_metadata` when a
layout has no time axis of its own.
"""

from __future__ import annotations

import math
import re
from typing import Mapping

from ..errors import TrueslopeWarning
from ..units import lookup_column_unit, parse_quantity

__all__ = ["interval_from_metadata"]

_INTERVAL_KEYS = frozenset([
    "interval", "increment", "dt", "delta t", "\u03b4t", "\u0394t", "x increment", "xincrement",
    "xincr", "x incr", "sample interval", "sampling interval", "sample period",
    "sampling period", "time interval", "time increment", "time step", "timestep",
    "time per sample", "time per point", "seconds per sample", "horizontal interval",
    "horizontal increment", "sample time", "sampling time"])
_INTERVAL_SUFFIXES = ("sample interval", "sampling interval", "sample period",
                      "sampling period", "x increment", "time increment")
_RATE_KEYS = frozenset([
    "sample rate", "sampling rate", "samplerate", "sample frequency", "sampling frequency",
    "fs", "rate", "samples per second", "sa/s", "sps"])
_RATE_SUFFIXES = ("sample rate", "sampling rate", "sampling frequency", "sample frequency")
_RATE_UNITS = frozenset(["sa/s", "s/s", "hz", "sps", "samples/s", "sample/s", "pts/s",
                         "pt/s", "points/s", "samples/sec"])


def _norm_key(key: str) -> str:
    k = re.sub(r"[\(\[\{][^\)\]\}]*[\)\]\}]", " ", key.lower())
    k = re.sub(r"[_\-.:=#]+", " ", k)
    return re.sub(r"\s+", " ", k).strip()


def _key_unit(key: str) -> str:
    m = re.search(r"[\(\[\{]\s*([^\)\]\}]*?)\s*[\)\]\}]\s*$", key)
    return m.group(1) if m else ""


def _meta_number(value: str, decimal: str) -> tuple[float, str] | None:
    v = value.strip().strip('"').strip()
    if decimal == ",":
        v = re.sub(r"(\d),(\d)", r"\1.\2", v)
    v = re.sub(r"[,;\t]+", " ", v).strip()
    m = re.match(r"^([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*(\S*)", v)
    if not m:
        return None
    try:
        return parse_quantity(f"{m.group(1)} {m.group(2)}".strip())
    except Exception:  # noqa: BLE001 - any unreadable value is simply not an interval
        return None


def interval_from_metadata(metadata: Mapping[str, str], decimal: str = "."
                           ) -> tuple[float | None, str | None, list[TrueslopeWarning]]:
    """Sample interval stated in a preamble, seconds.

    Keys such as ``interval``, ``increment``, ``sample interval``,
    ``sample period``, ``x increment`` or ``dt`` give the interval (a value in
    s, ms, us, ns, or a bare number of seconds); keys such as ``sample rate``
    or ``fs`` give a rate (Sa/s, S/s, Hz with any prefix, or a bare number),
    and the interval is its reciprocal. A unit may also sit in the key, e.g.
    ``Sample Interval [us]``. The first interval key wins, else the first
    rate key.

    Returns
    -------
    interval_s : float or None
    key : str or None
        The metadata key it came from.
    warnings : list of TrueslopeWarning
        For keys that looked like an interval but could not be read.
    """
    found_interval: tuple[float, str] | None = None
    found_rate: tuple[float, str] | None = None
    warnings: list[TrueslopeWarning] = []
    for key, value in metadata.items():
        k = _norm_key(key)
        is_interval = k in _INTERVAL_KEYS or k.endswith(_INTERVAL_SUFFIXES)
        is_rate = k in _RATE_KEYS or k.endswith(_RATE_SUFFIXES)
        if not (is_interval or is_rate):
            continue
        parsed = _meta_number(value, decimal)
        interval = None
        if parsed is not None:
            number, unit = parsed
            if not unit:
                unit = _key_unit(key)
                if unit:
                    try:
                        scaled, unit = parse_quantity(f"1 {unit}")
                    except Exception:  # noqa: BLE001
                        scaled, unit = 1.0, "?"
                    number *= scaled
            u = unit.strip().lower()
            if u in _RATE_UNITS or (is_rate and not u):
                interval = 1.0 / number if number > 0 else None
            else:
                t = lookup_column_unit(unit) if u else ("time", 1.0)
                if t is not None and t[0] == "time":
                    interval = number * t[1]
        if interval is None or not math.isfinite(interval) or interval <= 0:
            warnings.append(TrueslopeWarning(
                "unreadable-interval",
                f"the preamble entry {key!r} = {value!r} looks like a sample interval or rate "
                f"but could not be read as one (expected e.g. '1e-6 s', '2 us' or '500 kSa/s'); "
                f"it was not used"))
            continue
        if is_interval and found_interval is None:
            found_interval = (interval, key)
        elif is_rate and not is_interval and found_rate is None:
            found_rate = (interval, key)
    best = found_interval or found_rate
    if best is None:
        return None, None, warnings
    return best[0], best[1], warnings
