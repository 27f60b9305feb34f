"""The side panels: figures, cycle list, findings (with the circuit-context form), capture.

Each panel only reads a finished :class:`~trueslope.core.results.Analysis`;
none of them computes anything. The context form parses what the user types
with :func:`trueslope.core.context.parse_context` and hands the window a
:class:`CircuitContext` (or None); the window re-measures in a worker.
"""

from __future__ import annotations

import html
from dataclasses import dataclass
from typing import Any, Callable

from PySide6 import QtCore, QtGui, QtWidgets

from . import formatting as fmt
from . import theme


def _definitions() -> dict[str, str]:
    from trueslope.core.report import FIGURE_DEFINITIONS
    return dict(FIGURE_DEFINITIONS)


# -- figures ------------------------------------------------------------------------


@dataclass(frozen=True)
class FigureRow:
    """One line of the figures panel.

    Attributes
    ----------
    key : str
        Field of :class:`~trueslope.core.results.Figures` (and key of
        ``FIGURE_DEFINITIONS`` for the tooltip).
    label : str
        What the panel calls it.
    render : callable(Figures) -> str
        The value as display text.
    """

    key: str
    label: str
    render: Callable[[Any], str]


def _q(key: str, unit: str) -> Callable[[Any], str]:
    return lambda f: fmt.quantity(getattr(f, key), unit)


FIGURE_GROUPS: tuple[tuple[str, tuple[FigureRow, ...]], ...] = (
    ("Linearity", (
        FigureRow("nonlinearity_pct", "Nonlinearity (best-fit line)", _q("nonlinearity_pct", "%")),
        FigureRow("terminal_nonlinearity_pct", "Nonlinearity (end-point line)",
                  _q("terminal_nonlinearity_pct", "%")),
        FigureRow("peak_deviation_v", "Peak deviation", _q("peak_deviation_v", "V")),
        FigureRow("residual_rms_v", "Residual RMS", _q("residual_rms_v", "V")),
        FigureRow("slope_error_pct", "Slope error", _q("slope_error_pct", "%")),
        FigureRow("displacement_error_pct", "Displacement error", _q("displacement_error_pct", "%")),
        FigureRow("transmission_error_pct", "Transmission error", _q("transmission_error_pct", "%")),
        FigureRow("midpoint_time_error_s", "Midpoint time error",
                  lambda f: f"{fmt.si(f.midpoint_time_error_s, 's')}  ({fmt.pct(f.midpoint_time_error_pct)})"),
    )),
    ("Ramp", (
        FigureRow("slope_v_per_s", "Slope (95 % interval)",
                  lambda f: fmt.with_ci(f.slope_v_per_s, f.slope_ci95_v_per_s, "V/s")),
        FigureRow("fitted_span_v", "Span in the window", _q("fitted_span_v", "V")),
        FigureRow("amplitude_v", "Amplitude", _q("amplitude_v", "V")),
        FigureRow("start_v", "Start level", _q("start_v", "V")),
        FigureRow("end_v", "End level", _q("end_v", "V")),
        FigureRow("offset_v", "Offset", _q("offset_v", "V")),
        FigureRow("direction", "Direction", lambda f: fmt.plain(f.direction)),
    )),
    ("Timing", (
        FigureRow("frequency_hz", "Repetition rate", _q("frequency_hz", "Hz")),
        FigureRow("period_s", "Period", _q("period_s", "s")),
        FigureRow("period_jitter_s", "Period jitter", _q("period_jitter_s", "s")),
        FigureRow("ramp_time_s", "Ramp time", _q("ramp_time_s", "s")),
        FigureRow("retrace_time_s", "Retrace time", _q("retrace_time_s", "s")),
        FigureRow("full_cycles", "Full cycles (partial)",
                  lambda f: f"{f.full_cycles}  ({f.partial_cycles})"),
    )),
    ("Resolution", (
        FigureRow("noise_rms_v", "Noise per sample (RMS)", _q("noise_rms_v", "V")),
        FigureRow("adc_step_v", "Quantisation step", _q("adc_step_v", "V")),
        FigureRow("nonlinearity_floor_pct", "Smallest resolvable nonlinearity",
                  _q("nonlinearity_floor_pct", "%")),
        FigureRow("below_floor", "Nonlinearity below that floor", lambda f: fmt.plain(f.below_floor)),
    )),
    ("Fit window", (
        FigureRow("window_start_s", "Window from", _q("window_start_s", "s")),
        FigureRow("window_end_s", "Window to", _q("window_end_s", "s")),
        FigureRow("trim_fraction", "Trim at each end", lambda f: fmt.pct(100.0 * f.trim_fraction)),
    )),
)


