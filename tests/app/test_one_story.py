"""The window tells one consistent, current story (issue #10): circuit values belong to
their capture, the self-check is honest and says when it is out of date, shortcuts leave
typing alone, one vocabulary, a sortable cycle list with cycles left out by hand, the
small faults, and a layout that fits 1280x720."""

from __future__ import annotations

import dataclasses
import time
from pathlib import Path

import numpy as np
import pytest
from PySide6 import QtCore, QtWidgets
from PySide6.QtTest import QTest

from trueslope.app.panels.cycles import CYCLE_COLUMNS, CycleModel, CycleTable
from trueslope.app.panels.context_form import COPY_LAST
from trueslope.app import theme
from trueslope.core.report.numbers import FIGURES
from trueslope.core.report.prose import selfcheck_summary
from trueslope.core.results import CycleFigures
from trueslope.core.selfcheck import AGREES, DISAGREES

from .conftest import open_and_wait, wait_failed

ROOT = Path(__file__).resolve().parents[2]
FILM = ROOT / "sample_captures" / "film_cap_ramp.csv"
X7R = ROOT / "sample_captures" / "x7r_cap_ramp.csv"
#: The parts the X7R sample was made with (sample_captures/README.md).
X7R_PARTS = {"capacitance": "47n", "current": "200u", "probe": "10M,12p"}


def _apply(qtbot, window, texts):
    form = window.findings.form
    with qtbot.waitSignal(window.analysis_shown, timeout=60000) as blocker:
        for key, text in texts.items():
            form.edits[key].setText(text)
        form.apply()
    return blocker.args[0]


# 1. circuit values belong to a capture -------------------------------------------------

def test_circuit_values_stay_with_their_capture(qtbot, window, store):
    from trueslope.app.window import MainWindow

    open_and_wait(qtbot, window, X7R)
    a = _apply(qtbot, window, X7R_PARTS)
    assert a.context_check is not None
    b = open_and_wait(qtbot, window, FILM)
    form = window.findings.form
    assert b.context_check is None and b.settings.context is None
    assert all(v is None for v in form.values().values()), "another file opened with a filled form"
    assert form.copy_button.isEnabled() and form.copy_button.text() == COPY_LAST
    with qtbot.waitSignal(window.analysis_shown, timeout=60000) as blocker:
        qtbot.mouseClick(form.copy_button, QtCore.Qt.MouseButton.LeftButton)
    c = blocker.args[0]
    assert c.context_check is not None and form.values()["capacitance"] == "47n"
    # the film keeps what it was given; the X7R gets its own values back
    _apply(qtbot, window, {"capacitance": "10n", "current": "100u"})
    d = open_and_wait(qtbot, window, X7R)
    assert form.values()["capacitance"] == "47n" and d.context_check is not None
    window.close()
    # and from the settings file in a new session
    again = MainWindow(store)
    qtbot.addWidget(again)
    e = open_and_wait(qtbot, again, FILM)
    assert again.findings.form.values()["capacitance"] == "10n"
    assert e.settings.context is not None
    again.runner.shutdown(5000)


def test_an_edited_form_marks_the_self_check_out_of_date(qtbot, window):
    open_and_wait(qtbot, window, X7R)
    _apply(qtbot, window, X7R_PARTS)
    f = window.findings
    form = f.form
    assert not f.stale and "out of date" not in f.check_box.title()
    form.edits["current"].setText("250u")
    form.edits["current"].textEdited.emit("250u")
    assert f.stale and "out of date" in f.check_box.title()
    assert "out of date" in window.tabs.tabText(window.tabs.indexOf(f.check_page))
    assert form.revert_button.isEnabled()
    qtbot.mouseClick(form.revert_button, QtCore.Qt.MouseButton.LeftButton)
    assert not f.stale and form.values()["current"] == "200u"
    # an invalid value stays out of date until it is fixed
    form.edits["current"].setText("lots")
    form.edits["current"].textEdited.emit("lots")
    form.apply()
    assert f.stale and form.error.text().startswith("Current: ")
    with qtbot.waitSignal(window.analysis_shown, timeout=60000):
        form.edits["current"].setText("250u")
        form.apply()
    assert not f.stale


# 2. the honest self-check -------------------------------------------------------------

