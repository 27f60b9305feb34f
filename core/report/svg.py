"""Small plots as SVG text, with no plotting library: the averaged cycle with its line,
its residual against the resolution floor, and residuals of several captures overlaid.

Each function returns one ``<svg>`` element as a string, usable inline in HTML or
saved as a file. Tick labels go through :mod:`.numbers` (SI prefixes, fixed
percentages), and every text that may come from a capture is escaped. Residuals are
shown as trace minus line in true volts (``AveragedCycle.residual_true_v``), the way
the window draws them.
"""

from __future__ import annotations

import hashlib
import math
from dataclasses import dataclass
from html import escape
from typing import Iterable, Sequence

import numpy as np

from ..results import Analysis
from .numbers import MISSING, pct, plain, si

WIDTH, HEIGHT = 640, 300
#: Room for the tick labels (left, bottom) and the title (top), pixels.
MARGIN_LEFT, MARGIN_RIGHT, MARGIN_TOP, MARGIN_BOTTOM = 72, 28, 28, 44
FONT = "font-family=\"system-ui, 'Segoe UI', Helvetica, Arial, sans-serif\" font-size=\"11\""
INK, GRID, MUTED = "#1d2733", "#dfe4ea", "#6b7785"
TRACE, LINE, WINDOW = "#24527a", "#c8553d", "#f2c14e"
RESIDUAL, SYSTEMATIC, FLOOR = "#9aa5b1", "#0f7b6c", "#8fc9a9"
#: Overlay curves, chosen to stay apart in print and for the common colour deficiencies.
PALETTE = ("#24527a", "#c8553d", "#0f7b6c", "#8e5ea2", "#d08c1f", "#3d9bd0", "#7a4a24",
           "#5c6b73")


def esc(text: object) -> str:
    """Text safe inside an SVG (XML) or HTML element or attribute."""
    return escape(str(text), quote=True)


def nice_ticks(lo: float, hi: float, count: int = 5) -> list[float]:
    """Round tick values in [lo, hi], 1, 2 or 5 times a power of ten apart: the finest
    such step that gives at most ``count + 1`` ticks."""
    if not (math.isfinite(lo) and math.isfinite(hi)) or hi <= lo:
        return [lo] if math.isfinite(lo) else []
    mag = 10.0 ** math.floor(math.log10((hi - lo) / max(count, 1)))
    for step in (m * mag for m in (0.1, 0.2, 0.5, 1.0, 2.0, 5.0, 10.0, 20.0, 50.0)):
        first, last = math.ceil(lo / step - 1e-9), math.floor(hi / step + 1e-9)
        if last - first + 1 <= count + 1:
            break
    return [0.0 if k == 0 else k * step for k in range(first, last + 1)]


def tick_text(value: float, step: float, unit: str) -> str:
    """A tick label: as many figures as the tick step needs, through :mod:`.numbers`."""
    if value == 0.0:
        return "0" if not unit else ("0 %" if unit == "%" else f"0 {unit}")
    digits = max(1, int(math.floor(math.log10(abs(value)))) - int(math.floor(
        math.log10(step))) + 1) if step > 0 else 3
    if unit == "%":
        return pct(value, min(digits, 6))
    if not unit:
        decimals = max(0, -int(math.floor(math.log10(step)))) if step > 0 else 3
        return plain(round(float(value), decimals))
    return si(value, unit, min(digits, 6))


@dataclass(frozen=True)
class Frame:
    """Maps data to pixels inside the plot area of a ``width`` x ``height`` picture."""

    x_lo: float
    x_hi: float
    y_lo: float
    y_hi: float
    width: int = WIDTH
    height: int = HEIGHT

    @property
    def left(self) -> float:
        return MARGIN_LEFT

    @property
    def right(self) -> float:
        return self.width - MARGIN_RIGHT

    @property
    def top(self) -> float:
        return MARGIN_TOP

    @property
    def bottom(self) -> float:
        return self.height - MARGIN_BOTTOM

    def x(self, v: np.ndarray | float) -> np.ndarray:
        return self.left + (np.asarray(v, float) - self.x_lo) / (self.x_hi - self.x_lo) * (
            self.right - self.left)

    def y(self, v: np.ndarray | float) -> np.ndarray:
        return self.bottom - (np.asarray(v, float) - self.y_lo) / (self.y_hi - self.y_lo) * (
            self.bottom - self.top)


