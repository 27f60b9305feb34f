"""What it would take: the circuit a target nonlinearity needs, and a proposed change tried.

:class:`WhatItTakes` sits on the Diagnosis tab under the diagnosis. For a bowed ramp it
shows :func:`trueslope.core.report.prose.requirements_text` for a target (default
0.1 %, the terminal's); "Try a change" predicts the ramp after one change
(:data:`~trueslope.app.whatif_jobs.CHANGES`) and shows the predicted figures beside
the measured ones, worded by :mod:`trueslope.core.report.numbers`; the window draws
the predicted ramp over the measured one (:attr:`WhatItTakes.prediction_changed`).
Both computations run on workers; the panel only shows their answers.
"""

from __future__ import annotations

import html
import math
from typing import TYPE_CHECKING

from PySide6 import QtCore, QtWidgets

from trueslope.core.errors import TrueslopeError
from trueslope.core.report.numbers import FIGURES, figure_text, finite, si
from trueslope.core.units import parse_si
from trueslope.core.whatif import DEFAULT_TARGET_PCT

from ..banner import describe_error
from ..fields import FIELD_LABELS
from ..jobs import JobRunner
from ..whatif_jobs import (CHANGES, ChangeAnswer, ChangeRequest, RequirementsRequest,
                           change_kind, run_change, run_requirements)

if TYPE_CHECKING:
    from trueslope.core.results import Analysis

#: Title of the section (the terminal's heading, without its colon).
TITLE = "What it would take"
#: Said for a ramp with no bow to bring down.
STRAIGHT = ("The ramp is straight to within what this capture resolves: there is no bow to "
            "bring down. A change can still be tried below.")
#: Said when a change cannot be predicted without the capacitance.
NEEDS_CAPACITANCE = (f"To predict a change, fill in {FIELD_LABELS['capacitance']} in the "
                     "circuit form on the Self-check tab and apply it.")
#: Rows of the measured-against-predicted table: figure keys of report.numbers.
ROWS = ("nonlinearity_pct", "slope_v_per_s", "ramp_time_s")
SHUNT_ROW = "Shunt across the capacitor"
#: A predicted ramp that never reaches its upper level (the words of explain_text).
NO_RAMP = "no ramp (it would never reach the upper level)"


