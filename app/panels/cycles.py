"""The cycle list: per-cycle figures as a sortable table; a click shows that cycle.

Each row is one cycle fitted on its own, its noise included, so its
nonlinearity is larger than the headline figure, which is fitted to all
cycles averaged; the column header and the note under the list say so. A
cycle's figure is written as :func:`trueslope.core.report.numbers.figure_text`
writes the summary figure of the same name, and its column carries that
figure's label from :data:`~trueslope.core.report.numbers.FIGURES`.

The model is lazy: it keeps the cycles (a
:class:`~trueslope.core.percycle.CycleList`, columns of arrays) and an order (a numpy
index array), builds a cycle's record and writes a cell's text only when the view asks
for that row, and sorts on the columns themselves, so 100 000 cycles fill the table in
a few milliseconds. Columns are sized from a sample
of rows, never from every row.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Callable

import numpy as np
from PySide6 import QtCore, QtGui, QtWidgets

from trueslope.core.percycle import CycleList, cycle_column
from trueslope.core.report.numbers import FIGURES, figure_text, si

from .. import theme

if TYPE_CHECKING:
    from trueslope.core.results import CycleFigures

Role = QtCore.Qt.ItemDataRole

#: The note shown under the list: what a row's figures are.
CYCLE_NOTE = ("One cycle a row, fitted on its own with its noise, so its nonlinearity is "
              "not the headline's (the fit to all cycles averaged). Untick a cycle, or "
              "right-click it, to leave it out of the average.")
#: What the list says of a cycle left out by hand.
LEAVE_OUT = "Leave out of the average"
PUT_BACK = "Put back into the average"


@dataclass(frozen=True)
class CycleColumn:
    """One column: header, the field it sorts by, the cell text and the header's tooltip."""

    header: str
    field: str
    text: Callable[[CycleFigures], str]
    tip: str


def _fig(key: str, header: str | None = None, tip: str = "") -> CycleColumn:
    return CycleColumn(header or FIGURES[key].label, key,
                       lambda c: figure_text(key, getattr(c, key)), tip)


#: The columns; the first holds the "in the average" check box.
CYCLE_COLUMNS: tuple[CycleColumn, ...] = (
    CycleColumn("#", "index", lambda c: str(c.index + 1),
                "Cycle number from the start of the record; untick to leave it out of the average"),
    CycleColumn("Ramp start (in the record)", "ramp_start_s", lambda c: si(c.ramp_start_s, "s"),
                "Where this cycle's ramp starts, seconds from the start of the record "
                "(the trace's time axis)"),
    _fig("period_s", tip="Ramp start to the next ramp start"),
    _fig("slope_v_per_s", tip="Best-fit slope of this cycle alone"),
    _fig("nonlinearity_pct", "Nonlinearity (own fit, with noise)",
         "Best-fit-line nonlinearity of this cycle fitted alone, its noise included; "
         "not the headline figure, which is fitted to all cycles averaged"),
    _fig("peak_deviation_v", tip="Largest distance from this cycle's own best-fit line"),
    _fig("amplitude_v", tip="Amplitude of this cycle"),
    CycleColumn("Average", "state", lambda c: ("left out" if c.excluded else
                                                "outlier" if c.outlier else "in"),
                "In the average; an outlier (its figures stand apart) or a cycle left "
                "out by hand is not"),
)
#: Column of the figure a row's status is written in.
STATE_COLUMN = len(CYCLE_COLUMNS) - 1


def header_lines(header: str) -> str:
    """A header on two lines, its parenthesis under the name, so the columns stay narrow."""
    return header.replace(" (", "\n(", 1)


def _sort_keys(cycles: Sequence[CycleFigures], field: str) -> np.ndarray:
    """The sort key of every cycle for the column of ``field`` (missing figures NaN)."""
    if field == "state":
        return np.where(cycle_column(cycles, "excluded"), 2.0,
                        np.where(cycle_column(cycles, "outlier"), 1.0, 0.0))
    return cycle_column(cycles, field).astype(float)


