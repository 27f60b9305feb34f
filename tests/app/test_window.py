"""The bench window end to end, with pytest-qt (offscreen): open, drag, edit, fail, cancel.

The figures the window shows are checked against the core's own answer for
the same settings (the window must show what the engine measured, not a
figure of its own), and the behaviour against the issue's list.
"""

from __future__ import annotations

import json
import threading
import time
from pathlib import Path

import numpy as np
import pytest
from PySide6 import QtCore, QtGui, QtWidgets
from PySide6.QtTest import QTest

from trueslope.core.analysis import analyse
from trueslope.core.errors import Cancelled
from trueslope.core.io import load_capture
from trueslope.core.report.numbers import figure_text, with_ci
from trueslope.core.report.summary import figure_value
from trueslope.core.settings import Settings

from .conftest import open_and_wait, wait_failed

ROOT = Path(__file__).resolve().parents[2]
FILM = ROOT / "sample_captures" / "film_cap_ramp.csv"
X7R = ROOT / "sample_captures" / "x7r_cap_ramp.csv"


def test_open_sample_shows_what_the_engine_measured(qtbot, window):
    a = open_and_wait(qtbot, window, FILM)
    ref = analyse(load_capture(FILM), Settings(trim_fraction=window.settings.trim_fraction))
    assert a.figures.nonlinearity_pct == pytest.approx(ref.figures.nonlinearity_pct, rel=1e-12)
    assert window.figures.value_text("nonlinearity_pct").startswith(figure_text(
        "nonlinearity_pct", ref.figures.nonlinearity_pct))
    assert window.figures.value_text("nonlinearity_pct") == figure_value(ref, "nonlinearity_pct")
    assert window.figures.value_text("slope_v_per_s").startswith(with_ci(
        ref.figures.slope_v_per_s, ref.figures.slope_ci95_v_per_s, "V/s"))
    assert "±" in window.figures.value_text("slope_v_per_s")
    assert window.cycles.model().rowCount() == len(ref.cycles)
    x, y = window.plots.trace_curve.getOriginalDataset()
    assert len(x) == a.samples
    assert window.stack.currentWidget() is window.plots
    assert FILM.name in window.windowTitle()
    # the shown cycle's fitted line lies on the fit of the averaged cycle
    fx, fy = window.plots.fit_shown.getData()
    start = a.segmentation.ramp_start_s[window.plots.shown]
    sign = -1.0 if a.averaged.mirrored else 1.0
    assert fy == pytest.approx(sign * a.averaged.fit.at(fx - start))
    # the residual strip: averaged residual under the shown cycle
    rx, ry = window.plots.residual_points.getData()
    assert ry == pytest.approx(np.asarray(a.averaged.residual_v))
    assert rx[0] == pytest.approx(start + a.averaged.time_s[0])


def test_figures_carry_their_definitions_as_tooltips(qtbot, window):
    from trueslope.core.report import FIGURE_DEFINITIONS
    for key in ("nonlinearity_pct", "slope_v_per_s", "nonlinearity_floor_pct", "period_s"):
        assert window.figures.tooltip(key) == FIGURE_DEFINITIONS[key]


def _drag(qtbot, view: QtWidgets.QGraphicsView, start: QtCore.QPointF, end: QtCore.QPointF) -> None:
    """A left-button drag on a graphics view, with intermediate moves (as a hand does)."""
    vp = view.viewport()
    p0 = view.mapFromScene(start)
    p1 = view.mapFromScene(end)
    QTest.mouseMove(vp, p0)
    QTest.mousePress(vp, QtCore.Qt.MouseButton.LeftButton, QtCore.Qt.KeyboardModifier.NoModifier, p0)
    for f in np.linspace(0.1, 1.0, 8):
        p = QtCore.QPoint(round(p0.x() + f * (p1.x() - p0.x())), round(p0.y() + f * (p1.y() - p0.y())))
        ev = QtGui.QMouseEvent(QtCore.QEvent.Type.MouseMove, QtCore.QPointF(p), vp.mapToGlobal(QtCore.QPointF(p)),
                               QtCore.Qt.MouseButton.NoButton, QtCore.Qt.MouseButton.LeftButton,
                               QtCore.Qt.KeyboardModifier.NoModifier)
        QtWidgets.QApplication.sendEvent(vp, ev)
        qtbot.wait(5)
    QTest.mouseRelease(vp, QtCore.Qt.MouseButton.LeftButton, QtCore.Qt.KeyboardModifier.NoModifier, p1)


