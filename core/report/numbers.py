"""The one number formatter: every figure has one label, one unit and one precision.

The terminal summary, the window's panels, the CSV and HTML exports all print
a figure through :func:`figure_text` (or the helpers it uses), so 1234.5 %
reads "1234 %" everywhere and a slope has five significant figures wherever
it appears. JSON exports carry the SI values unformatted.

Rules: values with a unit get an SI prefix (``format_si``: ``12.35 mV``);
percentages are written in fixed notation to three significant figures
(never an exponent); a missing or non-finite value is a dash.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ..units import format_si

MISSING = "—"


@dataclass(frozen=True)
class FigureFormat:
    """How one figure is shown: its label, its unit (``"%"`` for percentages,
    ``""`` for counts and words) and its significant figures."""

    label: str
    unit: str
    digits: int


#: Every summary figure, by its key in ``Figures`` and in the JSON document.
FIGURES: dict[str, FigureFormat] = {
    "direction": FigureFormat("Direction", "", 0),
    "full_cycles": FigureFormat("Full cycles", "", 0),
    "partial_cycles": FigureFormat("Partial cycles", "", 0),
    "frequency_hz": FigureFormat("Repetition rate", "Hz", 6),
    "period_s": FigureFormat("Period", "s", 6),
    "period_jitter_s": FigureFormat("Period jitter", "s", 3),
    "ramp_time_s": FigureFormat("Ramp time", "s", 4),
    "retrace_time_s": FigureFormat("Retrace time", "s", 3),
    "offset_v": FigureFormat("Offset", "V", 4),
    "start_v": FigureFormat("Start level", "V", 4),
    "end_v": FigureFormat("End level", "V", 4),
    "amplitude_v": FigureFormat("Amplitude", "V", 4),
    "slope_v_per_s": FigureFormat("Slope", "V/s", 5),
    "slope_ci95_v_per_s": FigureFormat("Slope 95 % interval", "V/s", 2),
    "peak_deviation_v": FigureFormat("Peak deviation", "V", 3),
    "nonlinearity_pct": FigureFormat("Nonlinearity (best-fit line)", "%", 3),
    "terminal_nonlinearity_pct": FigureFormat("Nonlinearity (end-point line)", "%", 3),
    "slope_error_pct": FigureFormat("Slope error", "%", 3),
    "displacement_error_pct": FigureFormat("Displacement error (signed, end-point line)",
                                           "%", 3),
    "transmission_error_pct": FigureFormat("Transmission error", "%", 3),
    "midpoint_time_error_s": FigureFormat("Midpoint time error", "s", 3),
    "midpoint_time_error_pct": FigureFormat("Midpoint time error (of the ramp time)", "%", 3),
    "residual_rms_v": FigureFormat("Residual RMS", "V", 3),
    "noise_rms_v": FigureFormat("Noise per sample (RMS)", "V", 3),
    "adc_step_v": FigureFormat("Quantisation step", "V", 3),
    "nonlinearity_floor_pct": FigureFormat("Smallest resolvable nonlinearity", "%", 3),
    "below_floor": FigureFormat("Nonlinearity below that floor", "", 0),
    "trim_fraction": FigureFormat("Trim at each end", "%", 3),
    "window_start_s": FigureFormat("Window start (from the ramp start)", "s", 4),
    "window_end_s": FigureFormat("Window end (from the ramp start)", "s", 4),
    "fitted_span_v": FigureFormat("Span in the window", "V", 4),
}


#: The figures by group, in the order the window's panel and the terminal show them.
FIGURE_GROUPS: tuple[tuple[str, tuple[str, ...]], ...] = (
    ("Linearity", ("nonlinearity_pct", "terminal_nonlinearity_pct", "peak_deviation_v",
                   "residual_rms_v", "slope_error_pct", "displacement_error_pct",
                   "transmission_error_pct", "midpoint_time_error_s")),
    ("Ramp", ("slope_v_per_s", "fitted_span_v", "amplitude_v", "start_v", "end_v", "offset_v",
              "direction")),
    ("Timing", ("frequency_hz", "period_s", "period_jitter_s", "ramp_time_s", "retrace_time_s",
                "full_cycles")),
    ("Resolution", ("noise_rms_v", "adc_step_v", "nonlinearity_floor_pct", "below_floor")),
    ("Fit window", ("window_start_s", "window_end_s", "trim_fraction")),
)


def finite(value: Any) -> bool:
    """True for a real, finite number."""
    try:
        return value is not None and not isinstance(value, bool) and math.isfinite(float(value))
    except (TypeError, ValueError):
        return False


def si(value: Any, unit: str, digits: int = 4) -> str:
    """``value`` with an SI prefix and ``unit`` (e.g. ``12.35 mV``); a dash if missing."""
    if not finite(value):
        return MISSING
    return format_si(float(value), {"ohm": "Ω", "ohms": "Ω"}.get(unit, unit), digits=digits)


def pct(value: Any, digits: int = 3, signed: bool = False) -> str:
    """A percentage to ``digits`` significant figures in fixed notation, e.g. ``0.887 %``."""
    if not finite(value):
        return MISSING
    v = float(value)
    sign = "+" if signed and v > 0 else ""
    if v == 0.0:
        return "0 %"
    decimals = max(0, digits - 1 - int(math.floor(math.log10(abs(v)))))
    return f"{sign}{v:.{min(decimals, 6)}f} %"


def plain(value: Any) -> str:
    """A count, word or flag as text."""
    if value is None:
        return MISSING
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return MISSING if not math.isfinite(value) else f"{value:g}"
    return str(value)


def quantity(value: Any, unit: str, digits: int = 4) -> str:
    """A value in its unit: percentages fixed, words plain, the rest SI-prefixed."""
    if unit in ("%", "pct"):
        return pct(value, min(digits, 3))
    if not unit:
        return plain(value)
    return si(value, unit, digits)


def with_ci(value: Any, ci: Any, unit: str, digits: int = 5) -> str:
    """``value ± half-width`` of a 95 % interval ``ci = (low, high)``."""
    text = si(value, unit, digits)
    try:
        lo, hi = float(ci[0]), float(ci[1])
    except (TypeError, ValueError, IndexError):
        return text
    if not (math.isfinite(lo) and math.isfinite(hi)):
        return text
    return f"{text} ± {si(abs(hi - lo) / 2.0, unit, FIGURES['slope_ci95_v_per_s'].digits)}"


def figure_text(key: str, value: Any) -> str:
    """A summary figure as shown everywhere: its unit and precision from :data:`FIGURES`."""
    f = FIGURES[key]
    if key == "trim_fraction":
        return pct(100.0 * value if finite(value) else value, f.digits)
    return quantity(value, f.unit, f.digits)
