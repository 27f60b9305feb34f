"""The circuit-context form: what the user knows of the circuit, parsed as they type.

It parses the fields with :func:`trueslope.core.circuit.parse_context` and
hands the window a :class:`~trueslope.core.circuit.CircuitContext` (or None);
the window re-measures in a worker. The values belong to one capture: the
window fills the form with the values kept for the file it opens (an empty
form for a file never given any), and copies another capture's values only
when asked to (:attr:`ContextForm.copy_requested`).

The form knows the context of the analysis on screen; while what is typed
differs from it (not yet measured, or not valid) the form is *stale* and says
so through :attr:`ContextForm.stale_changed`, until it is measured or reverted.
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


#: Text of the button that copies the previous capture's values into the form.
COPY_LAST = "Use the last capture's circuit"


class ContextForm(QtWidgets.QGroupBox):
    """What the user knows of the circuit; parsed as they type.

    Signals
    -------
    context_changed(object)
        A valid :class:`CircuitContext` (or None when the form is empty),
        sent a short while after the last keystroke, on Enter or on Apply.
    stale_changed(bool)
        The form now differs (True) or no longer differs (False) from the
        context of the analysis on screen.
    copy_requested()
        The user asked for the last capture's values.
    """

    context_changed = QtCore.Signal(object)
    stale_changed = QtCore.Signal(bool)
    copy_requested = QtCore.Signal()
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
            edit.returnPressed.connect(self.apply)
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
        buttons = QtWidgets.QHBoxLayout()
        self.copy_button = QtWidgets.QPushButton(COPY_LAST)
        self.copy_button.setEnabled(False)
        self.copy_button.clicked.connect(self.copy_requested)
        self.apply_button = QtWidgets.QPushButton("Apply")
        self.apply_button.setToolTip("Measure again with these values (Enter in a field does too)")
        self.apply_button.clicked.connect(self.apply)
        self.revert_button = QtWidgets.QPushButton("Revert")
        self.revert_button.setToolTip("Put back the values the shown self-check was measured with")
        self.revert_button.clicked.connect(self.revert)
        for b in (self.apply_button, self.revert_button):
            b.setEnabled(False)
        buttons.addWidget(self.copy_button)
        buttons.addStretch(1)
        buttons.addWidget(self.apply_button)
        buttons.addWidget(self.revert_button)
        grid.addLayout(buttons, grid.rowCount(), 0, 1, 4)
        self._timer = QtCore.QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(self.DEBOUNCE_MS)
        self._timer.timeout.connect(self.apply)
        # Nothing parsed yet: the first valid parse (None included) is news.
        self._last: CircuitContext | None | object = object()
        # The context of the analysis on screen, and the texts it was typed as.
        self._shown: CircuitContext | None = None
        self._shown_texts: dict[str, str | None] = {k: None for k in self.edits}
        self._stale = False

    def values(self) -> dict[str, str | None]:
        return {k: (e.text().strip() or None) for k, e in self.edits.items()}

    def set_values(self, texts: dict[str, str | None]) -> None:
        """Fill the form (nothing is measured; missing keys are left empty)."""
        self._timer.stop()
        for k, e in self.edits.items():
            e.setText(texts.get(k) or "")
        self.error.hide()
        self._last = self._parse()
        self._update_stale()

    def use_values(self, texts: dict[str, str | None]) -> None:
        """Fill the form with ``texts`` and measure with them."""
        self.set_values(texts)
        self._last = _INVALID
        self.apply()

    def set_copy_source(self, name: str | None) -> None:
        """Offer the values of the capture ``name`` (None: there is none to copy)."""
        self.copy_button.setEnabled(bool(name))
        self.copy_button.setToolTip(f"Copy the circuit values given for {name} into this form"
                                    if name else "No other capture has circuit values yet")

    def mark_shown(self, context: CircuitContext | None) -> None:
        """The analysis on screen was measured with ``context``."""
        self._shown = context
        if self._parse() == context:
            self._shown_texts = self.values()
        elif context is None:
            self._shown_texts = {k: None for k in self.edits}
        self._update_stale()

    @property
    def stale(self) -> bool:
        """True while the form differs from the context of the analysis on screen."""
        return self._stale

    def revert(self) -> None:
        """Put back the values the analysis on screen was measured with."""
        self.set_values(self._shown_texts)
        self._last = self._shown

    def _parse(self) -> CircuitContext | None | object:
        """The form's context, or a marker object when it does not parse."""
        from trueslope.core.circuit import parse_context
        from trueslope.core.errors import SettingsError

        try:
            return parse_context(**self.values())
        except SettingsError:
            return _INVALID

    def _update_stale(self) -> None:
        stale = self._parse() != self._shown
        self.apply_button.setEnabled(stale)
        self.revert_button.setEnabled(stale)
        if stale != self._stale:
            self._stale = stale
            self.stale_changed.emit(stale)

    def _schedule(self) -> None:
        self._update_stale()
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


#: What :meth:`ContextForm._parse` returns for a form that does not parse.
_INVALID = object()
