"""The plot parts that make a redraw cheap draw what pyqtgraph's own parts draw.

* :class:`DirectAxis` paints onto the view's painter what ``pyqtgraph.AxisItem`` records
  in a picture and replays (reference: pyqtgraph's ``AxisItem``, rendered beside it into
  an image of the same size).
* :class:`TraceCurve` given the data's bounds (measured off the GUI thread) reports the
  bounds pyqtgraph finds by searching the samples (reference: ``pyqtgraph.PlotDataItem``
  with the same data), and forgets them when it is given other data.
"""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
import pytest
from PySide6 import QtCore, QtGui

from trueslope.app.plotparts import DirectAxis, TraceCurve, direct_axes


def _render(axes: dict | None, size=(640, 360)) -> np.ndarray:
    w = pg.GraphicsLayoutWidget()
    w.resize(*size)
    p = w.addPlot(axisItems=axes)
    p.showGrid(x=True, y=True, alpha=0.3)
    p.plot(np.linspace(0.0, 1e-3, 200), np.linspace(-0.2, 4.7, 200))
    p.setXRange(0.0, 1e-3, padding=0)
    p.setYRange(-0.2, 4.7, padding=0)
    img = QtGui.QImage(size[0], size[1], QtGui.QImage.Format.Format_ARGB32)
    img.fill(QtGui.QColor("white"))
    painter = QtGui.QPainter(img)
    w.render(painter)
    painter.end()
    w.close()
    ptr = img.constBits()
    return np.frombuffer(ptr, dtype=np.uint8).reshape(size[1], size[0], 4).copy()


def test_direct_axis_draws_what_pyqtgraphs_axis_draws(qtbot):
    from trueslope.app.launch import make_app
    make_app()
    ours = _render(direct_axes())
    theirs = _render(None)
    differ = np.any(ours != theirs, axis=2)
    # the same ticks, grid lines and labels: at most a few edge pixels of text differ
    assert differ.mean() < 1e-3, f"{differ.sum()} pixels differ"
    # and there is something drawn: the axes' labels and grid are not blank
    assert (theirs[..., :3] < 128).any()


def test_direct_axis_forgets_its_drawing_when_the_range_changes(qtbot):
    from trueslope.app.launch import make_app
    make_app()
    w = pg.GraphicsLayoutWidget()
    qtbot.addWidget(w)
    w.resize(400, 300)
    p = w.addPlot(axisItems=direct_axes())
    ax = p.getAxis("bottom")
    assert isinstance(ax, DirectAxis)

    def paint():
        img = QtGui.QImage(400, 300, QtGui.QImage.Format.Format_ARGB32)
        painter = QtGui.QPainter(img)
        w.render(painter)
        painter.end()

    p.setXRange(0.0, 1.0, padding=0)
    paint()
    assert ax.picture is not None
    p.setXRange(0.0, 50.0, padding=0)
    assert ax.picture is None  # pyqtgraph's own invalidation still applies
    paint()
    texts = [t for _, _, t in ax.picture[0][2]]
    assert {"10", "20", "30", "40"} <= set(texts), texts  # the new range's labels


@pytest.mark.parametrize("n", [10, 100_000])
def test_trace_bounds_given_are_the_bounds_pyqtgraph_finds(qtbot, n):
    rng = np.random.default_rng(3)
    t = np.arange(n) * 2e-6 + 0.5
    v = rng.normal(1.0, 0.3, n)
    ref = pg.PlotDataItem(t, v)
    ours = TraceCurve()
    ours.bounds = (float(t[0]), float(t[-1]), float(v.min()), float(v.max()))
    ours.setData(t, v)
    for ax in (0, 1):
        assert ours.dataBounds(ax) == pytest.approx(ref.dataBounds(ax), rel=0, abs=0)
    # other data: the bounds given are not theirs and are not used
    ours.setData(t[: n // 2] + 1.0, v[: n // 2])
    ref.setData(t[: n // 2] + 1.0, v[: n // 2])
    for ax in (0, 1):
        assert ours.dataBounds(ax) == pytest.approx(ref.dataBounds(ax), rel=0, abs=0)
    assert QtCore.QRectF(ours.dataRect()) == QtCore.QRectF(ref.dataRect())
