"""The plots and the exports tell one story: residuals in true volts, each cycle's own
line, keys that say what is drawn, captioned pictures, CSV with the window used,
and definitions under the window's labels."""

from __future__ import annotations

import csv
import io
import sys
import xml.etree.ElementTree as ET
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest
from PySide6 import QtGui, QtWidgets

from trueslope.app import exporting, helptext
from trueslope.app.jobs import TraceData
from trueslope.app.plotparts import MIN_PX_PER_FIT, CycleFits
from trueslope.app.plots import PlotArea
from trueslope.core.report import figures_csv as window_csv
from trueslope.core.analysis import analyse
from trueslope.core.circuit import CircuitContext
from trueslope.core.report import cycles_csv
from trueslope.core.report.numbers import FIGURE_GROUPS, FIGURES
from trueslope.core.settings import Settings

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))
from tests.support.synth import exponential, sawtooth  # noqa: E402

DT = 1e-6
RAMP = 2000  # samples per ramp


@pytest.fixture(scope="module")
def falling():
    """A falling, bowed sawtooth (an exponential sweep, mirrored) with a fast retrace."""
    cap = sawtooth(exponential(0.3), cycles=10, samples_per_ramp=RAMP, retrace_samples=40,
                   dt=DT, falling=True, noise_v=1e-3, bits=12, seed=3)
    return cap, analyse(cap, Settings())


def _area(qtbot, cap, a, all_fits=False):
    from trueslope.app.launch import make_app
    make_app()
    area = PlotArea()
    qtbot.addWidget(area)
    area.resize(1000, 650)
    area.show()
    qtbot.waitExposed(area)
    _, v = cap.channel(a.channel)
    area.set_trace(TraceData(cap.time_s(), np.asarray(v, dtype=float), True))
    area.set_analysis(a, 2, all_fits=all_fits)
    area.zoom_to_cycle()
    qtbot.wait(20)
    return area


def test_falling_residual_has_the_sign_of_trace_minus_line(qtbot, falling):
    cap, a = falling
    assert a.figures.direction == "falling" and a.averaged.mirrored
    area = _area(qtbot, cap, a)
    start, _ = area.cycle_span(area.shown)
    t0 = start + a.averaged.window_start_s
    # trace minus line at the window start, from the raw samples of the shown cycle and
    # the line drawn over them (true volts)
    t, v = cap.time_s(), np.asarray(cap.channel(a.channel)[1], dtype=float)
    near = np.abs(t - t0) <= 15 * DT
    fx, fy = area.fit_shown.getData()
    line = np.interp(t[near], fx, fy)
    trace_minus_line = float(np.mean(v[near] - line))
    assert abs(trace_minus_line) > 5e-3  # a clear bow, well above the noise
    sx, sy = area.residual_smooth.getData()
    strip = float(np.interp(t0, sx[np.isfinite(sy)], sy[np.isfinite(sy)]))
    assert np.sign(strip) == np.sign(trace_minus_line)
    assert strip == pytest.approx(trace_minus_line, rel=0.3)
    px, py = area.residual_points.getData()
    assert py == pytest.approx(np.asarray(a.averaged.residual_true_v))
    assert "Trace − line" in area.residual_plot.getAxis("left").labelText


def test_fit_on_every_cycle_draws_each_cycles_own_line(qtbot, falling):
    cap, a = falling
    area = _area(qtbot, cap, a, all_fits=True)
    area.zoom_to_all()
    qtbot.wait(20)
    x, y = area.fit_others.getData()
    x, y = x.reshape(-1, 3), y.reshape(-1, 3)
    drawn = area.cycle_fits.drawn
    assert len(drawn) == len(a.cycles)  # ten cycles fit the view at a readable density
    av = a.averaged
    for row_x, row_y, i in zip(x, y, drawn):
        c = a.cycles[i]
        t = row_x[:2] - c.ramp_start_s
        assert t == pytest.approx([av.window_start_s, av.window_end_s])
        assert row_y[:2] == pytest.approx(c.offset_v + c.slope_v_per_s * t)
    # not the averaged line copied: cycles' own lines differ from it by their noise
    copied = -av.fit.at(np.array([av.window_start_s, av.window_end_s]))
    assert any(abs(row_y[0] - copied[0]) > 1e-9 for row_y in y)
    key = area.trace_plot.titleLabel.text
    assert "each cycle's own fitted line" in key and "every" not in key
    assert "drag it" not in key and "drag" in area.band.toolTip()
    area.set_all_fits(False)
    assert area.fit_others.getData()[0] is None or len(area.fit_others.getData()[0]) == 0
    assert "each cycle" not in area.trace_plot.titleLabel.text