class FiguresPanel(QtWidgets.QWidget):
    """The headline nonlinearity, then every figure with its unit and definition."""

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        self._definitions = _definitions()
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        self.headline = QtWidgets.QLabel(fmt.MISSING)
        self.headline.setObjectName("headline")
        self.headline_sub = QtWidgets.QLabel("Open a capture to measure it.")
        self.headline_sub.setObjectName("headlineSub")
        self.headline_sub.setWordWrap(True)
        self.headline.setToolTip(self._definitions.get("nonlinearity_pct", ""))
        lay.addWidget(self.headline)
        lay.addWidget(self.headline_sub)
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
        for group, rows in FIGURE_GROUPS:
            head = QtWidgets.QTreeWidgetItem(self.tree, [group, ""])
            head.setFirstColumnSpanned(True)
            head.setFont(0, bold)
            head.setForeground(0, QtGui.QColor("#4b3f2a"))
            for row in rows:
                item = QtWidgets.QTreeWidgetItem(self.tree, [row.label, fmt.MISSING])
                tip = self._definitions.get(row.key, "")
                item.setToolTip(0, tip)
                item.setToolTip(1, tip)
                item.setTextAlignment(1, QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter)
                self._items[row.key] = item
        self.tree.resizeColumnToContents(0)

    def value_text(self, key: str) -> str:
        """The text shown for one figure (tests, clipboard)."""
        return self._items[key].text(1)

    def tooltip(self, key: str) -> str:
        return self._items[key].toolTip(0)

    def clear(self) -> None:
        for item in self._items.values():
            item.setText(1, fmt.MISSING)
        self.headline.setText(fmt.MISSING)
        self.headline_sub.setText("Open a capture to measure it.")

    def set_analysis(self, analysis: Any) -> None:
        f = analysis.figures
        for _, rows in FIGURE_GROUPS:
            for row in rows:
                try:
                    text = row.render(f)
                except (AttributeError, TypeError, ValueError):
                    text = fmt.MISSING
                self._items[row.key].setText(1, text)
        self.headline.setText(f"Nonlinearity {fmt.pct(f.nonlinearity_pct)}")
        floor = fmt.pct(f.nonlinearity_floor_pct)
        below = " — below what this capture resolves" if f.below_floor else ""
        self.headline_sub.setText(
            f"best-fit line over {f.full_cycles} averaged cycles; resolvable down to {floor}{below}")


# -- cycle list ---------------------------------------------------------------------


_CYCLE_COLUMNS: tuple[tuple[str, str, Callable[[Any], str], str], ...] = (
    ("#", "index", lambda c: str(c.index + 1), "Cycle number, from the start of the record"),
    ("Starts at", "ramp_start_s", lambda c: fmt.si(c.ramp_start_s, "s"), "Ramp start, seconds into the record"),
    ("Period", "period_s", lambda c: fmt.si(c.period_s, "s"), "Ramp start to the next ramp start"),
    ("Slope", "slope_v_per_s", lambda c: fmt.si(c.slope_v_per_s, "V/s"), "Best-fit slope of this cycle alone"),
    ("Nonlinearity", "nonlinearity_pct", lambda c: fmt.pct(c.nonlinearity_pct),
     "Nonlinearity of this cycle alone (its noise included)"),
    ("Peak dev.", "peak_deviation_v", lambda c: fmt.si(c.peak_deviation_v, "V"),
     "Largest distance from this cycle's best-fit line"),
    ("Span", "amplitude_v", lambda c: fmt.si(c.amplitude_v, "V"), "Amplitude of this cycle"),
    ("", "outlier", lambda c: "outlier" if c.outlier else "", "Marked when this cycle's figures stand apart"),
)