def test_the_self_check_shows_the_cores_verdicts_signs_and_basis(qtbot, window):
    open_and_wait(qtbot, window, X7R)
    a = _apply(qtbot, window, X7R_PARTS)
    cc = a.context_check
    f = window.findings
    assert f.check_summary.text() == selfcheck_summary(cc, a.diagnosis)
    rows = f.check_rows()
    assert len(rows) == len(cc.items)
    for r, (row, it) in enumerate(zip(rows, cc.items)):
        assert row[4] == it.verdict
        if it.expected is not None:
            assert row[1].endswith(f"({it.basis})")
        colour = f.check_table.item(r, 4).foreground().color().name()
        want = (theme.VERDICT_AGREES if it.verdict in AGREES else
                theme.VERDICT_DISAGREES if it.verdict in DISAGREES else theme.VERDICT_DEFAULT)
        assert colour == want.lower()
    assert any(it.basis == "stated probe" for it in cc.items)
    assert any(it.verdict in DISAGREES for it in cc.items)
    # a falling ramp's slope keeps its sign
    falling = dataclasses.replace(cc.items[0], expected=-4.2e3, measured=-4.4e3)
    f._set_row(0, falling, "")
    assert f.check_table.item(0, 2).text().startswith("-")


# 3. shortcuts leave typing alone -----------------------------------------------------

def test_single_key_shortcuts_do_not_act_while_typing(qtbot, window):
    open_and_wait(qtbot, window, FILM)
    window.tabs.setCurrentWidget(window.findings.check_page)
    edit = window.findings.form.edits["tolerance"]
    edit.setFocus()
    qtbot.waitUntil(edit.hasFocus)
    shown = window.plots.shown
    fits = window.act_all_fits.isChecked()
    QTest.keyClicks(edit, "]]a[zf")
    assert edit.text() == "]]a[zf"
    assert window.plots.shown == shown and window.act_all_fits.isChecked() == fits
    # and the guard itself, whatever the widget does with the key
    window.next_cycle()
    window._toggle_all_fits(True)
    assert window.plots.shown == shown and window.act_all_fits.isChecked() == fits
    window.plots.setFocus()
    qtbot.waitUntil(lambda: not edit.hasFocus())
    window.next_cycle()
    assert window.plots.shown == shown + 1


# 4. one vocabulary ----------------------------------------------------------------------

def test_cycle_columns_use_the_figures_labels_and_say_what_they_are(qtbot, window):
    open_and_wait(qtbot, window, FILM)
    headers = [c.header for c in CYCLE_COLUMNS]
    assert "Amplitude" in headers and "Span" not in headers
    for c in CYCLE_COLUMNS:
        if c.field in FIGURES and c.field != "nonlinearity_pct":
            assert c.header == FIGURES[c.field].label
    assert "Nonlinearity (own fit, with noise)" in headers
    assert window.cycle_note.isVisible() and "own" in window.cycle_note.text()
    assert "(in the record)" in " ".join(headers)
    assert window.figures.label_text("window_start_s") == FIGURES["window_start_s"].label
    assert "ramp start" in window.figures.label_text("window_start_s")


# 5. the cycle list -------------------------------------------------------------------------

def _synthetic_cycles(n: int) -> tuple[CycleFigures, ...]:
    rng = np.random.default_rng(7)
    nl = rng.uniform(0.1, 1.0, n)
    return tuple(CycleFigures(i, i * 1e-3, 8e-4, 2e-4, 1e-3, 0.9, 1.0, 4.0, 3.0, 3.75e3,
                              (3.74e3, 3.76e3), 0.01, float(nl[i]), 0.0, 0.005,
                              outlier=(i % 1000 == 0), excluded=(i % 777 == 0))
                 for i in range(n))


def test_a_hundred_thousand_cycles_fill_the_table_quickly(qtbot):
    cycles = _synthetic_cycles(100_000)
    table = CycleTable()
    qtbot.addWidget(table)
    table.resize(900, 300)
    table.show()
    qtbot.waitExposed(table)
    t0 = time.perf_counter()
    table.set_cycles(cycles)
    QtWidgets.QApplication.processEvents()
    took = time.perf_counter() - t0
    print(f"100 000 cycles: set and drawn in {1000 * took:.1f} ms")
    assert took < 0.2
    model = table.cycle_model
    assert model.rowCount() == 100_000
    # sorting by the per-cycle nonlinearity, and the row <-> cycle mapping
    col = next(i for i, c in enumerate(CYCLE_COLUMNS) if c.field == "nonlinearity_pct")
    t0 = time.perf_counter()
    table.sortByColumn(col, QtCore.Qt.SortOrder.DescendingOrder)
    print(f"sorted in {1000 * (time.perf_counter() - t0):.1f} ms")
    first = model.cycle_at(0)
    assert cycles[first].nonlinearity_pct == max(c.nonlinearity_pct for c in cycles)
    assert model.row_of(first) == 0
    # excluded rows are struck through and unticked
    ex = next(i for i in range(100_000) if cycles[model.cycle_at(i)].excluded)
    assert model.data(model.index(ex, 1), QtCore.Qt.ItemDataRole.FontRole).strikeOut()
    assert model.data(model.index(ex, 0), QtCore.Qt.ItemDataRole.CheckStateRole) == \
        QtCore.Qt.CheckState.Unchecked