def _many_cycles(n=10_000, period=1e-3):
    cycles = [SimpleNamespace(ramp_start_s=i * period, slope_v_per_s=1000.0 + i * 1e-3,
                              offset_v=0.1) for i in range(n)]
    av = SimpleNamespace(window_start_s=0.05 * period, window_end_s=0.9 * period)
    return SimpleNamespace(cycles=cycles, averaged=av), period


def test_ten_thousand_fits_are_thinned_to_a_readable_density(qtbot):
    import pyqtgraph as pg
    a, period = _many_cycles()
    fits = CycleFits(pg.PlotDataItem())
    fits.set_analysis(a)
    fits.update(0.0, 10_000 * period, 700.0)
    assert fits.step > 1
    assert len(fits.drawn) <= 700 / MIN_PX_PER_FIT + 1
    # drawn lines are at least MIN_PX_PER_FIT apart on screen
    px_per_cycle = 700.0 / 10_000
    assert fits.step * px_per_cycle >= MIN_PX_PER_FIT
    assert np.all(fits.drawn % fits.step == 0)
    # zoomed in on five cycles: every one of them, and only those in view
    fits.update(100 * period, 105 * period, 700.0)
    assert fits.step == 1
    assert list(fits.drawn) == list(range(99, 106)) or set(range(100, 105)) <= set(fits.drawn)
    assert all(95 <= i <= 106 for i in fits.drawn)


def test_plot_key_says_when_fits_are_thinned(qtbot, falling, monkeypatch):
    from trueslope.app import plotparts
    cap, a = falling
    # ten cycles crowd the view once a readable spacing is wider than a tenth of it
    monkeypatch.setattr(plotparts, "MIN_PX_PER_FIT", 250.0)
    area = _area(qtbot, cap, a, all_fits=True)
    area.zoom_to_all()
    qtbot.wait(20)
    step = area.cycle_fits.step
    assert step > 1 and np.all(area.cycle_fits.drawn % step == 0)
    assert f"every {plotparts.ordinal(step)} cycle" in area.trace_plot.titleLabel.text
    area.zoom_to_cycle()  # one cycle in view: its line, and the key says nothing of thinning
    qtbot.wait(20)
    assert area.cycle_fits.step == 1 and "every" not in area.trace_plot.titleLabel.text


def _rows(text: str) -> dict[str, str]:
    rows = list(csv.reader(io.StringIO(text)))
    assert all(len(r) == 2 for r in rows)
    return {r[0]: r[1] for r in rows}


def test_window_csv_states_the_window_and_the_whole_story(falling):
    cap, _ = falling
    ctx = CircuitContext(capacitance_f=10e-9, current_a=1e-3)
    a = analyse(cap, Settings(window_s=(2e-4, 1.6e-3), context=ctx))
    text = window_csv(a)
    rows = _rows(text)
    assert rows["window_set"] == "set explicitly"
    assert "trim_fraction" not in rows  # never a trim beside a dragged window
    assert float(rows["window_start_s"]) == pytest.approx(a.figures.window_start_s)
    assert float(rows["window_requested_start_s"]) == pytest.approx(2e-4)
    assert float(rows["circuit.capacitance_f"]) == pytest.approx(10e-9)
    assert rows["diagnosis.signature"] == a.diagnosis.signature
    assert rows["diagnosis.explanation"]
    assert any(k.startswith("context_check.slope.") for k in rows)
    assert rows["context_check.slope.verdict"]
    assert rows["channel"] == a.channel and "sync_channel" in rows
    for cell in (c for r in csv.reader(io.StringIO(text)) for c in r):
        if cell and cell[0] in "=+-@":
            float(cell)  # only plain numbers may start with a sign
    trimmed = _rows(window_csv(analyse(cap, Settings())))
    assert "trimmed at each end" in trimmed["window_set"]
    assert float(trimmed["trim_fraction"]) == pytest.approx(0.05)
    assert trimmed["circuit"] == "not stated"