def test_dragging_the_band_measures_again(qtbot, window):
    a = open_and_wait(qtbot, window, FILM)
    before_nl = window.figures.value_text("nonlinearity_pct")
    before_from = window.figures.value_text("window_start_s")
    plots = window.plots
    vb = plots.trace_plot.getViewBox()
    lo_edge, hi_edge = plots.band_region()
    start = a.segmentation.ramp_start_s[plots.shown]
    ramp = a.averaged.ramp_time_s
    # Drag the band's left edge 20 % of the ramp to the right.
    y_mid = float(np.mean(vb.viewRange()[1]))
    target = lo_edge + 0.2 * ramp
    p_from = vb.mapViewToScene(QtCore.QPointF(lo_edge, y_mid))
    p_to = vb.mapViewToScene(QtCore.QPointF(target, y_mid))
    calls = []
    window.runner.progress.connect(lambda req, f: calls.append(req))
    with qtbot.waitSignal(window.analysis_shown, timeout=60000) as blocker:
        _drag(qtbot, plots, p_from, p_to)
    b = blocker.args[0]
    # One pixel of the drag is the tolerance on where the edge landed.
    px = (vb.viewRange()[0][1] - vb.viewRange()[0][0]) / vb.width()
    assert b.averaged.window_start_s == pytest.approx(target - start, abs=3 * px + a.sample_interval_s)
    assert b.settings.window_s is not None
    assert window.figures.value_text("window_start_s") != before_from
    assert window.figures.value_text("nonlinearity_pct") != before_nl
    assert b.figures.nonlinearity_pct != a.figures.nonlinearity_pct
    # the loaded capture was reused: no file was read again
    assert window.capture is not None and b.samples == a.samples
    assert all(type(r).__name__ == "AnalyseRequest" for r in calls)
    assert hi_edge == pytest.approx(plots.band_region()[1], abs=3 * px + a.sample_interval_s)


def test_editing_the_circuit_context_updates_the_self_check(qtbot, window):
    open_and_wait(qtbot, window, FILM)
    form = window.findings.form
    page = window.findings.check_page
    assert not window.findings.check_table.isVisibleTo(page)
    with qtbot.waitSignal(window.analysis_shown, timeout=60000) as blocker:
        qtbot.keyClicks(form.edits["capacitance"], "10n")
        qtbot.keyClicks(form.edits["current"], "100u")
    first = blocker.args[0]
    assert first.context_check is not None
    rows = window.findings.check_rows()
    assert rows, "the self-check table is empty"
    assert window.findings.check_table.isVisibleTo(page)
    # a capacitance twice as large halves the expected slope: the check must change
    with qtbot.waitSignal(window.analysis_shown, timeout=60000) as blocker:
        form.edits["capacitance"].clear()
        qtbot.keyClicks(form.edits["capacitance"], "20n")
    second = blocker.args[0]
    assert window.findings.check_rows() != rows
    assert second.context_check != first.context_check


def test_a_bad_context_value_is_shown_in_the_form(qtbot, window):
    open_and_wait(qtbot, window, FILM)
    form = window.findings.form
    shown = []
    window.analysis_shown.connect(shown.append)
    form.edits["capacitance"].setText("ten nano")
    form.apply()
    assert form.error.isVisibleTo(form) and form.error.text()
    qtbot.wait(100)
    assert shown == []


def test_bad_file_shows_a_message_and_keeps_the_capture(qtbot, window, tmp_path):
    a = open_and_wait(qtbot, window, FILM)
    nl_text = window.figures.value_text("nonlinearity_pct")
    bad = tmp_path / "garbage.csv"
    bad.write_text("time [s],CH1 [V]\n0.0,1.0\n1e-6,banana\n2e-6,1.2\n")
    message = wait_failed(qtbot, window, lambda: window.open_file(str(bad)))
    assert "garbage.csv" in message
    assert window.banner.isVisible() and "garbage.csv" in window.banner.text()
    assert "stays open" in window.banner.text()
    assert window.capture is not None and window.analysis is a
    assert window.figures.value_text("nonlinearity_pct") == nl_text
    assert len(window.plots.trace_curve.getOriginalDataset()[0]) == a.samples
    assert FILM.name in window.windowTitle()
    # and the program keeps running: another open still works
    b = open_and_wait(qtbot, window, X7R)
    assert Path(b.source).name == X7R.name
    assert not window.banner.isVisible()


