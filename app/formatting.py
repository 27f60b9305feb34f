"""Display strings for the window's panels (SI prefixes, percentages, missing values).

Numbers go through :func:`trueslope.core.units.format_si`; this module only
adds what the panels need around it: a dash for a missing value, percent
signs, and a "value ± half-width" form for confidence intervals.
"""

from __future__ import annotations

import math
from typing import Any

from trueslope.core.units import format_si

MISSING = "—"


def _finite(value: Any) -> bool:
    try:
        return value is not None and math.isfinite(float(value))
    except (TypeError, ValueError):
        return False


def si(value: Any, unit: str, digits: int = 4) -> str:
    """``value`` with an SI prefix and ``unit`` (e.g. ``12.35 mV``); a dash if missing."""
    if not _finite(value):
        return MISSING
    return format_si(float(value), unit, digits=digits)


def pct(value: Any, digits: int = 3) -> str:
    """A percentage to ``digits`` significant figures, e.g. ``0.887 %``."""
    if not _finite(value):
        return MISSING
    v = float(value)
    if v == 0.0:
        return "0 %"
    decimals = max(0, digits - 1 - int(math.floor(math.log10(abs(v)))))
    return f"{v:.{min(decimals, 6)}f} %"


def with_ci(value: Any, ci: Any, unit: str, digits: int = 4) -> str:
    """``value ± half-width`` of a 95 % interval ``ci = (low, high)``."""
    text = si(value, unit, digits)
    try:
        lo, hi = float(ci[0]), float(ci[1])
    except (TypeError, ValueError, IndexError):
        return text
    if not (math.isfinite(lo) and math.isfinite(hi)):
        return text
    half = abs(hi - lo) / 2.0
    return f"{text} ± {si(half, unit, 2)}"


def plain(value: Any) -> str:
    """Any other value (count, word, flag) as text."""
    if value is None:
        return MISSING
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return MISSING if not math.isfinite(value) else f"{value:g}"
    return str(value)


def quantity(value: Any, unit: str) -> str:
    """A value in its unit: ``%`` and empty units are not SI-prefixed."""
    unit = {"ohm": "Ω", "ohms": "Ω"}.get(unit, unit)
    if unit in ("%", "pct"):
        return pct(value)
    if not unit:
        return plain(value)
    return si(value, unit)