def test_caption_names_the_file_channel_date_figures_and_window(falling):
    cap, _ = falling
    a = analyse(cap, Settings(window_s=(2e-4, 1.6e-3)))
    text = "\n".join(exporting.caption_lines(a))
    for words in ("synthetic.csv", f"channel {a.channel}", "exported 20", FIGURES["slope_v_per_s"].label,
                  FIGURES["nonlinearity_pct"].label, FIGURES["frequency_hz"].label,
                  "Fit window", "set explicitly"):
        assert words in text, words
    assert "trim" not in text.lower()


def test_png_and_svg_carry_the_caption(qtbot, falling, tmp_path, monkeypatch):
    cap, a = falling
    area = _area(qtbot, cap, a)
    caption = exporting.caption_lines(a)
    exporting.save_png(area, tmp_path / "plain.png")
    exporting.save_png(area, tmp_path / "cap.png", caption=caption)
    plain, capd = QtGui.QImage(str(tmp_path / "plain.png")), QtGui.QImage(str(tmp_path / "cap.png"))
    assert capd.width() == plain.width() and capd.height() > plain.height() + 40
    bg = capd.pixel(1, 1)
    top = capd.height() - plain.height()
    inked = sum(capd.pixel(x, y) != bg for x in range(0, capd.width(), 3) for y in range(0, top, 2))
    assert inked > 50  # text drawn in the caption band
    # Qt's generator: the caption as text elements
    exporting.save_svg_qt(area, tmp_path / "qt.svg", caption)
    svg = (tmp_path / "qt.svg").read_text(encoding="utf-8")
    assert "synthetic.csv" in svg and "Fit window" in svg
    # pyqtgraph's exporter (stubbed): the caption is added to what it wrote
    import pyqtgraph.exporters as exporters

    class Working:
        def __init__(self, item):
            pass

        def export(self, path):
            Path(path).write_text('<svg xmlns="http://www.w3.org/2000/svg" width="400" '
                                  'height="300"><path d="M0 0 L1 1"/></svg>', encoding="utf-8")

    monkeypatch.setattr(exporters, "SVGExporter", Working)
    out = tmp_path / "pg.svg"
    assert exporting.save_svg(area, out, caption) == "pyqtgraph"
    root = ET.parse(out).getroot()
    texts = " ".join(el.text or "" for el in root.iter() if el.tag.endswith("text"))
    assert "synthetic.csv" in texts and "Fit window" in texts
    assert float(root.get("height")) > 300


def test_cycles_csv_export_is_the_reports_table(falling, tmp_path):
    _, a = falling
    exporting.save_cycles_csv(a, tmp_path / "c.csv")
    assert (tmp_path / "c.csv").read_text(encoding="utf-8") == cycles_csv(a)


