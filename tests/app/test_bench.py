"""The bench comparison tab: captures added, grouped, ranked, judged, followed, opened."""

from __future__ import annotations

import shutil
import time
from pathlib import Path

from PySide6 import QtCore, QtGui

from trueslope.core.compare import compare, measure_one

ROOT = Path(__file__).resolve().parents[2]
SAMPLES = ROOT / "sample_captures"
FILM = SAMPLES / "film_cap_ramp.csv"
X7R = SAMPLES / "x7r_cap_ramp.csv"
ELECTROLYTIC = SAMPLES / "electrolytic_ramp.txt"
LIMITS = """name = "bench test"
[limits.nonlinearity_pct]
max = 0.5
"""


def wait_compared(qtbot, bench, timeout_ms=120000):
    """Wait until every capture of the bench has its answer; returns the comparison."""
    qtbot.waitUntil(lambda: not bench.busy and bench.items and all(
        i.measured is not None or i.changed for i in bench.items), timeout=timeout_ms)
    return bench.comparison


def column(table, title):
    for c in range(table.columnCount()):
        if table.horizontalHeaderItem(c).text().replace("\n", " ") == title:
            return c
    raise AssertionError(title)


def test_three_captures_ranked_grouped_judged(qtbot, window, tmp_path):
    bench = window.bench
    limits = tmp_path / "limits.toml"
    limits.write_text(LIMITS)
    bench.add_files([str(FILM), str(X7R), str(ELECTROLYTIC)])
    assert bench.busy  # measured in the worker, not here
    c = wait_compared(qtbot, bench)
    # the window's comparison is core's comparison of the same measurements
    expected = compare([measure_one(str(p)) for p in (FILM, X7R, ELECTROLYTIC)])
    assert [Path(p).name for p in c.ranking] == [Path(p).name for p in expected.ranking]
    t = bench.table
    assert t.rowCount() == 3
    rank = column(t, "Rank")
    assert [t.item(r, rank).text() for r in range(3)] == ["1", "2", "3"]
    assert t.item(0, 1).text().endswith("reference")  # the first is the reference
    # groups typed in place
    group = column(t, "Group")
    for r, g in enumerate(("film", "ceramic", "ceramic")):
        t.item(r, group).setText(g)
    c = wait_compared(qtbot, bench)
    assert {e.group for e in c.entries} == {"film", "ceramic"}
    assert bench.groups.rowCount() == 2
    # another reference: differences are taken from it
    bench.set_reference(str(X7R))
    c = wait_compared(qtbot, bench)
    assert Path(c.reference).name == X7R.name
    assert "reference" in t.item(1, column(t, "Nonlinearity (best-fit line)")).text()
    # limits: the electrolytic ramp (1.85 %) fails a 0.5 % maximum
    bench.set_limits(str(limits))
    c = wait_compared(qtbot, bench)
    lim = column(t, "Limits")
    assert [t.item(r, lim).text() for r in range(3)] == ["pass", "pass", "fail"]
    assert c.verdict == "fail" and "overall fail" in bench.limits_label.text()
    # the overlay draws each capture's averaged residual
    curves = [i for i in bench.overlay.getPlotItem().listDataItems()]
    assert len(curves) == 3
    # patterns group the captures without a typed group
    bench.set_group(str(FILM), "")
    bench.set_patterns([("film parts", "*film*")])
    c = wait_compared(qtbot, bench)
    assert {Path(e.path).name: e.group for e in c.entries}[FILM.name] == "film parts"


def test_row_opens_the_capture_in_the_single_view(qtbot, window):
    bench = window.bench
    bench.add_files([str(X7R)])
    wait_compared(qtbot, bench)
    window.show_bench()
    with qtbot.waitSignal(window.analysis_shown, timeout=60000) as got:
        bench.table.itemActivated.emit(bench.table.item(0, 1))
    assert Path(got.args[0].source).name == X7R.name
    assert window.views.currentIndex() == 0


def test_measuring_can_be_cancelled(qtbot, window):
    bench = window.bench
    messages = []
    bench.message.connect(lambda text, kind: messages.append(text))
    bench.add_files([str(FILM), str(X7R), str(ELECTROLYTIC)])
    assert bench.cancel_button.isVisibleTo(bench)
    bench.cancel()
    qtbot.waitUntil(lambda: not bench.busy, timeout=60000)
    if any("cancelled" in m for m in messages):  # the worker may finish first on a fast machine
        assert any(i.measured is None for i in bench.items)


def test_folder_dropped_on_the_bench_adds_its_captures(qtbot, window, tmp_path):
    for p in (FILM, X7R):
        shutil.copy(p, tmp_path / p.name)
    (tmp_path / "notes.md").write_text("not a capture")
    bench = window.bench
    window.show_bench()
    mime = QtCore.QMimeData()
    mime.setUrls([QtCore.QUrl.fromLocalFile(str(tmp_path))])
    drop = QtGui.QDropEvent(QtCore.QPointF(50, 50), QtCore.Qt.DropAction.CopyAction, mime,
                            QtCore.Qt.MouseButton.LeftButton, QtCore.Qt.KeyboardModifier.NoModifier)
    bench.dropEvent(drop)
    assert sorted(Path(i.path).name for i in bench.items) == sorted([FILM.name, X7R.name])
    bench.remove_selected()  # nothing selected: nothing removed
    assert len(bench.items) == 2
    bench.table.selectRow(0)
    bench.remove_selected()
    assert len(bench.items) == 1


def test_followed_folder_takes_a_file_once_it_stops_growing(qtbot, window, tmp_path):
    data = FILM.read_bytes()
    (tmp_path / "before.csv").write_bytes(data)  # there before: left alone
    window.follower.settle_s = 1.0
    window.follow(str(tmp_path))
    qtbot.wait(600)
    out = tmp_path / "new_export.csv"
    with open(out, "wb") as fh:
        fh.write(data[: len(data) // 2])
        fh.flush()
        qtbot.wait(600)  # a writer's pause shorter than the settle time
        assert not window.bench.items  # half a file is never taken
        fh.write(data[len(data) // 2:])
    finished = time.monotonic()
    qtbot.waitUntil(lambda: bool(window.bench.items), timeout=10000)
    assert time.monotonic() - finished >= 1.0 - 0.3  # unchanged for the settle time (one poll)
    assert [Path(i.path).name for i in window.bench.items] == ["new_export.csv"]
    c = wait_compared(qtbot, window.bench)
    assert c.entries[0].status == "ok"  # the whole file, not half of it
    window.stop_following()
    assert not window.follower.active