class CycleModel(QtCore.QAbstractTableModel):
    """Per-cycle figures as a table (a model, so thousands of cycles stay cheap)."""

    def __init__(self, parent: QtCore.QObject | None = None) -> None:
        super().__init__(parent)
        self._cycles: tuple[Any, ...] = ()

    def set_cycles(self, cycles: tuple[Any, ...]) -> None:
        self.beginResetModel()
        self._cycles = tuple(cycles)
        self.endResetModel()

    def cycle(self, row: int) -> Any:
        return self._cycles[row]

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

    def set_cycles(self, cycles: tuple[Any, ...]) -> None:
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


# -- findings -----------------------------------------------------------------------


#: The context form's fields: (keyword of parse_context, label, placeholder, help).
CONTEXT_FIELDS: tuple[tuple[str, str, str, str], ...] = (
    ("capacitance", "Capacitor", "e.g. 47n", "The capacitor the current charges, farads (47n = 47 nF)"),
    ("current", "Current", "e.g. 100u", "The constant current into the capacitor, amperes; "
     "or give the set resistor and reference below instead"),
    ("set_resistor", "Set resistor", "e.g. 10k", "Resistor that sets the current source, ohms"),
    ("reference", "Reference", "e.g. 1.0", "Voltage across the set resistor, volts"),
    ("probe", "Probe", "e.g. 10M,12p", "Resistance and capacitance the probe adds, "
     "as R,C (10M,12p = 10 MΩ with 12 pF)"),
    ("tolerance", "Tolerance", "e.g. 10%", "Tolerance of the parts, for the self-check's verdicts"),
)


_CURVATURE_WORDS = {
    "concave": "concave: the slope falls along the ramp",
    "convex": "convex: the slope rises along the ramp",
}


def _pretty(word: Any) -> str:
    text = str(word).replace("_", " ").replace("-", " ").strip()
    return text[:1].upper() + text[1:]


class ContextForm(QtWidgets.QGroupBox):
    """What the user knows of the circuit; parsed as they type.

    Signals
    -------
    context_changed(object)
        A valid :class:`CircuitContext` (or None when the form is empty),
        sent a short while after the last keystroke.
    """

    context_changed = QtCore.Signal(object)
    #: Quiet time after the last keystroke before the form is parsed, ms.
    DEBOUNCE_MS = 400

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__("Circuit context (what you know of the circuit)", parent)
        # Two pairs of label and field a row keeps the form short enough to
        # sit beside the self-check it feeds.
        grid = QtWidgets.QGridLayout(self)
        grid.setHorizontalSpacing(8)
        grid.setVerticalSpacing(4)
        self.edits: dict[str, QtWidgets.QLineEdit] = {}
        for i, (key, label, placeholder, tip) in enumerate(CONTEXT_FIELDS):
            edit = QtWidgets.QLineEdit()
            edit.setPlaceholderText(placeholder)
            edit.setToolTip(tip)
            edit.setClearButtonEnabled(True)
            edit.textEdited.connect(self._schedule)
            name = QtWidgets.QLabel(label)
            name.setToolTip(tip)
            name.setBuddy(edit)
            row, col = divmod(i, 2)
            grid.addWidget(name, row, 2 * col)
            grid.addWidget(edit, row, 2 * col + 1)
            self.edits[key] = edit
        grid.setColumnStretch(1, 1)
        grid.setColumnStretch(3, 1)
        self.error = QtWidgets.QLabel("")
        self.error.setObjectName("formError")
        self.error.setWordWrap(True)
        self.error.hide()
        grid.addWidget(self.error, grid.rowCount(), 0, 1, 4)
        self._timer = QtCore.QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(self.DEBOUNCE_MS)
        self._timer.timeout.connect(self.apply)
        self._last: Any = object()

    def values(self) -> dict[str, str | None]:
        return {k: (e.text().strip() or None) for k, e in self.edits.items()}

    def set_values(self, **values: str) -> None:
        """Fill fields (tests and command-line options) and apply at once."""
        for k, v in values.items():
            self.edits[k].setText(v)
        self.apply()

    def _schedule(self) -> None:
        self._timer.start()

    def apply(self) -> None:
        """Parse the form now; emit the context if it is valid and changed."""
        from trueslope.core.context import parse_context
        from trueslope.core.errors import SettingsError

        self._timer.stop()
        try:
            ctx = parse_context(**self.values())
        except SettingsError as exc:
            self.error.setText(str(exc))
            self.error.show()
            return
        self.error.hide()
        if ctx != self._last:
            self._last = ctx
            self.context_changed.emit(ctx)


