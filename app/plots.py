"""The trace view and the residual strip: one pyqtgraph layout, two plots, one time axis.

The trace view draws the whole capture with the line fitted to the averaged
cycle over the shown cycle, optionally each cycle's own fitted line (thinned
to a readable density, see :class:`~.plotparts.CycleFits`), and the analysis
window as a band the user can drag. The residual strip below shares the time
axis: the averaged cycle minus its line, one dot per phase bin, placed under
the shown cycle, with the smoothed systematic part over it and the
resolution floor as a band. Residuals are trace minus line in true volts for
either direction of ramp. Its left axis is in volts (SI-prefixed by
pyqtgraph), its right axis in percent of the fitted span.

Millions of samples are drawn with pyqtgraph's peak downsampling and
clip-to-view, set on the item after it has been added to the plot: in
pyqtgraph 0.14 passing ``clipToView`` to the constructor of an item that is
then added to a plot fails, because the item asks its view for its auto-range
state before it has a view.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore

from . import theme
from .jobs import TraceData
from .plotparts import (CycleFits, PercentAxis, PredictionLayer, TraceCurve, direct_axes,
                        key_html, ordinal)
from .plotparts import pen as _pen

if TYPE_CHECKING:
    from trueslope.core.results import Analysis

__all__ = ["MIN_WINDOW_FRACTION", "PercentAxis", "PlotArea", "TraceCurve", "cycle_span",
           "cycle_view"]

#: Width of the left and right axes, pixels: fixed so that the two plots'
#: time axes line up exactly.
_AXIS_WIDTH = 72
#: Narrowest analysis window the band may be dragged to, as a fraction of the ramp.
MIN_WINDOW_FRACTION = 0.05


class PlotArea(pg.GraphicsLayoutWidget):
    """Trace view above, residual strip below.

    Signals
    -------
    band_moved(float, float)
        The user released the band: new window start and end, seconds from
        the shown cycle's ramp start.
    """

    band_moved = QtCore.Signal(float, float)

    def __init__(self, parent: Any = None) -> None:
        super().__init__(parent)
        self.setBackground(theme.PLOT_BACKGROUND)
        self.setMinimumSize(420, 320)
        self._analysis: Analysis | None = None
        self._shown = 0
        self._all_fits = False
        self._placing_band = False
        self._t_range: tuple[float, float] | None = None
        self._trace_key: str | None = None
        self._residual_key: str | None = None

        self.trace_plot: pg.PlotItem = self.addPlot(row=0, col=0, axisItems=direct_axes())
        self.residual_plot: pg.PlotItem = self.addPlot(
            row=1, col=0, axisItems=direct_axes(right=PercentAxis("right")))
        lay = self.ci.layout
        lay.setRowStretchFactor(0, 3)
        lay.setRowStretchFactor(1, 2)
        lay.setVerticalSpacing(4)

        self._style_plot(self.trace_plot, "Voltage", "V")
        # Trace minus line in true volts, whichever way the ramp runs: nothing here is mirrored.
        self._style_plot(self.residual_plot, "Trace − line", "V")
        self.trace_plot.showAxis("right")
        self.trace_plot.getAxis("right").setStyle(showValues=False)
        self.residual_plot.showAxis("right")
        self.percent_axis: PercentAxis = self.residual_plot.getAxis("right")  # type: ignore[assignment]
        self.percent_axis.setLabel("% of span")
        self.residual_plot.setLabel("bottom", "Time", units="s")
        # The strip below carries the time labels; ticks here only line up with them.
        self.trace_plot.getAxis("bottom").setStyle(showValues=False)
        self.percent_axis.enableAutoSIPrefix(False)
        self.residual_plot.setXLink(self.trace_plot)

        vb = self.trace_plot.getViewBox()
        vb.setAutoVisible(y=True)

        # Keys sit in the plots' title rows, where they can never hide data.
        self.prediction = PredictionLayer(self.trace_plot, self.residual_plot)
        self._update_keys()

        # Trace: pen width 1; downsampling and clipping are set after adding.
        self.trace_curve = TraceCurve(pen=_pen(theme.TRACE, 1))
        self.trace_plot.addItem(self.trace_curve)
        self.trace_curve.setDownsampling(auto=True, method="peak")
        self.trace_curve.setClipToView(True)

        self.cycle_fill = pg.LinearRegionItem(movable=False, brush=pg.mkBrush(*theme.SHOWN_CYCLE_FILL),
                                              pen=pg.mkPen(None))
        self.cycle_fill.setZValue(-20)
        for line in self.cycle_fill.lines:
            line.setPen(pg.mkPen(None))
        self.trace_plot.addItem(self.cycle_fill, ignoreBounds=True)

        self.band = pg.LinearRegionItem(
            brush=pg.mkBrush(*theme.BAND_FILL), hoverBrush=pg.mkBrush(*theme.BAND_HOVER),
            pen=_pen(theme.BAND_EDGE, 1.5), hoverPen=_pen(theme.BAND_EDGE, 3))
        self.band.setZValue(-10)
        self.band.setToolTip("Analysis window: drag it, or drag its edges, and release to measure again")
        self.trace_plot.addItem(self.band, ignoreBounds=True)
        self.band.sigRegionChangeFinished.connect(self._on_band_released)
        self.band.sigRegionChanged.connect(self._mirror_band)

        self.fit_others = pg.PlotDataItem(pen=_pen(theme.FIT_LINE_OTHER, 2), connect="finite")
        self.trace_plot.addItem(self.fit_others)
        self.cycle_fits = CycleFits(self.fit_others)
        vb.sigXRangeChanged.connect(self._on_view_changed)
        vb.sigResized.connect(self._on_view_changed)
        self.fit_shown = pg.PlotDataItem(pen=_pen(theme.FIT_LINE, 2))
        self.trace_plot.addItem(self.fit_shown)

        # Residual strip.
        self.noise_band = pg.LinearRegionItem(orientation="horizontal", movable=False,
                                              brush=pg.mkBrush(*theme.NOISE_BAND))
        for line in self.noise_band.lines:
            line.setPen(pg.mkPen(None))
        self.noise_band.setZValue(-20)
        self.residual_plot.addItem(self.noise_band, ignoreBounds=True)
        self.band_copy = pg.LinearRegionItem(movable=False, brush=pg.mkBrush(*theme.BAND_FILL))
        for line in self.band_copy.lines:
            line.setPen(_pen(theme.BAND_EDGE, 1, QtCore.Qt.PenStyle.DashLine))
        self.band_copy.setZValue(-15)
        self.residual_plot.addItem(self.band_copy, ignoreBounds=True)
        self.zero_line = pg.InfiniteLine(0.0, angle=0, pen=_pen(theme.ZERO_LINE, 1))
        self.residual_plot.addItem(self.zero_line, ignoreBounds=True)
        # dots only (no line to keep within Qt's drawing range), so no dynamic range
        # limit: with one, every change of the strip's vertical range rebuilt all the
        # dots (three times per new analysis, about 7 ms each for 2000 of them)
        self.residual_points = pg.PlotDataItem(
            pen=None, symbol="o", symbolSize=3, symbolPen=None,
            symbolBrush=pg.mkBrush(*theme.RESIDUAL_POINTS), dynamicRangeLimit=None)
        self.residual_plot.addItem(self.residual_points)
        self.residual_smooth = pg.PlotDataItem(pen=_pen(theme.RESIDUAL_SMOOTH, 2), connect="finite")
        self.residual_plot.addItem(self.residual_smooth)
        self.reset()

    @staticmethod
    def _style_plot(plot: pg.PlotItem, label: str, units: str) -> None:
        plot.setLabel("left", label, units=units)
        plot.showGrid(x=True, y=True, alpha=theme.GRID_ALPHA)
        plot.setMenuEnabled(False)
        for name in ("left", "bottom", "right"):
            ax = plot.getAxis(name)
            ax.setPen(_pen(theme.PLOT_FOREGROUND))
            ax.setTextPen(_pen(theme.PLOT_FOREGROUND))
            # major ticks and grid lines only: pyqtgraph's minor and faintest levels, drawn
            # across the whole plot, cost two thirds of every redraw with software rendering
            ax.setStyle(maxTickLevel=0)
        plot.getAxis("left").setWidth(_AXIS_WIDTH)
        plot.getAxis("right").setWidth(_AXIS_WIDTH)

    # -- content -------------------------------------------------------------------

    def reset(self) -> None:
        """Forget the capture and the analysis.

        (Not named ``clear``: GraphicsLayoutWidget puts its layout's ``clear``,
        which removes both plots, on every instance.)
        """
        self._analysis = None
        self.trace_curve.setData([], [])
        self._t_range = None
        for item in (self.fit_shown, self.residual_points, self.residual_smooth):
            item.setData([], [])
        self.cycle_fits.set_analysis(None)
        self.cycle_fits.clear()
        self.prediction.set(None, "", (0.0, 1.0))
        self.prediction.place(0.0)
        self._update_keys()
        for item in (self.band, self.band_copy, self.cycle_fill, self.noise_band):
            item.hide()

    def set_trace(self, trace: TraceData, x_range: tuple[float, float] | None = None) -> None:
        """Draw the capture (millions of points are fine: peak-downsampled and clipped).

        Give ``x_range`` (seconds) when the view will show only part of the
        record: set first, it lets clip-to-view slice the data before the
        first downsampling pass, which otherwise runs over every sample at
        the default view's resolution (a third of a second for 10 M samples).
        """
        if x_range is not None:
            self.trace_plot.setXRange(*x_range, padding=0)
        self.trace_curve.y_all_finite = trace.all_finite
        t = trace.time_s
        self._t_range = (float(t[0]), float(t[-1])) if len(t) else None
        vr = trace.voltage_range_v
        self.trace_curve.bounds = (self._t_range + vr if self._t_range is not None
                                   and vr is not None and trace.all_finite else None)
        self.trace_curve.setSkipFiniteCheck(trace.all_finite)
        self.trace_curve.setData(trace.time_s, trace.voltage_v, connect="all" if trace.all_finite else "finite")

    def set_analysis(self, analysis: Analysis, shown: int = 0, all_fits: bool | None = None) -> None:
        """Draw the fit, the band and the residual of ``analysis`` at cycle ``shown``."""
        self._analysis = analysis
        if all_fits is not None:
            self._all_fits = all_fits
        self.percent_axis.set_span(float(analysis.figures.fitted_span_v))
        # The band is the capture's resolution floor in volts, the same figure
        # as the "smallest resolvable nonlinearity" of the figures panel.
        floor = (float(analysis.noise.nonlinearity_floor_pct) / 100.0
                 * float(analysis.figures.fitted_span_v))
        if math.isfinite(floor) and floor > 0:
            self.noise_band.setRegion((-floor, floor))
            self.noise_band.show()
        else:
            self.noise_band.hide()
        for item in (self.band, self.band_copy, self.cycle_fill):
            item.show()
        self.cycle_fits.set_analysis(analysis)
        self._draw_other_fits()
        self.show_cycle(shown)
        self.fit_residual_y()

    @property
    def shown(self) -> int:
        return self._shown

    @property
    def n_cycles(self) -> int:
        a = self._analysis
        return 0 if a is None else len(a.segmentation.ramp_start_s)

    def set_all_fits(self, on: bool) -> None:
        """Draw the fitted line over every cycle (True) or only the shown one."""
        self._all_fits = bool(on)
        self._draw_other_fits()

    @property
    def all_fits(self) -> bool:
        return self._all_fits

    def _draw_other_fits(self) -> None:
        if self._analysis is None or not self._all_fits:
            self.cycle_fits.clear()
        else:
            lo, hi = self.x_range()
            self.cycle_fits.update(lo, hi, self.trace_plot.getViewBox().width())
        self._update_keys()

    def _on_view_changed(self, *_: Any) -> None:
        if self._analysis is not None and self._all_fits:
            lo, hi = self.x_range()
            if self.cycle_fits.update(lo, hi, self.trace_plot.getViewBox().width()):
                self._update_keys()

    def fits_key_text(self) -> str:
        """What the key says of the per-cycle lines ("" when they are off)."""
        if self._analysis is None or not self._all_fits:
            return ""
        step = self.cycle_fits.step
        if step <= 1:
            return "each cycle's own fitted line"
        return f"each cycle's own fitted line (every {ordinal(step)} cycle at this zoom)"

    def _update_keys(self) -> None:
        entries = [("line", theme.TRACE, "capture"),
                   ("line", theme.FIT_LINE, "line fitted to the averaged cycle")]
        fits = self.fits_key_text()
        if fits:
            entries.append(("thin", theme.FIT_LINE_OTHER, fits))
        entries.append(("box", theme.BAND_FILL, "analysis window"))
        # A prediction's key gets a line of its own: the first is full at 1280 px.
        more = [("dash", theme.PREDICTION, f"predicted: {self.prediction.label}")]
        key = key_html(entries) + ("<br>" + key_html(more) if self.prediction.label else "")
        if key != self._trace_key:
            self._trace_key = key
            self.trace_plot.setTitle(key, size="9pt")
        below = [("dot", theme.RESIDUAL_POINTS, "averaged cycle − its line, one dot per phase bin"),
                 ("line", theme.RESIDUAL_SMOOTH, "systematic part"),
                 ("box", theme.NOISE_BAND, "resolution floor")]
        more = [("dash", theme.PREDICTION, "predicted ramp − its own best-fit line")]
        key = key_html(below) + ("<br>" + key_html(more) if self.prediction.label else "")
        if key != self._residual_key:
            self._residual_key = key
            self.residual_plot.setTitle(key, size="9pt")

    def set_prediction(self, prediction: Any, label: str = "") -> None:
        """Draw a predicted ramp (``whatif.ChangePrediction``) dashed over the shown cycle,
        or remove it (None)."""
        a = self._analysis
        if a is None or prediction is None:
            self.prediction.set(None, "", (0.0, 1.0))
        else:
            T = float(a.figures.ramp_time_s)
            window = (a.figures.window_start_s / T, a.figures.window_end_s / T)
            self.prediction.set(prediction, label, window)
        self.prediction.place(self.cycle_span(self._shown)[0] if self.n_cycles else 0.0)
        self._update_keys()
        self.fit_residual_y()

    def cycle_span(self, i: int) -> tuple[float, float]:
        """Start of cycle ``i``'s ramp and end of its retrace, absolute seconds."""
        return cycle_span(self._analysis, i)

    def show_cycle(self, i: int) -> None:
        """Move the fit, band and residual to cycle ``i`` (the view range is left alone)."""
        a = self._analysis
        if a is None or self.n_cycles == 0:
            return
        i = int(min(max(i, 0), self.n_cycles - 1))
        self._shown = i
        av = a.averaged
        start, end = self.cycle_span(i)
        ramp = float(av.ramp_time_s)
        self.cycle_fill.setRegion((start, end))
        self._place_band(start + av.window_start_s, start + av.window_end_s, start, start + ramp)
        t = np.array([av.window_start_s, av.window_end_s])
        # The fit is in the measurement frame; drawn over the trace in true volts.
        sign = -1.0 if av.mirrored else 1.0
        self.fit_shown.setData(start + t, sign * av.fit.at(t))
        x = start + np.asarray(av.time_s, dtype=float)
        self.residual_points.setData(x, np.asarray(av.residual_true_v, dtype=float))
        self.residual_smooth.setData(x, np.asarray(av.smoothed_residual_true_v, dtype=float))
        self.prediction.place(start)

    def _place_band(self, a: float, b: float, lo: float, hi: float) -> None:
        self._placing_band = True
        try:
            self.band.setBounds((lo, hi))
            self.band.setRegion((a, b))
            self.band_copy.setRegion((a, b))
        finally:
            self._placing_band = False

    def _mirror_band(self) -> None:
        self.band_copy.setRegion(self.band.getRegion())

    def _on_band_released(self) -> None:
        if self._placing_band or self._analysis is None:
            return
        start, _ = self.cycle_span(self._shown)
        ramp = float(self._analysis.averaged.ramp_time_s)
        a, b = sorted(self.band.getRegion())
        a, b = max(0.0, a - start), min(ramp, b - start)
        if b - a < MIN_WINDOW_FRACTION * ramp:
            # Too narrow to fit a line to: widen it about its centre.
            mid = min(max((a + b) / 2, MIN_WINDOW_FRACTION * ramp / 2), ramp * (1 - MIN_WINDOW_FRACTION / 2))
            a, b = mid - MIN_WINDOW_FRACTION * ramp / 2, mid + MIN_WINDOW_FRACTION * ramp / 2
        self.band_moved.emit(float(a), float(b))

    def band_region(self) -> tuple[float, float]:
        """The band's current edges, absolute seconds."""
        a, b = self.band.getRegion()
        return float(a), float(b)

    # -- view range ----------------------------------------------------------------

    def zoom_to_cycle(self, i: int | None = None) -> None:
        """Show cycle ``i`` (default: the shown one) with a little of its neighbours."""
        if self._analysis is None or self.n_cycles == 0:
            return
        if i is not None:
            self.show_cycle(i)
        self.trace_plot.setXRange(*cycle_view(self._analysis, self._shown), padding=0)
        self._auto_y()

    def zoom_to_all(self) -> None:
        """Show the whole capture."""
        # From the data, not autoRange(): a clipped curve reports the bounds
        # of what it last drew, not of the record.
        if self._t_range is not None:
            self.trace_plot.setXRange(*self._t_range, padding=0.01)
        else:
            self.trace_plot.enableAutoRange(x=True)
        self._auto_y()

    def _auto_y(self) -> None:
        self.trace_plot.enableAutoRange(y=True)
        self.fit_residual_y()

    def fit_residual_y(self) -> None:
        """Scale the residual strip to the residual inside the window (and the floor).

        Not auto-ranged: the bins next to the reset, outside the window, can
        lie hundreds of times further off and would flatten the bow.
        """
        a = self._analysis
        if a is None:
            return
        av = a.averaged
        r = np.asarray(av.residual_true_v, dtype=float)
        inside = r[np.asarray(av.in_window, dtype=bool) & np.isfinite(r)]
        sm = np.asarray(av.smoothed_residual_true_v, dtype=float)
        sm = sm[np.isfinite(sm)]
        floor = float(a.noise.nonlinearity_floor_pct) / 100.0 * float(a.figures.fitted_span_v)
        m = max(float(np.max(np.abs(inside))) if inside.size else 0.0,
                float(np.max(np.abs(sm))) if sm.size else 0.0,
                floor if math.isfinite(floor) else 0.0, self.prediction.largest_residual_v())
        if m > 0 and math.isfinite(m):
            self.residual_plot.setYRange(-1.15 * m, 1.15 * m, padding=0)
        else:
            self.residual_plot.enableAutoRange(y=True)

    def x_range(self) -> tuple[float, float]:
        lo, hi = self.trace_plot.getViewBox().viewRange()[0]
        return float(lo), float(hi)


def cycle_span(analysis: Analysis, i: int) -> tuple[float, float]:
    """Start of cycle ``i``'s ramp and end of its retrace, absolute seconds."""
    seg = analysis.segmentation
    start = float(seg.ramp_start_s[i])
    try:
        end = float(seg.retrace_end_s[i])
    except (IndexError, TypeError):
        end = float(seg.ramp_end_s[i])
    return start, end


def cycle_view(analysis: Analysis, i: int) -> tuple[float, float]:
    """Time range that shows cycle ``i`` with a little of its neighbours, seconds."""
    start, end = cycle_span(analysis, i)
    pad = 0.06 * (end - start)
    return start - pad, end + pad