def _range(*arrays: np.ndarray, pad: float = 0.06) -> tuple[float, float]:
    """The finite range of some arrays, padded; a unit range around a constant."""
    vals = np.concatenate([np.asarray(a, float).ravel() for a in arrays] or [np.zeros(0)])
    vals = vals[np.isfinite(vals)]
    if vals.size == 0:
        return -1.0, 1.0
    lo, hi = float(vals.min()), float(vals.max())
    if hi <= lo:
        half = abs(lo) * 0.1 or 1.0
        return lo - half, hi + half
    span = hi - lo
    return lo - pad * span, hi + pad * span


def _polyline(frame: Frame, x: np.ndarray, y: np.ndarray, colour: str, width: float = 1.5,
              dash: str = "") -> str:
    """One path through the finite points; a gap wherever a value is missing."""
    px, py = frame.x(x), frame.y(y)
    ok = np.isfinite(px) & np.isfinite(py)
    parts, pen_down = [], False
    for xi, yi, good in zip(px.tolist(), py.tolist(), ok.tolist()):
        if not good:
            pen_down = False
            continue
        parts.append(f"{'L' if pen_down else 'M'}{xi:.1f},{yi:.1f}")
        pen_down = True
    if not parts:
        return ""
    dashed = f' stroke-dasharray="{dash}"' if dash else ""
    return (f'<path d="{" ".join(parts)}" fill="none" stroke="{colour}" '
            f'stroke-width="{width}" stroke-linejoin="round"{dashed}/>')


def _band(frame: Frame, x_lo: float, x_hi: float, y_lo: float, y_hi: float, colour: str,
          opacity: float) -> str:
    """A shaded rectangle in data coordinates, clipped to the plot area."""
    xa, xb = (float(np.clip(frame.x(v), frame.left, frame.right)) for v in (x_lo, x_hi))
    ya, yb = (float(np.clip(frame.y(v), frame.top, frame.bottom)) for v in (y_hi, y_lo))
    if not all(math.isfinite(v) for v in (xa, xb, ya, yb)) or xb <= xa or yb <= ya:
        return ""
    return (f'<rect x="{xa:.1f}" y="{ya:.1f}" width="{xb - xa:.1f}" height="{yb - ya:.1f}" '
            f'fill="{colour}" fill-opacity="{opacity}"/>')


def _axes(frame: Frame, x_unit: str, y_unit: str, x_label: str, y_label: str) -> str:
    """Grid, frame, ticks and their labels, and the axis titles."""
    out = []
    xt = nice_ticks(frame.x_lo, frame.x_hi)
    yt = nice_ticks(frame.y_lo, frame.y_hi)
    xs = xt[1] - xt[0] if len(xt) > 1 else 0.0
    ys = yt[1] - yt[0] if len(yt) > 1 else 0.0
    for v in xt:
        px = float(frame.x(v))
        out.append(f'<line x1="{px:.1f}" y1="{frame.top:.1f}" x2="{px:.1f}" '
                   f'y2="{frame.bottom:.1f}" stroke="{GRID}" stroke-width="1"/>')
        out.append(f'<text x="{px:.1f}" y="{frame.bottom + 15:.1f}" text-anchor="middle" '
                   f'fill="{MUTED}">{esc(tick_text(v, xs, x_unit))}</text>')
    for v in yt:
        py = float(frame.y(v))
        out.append(f'<line x1="{frame.left:.1f}" y1="{py:.1f}" x2="{frame.right:.1f}" '
                   f'y2="{py:.1f}" stroke="{GRID}" stroke-width="1"/>')
        out.append(f'<text x="{frame.left - 6:.1f}" y="{py + 4:.1f}" text-anchor="end" '
                   f'fill="{MUTED}">{esc(tick_text(v, ys, y_unit))}</text>')
    out.append(f'<rect x="{frame.left:.1f}" y="{frame.top:.1f}" '
               f'width="{frame.right - frame.left:.1f}" height="{frame.bottom - frame.top:.1f}" '
               f'fill="none" stroke="{MUTED}" stroke-width="1"/>')
    out.append(f'<text x="{(frame.left + frame.right) / 2:.1f}" y="{frame.height - 8:.1f}" '
               f'text-anchor="middle" fill="{INK}">{esc(x_label)}</text>')
    cy = (frame.top + frame.bottom) / 2
    out.append(f'<text x="14" y="{cy:.1f}" text-anchor="middle" fill="{INK}" '
               f'transform="rotate(-90 14 {cy:.1f})">{esc(y_label)}</text>')
    return "\n".join(out)