class FindingsPanel(QtWidgets.QScrollArea):
    """The diagnosis, its explanation and next checks, the self-check, and the context form."""

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        self.setWidgetResizable(True)
        self.setFrameShape(QtWidgets.QFrame.Shape.NoFrame)
        body = QtWidgets.QWidget()
        lay = QtWidgets.QVBoxLayout(body)
        lay.setContentsMargins(6, 4, 6, 6)

        diag = QtWidgets.QGroupBox("Diagnosis")
        dl = QtWidgets.QVBoxLayout(diag)
        self.signature = QtWidgets.QLabel(fmt.MISSING)
        self.signature.setObjectName("signature")
        self.signature.setWordWrap(True)
        self.strength = QtWidgets.QLabel("")
        self.strength.setObjectName("muted")
        self.strength.setWordWrap(True)
        self.explanation = QtWidgets.QLabel("")
        self.explanation.setWordWrap(True)
        self.explanation.setTextInteractionFlags(QtCore.Qt.TextInteractionFlag.TextSelectableByMouse)
        self.next_checks = QtWidgets.QLabel("")
        self.next_checks.setWordWrap(True)
        self.next_checks.setTextFormat(QtCore.Qt.TextFormat.RichText)
        for w in (self.signature, self.strength, self.explanation, self.next_checks):
            dl.addWidget(w)
        lay.addWidget(diag)

        check = QtWidgets.QGroupBox("Self-check against the circuit")
        cl = QtWidgets.QVBoxLayout(check)
        self.check_summary = QtWidgets.QLabel("Fill in the circuit context above to compare "
                                              "the circuit with the measurement.")
        self.check_summary.setWordWrap(True)
        self.check_table = QtWidgets.QTableWidget(0, 5)
        self.check_table.setHorizontalHeaderLabels(["Check", "Expected", "Measured", "Off by", "Verdict"])
        self.check_table.verticalHeader().setVisible(False)
        self.check_table.verticalHeader().setDefaultSectionSize(22)
        self.check_table.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.check_table.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.NoSelection)
        self.check_table.horizontalHeader().setStretchLastSection(True)
        self.check_table.setVerticalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.check_table.hide()
        self.probe_line = QtWidgets.QLabel("")
        self.probe_line.setWordWrap(True)
        self.probe_line.setTextFormat(QtCore.Qt.TextFormat.RichText)
        self.probe_line.hide()
        cl.addWidget(self.check_summary)
        cl.addWidget(self.check_table)
        cl.addWidget(self.probe_line)
        self.form = ContextForm()
        lay.addWidget(self.form)
        lay.addWidget(check)
        lay.addStretch(1)
        self.setWidget(body)

    def clear(self) -> None:
        self.signature.setText(fmt.MISSING)
        for w in (self.strength, self.explanation, self.next_checks):
            w.setText("")
        self._set_check(None)

    def set_analysis(self, analysis: Any) -> None:
        d = analysis.diagnosis
        if d is None:
            self.signature.setText("No diagnosis")
            self.strength.setText("")
            self.explanation.setText("")
            self.next_checks.setText("")
        else:
            self.signature.setText(_pretty(getattr(d, "signature", "")))
            bits = [str(getattr(d, "strength_words", "") or "")]
            curv = str(getattr(d, "curvature", "") or "")
            if curv in _CURVATURE_WORDS:
                bits.append(_CURVATURE_WORDS[curv])
            tau = getattr(d, "tau_s", None)
            if tau is not None and fmt.si(tau, "s") != fmt.MISSING:
                bits.append(f"time constant {fmt.si(tau, 's', 3)}")
            shunt = getattr(d, "equivalent_shunt_ohm", None)
            if shunt is not None and fmt.si(shunt, "Ω") != fmt.MISSING:
                bits.append(f"like a {fmt.si(shunt, 'Ω', 3)} shunt")
            beta = getattr(d, "voltage_coefficient_per_v", None)
            if beta is not None and fmt.plain(beta) != fmt.MISSING:
                bits.append(f"slope changes {fmt.pct(100.0 * beta)} per volt")
            self.strength.setText(" · ".join(b for b in bits if b))
            self.explanation.setText(str(getattr(d, "explanation", "") or ""))
            checks = [str(c) for c in (getattr(d, "next_checks", ()) or ())]
            if checks:
                items = "".join(f"<li>{html.escape(c)}</li>" for c in checks)
                self.next_checks.setText(f"<b>Next checks</b><ul style='margin-left:-20px'>{items}</ul>")
            else:
                self.next_checks.setText("")
        self._set_check(analysis.context_check)

    def _set_check(self, cc: Any) -> None:
        if cc is None:
            self.check_summary.setText("Fill in the circuit context above to compare the "
                                       "circuit with the measurement.")
            self.check_table.setRowCount(0)
            self.check_table.hide()
            self.probe_line.hide()
            return
        self.check_summary.setText(str(getattr(cc, "summary", "") or ""))
        items = tuple(getattr(cc, "items", ()) or ())
        self.check_table.setRowCount(len(items))
        for r, it in enumerate(items):
            unit = str(getattr(it, "unit", "") or "")
            cells = [
                _pretty(getattr(it, "name", "")),
                fmt.quantity(getattr(it, "expected", None), unit),
                fmt.quantity(getattr(it, "measured", None), unit),
                fmt.pct(getattr(it, "deviation_pct", None)),
                str(getattr(it, "verdict", "")),
            ]
            cause = str(getattr(it, "likely_cause", "") or "")
            for c, text in enumerate(cells):
                cell = QtWidgets.QTableWidgetItem(text)
                if cause:
                    cell.setToolTip(cause)
                if c == 4:
                    cell.setForeground(QtGui.QBrush(QtGui.QColor(theme.verdict_colour(text))))
                    f = cell.font()
                    f.setBold(True)
                    cell.setFont(f)
                self.check_table.setItem(r, c, cell)
        self.check_table.resizeColumnsToContents()
        self.check_table.setVisible(bool(items))
        h = self.check_table.horizontalHeader().height() + 2
        for r in range(len(items)):
            h += self.check_table.rowHeight(r)
        self.check_table.setFixedHeight(h + 2)
        lines = []
        for it in items:
            cause = str(getattr(it, "likely_cause", "") or "")
            if cause and getattr(it, "verdict", "") == "outside":
                lines.append(f"<li><b>{html.escape(_pretty(it.name))}</b>: {html.escape(cause)}</li>")
        match = str(getattr(cc, "probe_match", "") or "")
        if match:
            lines.append(f"<li>The equivalent shunt looks like: {html.escape(match)}.</li>")
        pred = getattr(cc, "probe_predicted_nonlinearity_pct", None)
        if pred is not None and fmt.pct(pred) != fmt.MISSING:
            explains = getattr(cc, "probe_explains_bow", None)
            tail = {True: " That explains the bow measured.",
                    False: ""}.get(explains, "")
            lines.append(f"<li>The stated probe alone would bend the ramp by {fmt.pct(pred)}."
                         f"{tail}</li>")
        if lines:
            self.probe_line.setText(f"<ul style='margin-left:-20px'>{''.join(lines)}</ul>")
            self.probe_line.show()
        else:
            self.probe_line.hide()

    def check_rows(self) -> list[list[str]]:
        """The self-check table as text (tests)."""
        t = self.check_table
        return [[t.item(r, c).text() for c in range(t.columnCount())] for r in range(t.rowCount())]


