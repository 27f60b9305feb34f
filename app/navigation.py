"""Moving about the capture: cycle navigation, its single-key shortcuts, drag and drop.

:class:`NavigationMixin` is mixed into :class:`~trueslope.app.window.MainWindow`
before :class:`~trueslope.app.commands.CommandsMixin`, whose actions call
these methods. The shortcuts are single keys (``[`` ``]`` ``Z`` ``A`` ``F``), so
each one first checks that no text field has the keyboard: a key typed in a
field of the circuit form or in the trim box is text, never a command.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from PySide6 import QtGui, QtWidgets

if TYPE_CHECKING:
    from trueslope.core.results import Analysis

    from .panels import CycleTable
    from .plots import PlotArea

#: Widgets whose keys are text: a shortcut never acts while one has the focus.
TEXT_WIDGETS = (QtWidgets.QLineEdit, QtWidgets.QAbstractSpinBox, QtWidgets.QTextEdit,
                QtWidgets.QPlainTextEdit)


def typing_in_field() -> bool:
    """True while a text field (or an editable combo box) has the keyboard focus."""
    w = QtWidgets.QApplication.focusWidget()
    if isinstance(w, QtWidgets.QComboBox):
        return w.isEditable()
    return isinstance(w, TEXT_WIDGETS)


class NavigationMixin:
    """Cycle navigation and its guarded shortcuts, and drag and drop; mixed into ``MainWindow``."""

    analysis: Analysis | None
    plots: PlotArea
    cycles: CycleTable
    act_all_fits: QtGui.QAction

    # -- cycles ------------------------------------------------------------------------

    def show_cycle(self, i: int) -> None:
        """Show cycle ``i``: fit, band and residual move to it; the view follows if it is off screen."""
        if self.analysis is None:
            return
        before = self.plots.shown
        self.plots.show_cycle(i)
        self.cycles.select_cycle(self.plots.shown)
        lo, hi = self.plots.x_range()
        start, end = self.plots.cycle_span(self.plots.shown)
        if start < lo or end > hi:
            if hi - lo < 2.5 * (end - start):
                self.plots.zoom_to_cycle()
            else:
                shift = start - self.plots.cycle_span(before)[0]
                self.plots.trace_plot.setXRange(lo + shift, hi + shift, padding=0)

    def next_cycle(self) -> None:
        if not typing_in_field():
            self.show_cycle(self.plots.shown + 1)

    def previous_cycle(self) -> None:
        if not typing_in_field():
            self.show_cycle(self.plots.shown - 1)

    def zoom_to_cycle(self) -> None:
        if not typing_in_field():
            self.plots.zoom_to_cycle()

    def zoom_to_all(self) -> None:
        if not typing_in_field():
            self.plots.zoom_to_all()

    def _toggle_all_fits(self, on: bool) -> None:
        if typing_in_field():
            # The action has already flipped its check mark: put it back.
            self.act_all_fits.blockSignals(True)
            self.act_all_fits.setChecked(not on)
            self.act_all_fits.blockSignals(False)
            return
        self.plots.set_all_fits(on)

    # -- drag and drop ---------------------------------------------------------------------

    @staticmethod
    def _dropped_file(event: QtGui.QDropEvent | QtGui.QDragEnterEvent) -> str | None:
        md = event.mimeData()
        if md is None or not md.hasUrls():
            return None
        for url in md.urls():
            if url.isLocalFile() and Path(url.toLocalFile()).is_file():
                return url.toLocalFile()
        return None

    def dragEnterEvent(self, event: QtGui.QDragEnterEvent) -> None:  # noqa: N802
        if self._dropped_file(event):
            event.acceptProposedAction()
        else:
            event.ignore()

    def dragMoveEvent(self, event: QtGui.QDragMoveEvent) -> None:  # noqa: N802
        if self._dropped_file(event):  # type: ignore[arg-type]
            event.acceptProposedAction()

    def dropEvent(self, event: QtGui.QDropEvent) -> None:  # noqa: N802
        path = self._dropped_file(event)
        if path:
            event.acceptProposedAction()
            self.open_file(path)  # type: ignore[attr-defined]
