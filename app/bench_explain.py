"""The bench's "Explain" command: one cause for the chosen captures, in the background.

:class:`Explainer` takes the captures selected in the comparison table (every
measured one when none is selected), each with the circuit context it was measured
with (``BenchItem.settings.context``), and runs
:func:`~trueslope.app.explain_jobs.run_explain` on its own
:class:`~trueslope.app.jobs.JobRunner`: a new request supersedes the running one,
Cancel raises its flag and the late answer is dropped by its id. The answer goes to
the :class:`~trueslope.app.explain_panel.ExplainPanel`; a refusal (an
:class:`~trueslope.core.errors.AnalysisError`, e.g. a capacitance given for some
captures only) is shown there and in the window's banner.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from PySide6 import QtCore

from .banner import describe_error
from .explain_jobs import ExplainAnswer, ExplainRequest, run_explain
from .jobs import JobRunner

if TYPE_CHECKING:
    from .explain_panel import ExplainPanel

#: Shown when nothing chosen has a measurement to explain.
NOTHING_MEASURED = ("There is no measured capture to explain: add captures to the comparison "
                    "and let them be measured first.")


class Explainer(QtCore.QObject):
    """Runs "Explain" for a :class:`~trueslope.app.bench_view.BenchView`.

    Signals
    -------
    explained(object)
        An :class:`ExplainAnswer` was drawn.
    refused(str)
        The set could not be explained; the message shown.
    cancelled()
        The running explanation was cancelled.
    """

    explained = QtCore.Signal(object)
    refused = QtCore.Signal(str)
    cancelled = QtCore.Signal()

    def __init__(self, bench, panel: ExplainPanel) -> None:
        super().__init__(bench)
        self.bench = bench
        self.panel = panel
        self.answer: ExplainAnswer | None = None
        self.runner = JobRunner(self)
        self.runner.finished.connect(self._on_answer)
        self.runner.failed.connect(self._on_failed)
        self.runner.cancelled.connect(self._on_cancelled)
        panel.cancel_requested.connect(self.cancel)

    @property
    def busy(self) -> bool:
        """True while an explanation is on its way (False at once after Cancel)."""
        return self.panel.busy

    def explain(self) -> None:
        """Explain the selected captures, or every measured one when none is selected."""
        b = self.bench
        chosen = b.table.selected_paths() or [i.path for i in b.items]
        items = [it for it in (b.item(p) for p in chosen) if it is not None]
        good = [it for it in items if it.changed is None and it.measured is not None
                and it.measured.ok and it.measured.analysis is not None]
        left_out = tuple(it.path for it in items if it not in good)
        b.show_explanation()
        if not good:
            self._refuse(NOTHING_MEASURED)
            return
        req = ExplainRequest(self.runner.new_id(),
                             tuple(it.measured.analysis for it in good),
                             tuple(it.settings.context for it in good), left_out)
        n = len(good)
        self.panel.set_busy(True, f"Explaining {n} capture{'s' if n != 1 else ''}…")
        self.runner.submit(req, run_explain)

    def cancel(self) -> None:
        """Stop the running explanation; what was shown before stays."""
        if not self.runner.busy:
            return
        self.runner.cancel()
        self._show_cancelled()

    def shutdown(self) -> None:
        self.runner.shutdown()

    # -- answers (GUI thread) ----------------------------------------------------------

    def _on_answer(self, _req: ExplainRequest, answer: ExplainAnswer) -> None:
        self.answer = answer
        self.panel.show_answer(answer)
        self.explained.emit(answer)

    def _on_failed(self, _req: ExplainRequest, exc: BaseException) -> None:
        self._refuse(f"Not explained: {describe_error(exc)}")

    def _on_cancelled(self, _req: ExplainRequest) -> None:
        if self.panel.busy:  # cancelled by a newer request's start, or by the runner
            self._show_cancelled()

    def _show_cancelled(self) -> None:
        shown = " (the explanation shown is the previous one)" if self.panel.lines else ""
        self.panel.set_busy(False, f"Explaining was cancelled{shown}")
        self.cancelled.emit()

    def _refuse(self, text: str) -> None:
        self.panel.show_message(text)
        self.bench.message.emit(text, "error")
        self.refused.emit(text)