def test_missing_file_shows_a_message(qtbot, window, tmp_path):
    message = wait_failed(qtbot, window, lambda: window.open_file(str(tmp_path / "nope.csv")))
    assert "nope.csv" in message
    assert window.stack.currentWidget() is window.welcome


def test_a_file_that_reads_but_is_not_a_ramp(qtbot, window, tmp_path):
    open_and_wait(qtbot, window, FILM)
    flat = tmp_path / "flat.csv"
    t = np.arange(5000) * 1e-6
    np.savetxt(flat, np.column_stack([t, 1.0 + 0.001 * np.sin(t * 1e4)]), delimiter=",",
               header="time [s],CH1 [V]", comments="", fmt="%.9e")
    message = wait_failed(qtbot, window, lambda: window.open_file(str(flat)))
    assert "flat.csv" in message
    assert Path(window.analysis.source).name == FILM.name


def test_cancel_a_long_load(qtbot, window, monkeypatch):
    """A load that reports progress slowly is cancelled; the open capture stays."""
    a = open_and_wait(qtbot, window, FILM)
    import trueslope.core.io as io
    real = io.load_capture
    started = threading.Event()

    def slow_load(path, *, sample_interval_s=None, progress=None, cancel=None):
        started.set()
        for i in range(2000):  # at most 10 s: far longer than the test waits
            if progress:
                progress(i / 2000)
            if cancel and cancel():
                raise Cancelled(f"reading {path} was cancelled")
            time.sleep(0.005)
        return real(path, sample_interval_s=sample_interval_s, progress=progress, cancel=cancel)

    monkeypatch.setattr(io, "load_capture", slow_load)
    window.open_file(str(X7R))
    assert started.wait(10)
    qtbot.waitUntil(lambda: window.progress.isVisible() and window.progress.value() > 0, timeout=10000)
    assert window.cancel_button.isVisible()
    with qtbot.waitSignal(window.job_cancelled, timeout=10000):
        qtbot.mouseClick(window.cancel_button, QtCore.Qt.MouseButton.LeftButton)
    assert not window.busy
    assert not window.progress.isVisible()
    assert "cancelled" in window.banner.text()
    assert window.analysis is a


def test_cancel_a_real_load_of_a_large_file(qtbot, window, tmp_path):
    """A few million rows really read by the importer, cancelled part way through."""
    big = tmp_path / "big.csv"
    n = 2_000_000
    t = np.arange(n) * 1e-7
    v = (t % 1e-3) * 4e3
    with open(big, "w") as fh:
        fh.write("time [s],CH1 [V]\n")
        fh.write("\n".join(f"{x:.7e},{y:.4f}" for x, y in zip(t, v)))
    fractions = []
    window.runner.progress.connect(lambda req, f: fractions.append(f))
    window.open_file(str(big))
    qtbot.waitUntil(lambda: window.busy and len(fractions) >= 1, timeout=20000)
    with qtbot.waitSignal(window.job_cancelled, timeout=30000):
        window.cancel()
    assert window.analysis is None
    assert "cancelled" in window.banner.text()


def test_keyboard_moves_between_cycles_and_zooms(qtbot, window):
    a = open_and_wait(qtbot, window, FILM)
    plots = window.plots
    window.plots.setFocus()
    first = plots.shown
    QTest.keyClick(window, QtCore.Qt.Key.Key_BracketRight)
    assert plots.shown == first + 1
    assert window.cycles.currentIndex().row() == first + 1
    QTest.keyClick(window, QtCore.Qt.Key.Key_PageDown)
    assert plots.shown == first + 2
    QTest.keyClick(window, QtCore.Qt.Key.Key_BracketLeft)
    assert plots.shown == first + 1
    QTest.keyClick(window, QtCore.Qt.Key.Key_A)
    qtbot.wait(20)
    lo, hi = plots.x_range()
    t0 = float(window.trace.time_s[0])
    t1 = float(window.trace.time_s[-1])
    assert lo <= t0 + 1e-9 and hi >= t1 - 1e-9
    QTest.keyClick(window, QtCore.Qt.Key.Key_Z)
    qtbot.wait(20)
    lo, hi = plots.x_range()
    s, e = plots.cycle_span(plots.shown)
    assert lo < s < e < hi
    assert hi - lo < 1.5 * (e - s)
    # the band and the residual followed the cycle
    band = plots.band_region()
    assert band[0] == pytest.approx(s + a.averaged.window_start_s)


