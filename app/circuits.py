"""The circuit values of the open capture: the form shows that capture's own values,
measured values are kept for it, and the last capture's are copied only when asked.

:class:`CircuitMixin` is mixed into :class:`~trueslope.app.window.MainWindow`;
the values themselves live in :class:`~trueslope.app.store.CircuitMemory`.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from PySide6 import QtWidgets

    from trueslope.core.results import Analysis

    from .panels import FindingsPanel
    from .store import CircuitMemory


class CircuitMixin:
    """Keeps the circuit form and the open capture together; mixed into ``MainWindow``."""

    circuits: CircuitMemory
    findings: FindingsPanel
    tabs: QtWidgets.QTabWidget
    path: str | None

    def _on_stale(self, stale: bool) -> None:
        self.tabs.setTabText(self.tabs.indexOf(self.findings.check_page),
                             "Self-check (out of date)" if stale else "Self-check")

    def _copy_last_circuit(self) -> None:
        prev = self.circuits.previous
        if prev is not None:
            self.findings.form.use_values(prev[1])
            self._status(f"Circuit values copied from {prev[0]}")  # type: ignore[attr-defined]

    def _commit_circuit(self, a: Analysis, new_capture: bool) -> None:
        """The form shows the open capture's own circuit values; measured ones are kept."""
        form = self.findings.form
        path = self.path or str(a.source)
        if new_capture:
            self.circuits.switch_to(path)
            form.set_values(self.circuits.texts_for(path))
            prev = self.circuits.previous
            form.set_copy_source(prev[0] if prev is not None else None)
        form.mark_shown(a.settings.context)
        if not form.stale:
            self.circuits.remember(path, form.values())
