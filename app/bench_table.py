"""The bench comparison's tables and overlay: they only read a finished comparison.

:class:`CaptureTable` has one row per capture in the order they were added: its
rank by nonlinearity, name, group (typed in place), the compared figures as value
over the difference from the reference, the diagnosis word over its strength, the
limits verdict and the capture's state. :class:`GroupTable` holds each group's
statistics and :class:`OverlayPlot` the averaged residuals on one normalised axis.
Every number is worded by :mod:`trueslope.core.report.numbers`.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtGui, QtWidgets

from trueslope.core.report.compare_text import TABLE_FIGURES, limit_line
from trueslope.core.report.numbers import FIGURES, MISSING, figure_text, pct, plain
from trueslope.core.report.prose import strength_words

from . import theme
from .bench_jobs import CHANGED

if TYPE_CHECKING:
    from trueslope.core.compare import Comparison

#: Columns before and after the figures.
HEAD = ("Rank", "Capture", "Group")
TAIL = ("Diagnosis", "Limits", "State")
GROUP_COLUMN = HEAD.index("Group")
#: Verdict words and colours (background, text).
VERDICTS = {"pass": ("pass", "#dcebdc", theme.VERDICT_AGREES),
            "fail": ("fail", "#f5dcd3", theme.VERDICT_DISAGREES),
            "undecided": ("cannot be decided", "#f3ecd9", "#6b5312")}
#: Curve colours of the overlay, ours, in the order captures are added.
CURVE_COLOURS = ("#39475a", "#b5412b", "#2f7d6b", "#a97b1f", "#6b2d5c", "#4f6fa8",
                 "#8a5a3c", "#6a8a2f")
PATH_ROLE = QtCore.Qt.ItemDataRole.UserRole


def difference_text(figure: str, difference: float | None, difference_pct: float | None) -> str:
    """``+0.0120 % (+25 %)``: a difference from the reference, signed."""
    if difference is None:
        return MISSING
    sign = "+" if difference > 0 else ""
    text = f"{sign}{figure_text(figure, difference)}"
    return text + (f" ({pct(difference_pct, signed=True)})" if difference_pct is not None else "")


def header_label(label: str, width: int = 14) -> str:
    """A long column label broken into lines of about ``width`` characters."""
    lines: list[str] = []
    for word in label.split():
        if lines and len(lines[-1]) + 1 + len(word) <= width:
            lines[-1] += " " + word
        else:
            lines.append(word)
    return "\n".join(lines)


def _item(text: str, tip: str = "", editable: bool = False) -> QtWidgets.QTableWidgetItem:
    it = QtWidgets.QTableWidgetItem(text)
    flags = QtCore.Qt.ItemFlag.ItemIsEnabled | QtCore.Qt.ItemFlag.ItemIsSelectable
    if editable:
        flags |= QtCore.Qt.ItemFlag.ItemIsEditable
    it.setFlags(flags)
    if tip:
        it.setToolTip(tip)
    return it


def content_height(table: QtWidgets.QTableWidget, rows_at_most: int) -> int:
    """Pixels that show the header and up to ``rows_at_most`` rows without scrolling."""
    n = min(table.rowCount(), rows_at_most)
    rows = sum(table.rowHeight(r) for r in range(n)) or table.verticalHeader().defaultSectionSize()
    bar = table.horizontalScrollBar().sizeHint().height()
    return table.horizontalHeader().height() + rows + 2 * table.frameWidth() + bar


class CaptureTable(QtWidgets.QTableWidget):
    """One row per capture. Emits :attr:`group_typed` (path, group text) when a group is
    typed, and :attr:`capture_chosen` (path) when a row is clicked twice or Enter pressed."""

    group_typed = QtCore.Signal(str, str)
    capture_chosen = QtCore.Signal(str)

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        labels = list(HEAD) + [header_label(FIGURES[f].label) for f in TABLE_FIGURES] + list(TAIL)
        self.setColumnCount(len(labels))
        self.setHorizontalHeaderLabels(labels)
        for i, f in enumerate(TABLE_FIGURES):
            self.horizontalHeaderItem(len(HEAD) + i).setToolTip(
                f"{FIGURES[f].label}: the value, and under it the difference from the reference")
        self.setSelectionBehavior(QtWidgets.QAbstractItemView.SelectionBehavior.SelectRows)
        self.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.DoubleClicked
                             | QtWidgets.QAbstractItemView.EditTrigger.EditKeyPressed
                             | QtWidgets.QAbstractItemView.EditTrigger.AnyKeyPressed)
        self.setAlternatingRowColors(True)
        self.setWordWrap(False)
        self.verticalHeader().hide()
        self.horizontalHeader().setStretchLastSection(True)
        self._filling = False
        self.itemChanged.connect(self._on_changed)
        self.itemActivated.connect(self._on_activated)

    def path_at(self, row: int) -> str | None:
        it = self.item(row, 1)
        return None if it is None else it.data(PATH_ROLE)

    def selected_paths(self) -> list[str]:
        rows = sorted({i.row() for i in self.selectedIndexes()})
        return [p for p in (self.path_at(r) for r in rows) if p]

    def fill(self, rows: list[tuple[str, str | None, str]], c: Comparison | None) -> None:
        """``rows``: (path, typed group or None, state words) per capture, in table order."""
        self._filling = True
        self.setRowCount(len(rows))
        entries = {e.path: e for e in c.entries} if c else {}
        table = {t.path: {d.figure: d for d in t.figures} for t in c.table} if c else {}
        for r, (path, typed, state) in enumerate(rows):
            e = entries.get(path)
            name = Path(path).name
            ref = e is not None and e.is_reference
            cap = _item(name + ("\nreference" if ref else ""), path)
            cap.setData(PATH_ROLE, path)
            if ref:
                font = cap.font()
                font.setBold(True)
                cap.setFont(font)
            cells = [_item(plain(e.rank) if e is not None and e.status == "ok" else MISSING,
                           "Rank by nonlinearity, 1 = straightest"), cap,
                     _item(typed if typed is not None else (e.group if e else ""),
                           "Type a group, or leave it empty to group by pattern", True)]
            figs = table.get(path, {})
            for f in TABLE_FIGURES:
                d = figs.get(f)
                if d is None:
                    cells.append(_item(MISSING))
                    continue
                below = "reference" if ref else difference_text(f, d.difference,
                                                                d.difference_pct)
                cells.append(_item(f"{figure_text(f, d.value)}\n{below}"))
            cells += self._tail(e, state)
            for col, it in enumerate(cells):
                self.setItem(r, col, it)
        self.resizeColumnsToContents()
        self.resizeRowsToContents()
        self._filling = False

    @staticmethod
    def _tail(e, state: str) -> list[QtWidgets.QTableWidgetItem]:
        if e is None or e.status != "ok":
            diag = _item(MISSING)
        else:
            diag = _item(f"{e.signature}\n{strength_words(e.strength)}"
                         if e.strength is not None else str(e.signature))
        if e is not None and e.limits is not None:
            word, bg, fg = VERDICTS[e.limits.verdict]
            lim = _item(word, "\n".join(limit_line(x) for x in e.limits.results))
            lim.setBackground(QtGui.QColor(bg))
            lim.setForeground(QtGui.QColor(fg))
        else:
            lim = _item(MISSING, "No limits loaded" if e is None or e.status == "ok"
                        else "Not measured")
        st = _item(state, e.error_message if e is not None and e.error_message else state)
        if e is not None and e.error_type == CHANGED:
            st.setBackground(QtGui.QColor(theme.OUTLIER_BACKGROUND))
        return [diag, lim, st]

    def _on_changed(self, it: QtWidgets.QTableWidgetItem) -> None:
        if not self._filling and it.column() == GROUP_COLUMN:
            path = self.path_at(it.row())
            if path:
                self.group_typed.emit(path, it.text().strip())

    def _on_activated(self, it: QtWidgets.QTableWidgetItem) -> None:
        path = self.path_at(it.row())
        if path and it.column() != GROUP_COLUMN:
            self.capture_chosen.emit(path)


class GroupTable(QtWidgets.QTableWidget):
    """One row per group: how many captures, then each figure's mean and standard
    deviation over its minimum and maximum."""

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        labels = ["Group", "Captures"] + [header_label(FIGURES[f].label) for f in TABLE_FIGURES]
        self.setColumnCount(len(labels))
        self.setHorizontalHeaderLabels(labels)
        for i, f in enumerate(TABLE_FIGURES):
            self.horizontalHeaderItem(2 + i).setToolTip(
                f"{FIGURES[f].label}: mean ± sample standard deviation, and under it the "
                "smallest to the largest")
        self.verticalHeader().hide()
        self.setAlternatingRowColors(True)
        self.setWordWrap(False)
        self.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)

    def fill(self, c: Comparison | None) -> None:
        stats = [s for s in (c.statistics if c else ()) if s.figure in TABLE_FIGURES]
        groups = list(dict.fromkeys(s.group for s in stats))
        self.setRowCount(len(groups))
        for r, g in enumerate(groups):
            mine = {s.figure: s for s in stats if s.group == g}
            n = max((s.count for s in mine.values()), default=0)
            cells = [_item(g), _item(plain(n))]
            for f in TABLE_FIGURES:
                s = mine.get(f)
                if s is None or s.count == 0:
                    cells.append(_item(MISSING))
                    continue
                if s.count == 1:  # one capture: its value, no spread
                    cells.append(_item(figure_text(f, s.mean)))
                    continue
                spread = f" ± {figure_text(f, s.std)}" if s.std is not None else ""
                cells.append(_item(f"{figure_text(f, s.mean)}{spread}\n"
                                   f"{figure_text(f, s.min)} to {figure_text(f, s.max)}"))
            for col, it in enumerate(cells):
                self.setItem(r, col, it)
        self.resizeColumnsToContents()
        self.resizeRowsToContents()


class OverlayPlot(pg.PlotWidget):
    """The averaged residuals of every capture, % of its span over the normalised ramp
    time (``Comparison.overlay``): the systematic part drawn, the reference thicker."""

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent, background=theme.PLOT_BACKGROUND)
        item = self.getPlotItem()
        item.showGrid(x=True, y=True, alpha=theme.GRID_ALPHA)
        for side in ("left", "bottom"):
            item.getAxis(side).setPen(theme.PLOT_FOREGROUND)
            item.getAxis(side).setTextPen(theme.PLOT_FOREGROUND)
        item.setLabel("left", "Residual (% of span)")
        item.setLabel("bottom", "Ramp time, normalised (0 = start, 1 = end)")
        for side in ("left", "bottom"):
            item.getAxis(side).enableAutoSIPrefix(False)
        item.setTitle("Averaged residuals, normalised", color=theme.PLOT_FOREGROUND)
        # two columns keep the key short; translucent, so a curve under it still shows
        self.legend = item.addLegend(offset=(-10, 10), labelTextColor=theme.PLOT_FOREGROUND,
                                     brush=pg.mkBrush(255, 253, 249, 150), colCount=2)
        self.setMinimumHeight(220)

    def fill(self, c: Comparison | None, order: list[str]) -> None:
        item = self.getPlotItem()
        item.clear()
        self.legend.clear()
        if c is None or not c.overlay.curves:
            return
        item.addItem(pg.InfiniteLine(pos=0.0, angle=0, pen=pg.mkPen(theme.ZERO_LINE)))
        u = np.asarray(c.overlay.u, dtype=float)
        for curve in c.overlay.curves:
            if curve.path not in order:
                continue  # removed since this comparison was made
            k = order.index(curve.path)
            colour = CURVE_COLOURS[k % len(CURVE_COLOURS)]
            ref = curve.path == c.reference
            y = np.asarray(curve.smoothed_residual_pct, dtype=float)
            pen = pg.mkPen(colour, width=3.0 if ref else 1.8)
            label = f"{Path(curve.path).name} · {curve.group}" + (" (reference)" if ref else "")
            item.plot(u, y, pen=pen, name=label, connect="finite")
        item.enableAutoRange()