def test_definitions_scroll_fit_the_screen_and_use_the_windows_labels(qtbot):
    from trueslope.app.launch import make_app
    make_app()
    parent = QtWidgets.QWidget()
    qtbot.addWidget(parent)
    body = helptext.definitions_html()
    dlg = helptext.scrolling_dialog(parent, "Measurement definitions", body)
    dlg.show()
    qtbot.waitExposed(dlg)
    avail = dlg.screen().availableGeometry().height()
    assert dlg.height() <= helptext.MAX_SCREEN_SHARE * avail + 1
    view = dlg.findChild(QtWidgets.QTextBrowser)
    assert view is not None
    plain = view.toPlainText()
    for group, keys in FIGURE_GROUPS:
        assert group in plain
        for k in keys:
            assert FIGURES[k].label in plain
    assert "nonlinearity_pct" not in plain and "slope_v_per_s" not in plain
    # grouped in the panel's order
    lines = plain.splitlines()
    assert lines.index("Linearity") < lines.index(FIGURES["nonlinearity_pct"].label) \
        < lines.index("Ramp") < lines.index(FIGURES["slope_v_per_s"].label)
    dlg.close()


ELECTROLYTIC = Path(__file__).resolve().parents[2] / "sample_captures" / "electrolytic_ramp.txt"


def test_window_exports_after_a_drag_state_the_explicit_window(qtbot, window, tmp_path):
    import json

    from tests.app.conftest import open_and_wait
    from trueslope.core.report.export import analysis_document
    a = open_and_wait(qtbot, window, ELECTROLYTIC)
    assert a.figures.direction == "falling"
    window.act_all_fits.trigger()
    assert window.plots.all_fits and len(window.plots.cycle_fits.drawn) > 0
    T = a.averaged.ramp_time_s
    with qtbot.waitSignal(window.analysis_shown, timeout=60000) as blocker:
        window.plots.band_moved.emit(0.2 * T, 0.7 * T)
    b = blocker.args[0]
    assert b.settings.window_s is not None
    # every cycle's own line follows the new window
    x, _ = window.plots.fit_others.getData()
    c = b.cycles[int(window.plots.cycle_fits.drawn[0])]
    assert x[0] - c.ramp_start_s == pytest.approx(b.averaged.window_start_s)
    for kind in ("json", "csv", "cycles", "png", "svg"):
        assert window.export_to(kind, str(tmp_path / f"out_{kind}.{ 'csv' if kind == 'cycles' else kind}"))
    doc = json.loads((tmp_path / "out_json.json").read_text(encoding="utf-8"))
    assert doc == json.loads(json.dumps(analysis_document(b)))
    rows = _rows((tmp_path / "out_csv.csv").read_text(encoding="utf-8"))
    assert rows["window_set"] == "set explicitly" and "trim_fraction" not in rows
    assert (tmp_path / "out_cycles.csv").read_text(encoding="utf-8") == cycles_csv(b)
    svg = (tmp_path / "out_svg.svg").read_text(encoding="utf-8")
    assert "set explicitly" in svg and "trimmed" not in svg
    assert QtGui.QImage(str(tmp_path / "out_png.png")).height() > 2 * window.plots.height()


def test_help_definitions_open_in_a_scrolling_box_within_the_screen(qtbot, window):
    window.act_defs.trigger()
    dlg = window.findChild(QtWidgets.QDialog, "definitions")
    assert dlg is not None and dlg.isVisible()
    avail = dlg.screen().availableGeometry().height()
    assert dlg.height() <= helptext.MAX_SCREEN_SHARE * avail + 1
    text = dlg.findChild(QtWidgets.QTextBrowser).toPlainText()
    assert FIGURES["nonlinearity_pct"].label in text and "nonlinearity_pct" not in text
    dlg.close()


def test_toolbar_marks_the_trim_unused_while_the_band_sets_the_window(qtbot, window):
    from tests.app.conftest import open_and_wait
    a = open_and_wait(qtbot, window, ELECTROLYTIC)
    assert window.trim_box.suffix() == " %"
    T = a.averaged.ramp_time_s
    with qtbot.waitSignal(window.analysis_shown, timeout=60000):
        window.plots.band_moved.emit(0.2 * T, 0.7 * T)
    assert "unused" in window.trim_box.suffix() and "band" in window.trim_box.toolTip()
    with qtbot.waitSignal(window.analysis_shown, timeout=60000):
        window.act_reset_window.trigger()
    assert window.trim_box.suffix() == " %"