def test_a_cycle_left_out_by_hand_is_measured_again_and_put_back(qtbot, window):
    a = open_and_wait(qtbot, window, FILM)
    model = window.cycles.cycle_model
    with qtbot.waitSignal(window.analysis_shown, timeout=60000) as blocker:
        model.setData(model.index(model.row_of(2), 0), QtCore.Qt.CheckState.Unchecked.value,
                      QtCore.Qt.ItemDataRole.CheckStateRole)
    b = blocker.args[0]
    assert b.settings.excluded_cycles == (a.cycles[2].index,)
    assert b.cycles[2].excluded and "excluded-cycles" in {w.code for w in b.warnings}
    row = model.row_of(2)
    assert model.data(model.index(row, 1), QtCore.Qt.ItemDataRole.FontRole).strikeOut()
    assert model.data(model.index(row, len(CYCLE_COLUMNS) - 1)) == "left out"
    with qtbot.waitSignal(window.analysis_shown, timeout=60000) as blocker:
        window.cycles.set_left_out(2, False)
    c = blocker.args[0]
    assert c.settings.excluded_cycles == () and not c.cycles[2].excluded
    assert c.figures.nonlinearity_pct == pytest.approx(a.figures.nonlinearity_pct, rel=1e-12)


def test_clicking_a_sorted_row_shows_its_cycle(qtbot, window):
    a = open_and_wait(qtbot, window, FILM)
    table = window.cycles
    table.sortByColumn(0, QtCore.Qt.SortOrder.DescendingOrder)
    rect = table.visualRect(table.cycle_model.index(0, 2))
    qtbot.mouseClick(table.viewport(), QtCore.Qt.MouseButton.LeftButton, pos=rect.center())
    assert window.plots.shown == len(a.cycles) - 1


# 6. small faults ------------------------------------------------------------------------------

def test_a_trim_too_large_is_clamped_and_said(qtbot, window):
    open_and_wait(qtbot, window, FILM)
    with qtbot.waitSignal(window.analysis_shown, timeout=60000) as blocker:
        window.trim_box.setValue(45.0)
    assert blocker.args[0].figures.trim_fraction == pytest.approx(0.40)
    assert window.trim_box.value() == pytest.approx(40.0)
    assert "Trim each end" in window.banner.text() and "45" in window.banner.text()


def test_resets_from_never_offers_the_measured_channel(qtbot, window):
    a = open_and_wait(qtbot, window, FILM)
    offered = [window.sync_box.itemData(i) for i in range(window.sync_box.count())]
    assert a.channel not in offered and None in offered


def test_a_cancelled_banner_goes_when_the_next_file_opens(qtbot, window):
    window.banner.show_message("Reading x.csv was cancelled.", kind="info")
    open_and_wait(qtbot, window, FILM)
    assert not window.banner.isVisible()


def test_a_capture_that_cannot_be_measured_shows_its_trace(qtbot, window):
    message = wait_failed(qtbot, window, lambda: window.open_file(str(FILM), channel="sync"))
    assert "could not be measured" in window.banner.text() and message
    assert window.stack.currentWidget() is window.plots
    x, _ = window.plots.trace_curve.getOriginalDataset()
    assert x is not None and len(x) > 1000


def test_the_title_names_the_file_once(qtbot, window):
    open_and_wait(qtbot, window, FILM)
    title = window.windowTitle()
    assert title.count(FILM.name) == 1 and "trueslope" not in title


# 7. layout at 1280x720 -------------------------------------------------------------------------

@pytest.mark.parametrize("size", [(1280, 720), (1600, 1000)])
def test_everything_fits(qtbot, window, size):
    window.resize(*size)
    open_and_wait(qtbot, window, X7R)
    window.tabs.setCurrentWidget(window.findings.check_page)
    _apply(qtbot, window, X7R_PARTS)
    qtbot.wait(50)
    for tb in window.findChildren(QtWidgets.QToolBar):
        ext = tb.findChild(QtWidgets.QToolButton, "qt_toolbar_ext_button")
        assert ext is None or not ext.isVisible(), "toolbar items hidden behind the chevron"
    table = window.cycles
    rows = table.viewport().height() // table.verticalHeader().defaultSectionSize()
    assert rows >= 4, f"the cycle list shows {rows} rows"
    page = window.findings.check_page
    check = window.findings.check_table
    bottom = check.mapTo(page.widget(), QtCore.QPoint(0, check.height())).y()
    assert bottom <= page.viewport().height(), "the self-check table needs scrolling"
    assert check.verticalScrollBar().maximum() == 0
