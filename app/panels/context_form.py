"""The circuit-context form: what the user knows of the circuit, parsed as they type.

It parses the fields with :func:`trueslope.core.circuit.parse_context` and
hands the window a :class:`~trueslope.core.circuit.CircuitContext` (or None);
the window re-measures in a worker.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from PySide6 import QtCore, QtWidgets

from ..fields import FIELD_LABELS, settings_message

if TYPE_CHECKING:
    from trueslope.core.circuit import CircuitContext


#: The context form's fields: (keyword of parse_context, placeholder, help); each
#: field's label is :data:`~trueslope.app.fields.FIELD_LABELS` of its keyword.
CONTEXT_FIELDS: tuple[tuple[str, str, str], ...] = (
    ("capacitance", "e.g. 47n", "Capacitance of the capacitor the current charges, farads "
     "(47n = 47 nF)"),
    ("current", "e.g. 100u", "The constant current into the capacitor, amperes; "
     "or give the set resistor and reference below instead"),
    ("set_resistor", "e.g. 10k", "Resistor that sets the current source, ohms"),
    ("reference", "e.g. 1.0", "Voltage across the set resistor, volts"),
    ("probe", "e.g. 10M,12p", "Resistance and capacitance the probe adds, "
     "as R,C (10M,12p = 10 MΩ with 12 pF)"),
    ("tolerance", "e.g. 10%", "Tolerance of the parts, for the self-check's verdicts"),
)


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
        for i, (key, placeholder, tip) in enumerate(CONTEXT_FIELDS):
            edit = QtWidgets.QLineEdit()
            edit.setPlaceholderText(placeholder)
            edit.setToolTip(tip)
            edit.setClearButtonEnabled(True)
            edit.textEdited.connect(self._schedule)
            name = QtWidgets.QLabel(FIELD_LABELS[key])
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
        # Nothing parsed yet: the first valid parse (None included) is news.
        self._last: CircuitContext | None | object = object()

    def values(self) -> dict[str, str | None]:
        return {k: (e.text().strip() or None) for k, e in self.edits.items()}

    def _schedule(self) -> None:
        self._timer.start()

    def apply(self) -> None:
        """Parse the form now; emit the context if it is valid and changed."""
        from trueslope.core.circuit import parse_context
        from trueslope.core.errors import SettingsError

        self._timer.stop()
        try:
            ctx = parse_context(**self.values())
        except SettingsError as exc:
            self.error.setText(settings_message(exc))
            self.error.show()
            return
        self.error.hide()
        if ctx != self._last:
            self._last = ctx
            self.context_changed.emit(ctx)