def _svg(frame: Frame, title: str, body: Iterable[str], legend: Sequence[tuple[str, str]] = (),
         corner: str = "right") -> str:
    """The picture: a titled ``<svg>`` with the plot area clipped and a legend in the top
    ``corner`` ("left" or "right") of the plot area."""
    items = "\n".join(b for b in body if b)
    # an id that differs between different plots of one page, and is the same every run
    clip = "clip-" + hashlib.sha1(f"{title}|{frame}|{items}".encode()).hexdigest()[:12]
    head = (f'<svg xmlns="http://www.w3.org/2000/svg" width="{frame.width}" '
            f'height="{frame.height}" viewBox="0 0 {frame.width} {frame.height}" role="img" '
            f'aria-label="{esc(title)}" {FONT}>\n<title>{esc(title)}</title>\n'
            f'<rect width="{frame.width}" height="{frame.height}" fill="#ffffff"/>\n'
            f'<defs><clipPath id="{clip}"><rect x="{frame.left:.1f}" y="{frame.top:.1f}" '
            f'width="{frame.right - frame.left:.1f}" height="{frame.bottom - frame.top:.1f}"/>'
            f'</clipPath></defs>\n'
            f'<text x="{frame.left:.1f}" y="17" fill="{INK}" font-weight="600">{esc(title)}</text>')
    keys = []
    if legend:
        # a plain box behind the legend keeps it readable over the curves
        box_w = 40 + 6.2 * max(len(label) for label, _ in legend)
        box_x = frame.left + 4 if corner == "left" else frame.right - 4 - box_w
        keys.append(f'<rect x="{box_x:.1f}" y="{frame.top + 4:.1f}" width="{box_w:.1f}" '
                    f'height="{15 * len(legend) + 6}" fill="#ffffff" fill-opacity="0.85" '
                    f'stroke="{GRID}"/>')
        for i, (label, colour) in enumerate(legend):
            y = frame.top + 18 + 15 * i
            keys.append(f'<line x1="{box_x + 6:.1f}" y1="{y - 4:.1f}" x2="{box_x + 26:.1f}" '
                        f'y2="{y - 4:.1f}" stroke="{colour}" stroke-width="3"/>'
                        f'<text x="{box_x + 32:.1f}" y="{y:.1f}" fill="{INK}">{esc(label)}</text>')
    return (f'{head}\n<g clip-path="url(#{clip})">\n{items}\n</g>\n'
            + "\n".join(keys) + "\n</svg>")


def trace_svg(a: Analysis, *, width: int = WIDTH, height: int = HEIGHT,
              title: str = "Averaged cycle and its best-fit line") -> str:
    """The averaged cycle (true volts against seconds from the ramp start), the best-fit
    line over the fit window (drawn dashed beyond it) and the window shaded."""
    av = a.averaged
    t = np.asarray(av.time_s, float)
    sign = -1.0 if av.mirrored else 1.0
    line = sign * np.asarray(av.fit.at(t), float)
    inside = (t >= av.window_start_s) & (t <= av.window_end_s)
    frame = Frame(*_xrange(t, av.ramp_time_s), *_range(av.voltage_v, line), width, height)
    body = [
        _band(frame, av.window_start_s, av.window_end_s, frame.y_lo, frame.y_hi, WINDOW, 0.22),
        _polyline(frame, t, av.voltage_v, TRACE, 2.0),
        _polyline(frame, t, np.where(inside, np.nan, line), LINE, 1.2, "5 4"),
        _polyline(frame, t, np.where(inside, line, np.nan), LINE, 1.5),
    ]
    return _svg(frame, title, [_axes(frame, "s", "V", "Time from the ramp start", "Voltage"),
                               *body],
                [("averaged cycle", TRACE), ("best-fit line", LINE), ("fit window", WINDOW)],
                "left" if _rises(av.voltage_v) else "right")


