"""The plot area on its own: percent axis, downsampling, PNG and SVG export."""

from __future__ import annotations

import xml.etree.ElementTree as ET

import numpy as np
import pytest
from PySide6 import QtGui

from trueslope.app import exporting
from trueslope.app.jobs import TraceData
from trueslope.app.plots import PercentAxis, PlotArea


@pytest.fixture
def area(qtbot):
    from trueslope.app.launch import make_app
    make_app()
    a = PlotArea()
    qtbot.addWidget(a)
    a.resize(900, 600)
    a.show()
    qtbot.waitExposed(a)
    t = np.arange(200_000) * 1e-6
    v = np.mod(t, 5e-3) * 800.0
    a.set_trace(TraceData(t, v, True))
    a.residual_smooth.setData(t[:500], 1e-3 * np.sin(t[:500] * 1e4))
    qtbot.wait(20)
    return a


def test_percent_axis_labels_volts_as_percent_of_span(qtbot):
    ax = PercentAxis("right")
    ax.set_span(4.0)  # 4 V span: 40 mV is 1 %
    levels = ax.tickValues(-0.04, 0.08, 300)
    assert levels, "no ticks"
    for spacing_v, values in levels:
        step_pct = 100.0 * spacing_v / 4.0
        mantissa = step_pct / 10 ** np.floor(np.log10(step_pct))
        assert min(abs(mantissa - m) for m in (1, 2, 2.5, 5, 10)) < 1e-9  # a round step
        for v in values:  # and every tick a whole number of steps
            k = (100.0 * v / 4.0) / step_pct
            assert abs(k - round(k)) < 1e-9
    major_spacing, major = levels[0]
    labels = ax.tickStrings(major, 1.0, major_spacing)
    assert [float(x) for x in labels] == pytest.approx([100.0 * v / 4.0 for v in major])
    assert labels == ["-1", "0", "1", "2"]


def test_percent_axis_without_span_draws_no_ticks(qtbot):
    ax = PercentAxis("right")
    ax.set_span(0.0)
    assert ax.tickValues(-1, 1, 300) == []


def test_trace_is_peak_downsampled_and_clipped(area):
    c = area.trace_curve
    assert c.opts["autoDownsample"] is True
    assert c.opts["downsampleMethod"] == "peak"
    assert c.opts["clipToView"] is True
    assert c.opts["pen"].widthF() == 1.0
    area.trace_plot.setXRange(0.01, 0.02, padding=0)
    area.repaint()
    x, _ = c.getData()
    # clipped to the view (plus a sample either side) and far fewer than 200 000 points
    assert x.size < 20_000
    assert x.min() >= 0.01 - 1e-4 and x.max() <= 0.02 + 1e-4


def test_png_export_has_the_plot(area, tmp_path):
    out = tmp_path / "plots.png"
    exporting.save_png(area, out)
    img = QtGui.QImage(str(out))
    assert img.width() >= 2 * area.width() - 2
    colours = {img.pixel(x, y) for x in range(0, img.width(), 7) for y in range(0, img.height(), 7)}
    assert len(colours) > 10  # axes, trace and text, not a blank image


def _svg_paths(path) -> int:
    root = ET.parse(path).getroot()
    return sum(1 for el in root.iter() if el.tag.rsplit("}", 1)[-1] in ("path", "polyline"))


def test_pyqtgraph_svg_exporter_status(area, tmp_path):
    """Records whether pyqtgraph's own SVG exporter works with this Qt (it did not in 0.14.0)."""
    import pyqtgraph.exporters as exporters
    out = tmp_path / "pg.svg"
    try:
        exporters.SVGExporter(area.scene()).export(str(out))
        works = exporting._svg_ok(out)
    except Exception:  # noqa: BLE001
        works = False
    used = exporting.save_svg(area, tmp_path / "plots.svg")
    assert used == ("pyqtgraph" if works else "qt")


def test_svg_export_falls_back_to_qt_generator(area, tmp_path, monkeypatch):
    import pyqtgraph.exporters as exporters

    class Broken:
        def __init__(self, item):
            pass

        def export(self, path):
            raise ValueError("not enough values to unpack (expected 2, got 1)")

    monkeypatch.setattr(exporters, "SVGExporter", Broken)
    out = tmp_path / "plots.svg"
    assert exporting.save_svg(area, out) == "qt"
    assert _svg_paths(out) > 0
    root = ET.parse(out).getroot()
    assert root.tag.endswith("svg")


def test_svg_export_uses_pyqtgraph_when_it_writes_valid_svg(area, tmp_path, monkeypatch):
    import pyqtgraph.exporters as exporters

    class Working:
        def __init__(self, item):
            pass

        def export(self, path):
            with open(path, "w", encoding="utf-8") as fh:
                fh.write('<svg xmlns="http://www.w3.org/2000/svg"><path d="M0 0 L1 1"/></svg>')

    monkeypatch.setattr(exporters, "SVGExporter", Working)
    assert exporting.save_svg(area, tmp_path / "plots.svg") == "pyqtgraph"


def test_svg_written_by_the_exporter_is_checked(area, tmp_path, monkeypatch):
    import pyqtgraph.exporters as exporters

    class Truncated:
        def __init__(self, item):
            pass

        def export(self, path):
            with open(path, "w", encoding="utf-8") as fh:
                fh.write('<svg xmlns="http://www.w3.org/2000/svg"><path d=')

    monkeypatch.setattr(exporters, "SVGExporter", Truncated)
    out = tmp_path / "plots.svg"
    assert exporting.save_svg(area, out) == "qt"
    assert _svg_paths(out) > 0