def test_clicking_a_cycle_shows_it_and_outliers_are_marked(qtbot, window):
    a = open_and_wait(qtbot, window, FILM)
    model = window.cycles.model()
    last = model.rowCount() - 1
    rect = window.cycles.visualRect(model.index(min(last, 3), 1))
    qtbot.mouseClick(window.cycles.viewport(), QtCore.Qt.MouseButton.LeftButton, pos=rect.center())
    assert window.plots.shown == min(last, 3)
    col = model.columnCount() - 1
    for row, c in enumerate(a.cycles):
        text = model.data(model.index(row, col))
        assert (text == "outlier") == bool(c.outlier)
        bg = model.data(model.index(row, 0), QtCore.Qt.ItemDataRole.BackgroundRole)
        assert (bg is not None) == bool(c.outlier)


def test_channel_and_sync_channel_can_be_picked(qtbot, window):
    a = open_and_wait(qtbot, window, FILM)
    names = [window.channel_box.itemText(i) for i in range(window.channel_box.count())]
    assert a.channel in names and len(names) >= 2
    assert window.sync_box.isEnabled()
    sync_name = next(n for n in names if n != a.channel)
    with qtbot.waitSignal(window.analysis_shown, timeout=60000) as blocker:
        window.sync_box.setCurrentIndex(window.sync_box.findData(sync_name))
        window.sync_box.activated.emit(window.sync_box.currentIndex())
    b = blocker.args[0]
    assert b.segmentation.source == "sync"
    assert b.settings.sync_channel == sync_name


def test_exports_write_json_csv_png_svg_and_the_clipboard(qtbot, window, tmp_path):
    from trueslope.core.report import summary_text
    a = open_and_wait(qtbot, window, FILM)
    assert window.export_to("json", str(tmp_path / "f.json"))
    doc = json.loads((tmp_path / "f.json").read_text())
    doc = doc[0] if isinstance(doc, list) else doc
    assert doc["nonlinearity_pct"] == pytest.approx(a.figures.nonlinearity_pct)
    assert window.export_to("csv", str(tmp_path / "f.csv"))
    assert "nonlinearity_pct" in (tmp_path / "f.csv").read_text()
    assert window.export_to("png", str(tmp_path / "p.png"))
    assert QtGui.QImage(str(tmp_path / "p.png")).width() > 100
    status = window.export_to("svg", str(tmp_path / "p.svg"))
    assert status.startswith("Saved p.svg")
    assert "<svg" in (tmp_path / "p.svg").read_text()[:2000]
    window.copy_figures()
    assert QtWidgets.QApplication.clipboard().text() == summary_text(a)


def test_export_to_an_unwritable_place_shows_a_message(qtbot, window, tmp_path):
    open_and_wait(qtbot, window, FILM)
    assert window.export_to("json", str(tmp_path / "no" / "such" / "dir" / "f.json")) == ""
    assert "f.json" in window.banner.text()


def test_drop_a_file_on_the_window(qtbot, window):
    mime = QtCore.QMimeData()
    mime.setUrls([QtCore.QUrl.fromLocalFile(str(FILM))])
    pos = QtCore.QPointF(50, 50)
    enter = QtGui.QDragEnterEvent(pos.toPoint(), QtCore.Qt.DropAction.CopyAction, mime,
                                  QtCore.Qt.MouseButton.LeftButton, QtCore.Qt.KeyboardModifier.NoModifier)
    window.dragEnterEvent(enter)
    assert enter.isAccepted()
    drop = QtGui.QDropEvent(pos, QtCore.Qt.DropAction.CopyAction, mime, QtCore.Qt.MouseButton.LeftButton,
                            QtCore.Qt.KeyboardModifier.NoModifier)
    with qtbot.waitSignal(window.analysis_shown, timeout=60000):
        window.dropEvent(drop)
    assert Path(window.analysis.source).name == FILM.name


def test_settings_persist_between_runs(qtbot, store, tmp_path):
    from trueslope.app.store import Store
    from trueslope.app.window import MainWindow

    win = MainWindow(store)
    qtbot.addWidget(win)
    win.show()
    open_and_wait(qtbot, win, FILM)
    win.trim_box.setValue(12.0)
    qtbot.waitUntil(lambda: not win.busy, timeout=60000)
    win.resize(740, 660)  # inside the offscreen screen (and above the window's minimum)
    win.close()
    again = Store.at(store.file_name)
    assert again.trim_fraction == pytest.approx(0.12)
    assert again.last_folder == str(FILM.parent)
    assert again.recent_files[0] == str(FILM.resolve())
    win2 = MainWindow(again)
    qtbot.addWidget(win2)
    assert win2.trim_box.value() == pytest.approx(12.0)
    # (the offscreen screen is 800 px wide: Qt may narrow a restored window to fit it)
    assert win2.height() == 660
    assert again.geometry("geometry") is not None
    win2._fill_recent()
    assert win2.recent_menu.actions()[0].text() == FILM.name
    win2.close()