# -- capture ------------------------------------------------------------------------


class CapturePanel(QtWidgets.QWidget):
    """What the file said about itself, and what the import noticed."""

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(6, 4, 6, 6)
        wbox = QtWidgets.QGroupBox("Warnings (from the import and the analysis)")
        wl = QtWidgets.QVBoxLayout(wbox)
        self.warnings = QtWidgets.QListWidget()
        self.warnings.setWordWrap(True)
        self.warnings.setMaximumHeight(96)
        wl.addWidget(self.warnings)
        mbox = QtWidgets.QGroupBox("Capture")
        ml = QtWidgets.QVBoxLayout(mbox)
        self.table = QtWidgets.QTableWidget(0, 2)
        self.table.setHorizontalHeaderLabels(["Field", "Value"])
        self.table.verticalHeader().setVisible(False)
        self.table.verticalHeader().setDefaultSectionSize(22)
        self.table.horizontalHeader().setStretchLastSection(True)
        self.table.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setWordWrap(True)
        ml.addWidget(self.table)
        lay.addWidget(wbox)
        lay.addWidget(mbox, 1)

    def clear(self) -> None:
        self.warnings.clear()
        self.table.setRowCount(0)

    def set_capture(self, capture: Any, analysis: Any | None) -> None:
        rows: list[tuple[str, str]] = [
            ("File", str(capture.source)),
            ("Layout", capture.layout or fmt.MISSING),
            ("Channels", ", ".join(capture.channel_names)),
            ("Measured channel", analysis.channel if analysis is not None else fmt.MISSING),
            ("Samples", f"{capture.samples:,}".replace(",", " ")),
            ("Sample interval", fmt.si(capture.sample_interval_s, "s")),
            ("Sample rate", fmt.si(capture.sample_rate_hz, "Sa/s")),
            ("Record length", fmt.si(capture.duration_s, "s")),
            ("Time column", capture.time_column or "none (interval given)"),
        ]
        if analysis is not None:
            rows.append(("Resets found from", "sync channel" if analysis.segmentation.source == "sync"
                         else "the ramp itself"))
        rows += [(f"  {k}", str(v)) for k, v in dict(capture.metadata).items()]
        self.table.setRowCount(len(rows))
        for r, (k, v) in enumerate(rows):
            self.table.setItem(r, 0, QtWidgets.QTableWidgetItem(k))
            self.table.setItem(r, 1, QtWidgets.QTableWidgetItem(v))
        self.table.resizeColumnToContents(0)
        self.warnings.clear()
        warns = analysis.warnings if analysis is not None else capture.warnings
        for w in warns:
            self.warnings.addItem(str(w))
        if not warns:
            item = QtWidgets.QListWidgetItem("No warnings: the file read cleanly.")
            item.setForeground(QtGui.QBrush(QtGui.QColor("#6a6f78")))
            self.warnings.addItem(item)

    def warning_texts(self) -> list[str]:
        return [self.warnings.item(i).text() for i in range(self.warnings.count())]