class CycleModel(QtCore.QAbstractTableModel):
    """Per-cycle figures as a lazy, sortable table.

    Row ``r`` shows cycle ``order[r]`` (a position in the tuple given to
    :meth:`set_cycles`); :meth:`cycle_at` and :meth:`row_of` convert.

    Signals
    -------
    exclusion_toggled(int, bool)
        The user ticked (False) or unticked (True) a cycle's box: its position
        and whether it is to be left out.
    """

    exclusion_toggled = QtCore.Signal(int, bool)
    #: Records kept for the rows drawn (a screenful is a few dozen).
    KEPT_RECORDS = 1024

    def __init__(self, parent: QtCore.QObject | None = None) -> None:
        super().__init__(parent)
        self._cycles: Sequence[CycleFigures] = ()
        self._shown: dict[int, CycleFigures] = {}  # records of the rows drawn, by position
        self._order = np.zeros(0, dtype=np.int64)
        self._rank = np.zeros(0, dtype=np.int64)
        self._sort: tuple[int, QtCore.Qt.SortOrder] | None = None
        self._strike = QtGui.QFont()
        self._strike.setStrikeOut(True)
        self._grey = QtGui.QBrush(QtGui.QColor(theme.EXCLUDED_TEXT))
        self._outlier_bg = QtGui.QBrush(QtGui.QColor(theme.OUTLIER_BACKGROUND))
        self._outlier_fg = QtGui.QBrush(QtGui.QColor(theme.VERDICT_COLOURS["outside"]))

    # -- contents -------------------------------------------------------------------

    def set_cycles(self, cycles: Sequence[CycleFigures]) -> None:
        """Show ``cycles`` (kept by reference: a :class:`~trueslope.core.percycle.CycleList`
        builds a record only for a row drawn; nothing is formatted until drawn)."""
        self.beginResetModel()
        self._cycles = cycles if isinstance(cycles, CycleList) else tuple(cycles)
        self._shown = {}
        self._order = np.arange(len(self._cycles), dtype=np.int64)
        if self._sort is not None:
            self._apply_sort(*self._sort)
        self._rank = self._ranks()
        self.endResetModel()

    @property
    def cycles(self) -> Sequence[CycleFigures]:
        return self._cycles

    def record(self, position: int) -> CycleFigures:
        """The record of the cycle at ``position`` (built once, kept while shown)."""
        c = self._shown.get(position)
        if c is None:
            if len(self._shown) >= self.KEPT_RECORDS:
                self._shown.clear()
            c = self._shown[position] = self._cycles[position]
        return c

    def cycle_at(self, row: int) -> int:
        """Position in the cycles of the cycle shown in ``row``."""
        return int(self._order[row])

    def row_of(self, position: int) -> int:
        """Row showing the cycle at ``position`` (-1 if none)."""
        return int(self._rank[position]) if 0 <= position < len(self._rank) else -1

    def excluded(self) -> tuple[int, ...]:
        """Cycle indices (``CycleFigures.index``) left out by hand."""
        out = cycle_column(self._cycles, "index")[cycle_column(self._cycles, "excluded")]
        return tuple(int(i) for i in out)

    def _ranks(self) -> np.ndarray:
        rank = np.empty_like(self._order)
        rank[self._order] = np.arange(len(self._order), dtype=np.int64)
        return rank

    # -- sorting ---------------------------------------------------------------------

    def sort(self, column: int, order: QtCore.Qt.SortOrder = QtCore.Qt.SortOrder.AscendingOrder
             ) -> None:
        if not 0 <= column < len(CYCLE_COLUMNS):
            return
        self.layoutAboutToBeChanged.emit()
        old = self.persistentIndexList()
        old_pos = [(self.cycle_at(i.row()), i.column()) for i in old]
        self._sort = (column, order)
        self._apply_sort(column, order)
        self._rank = self._ranks()
        self.changePersistentIndexList(
            old, [self.index(self.row_of(p), col) for p, col in old_pos])
        self.layoutChanged.emit()

    def _apply_sort(self, column: int, order: QtCore.Qt.SortOrder) -> None:
        field = CYCLE_COLUMNS[column].field
        keys = _sort_keys(self._cycles, field)
        if order == QtCore.Qt.SortOrder.DescendingOrder:
            # Descending, yet equal keys keep their record order (missing ones last).
            idx = np.lexsort((np.arange(len(keys)), -np.nan_to_num(keys, nan=-np.inf)))
        else:
            idx = np.argsort(keys, kind="stable")
        self._order = idx.astype(np.int64)

    # -- Qt model interface --------------------------------------------------------------

    def rowCount(self, parent: QtCore.QModelIndex = QtCore.QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else len(self._cycles)

    def columnCount(self, parent: QtCore.QModelIndex = QtCore.QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else len(CYCLE_COLUMNS)

    def headerData(self, section: int, orientation: QtCore.Qt.Orientation,  # noqa: N802
                   role: int = Role.DisplayRole) -> Any:
        if orientation == QtCore.Qt.Orientation.Horizontal and 0 <= section < len(CYCLE_COLUMNS):
            if role == Role.DisplayRole:
                return header_lines(CYCLE_COLUMNS[section].header)
            if role == Role.ToolTipRole:
                return CYCLE_COLUMNS[section].tip
        return None

    def flags(self, index: QtCore.QModelIndex) -> QtCore.Qt.ItemFlag:
        f = super().flags(index)
        if index.isValid() and index.column() == 0:
            f |= QtCore.Qt.ItemFlag.ItemIsUserCheckable
        return f

    def data(self, index: QtCore.QModelIndex, role: int = Role.DisplayRole) -> Any:
        if not index.isValid():
            return None
        c = self.record(int(self._order[index.row()]))
        col = index.column()
        if role == Role.DisplayRole:
            return CYCLE_COLUMNS[col].text(c)
        if role == Role.CheckStateRole and col == 0:
            return (QtCore.Qt.CheckState.Unchecked if c.excluded
                    else QtCore.Qt.CheckState.Checked)
        if role == Role.FontRole and c.excluded:
            return self._strike
        if role == Role.ForegroundRole:
            if c.excluded:
                return self._grey
            if c.outlier and col == STATE_COLUMN:
                return self._outlier_fg
        if role == Role.BackgroundRole and c.outlier and not c.excluded:
            return self._outlier_bg
        if role == Role.TextAlignmentRole and col > 0:
            return int(QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter)
        if role == Role.ToolTipRole:
            return (f"Cycle {c.index + 1}: left out of the average by hand" if c.excluded
                    else CYCLE_COLUMNS[col].tip)
        return None

    def setData(self, index: QtCore.QModelIndex, value: Any,  # noqa: N802
                role: int = Role.EditRole) -> bool:
        if not index.isValid() or index.column() != 0 or role != Role.CheckStateRole:
            return False
        checked = QtCore.Qt.CheckState(value) == QtCore.Qt.CheckState.Checked
        # The model does not change itself: the window measures again and sends
        # the new cycles, so the list never shows a state the figures do not.
        self.exclusion_toggled.emit(self.cycle_at(index.row()), not checked)
        return False


class CycleTable(QtWidgets.QTableView):
    """The cycle list; a click shows that cycle, a box or the context menu leaves it out.

    Signals
    -------
    cycle_chosen(int)
        The user picked a cycle (its position in the analysis's cycles).
    exclusion_requested(object)
        The cycle indices the user wants left out of the average (a tuple).
    """

    cycle_chosen = QtCore.Signal(int)
    exclusion_requested = QtCore.Signal(object)
    #: Rows measured to size the columns (the first ones; the rest are alike).
    SIZE_SAMPLE = 24

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        self.cycle_model = CycleModel(self)
        self.setModel(self.cycle_model)
        self.setSelectionBehavior(QtWidgets.QAbstractItemView.SelectionBehavior.SelectRows)
        self.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.SingleSelection)
        self.setAlternatingRowColors(True)
        vh = self.verticalHeader()
        vh.setVisible(False)
        vh.setSectionResizeMode(QtWidgets.QHeaderView.ResizeMode.Fixed)
        vh.setDefaultSectionSize(22)
        header = self.horizontalHeader()
        header.setStretchLastSection(True)
        header.setSortIndicatorShown(True)
        header.setSortIndicator(-1, QtCore.Qt.SortOrder.AscendingOrder)
        self.setSortingEnabled(True)
        self.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.setHorizontalScrollMode(QtWidgets.QAbstractItemView.ScrollMode.ScrollPerPixel)
        self.setContextMenuPolicy(QtCore.Qt.ContextMenuPolicy.CustomContextMenu)
        self.customContextMenuRequested.connect(self._menu)
        self.cycle_model.exclusion_toggled.connect(self._toggle)
        self._quiet = False
        self.selectionModel().currentRowChanged.connect(self._row_changed)

    def minimumSizeHint(self) -> QtCore.QSize:  # noqa: N802
        """Room for the two-line header, five rows and the scroll bar."""
        hint = super().minimumSizeHint()
        rows = 5 * self.verticalHeader().defaultSectionSize()
        return QtCore.QSize(hint.width(), 2 * self.fontMetrics().height() + 14 + rows + 18)

    def set_cycles(self, cycles: Sequence[CycleFigures]) -> None:
        self._quiet = True
        try:
            self.cycle_model.set_cycles(cycles)
        finally:
            self._quiet = False
        self._size_columns()

    def _size_columns(self) -> None:
        """Width of each column from its header and a sample of rows (never every row)."""
        model = self.cycle_model
        n = min(model.rowCount(), self.SIZE_SAMPLE)
        if n == 0:
            return
        fm = self.fontMetrics()
        bold = QtGui.QFont(self.horizontalHeader().font())
        bold.setBold(True)  # the style sheet sets the header's weight, not its font
        hfm = QtGui.QFontMetrics(bold)
        header = self.horizontalHeader()
        check = self.style().pixelMetric(QtWidgets.QStyle.PixelMetric.PM_IndicatorWidth)
        for col in range(model.columnCount()):
            texts = [model.data(model.index(r, col)) or "" for r in range(n)]
            w = max([fm.horizontalAdvance(t) for t in texts] + [0]) + 16
            head = header_lines(CYCLE_COLUMNS[col].header).split("\n")
            # padding of the style sheet and room for the sort arrow
            w = max(w, max(hfm.horizontalAdvance(t) for t in head) + 34)
            if col == 0:
                w += check + 8
            header.resizeSection(col, w)

    def select_cycle(self, position: int) -> None:
        """Highlight the row of the cycle at ``position`` without emitting :attr:`cycle_chosen`."""
        row = self.cycle_model.row_of(position)
        if row < 0:
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

    def current_cycle(self) -> int:
        """Position of the highlighted cycle (-1 if none)."""
        idx = self.currentIndex()
        return self.cycle_model.cycle_at(idx.row()) if idx.isValid() else -1

    def _row_changed(self, current: QtCore.QModelIndex, _previous: QtCore.QModelIndex) -> None:
        if not self._quiet and current.isValid():
            self.cycle_chosen.emit(self.cycle_model.cycle_at(current.row()))

    # -- leaving cycles out ----------------------------------------------------------------

    def set_left_out(self, position: int, leave_out: bool) -> None:
        """Ask for the cycle at ``position`` to be left out (True) or put back (False)."""
        self._toggle(position, leave_out)

    def _toggle(self, position: int, leave_out: bool) -> None:
        cycles = self.cycle_model.cycles
        if not 0 <= position < len(cycles):
            return
        index = self.cycle_model.record(position).index
        now = set(self.cycle_model.excluded())
        new = now | {index} if leave_out else now - {index}
        if new != now:
            self.exclusion_requested.emit(tuple(sorted(new)))

    def _menu(self, pos: QtCore.QPoint) -> None:
        idx = self.indexAt(pos)
        if not idx.isValid():
            return
        position = self.cycle_model.cycle_at(idx.row())
        c = self.cycle_model.record(position)
        menu = QtWidgets.QMenu(self)
        act = menu.addAction(PUT_BACK if c.excluded else LEAVE_OUT)
        act.triggered.connect(lambda: self._toggle(position, not c.excluded))
        menu.popup(self.viewport().mapToGlobal(pos))
