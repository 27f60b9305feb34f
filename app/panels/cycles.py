"""The cycle list: per-cycle figures as a table; a click shows that cycle.

A cycle's figure is written as :func:`trueslope.core.report.numbers.figure_text`
writes the summary figure of the same name, so the two read alike.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, Callable

from PySide6 import QtCore, QtGui, QtWidgets

from trueslope.core.report.numbers import figure_text, si

from .. import theme

if TYPE_CHECKING:
    from trueslope.core.results import CycleFigures

#: Columns: (header, field, text of a cycle, tooltip).
_CYCLE_COLUMNS: tuple[tuple[str, str, Callable[[CycleFigures], str], str], ...] = (
    ("#", "index", lambda c: str(c.index + 1), "Cycle number, from the start of the record"),
    ("Starts at", "ramp_start_s", lambda c: si(c.ramp_start_s, "s"), "Ramp start, seconds into the record"),
    ("Period", "period_s", lambda c: figure_text("period_s", c.period_s),
     "Ramp start to the next ramp start"),
    ("Slope", "slope_v_per_s", lambda c: figure_text("slope_v_per_s", c.slope_v_per_s),
     "Best-fit slope of this cycle alone"),
    ("Nonlinearity", "nonlinearity_pct", lambda c: figure_text("nonlinearity_pct", c.nonlinearity_pct),
     "Nonlinearity of this cycle alone (its noise included)"),
    ("Peak dev.", "peak_deviation_v", lambda c: figure_text("peak_deviation_v", c.peak_deviation_v),
     "Largest distance from this cycle's best-fit line"),
    ("Amplitude", "amplitude_v", lambda c: figure_text("amplitude_v", c.amplitude_v),
     "Amplitude of this cycle"),
    ("", "outlier", lambda c: "outlier" if c.outlier else "", "Marked when this cycle's figures stand apart"),
)


class CycleModel(QtCore.QAbstractTableModel):
    """Per-cycle figures as a table (a model, so thousands of cycles stay cheap)."""

    def __init__(self, parent: QtCore.QObject | None = None) -> None:
        super().__init__(parent)
        self._cycles: tuple[CycleFigures, ...] = ()

    def set_cycles(self, cycles: tuple[CycleFigures, ...]) -> None:
        self.beginResetModel()
        self._cycles = tuple(cycles)
        self.endResetModel()

    def rowCount(self, parent: QtCore.QModelIndex = QtCore.QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else len(self._cycles)

    def columnCount(self, parent: QtCore.QModelIndex = QtCore.QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else len(_CYCLE_COLUMNS)

    def headerData(self, section: int, orientation: QtCore.Qt.Orientation,  # noqa: N802
                   role: int = QtCore.Qt.ItemDataRole.DisplayRole) -> Any:
        if orientation == QtCore.Qt.Orientation.Horizontal and 0 <= section < len(_CYCLE_COLUMNS):
            if role == QtCore.Qt.ItemDataRole.DisplayRole:
                return _CYCLE_COLUMNS[section][0]
            if role == QtCore.Qt.ItemDataRole.ToolTipRole:
                return _CYCLE_COLUMNS[section][3]
        return None

    def data(self, index: QtCore.QModelIndex, role: int = QtCore.Qt.ItemDataRole.DisplayRole) -> Any:
        if not index.isValid():
            return None
        c = self._cycles[index.row()]
        col = _CYCLE_COLUMNS[index.column()]
        if role == QtCore.Qt.ItemDataRole.DisplayRole:
            return col[2](c)
        if role == QtCore.Qt.ItemDataRole.BackgroundRole and c.outlier:
            return QtGui.QBrush(QtGui.QColor(theme.OUTLIER_BACKGROUND))
        if role == QtCore.Qt.ItemDataRole.ForegroundRole and c.outlier and col[1] == "outlier":
            return QtGui.QBrush(QtGui.QColor(theme.VERDICT_COLOURS["outside"]))
        if role == QtCore.Qt.ItemDataRole.TextAlignmentRole and index.column() > 0:
            return int(QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter)
        if role == QtCore.Qt.ItemDataRole.ToolTipRole:
            return col[3]
        return None


class CycleTable(QtWidgets.QTableView):
    """The cycle list; a click shows that cycle.

    Signals
    -------
    cycle_chosen(int)
        The user picked a cycle (0-based row).
    """

    cycle_chosen = QtCore.Signal(int)

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        self.cycle_model = CycleModel(self)
        self.setModel(self.cycle_model)
        self.setSelectionBehavior(QtWidgets.QAbstractItemView.SelectionBehavior.SelectRows)
        self.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.SingleSelection)
        self.setAlternatingRowColors(True)
        self.verticalHeader().setVisible(False)
        self.verticalHeader().setDefaultSectionSize(22)
        self.horizontalHeader().setStretchLastSection(True)
        self.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.setHorizontalScrollMode(QtWidgets.QAbstractItemView.ScrollMode.ScrollPerPixel)
        self._quiet = False
        self.selectionModel().currentRowChanged.connect(self._row_changed)

    def set_cycles(self, cycles: tuple[CycleFigures, ...]) -> None:
        self._quiet = True
        try:
            self.cycle_model.set_cycles(cycles)
        finally:
            self._quiet = False
        self.resizeColumnsToContents()
        # Share the spare width among the figure columns rather than leave a gap.
        header = self.horizontalHeader()
        for c in range(1, self.cycle_model.columnCount()):
            header.setSectionResizeMode(c, QtWidgets.QHeaderView.ResizeMode.Stretch)

    def select_cycle(self, row: int) -> None:
        """Highlight a row without emitting :attr:`cycle_chosen`."""
        if not (0 <= row < self.cycle_model.rowCount()):
            return
        self._quiet = True
        try:
            idx = self.cycle_model.index(row, 0)
            self.selectionModel().setCurrentIndex(
                idx, QtCore.QItemSelectionModel.SelectionFlag.ClearAndSelect
                | QtCore.QItemSelectionModel.SelectionFlag.Rows)
            self.scrollTo(idx)
        finally:
            self._quiet = False

    def _row_changed(self, current: QtCore.QModelIndex, _previous: QtCore.QModelIndex) -> None:
        if not self._quiet and current.isValid():
            self.cycle_chosen.emit(current.row())