def _rises(v: np.ndarray) -> bool:
    """The trace ends higher than it starts (its empty corner is then the top left)."""
    finite = np.asarray(v, float)[np.isfinite(v)]
    return finite.size > 1 and finite[-1] > finite[0]


def _xrange(t: np.ndarray, ramp_time_s: float) -> tuple[float, float]:
    hi = float(ramp_time_s) if math.isfinite(ramp_time_s) and ramp_time_s > 0 else float(
        np.nanmax(t))
    return 0.0, hi


def floor_v(a: Analysis) -> float:
    """The resolution floor in volts: the smallest nonlinearity the capture resolves
    (``NoiseFloor.nonlinearity_floor_pct``) times the fitted span."""
    return a.noise.nonlinearity_floor_pct / 100.0 * abs(a.figures.fitted_span_v)


def residual_svg(a: Analysis, *, width: int = WIDTH, height: int = HEIGHT,
                 title: str = "Residual: averaged cycle minus the line") -> str:
    """The averaged residual and its systematic part (trace minus line, true volts) over
    the ramp, with the band of plus and minus the resolution floor."""
    av = a.averaged
    t = np.asarray(av.time_s, float)
    raw = np.where(av.in_window, av.residual_true_v, np.nan)
    smooth = np.asarray(av.smoothed_residual_true_v, float)
    fl = floor_v(a)
    band = np.array([-fl, fl]) if math.isfinite(fl) else np.zeros(0)
    frame = Frame(*_xrange(t, av.ramp_time_s), *_range(raw, smooth, band), width, height)
    body = [
        _band(frame, av.window_start_s, av.window_end_s, -fl, fl, FLOOR, 0.35)
        if math.isfinite(fl) else "",
        _polyline(frame, np.array([frame.x_lo, frame.x_hi]), np.zeros(2), MUTED, 1.0),
        _polyline(frame, t, raw, RESIDUAL, 1.0),
        _polyline(frame, t, smooth, SYSTEMATIC, 2.2),
    ]
    legend = [("averaged residual", RESIDUAL), ("systematic part", SYSTEMATIC)]
    if math.isfinite(fl):
        legend.append((f"resolution floor ± {si(fl, 'V', 3)}", FLOOR))
    return _svg(frame, title, [_axes(frame, "s", "V", "Time from the ramp start",
                                     "Trace minus line"), *body], legend)


def normalised_residual(a: Analysis) -> tuple[np.ndarray, np.ndarray]:
    """The systematic residual scaled for comparing captures: phase ``u`` along the ramp
    (0 at its start, 1 at its end) and trace minus line in % of the fitted span, true
    polarity; missing (NaN) outside the fit window."""
    av = a.averaged
    span = abs(a.figures.fitted_span_v)
    u = np.asarray(av.time_s, float) / av.ramp_time_s
    y = 100.0 * np.asarray(av.smoothed_residual_true_v, float) / span if span > 0 else \
        np.full(u.shape, np.nan)
    return u, y


def overlay_svg(curves: Sequence[tuple[str, Sequence[float], Sequence[float]]], *,
                width: int = WIDTH, height: int = HEIGHT,
                title: str = "Residuals compared (systematic part, % of the span)") -> str:
    """Several normalised residual curves on one plot, with a legend.

    Parameters
    ----------
    curves : sequence of (label, u, percent)
        Each curve's legend text, its phase along the ramp (0 to 1) and its residual
        in % of the span (NaN where missing). Colours repeat after eight curves.
    """
    data = [(str(lbl), np.asarray(u, float), np.asarray(y, float)) for lbl, u, y in curves]
    y_lo, y_hi = _range(*(y for _, _, y in data), np.zeros(1))
    frame = Frame(0.0, 1.0, y_lo, y_hi, width, max(height, MARGIN_TOP + MARGIN_BOTTOM
                                                        + 15 * len(data) + 40))
    body = [_polyline(frame, np.array([0.0, 1.0]), np.zeros(2), MUTED, 1.0)]
    legend = []
    for i, (label, u, y) in enumerate(data):
        colour = PALETTE[i % len(PALETTE)]
        body.append(_polyline(frame, u, y, colour, 1.8))
        legend.append((label or MISSING, colour))
    return _svg(frame, title, [_axes(frame, "", "%", "Phase along the ramp (0 start, 1 end)",
                                     "Trace minus line, % of span"), *body], legend)
