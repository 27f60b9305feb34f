"""The figures panel: the headline nonlinearity, then every figure with its unit and definition.

It only reads a finished :class:`~trueslope.core.results.Analysis`. Its groups
and rows are :data:`trueslope.core.report.numbers.FIGURE_GROUPS`; each row's
label is :func:`trueslope.core.report.summary.figure_label` and its value
:func:`~trueslope.core.report.summary.figure_value`, the very text the
terminal prints (the slope with its interval, the jitter in samples, a bound
marked). The tooltips come from :data:`trueslope.core.report.FIGURE_DEFINITIONS`.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from PySide6 import QtCore, QtGui, QtWidgets

from trueslope.core.report.numbers import FIGURE_GROUPS, MISSING, figure_text
from trueslope.core.report.summary import figure_label, figure_value

if TYPE_CHECKING:
    from trueslope.core.results import Analysis

#: Said under the table: the window's times are not on the trace's time axis.
WINDOW_NOTE = ("Window start and end are counted from each ramp's start; the trace's time "
               "axis counts from the start of the record.")


def _definitions() -> dict[str, str]:
    from trueslope.core.report import FIGURE_DEFINITIONS
    return dict(FIGURE_DEFINITIONS)


class FiguresPanel(QtWidgets.QWidget):
    """The headline nonlinearity, then every figure with its unit and definition."""

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        self._definitions = _definitions()
        # The headline is its own widget (``head``): the window keeps it in sight
        # above its tabs, while this panel, the table, sits on one of them.
        self.head = QtWidgets.QWidget()
        hl = QtWidgets.QVBoxLayout(self.head)
        hl.setContentsMargins(6, 0, 6, 0)
        hl.setSpacing(0)
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(6, 4, 6, 6)
        self.headline = QtWidgets.QLabel(MISSING)
        self.headline.setObjectName("headline")
        self.headline_sub = QtWidgets.QLabel("Open a capture to measure it.")
        self.headline_sub.setObjectName("headlineSub")
        self.headline_sub.setWordWrap(True)
        self.headline.setToolTip(self._definitions.get("nonlinearity_pct", ""))
        hl.addWidget(self.headline)
        hl.addWidget(self.headline_sub)
        self.tree = QtWidgets.QTreeWidget()
        self.tree.setColumnCount(2)
        self.tree.setHeaderLabels(["Figure", "Value"])
        self.tree.setRootIsDecorated(False)
        self.tree.setAlternatingRowColors(True)
        self.tree.setUniformRowHeights(True)
        self.tree.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.NoSelection)
        self.tree.header().setStretchLastSection(True)
        self.tree.setIndentation(8)
        lay.addWidget(self.tree, 1)
        self._items: dict[str, QtWidgets.QTreeWidgetItem] = {}
        bold = self.font()
        bold.setBold(True)
        for group, keys in FIGURE_GROUPS:
            head = QtWidgets.QTreeWidgetItem(self.tree, [group, ""])
            head.setFirstColumnSpanned(True)
            head.setFont(0, bold)
            head.setForeground(0, QtGui.QColor("#4b3f2a"))
            for key in keys:
                item = QtWidgets.QTreeWidgetItem(self.tree, [figure_label(key), MISSING])
                tip = self._definitions.get(key, "")
                item.setToolTip(0, tip)
                item.setToolTip(1, tip)
                item.setTextAlignment(1, QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter)
                self._items[key] = item
        self.tree.resizeColumnToContents(0)
        self.note = QtWidgets.QLabel(WINDOW_NOTE)
        self.note.setObjectName("formNote")
        self.note.setWordWrap(True)
        lay.addWidget(self.note)

    def value_text(self, key: str) -> str:
        """The text shown for one figure (tests, clipboard)."""
        return self._items[key].text(1)

    def label_text(self, key: str) -> str:
        """The label shown for one figure (tests)."""
        return self._items[key].text(0)

    def tooltip(self, key: str) -> str:
        return self._items[key].toolTip(0)

    def set_analysis(self, analysis: Analysis) -> None:
        f = analysis.figures
        for _, keys in FIGURE_GROUPS:
            for key in keys:
                item = self._items[key]
                value = figure_value(analysis, key)
                item.setText(0, figure_label(key))
                item.setText(1, value)
                # the whole value, should the column be too narrow for it
                tip = self._definitions.get(key, "")
                item.setToolTip(1, f"{value}\n\n{tip}" if tip else value)
        self.headline.setText(f"Nonlinearity {figure_text('nonlinearity_pct', f.nonlinearity_pct)}")
        floor = figure_text("nonlinearity_floor_pct", f.nonlinearity_floor_pct)
        below = " — below what this capture resolves" if f.below_floor else ""
        self.headline_sub.setText(
            f"best-fit line over {f.full_cycles} averaged cycles; resolvable down to {floor}{below}")