class WhatItTakes(QtWidgets.QGroupBox):
    """The requirements for a target, and a change tried.

    Signals
    -------
    prediction_changed(object, str)
        A :class:`~trueslope.core.whatif.ChangePrediction` to draw and the change's
        words, or (None, "") to remove the drawn prediction.
    requirements_shown(list)
        The requirement lines now shown (tests).
    """

    prediction_changed = QtCore.Signal(object, str)
    requirements_shown = QtCore.Signal(list)

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(TITLE, parent)
        self.analysis: Analysis | None = None
        self.prediction = None
        self.lines: list[str] = []
        self._reqs = JobRunner(self)
        self._reqs.finished.connect(self._on_requirements)
        self._reqs.failed.connect(lambda _r, exc: self._show_requirements_error(exc))
        self._changes = JobRunner(self)
        self._changes.finished.connect(self._on_prediction)
        self._changes.failed.connect(lambda _r, exc: self._prediction_failed(exc))
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(6, 4, 6, 6)
        row = QtWidgets.QHBoxLayout()
        target_label = QtWidgets.QLabel("Target nonlinearity")
        self.target = QtWidgets.QDoubleSpinBox()
        self.target.setRange(0.001, 50.0)
        self.target.setDecimals(3)
        self.target.setSingleStep(0.01)
        self.target.setSuffix(" %")
        self.target.setValue(DEFAULT_TARGET_PCT)
        self.target.setKeyboardTracking(False)
        self.target.setToolTip("Nonlinearity against the best-fit line the circuit should reach")
        target_label.setBuddy(self.target)
        self.target.valueChanged.connect(lambda _v: self._ask_requirements())
        row.addWidget(target_label)
        row.addWidget(self.target)
        row.addStretch(1)
        lay.addLayout(row)
        self.text = QtWidgets.QLabel("")
        self.text.setWordWrap(True)
        self.text.setTextFormat(QtCore.Qt.TextFormat.RichText)
        self.text.setTextInteractionFlags(QtCore.Qt.TextInteractionFlag.TextSelectableByMouse)
        lay.addWidget(self.text)
        lay.addWidget(self._build_change())
        self.set_analysis(None)

    def _build_change(self) -> QtWidgets.QGroupBox:
        box = QtWidgets.QGroupBox("Try a change")
        grid = QtWidgets.QGridLayout(box)
        grid.setContentsMargins(6, 4, 6, 6)
        self.kind = QtWidgets.QComboBox()
        for k in CHANGES:
            self.kind.addItem(k.label, k.key)
        self.kind.setSizeAdjustPolicy(
            QtWidgets.QComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon)
        self.kind.setMinimumContentsLength(24)
        self.kind.currentIndexChanged.connect(self._on_kind)
        self.value = QtWidgets.QLineEdit()
        self.value.setClearButtonEnabled(True)
        self.value.returnPressed.connect(self.predict)
        self.choice = QtWidgets.QComboBox()
        self.predict_button = QtWidgets.QPushButton("Predict")
        self.predict_button.setToolTip("Draw the ramp this change would give over the measured one")
        self.predict_button.clicked.connect(self.predict)
        self.clear_button = QtWidgets.QPushButton("Clear")
        self.clear_button.setToolTip("Remove the predicted ramp from the plots")
        self.clear_button.clicked.connect(self.clear_prediction)
        self.choice.setSizeAdjustPolicy(
            QtWidgets.QComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon)
        self.choice.setMinimumContentsLength(20)
        for b in (self.predict_button, self.clear_button):
            b.setSizePolicy(QtWidgets.QSizePolicy.Policy.Maximum,
                            QtWidgets.QSizePolicy.Policy.Fixed)
        given = QtWidgets.QHBoxLayout()
        given.addWidget(self.value, 1)
        given.addWidget(self.choice, 1)
        given.addStretch(0)  # holds the column open when the change needs no value
        grid.addWidget(self.kind, 0, 0, 1, 3)
        grid.addLayout(given, 1, 0)
        grid.addWidget(self.predict_button, 1, 1)
        grid.addWidget(self.clear_button, 1, 2)
        grid.setColumnStretch(0, 1)
        self.note = QtWidgets.QLabel("")
        self.note.setObjectName("muted")
        self.note.setWordWrap(True)
        grid.addWidget(self.note, 2, 0, 1, 3)
        self.table = QtWidgets.QTableWidget(len(ROWS) + 1, 2)
        self.table.setHorizontalHeaderLabels(["Measured", "Predicted"])
        self.table.setVerticalHeaderLabels([FIGURES[k].label for k in ROWS] + [SHUNT_ROW])
        self.table.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.NoSelection)
        hh = self.table.horizontalHeader()
        hh.setSectionResizeMode(QtWidgets.QHeaderView.ResizeMode.Stretch)
        self.table.verticalHeader().setDefaultSectionSize(22)
        self.table.setVerticalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.table.setHorizontalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.table.setFixedHeight(hh.sizeHint().height() + 22 * (len(ROWS) + 1) + 4)
        grid.addWidget(self.table, 3, 0, 1, 3)
        self._on_kind()
        return box

    @property
    def busy(self) -> bool:
        """True while the requirements or a prediction are being worked out."""
        return self._reqs.busy or self._changes.busy

    def shutdown(self) -> None:
        """Stop the workers (the window is closing)."""
        self._reqs.shutdown()
        self._changes.shutdown()

    # -- the measured ramp ---------------------------------------------------------------

    def set_analysis(self, analysis: Analysis | None) -> None:
        """Show the requirements of a new analysis; a drawn prediction is made again for it."""
        self.analysis = analysis
        self._fill_table(None)
        if analysis is None:
            self._set_text([], "Open a capture to see what a straighter ramp would take.")
            self._update_change_state()
            return
        self._set_text([], "Working out what it would take…", emit=False)
        self._ask_requirements()
        self._update_change_state()
        if self.prediction is not None:
            if self._capacitance() is None:
                self.clear_prediction()
            else:
                self.predict()

    @staticmethod
    def bowed(a: Analysis) -> bool:
        """A ramp with a bow to bring down: the terminal's rule (``what_it_takes_lines``)."""
        return a.diagnosis.signature != "linear" and a.figures.nonlinearity_pct > 0

    def _ask_requirements(self) -> None:
        a = self.analysis
        if a is None:
            return
        if not self.bowed(a):
            self._reqs.cancel()
            self._set_text([], STRAIGHT)
            return
        self._reqs.submit(RequirementsRequest(self._reqs.new_id(), a.figures, a.diagnosis,
                                              a.settings.context, self.target.value()),
                          run_requirements)

    def _on_requirements(self, _req, answer) -> None:
        _r, lines = answer
        self._set_text(lines)

    def _show_requirements_error(self, exc: BaseException) -> None:
        self._set_text([], f"Cannot say what it would take: {describe_error(exc)}")

    def _set_text(self, lines: list[str], note: str = "", emit: bool = True) -> None:
        self.lines = list(lines)
        if lines:
            first, rest = lines[0], lines[1:]
            items = "".join(f"<li style='margin-bottom:3px'>{html.escape(x)}</li>" for x in rest)
            self.text.setText(f"<p><b>{html.escape(first)}</b></p>"
                              f"<ul style='margin-left:-20px'>{items}</ul>")
        else:
            self.text.setText(f"<p>{html.escape(note)}</p>")
        if emit:
            self.requirements_shown.emit(self.lines)

    # -- a change ---------------------------------------------------------------------------

    def _capacitance(self) -> float | None:
        a = self.analysis
        ctx = a.settings.context if a is not None else None
        return ctx.effective_capacitance_f if ctx is not None else None

    def _on_kind(self, *_args) -> None:
        k = change_kind(self.kind.currentData())
        self.value.setVisible(k.unit not in (None, "choice"))
        self.value.setPlaceholderText(k.placeholder)
        self.value.setToolTip(f"Value in {k.unit} (SI prefixes: k, M, n, p…)" if k.unit else "")
        self.choice.setVisible(k.unit == "choice")
        if k.unit == "choice":
            self.choice.clear()
            for value, words in k.choices:
                self.choice.addItem(words, value)

    def _update_change_state(self) -> None:
        ready = self.analysis is not None and self._capacitance() is not None
        self.predict_button.setEnabled(ready)
        if self.analysis is not None and not ready:
            self.note.setText(NEEDS_CAPACITANCE)
        elif self.prediction is None:
            self.note.setText("")

    def predict(self) -> None:
        """Predict the ramp after the chosen change (in the background)."""
        a = self.analysis
        if a is None:
            return
        if self._capacitance() is None:
            self.note.setText(NEEDS_CAPACITANCE)
            return
        k = change_kind(self.kind.currentData())
        try:
            if k.unit == "choice":
                value = self.choice.currentData()
                label = k.short.format(value=value)
            elif k.unit is not None:
                value = parse_si(self.value.text(), k.unit)
                label = k.short.format(value=si(value, k.unit))
            else:
                value, label = None, k.short
            change = k.build(value)
        except TrueslopeError as exc:
            self.note.setText(f"{k.label}: {describe_error(exc)}")
            return
        self.note.setText(f"Predicting: {label}…")
        self._changes.submit(ChangeRequest(self._changes.new_id(), a.figures, a.diagnosis,
                                           a.settings.context, change, label), run_change)

    def _on_prediction(self, _req, answer: ChangeAnswer) -> None:
        self.prediction = answer.prediction
        p = answer.prediction
        from trueslope.core.report.prose import prediction_notes
        self.note.setText(f"Predicted: {answer.label}. {prediction_notes(p)}".strip())
        self._fill_table(p)
        self.prediction_changed.emit(p, answer.label)

    def _prediction_failed(self, exc: BaseException) -> None:
        self.note.setText(f"Not predicted: {describe_error(exc)}")
        self._drop_prediction()

    def clear_prediction(self) -> None:
        """Remove the predicted ramp (table and plots)."""
        self._changes.cancel()
        self._drop_prediction()
        self._update_change_state()

    def _drop_prediction(self) -> None:
        had = self.prediction is not None
        self.prediction = None
        self._fill_table(None)
        if had:
            self.prediction_changed.emit(None, "")

    def _fill_table(self, p) -> None:
        a = self.analysis
        fig = a.figures if a is not None else None
        for r, key in enumerate(ROWS):
            measured = figure_text(key, getattr(fig, key)) if fig is not None else ""
            if p is None:
                predicted = ""
            elif key == "ramp_time_s" and not finite(p.ramp_time_s):
                predicted = NO_RAMP
            else:
                predicted = figure_text(key, getattr(p, key))
            self._cell(r, 0, measured)
            self._cell(r, 1, predicted)
        r = len(ROWS)
        self._cell(r, 0, "" if p is None else _shunt(p.measured_shunt_ohm, "none found"))
        self._cell(r, 1, "" if p is None else _shunt(p.new_shunt_ohm, "none"))

    def _cell(self, r: int, c: int, text: str) -> None:
        it = QtWidgets.QTableWidgetItem(text)
        it.setToolTip(text)
        self.table.setItem(r, c, it)

    def predicted_text(self, key: str) -> str:
        """The predicted column's text of a figure (tests)."""
        it = self.table.item(ROWS.index(key), 1)
        return it.text() if it is not None else ""


def _shunt(ohm: float, absent: str) -> str:
    return si(ohm, "Ω") if finite(ohm) and not math.isinf(ohm) else absent
