"""Pieces of the plot area: the trace curve, the percent axis, the plot keys and the
layer of every cycle's own fitted line.

Kept apart from :mod:`.plots` (which lays them out and moves them with the
shown cycle) so that each module stays readable.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtGui

from trueslope.core.percycle import cycle_column

from . import theme

if TYPE_CHECKING:
    from trueslope.core.results import Analysis

#: Closest spacing of two drawn per-cycle lines, pixels: below it the lines
#: merge into a solid block, so only every k-th cycle's line is drawn.
MIN_PX_PER_FIT = 10.0


def pen(colour: Any, width: float = 1.0, style: QtCore.Qt.PenStyle | None = None) -> QtGui.QPen:
    """A cosmetic pen (its width in pixels at any zoom)."""
    p = pg.mkPen(colour, width=width)
    p.setCosmetic(True)
    if style is not None:
        p.setStyle(style)
    return p


class TraceCurve(pg.PlotDataItem):
    """The capture's curve, told that its samples are finite.

    pyqtgraph 0.14 keeps "all finite" flags on its internal datasets but
    never sets them from ``skipFiniteCheck``; with the flags unknown, every
    redraw of the downsampling path runs ``x[np.isfinite(x)]`` over the whole
    record (about 0.15 s per redraw at 10 M samples). The time axis is
    computed, so always finite; the voltages are checked once, off the GUI
    thread (:attr:`TraceData.all_finite`). Only the flags are touched, and
    only where they exist, so a pyqtgraph without them is merely slower.
    """

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        self.y_all_finite = False
        #: (t0, t1, v0, v1), the data's bounds when known (measured off the GUI thread);
        #: given to the raw dataset so that pyqtgraph does not search every sample for them
        self.bounds: tuple[float, float, float, float] | None = None

    def _getDisplayDataset(self):  # noqa: N802 (pyqtgraph naming)
        for name in ("_dataset", "_datasetMapped"):
            ds = getattr(self, name, None)
            if ds is not None and hasattr(ds, "xAllFinite"):
                ds.xAllFinite = True
                if self.y_all_finite:
                    ds.yAllFinite = True
        bounds = getattr(self, "bounds", None)  # (pyqtgraph's __init__ draws before ours runs)
        raw = getattr(self, "_dataset", None)
        if (bounds is not None and raw is not None and hasattr(raw, "_dataRect")
                and raw.x is not None and raw.x.size and raw.x[0] == bounds[0]
                and raw.x[-1] == bounds[1]):  # the bounds are of these data
            t0, t1, v0, v1 = bounds
            rect = QtCore.QRectF(QtCore.QPointF(t0, v0), QtCore.QPointF(t1, v1))
            if raw._dataRect is None:
                raw._dataRect = rect
            # the "mapped" dataset pyqtgraph would make from the raw one with no mapping
            # on (the same arrays), made here so that it carries the bounds too
            o = self.opts
            if (getattr(self, "_datasetMapped", 0) is None and not any(o["logMode"])
                    and not (o["subtractMeanMode"] or o["fftMode"] or o["derivativeMode"]
                             or o["phasemapMode"])
                    and raw.x.dtype.kind == "f" and raw.y.dtype.kind == "f"):
                mapped = type(raw)(raw.x, raw.y, raw.xAllFinite, raw.yAllFinite)
                mapped._dataRect = rect
                self._datasetMapped = mapped
        return super()._getDisplayDataset()


class DirectAxis(pg.AxisItem):
    """An axis that draws its ticks and labels straight onto the view's painter.

    pyqtgraph's axis records its drawing in a ``QPicture`` and replays it at every
    paint; replaying text resolves its font again each time (about 7 ms an axis on the
    bench machine, most of a redraw). This one keeps what it worked out (the draw
    specifications) in the same slot, so pyqtgraph's own invalidation (``picture =
    None`` on any change of range, size, style or labels) still applies, and draws them
    each paint.
    """

    def paint(self, p: QtGui.QPainter, opt: Any, widget: Any) -> None:
        font = self.style["tickFont"]
        p.save()
        try:
            if font:
                p.setFont(font)
            if self.picture is None:
                self.picture = (self.generateDrawSpecs(p),)
            specs = self.picture[0]
            if specs is not None:
                self.drawPicture(p, *specs)
        finally:
            p.restore()


def direct_axes(**others: pg.AxisItem) -> dict[str, pg.AxisItem]:
    """Axis items for a plot: :class:`DirectAxis` on the left and bottom, and ``others``."""
    axes: dict[str, pg.AxisItem] = {"left": DirectAxis("left"), "bottom": DirectAxis("bottom")}
    axes.update(others)
    return axes


class PercentAxis(DirectAxis):
    """An axis that labels a volts view in percent of a span.

    The view stays in volts; this axis only chooses round percentages for its
    ticks and writes them, so the strip can show mV on the left and % of span
    on the right of the same curve.
    """

    def __init__(self, orientation: str = "right", **kwargs: Any) -> None:
        super().__init__(orientation, **kwargs)
        self._pct_per_v = 0.0

    def set_span(self, span_v: float) -> None:
        """Set the span (volts) that counts as 100 %."""
        self._pct_per_v = 100.0 / abs(span_v) if span_v and math.isfinite(span_v) else 0.0
        self.picture = None
        self.update()

    def tickValues(self, minVal: float, maxVal: float, size: float):  # noqa: N802 (Qt naming)
        k = self._pct_per_v
        if not k:
            return []
        levels = super().tickValues(minVal * k, maxVal * k, size)
        return [(spacing / k, [v / k for v in values]) for spacing, values in levels]

    def tickStrings(self, values, scale, spacing):  # noqa: N802 (Qt naming)
        k = self._pct_per_v
        if not k or not values:
            return []
        step = abs(spacing * k)
        decimals = min(6, max(0, -math.floor(math.log10(step) + 1e-9)))
        return [f"{v * k:.{decimals}f}" for v in values]


class CycleFits:
    """Every cycle's own fitted line (its slope and offset from ``CycleFigures``),
    over the fit window of each cycle, in true volts.

    Only the cycles in view are drawn, and when they would sit closer than
    :data:`MIN_PX_PER_FIT` pixels apart only every ``step``-th one (counted
    from cycle 0, so panning does not make the lines jump): :attr:`step` says
    which, for the plot's key.
    """

    def __init__(self, item: pg.PlotDataItem) -> None:
        self.item = item
        self.step = 1
        self.drawn = np.zeros(0, dtype=int)
        self._starts = np.zeros(0)
        self._line = np.zeros((0, 2))
        self._x = np.zeros((0, 2))

    def set_analysis(self, analysis: Analysis | None) -> None:
        """Take each cycle's line from ``analysis`` (None forgets them)."""
        if analysis is None or not analysis.cycles:
            self._starts = np.zeros(0)
            self._line = np.zeros((0, 2))
            self._x = np.zeros((0, 2))
            return
        av = analysis.averaged
        cyc = analysis.cycles
        starts = cycle_column(cyc, "ramp_start_s").astype(float)
        slope = cycle_column(cyc, "slope_v_per_s")
        offset = cycle_column(cyc, "offset_v")
        t = np.array([av.window_start_s, av.window_end_s], dtype=float)
        self._starts = starts
        self._x = starts[:, None] + t[None, :]
        self._line = offset[:, None] + slope[:, None] * t[None, :]

    def clear(self) -> None:
        self.item.setData([], [])
        self.drawn = np.zeros(0, dtype=int)
        self.step = 1

    def update(self, x_lo: float, x_hi: float, width_px: float) -> bool:
        """Draw the lines of the cycles inside ``x_lo``..``x_hi`` seconds on a view
        ``width_px`` pixels wide. Returns True when :attr:`step` changed."""
        before = self.step
        n = self._starts.size
        if n == 0:
            self.clear()
            return before != self.step
        lo = int(np.searchsorted(self._x[:, 1], x_lo, side="left"))
        hi = int(np.searchsorted(self._x[:, 0], x_hi, side="right"))
        visible = max(0, hi - lo)
        most = max(1, int(max(width_px, 1.0) // MIN_PX_PER_FIT))
        self.step = max(1, math.ceil(visible / most))
        first = -(-lo // self.step) * self.step
        idx = np.arange(first, hi, self.step, dtype=int)
        self.drawn = idx
        if idx.size == 0:
            self.item.setData([], [])
            return before != self.step
        x = np.full((idx.size, 3), np.nan)
        y = np.full((idx.size, 3), np.nan)
        x[:, :2] = self._x[idx]
        y[:, :2] = self._line[idx]
        self.item.setData(x.ravel(), y.ravel())
        return before != self.step


class PredictionLayer:
    """A predicted ramp (``whatif.ChangePrediction``) drawn dashed: its voltage over the
    trace and its residual from its own best-fit line over the residual strip, both
    placed at the shown cycle's ramp start."""

    def __init__(self, trace_plot: pg.PlotItem, residual_plot: pg.PlotItem) -> None:
        style = QtCore.Qt.PenStyle.DashLine
        self.trace = pg.PlotDataItem(pen=pen(theme.PREDICTION, 2.2, style))
        self.residual = pg.PlotDataItem(pen=pen(theme.PREDICTION, 2.2, style))
        for item in (self.trace, self.residual):
            item.setZValue(5)
        trace_plot.addItem(self.trace)
        residual_plot.addItem(self.residual)
        self.label = ""
        self.prediction: Any = None
        self._t = self._v = self._rt = self._r = np.zeros(0)

    def set(self, prediction: Any, label: str, window: tuple[float, float]) -> None:
        """Take a prediction (None removes it); ``window`` the fit window's fractions."""
        from .whatif_jobs import residual_of
        self.prediction, self.label = prediction, label if prediction is not None else ""
        if prediction is None:
            self._t = self._v = self._rt = self._r = np.zeros(0)
        else:
            self._t = np.asarray(prediction.time_s, dtype=float)
            self._v = np.asarray(prediction.voltage_v, dtype=float)
            self._rt, self._r = residual_of(self._t, self._v, window)

    def place(self, start_s: float) -> None:
        self.trace.setData(start_s + self._t, self._v)
        self.residual.setData(start_s + self._rt, self._r)

    def largest_residual_v(self) -> float:
        return float(np.max(np.abs(self._r))) if self._r.size else 0.0


def _css(colour: Any) -> str:
    if isinstance(colour, tuple):
        r, g, b = colour[:3]
        a = colour[3] if len(colour) > 3 else 255
        # Keys are drawn on the plain background: give faint fills more body.
        return f"rgba({r},{g},{b},{min(1.0, 3 * a / 255):.2f})"
    return str(colour)


def key_html(entries: list[tuple[str, Any, str]]) -> str:
    """HTML for a one-line key: a coloured mark, then its words, for each entry."""
    marks = {"line": "&#9472;&#9472;", "thin": "&#9472;", "dot": "&#9679;", "box": "&#9632;",
             "dash": "&#9588;&#9588;&#9588;"}
    parts = [f"<span style='color:{_css(c)}; font-weight:bold'>{marks[k]}</span>"
             f"<span style='color:{theme.PLOT_FOREGROUND}'>&nbsp;{text}</span>"
             for k, c, text in entries]
    return "&nbsp;&nbsp;&nbsp;".join(parts)


def ordinal(n: int) -> str:
    """``2nd``, ``3rd``, ``11th``, ``115th``."""
    suffix = "th" if 10 <= n % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(n % 10, "th")
    return f"{n}{suffix}"