def test_tests_do_not_touch_the_users_settings(store):
    from trueslope.app.store import Store
    # the conftest points Qt's user INI folder at a temporary one
    assert "qsettings" in Store().file_name
    assert Path(store.file_name).name == "settings.ini"


def test_help_has_bench_safety(qtbot, window):
    from trueslope.app import helptext
    text = helptext.SAFETY_HTML.lower()
    assert "ground clip" in text and "earth" in text
    assert "electrolytic" in text and "local codes" in text
    titles = [a.text() for a in window.menuBar().actions()]
    help_menu = window.menuBar().actions()[titles.index("&Help")].menu()
    assert any("safety" in a.text().lower() for a in help_menu.actions())


def test_a_channel_that_is_not_a_ramp_offers_the_others(qtbot, window, monkeypatch):
    """Opening the film sample on its sync channel fails; "Choose channel…" measures the ramp."""
    message = wait_failed(qtbot, window, lambda: window.open_file(str(FILM), channel="sync"))
    assert "could not be measured" in message
    assert window.banner.action.isVisible()
    assert window.analysis is None
    monkeypatch.setattr(QtWidgets.QInputDialog, "getItem",
                        staticmethod(lambda *args, **kwargs: ("ramp", True)))
    with qtbot.waitSignal(window.analysis_shown, timeout=60000) as blocker:
        qtbot.mouseClick(window.banner.action, QtCore.Qt.MouseButton.LeftButton)
    assert blocker.args[0].channel == "ramp"
    assert window.path == str(FILM)
    assert not window.banner.isVisible()


def test_an_unexpected_worker_error_reaches_the_banner(qtbot, window, monkeypatch):
    open_and_wait(qtbot, window, FILM)
    import trueslope.core.analysis as analysis_module

    def broken(*args, **kwargs):
        raise RuntimeError("solder bridge in the engine")

    monkeypatch.setattr(analysis_module, "analyse", broken)
    message = wait_failed(qtbot, window, lambda: window.reanalyse("test", window_s=None))
    assert "RuntimeError" in message and "solder bridge" in message
    assert "previous result is still shown" in window.banner.text()
    assert window.analysis is not None


def test_changing_the_trim_measures_with_the_new_trim(qtbot, window):
    a = open_and_wait(qtbot, window, FILM)
    with qtbot.waitSignal(window.analysis_shown, timeout=60000) as blocker:
        window.trim_box.setValue(15.0)
    b = blocker.args[0]
    assert b.figures.trim_fraction == pytest.approx(0.15)
    assert b.averaged.window_start_s > a.averaged.window_start_s
    assert window.figures.value_text("trim_fraction") == figure_value(b, "trim_fraction")
    assert figure_text("trim_fraction", 0.15) in window.figures.value_text("trim_fraction")


def test_help_dialogs_open(qtbot, window):
    # the definitions open in a scrolling box of their own (tests/app/test_story.py)
    for action in (window.act_safety, window.act_keys, window.act_about):
        action.trigger()
        boxes = [w for w in window.findChildren(QtWidgets.QMessageBox) if w.isVisible()]
        assert boxes, action.text()
        text = boxes[-1].text()
        assert text
        if action is window.act_safety:
            assert "ground clip" in text
        boxes[-1].close()
        boxes[-1].deleteLater()


def test_moving_the_band_while_a_file_opens_does_not_cancel_the_open(qtbot, window, monkeypatch):
    a = open_and_wait(qtbot, window, FILM)
    import trueslope.core.io as io
    real = io.load_capture
    gate = threading.Event()

    def gated(path, **kwargs):
        gate.wait(10)
        return real(path, **kwargs)

    monkeypatch.setattr(io, "load_capture", gated)
    got = []
    window.analysis_shown.connect(got.append)
    window.open_file(str(X7R))
    window.reanalyse("window moved", window_s=(0.2 * a.averaged.ramp_time_s, 0.8 * a.averaged.ramp_time_s))
    assert "Still reading" in window.status_label.text()
    gate.set()
    qtbot.waitUntil(lambda: bool(got), timeout=60000)
    assert Path(got[0].source).name == X7R.name
