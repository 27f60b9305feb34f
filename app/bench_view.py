"""The bench comparison: several captures side by side, measured in the background.

:class:`BenchView` keeps the captures (:class:`BenchItem`: path, settings, typed
group, answer), the reference, the group patterns and the limits file. Every change
builds a :class:`~trueslope.app.bench_jobs.BenchRequest` for its own
:class:`~trueslope.app.jobs.JobRunner`: the worker measures only what has no answer
yet and compares everything; a newer request cancels the older, whose late answer is
dropped. A capture whose file changed since its session was saved is shown as such
and never measured, until the user asks for the file as it is now.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path

from PySide6 import QtCore, QtGui, QtWidgets

from trueslope.core.compare import Comparison, MeasuredFile
from trueslope.core.compare_cli import capture_files
from trueslope.core.limits import Limits
from trueslope.core.session import SessionCapture
from trueslope.core.settings import Settings

from .bench_explain import Explainer
from .bench_jobs import CHANGE_WORDS, BenchAnswer, BenchInput, BenchRequest, run_bench
from .bench_table import CaptureTable, GroupTable, OverlayPlot, content_height
from .explain_panel import ExplainPanel
from .jobs import JobRunner

#: The Explain button's text and tip (the menu entry says the same at more length).
EXPLAIN_TEXT = "Explain"
EXPLAIN_TIP = ("Find the one cause that explains the selected captures (every measured one "
               "when none is selected), with circuit values shared across them")
#: The view's hint while it holds no capture.
EMPTY_HINT = ("Add capture files or a folder (or drop them here), or follow a folder to take "
              "each new export as it is written.")


@dataclass
class BenchItem:
    """One capture of the bench (GUI thread only)."""

    path: str
    settings: Settings
    sample_interval_s: float | None = None
    group: str | None = None
    measured: MeasuredFile | None = None
    size_bytes: int | None = None
    changed: str | None = None  # why its file differs from its session's
    saved: SessionCapture | None = None  # as its session held it

    def state(self) -> str:
        if self.changed is not None:
            return f"changed on disk: {CHANGE_WORDS.get(self.changed, self.changed)}"
        if self.measured is None:
            return "waiting to be measured"
        return "measured" if self.measured.ok else "not measured"


class BenchView(QtWidgets.QWidget):
    """The comparison tab.

    Signals
    -------
    updated(object)
        A comparison was drawn (the :class:`Comparison`, or None when the bench is empty).
    message(str, str)
        Text for the window's banner and its kind (``"error"`` or ``"info"``).
    capture_chosen(object)
        The :class:`BenchItem` the user wants to see in the single-capture view.
    """

    updated = QtCore.Signal(object)
    message = QtCore.Signal(str, str)
    capture_chosen = QtCore.Signal(object)

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        self.items: list[BenchItem] = []
        self.reference: str | None = None
        self.patterns: tuple[tuple[str, str], ...] = ()
        self.limits_path: str | None = None
        self.limits: Limits | None = None
        self.comparison: Comparison | None = None
        self.default_settings = Settings()
        self.sample_interval_s: float | None = None
        self.runner = JobRunner(self)
        self.runner.finished.connect(self._on_answer)
        self.runner.failed.connect(self._on_failed)
        self.runner.cancelled.connect(self._on_cancelled)
        self.runner.progress.connect(lambda _r, f: self.progress.setValue(round(1000 * f)))
        self.runner.busy_changed.connect(self._on_busy)
        self.setAcceptDrops(True)
        self._build()

    # -- construction ----------------------------------------------------------------

    def _button(self, text: str, tip: str, slot) -> QtWidgets.QToolButton:
        b = QtWidgets.QToolButton()
        b.setText(text)
        b.setToolTip(tip)
        b.setToolButtonStyle(QtCore.Qt.ToolButtonStyle.ToolButtonTextOnly)
        b.clicked.connect(slot)
        self._bar.addWidget(b)
        return b

    def _build(self) -> None:
        self._bar = QtWidgets.QHBoxLayout()
        self._bar.setSpacing(4)
        self.add_button = self._button("Add files…", "Add capture files to the comparison",
                                       self.add_dialog)
        self._button("Add folder…", "Add every capture file of a folder", self.add_folder_dialog)
        self.remove_button = self._button("Remove", "Remove the selected captures",
                                          self.remove_selected)
        self._button("Make reference", "Compare every capture with the selected one",
                     self.reference_selected)
        self._button("Group by pattern…", "Put captures in groups by their file names",
                     self.patterns_dialog)
        self.follow_button = self._button("Follow folder…", "Take each new export written "
                                          "into a folder as soon as it is complete", lambda: None)
        self.explain_button = self._button(EXPLAIN_TEXT, EXPLAIN_TIP, lambda: self.explain())
        self._bar.addStretch(1)
        self.limits_label = QtWidgets.QLabel("No limits loaded")
        self.limits_label.setObjectName("limitsLabel")
        self._bar.addWidget(self.limits_label)
        self.progress = QtWidgets.QProgressBar()
        self.progress.setRange(0, 1000)
        self.progress.setFixedWidth(160)
        self.progress.setFormat("measuring %p %")
        self.cancel_button = QtWidgets.QPushButton("Cancel")
        self.cancel_button.clicked.connect(self.cancel)
        self._bar.addWidget(self.progress)
        self._bar.addWidget(self.cancel_button)
        self.progress.hide()
        self.cancel_button.hide()

        self.hint = QtWidgets.QLabel(EMPTY_HINT)
        self.hint.setWordWrap(True)
        self.hint.setObjectName("benchHint")
        self.table = CaptureTable()
        self.table.group_typed.connect(self.set_group)
        self.table.capture_chosen.connect(self._choose)
        self.overlay = OverlayPlot()
        self.explain_panel = ExplainPanel()
        self.explainer = Explainer(self, self.explain_panel)
        self.lower = QtWidgets.QTabWidget()
        self.lower.setObjectName("benchLower")
        self.lower.addTab(self.overlay, "Residuals overlaid")
        self.lower.addTab(self.explain_panel, "Explanation (one cause for the set)")
        self.groups = GroupTable()
        groups_box = QtWidgets.QGroupBox("Group statistics")
        gl = QtWidgets.QVBoxLayout(groups_box)
        gl.setContentsMargins(4, 4, 4, 4)
        gl.addWidget(self.groups)
        self.split = QtWidgets.QSplitter(QtCore.Qt.Orientation.Vertical)
        for w, stretch in ((self.table, 3), (groups_box, 2), (self.lower, 5)):
            self.split.addWidget(w)
            self.split.setStretchFactor(self.split.count() - 1, stretch)
        self.split.setChildrenCollapsible(False)
        self._sized_by_user = False
        self.split.splitterMoved.connect(lambda *_: setattr(self, "_sized_by_user", True))
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.addLayout(self._bar)
        lay.addWidget(self.hint)
        lay.addWidget(self.split, 1)

    # -- captures ------------------------------------------------------------------------

    def item(self, path: str) -> BenchItem | None:
        want = os.path.abspath(path)
        return next((i for i in self.items if i.path == want), None)

    def add_files(self, paths: list[str], settings: Settings | None = None,
                  sample_interval_s: float | None = None, group: str | None = None) -> int:
        """Add captures (files, or folders' capture files); a capture already on the bench is
        measured again with ``settings`` when given. Returns how many were added."""
        added = 0
        for p in capture_files([str(p) for p in paths]):
            path = os.path.abspath(p)
            old = self.item(path)
            if old is not None:
                if settings is not None:
                    old.settings, old.measured, old.changed = settings, None, None
                continue
            self.items.append(BenchItem(path, settings or self.default_settings,
                                        sample_interval_s if sample_interval_s is not None
                                        else self.sample_interval_s, group))
            added += 1
        self.refresh()
        return added

    def remove_selected(self) -> None:
        gone = set(self.table.selected_paths())
        if gone:
            self.items = [i for i in self.items if i.path not in gone]
            if self.reference in gone:
                self.reference = None
            self.refresh()

    def reference_selected(self) -> None:
        paths = self.table.selected_paths()
        if paths:
            self.set_reference(paths[0])

    def set_reference(self, path: str | None) -> None:
        self.reference = os.path.abspath(path) if path else None
        self.refresh()

    def set_group(self, path: str, group: str) -> None:
        it = self.item(path)
        if it is not None and (it.group or "") != group:
            it.group = group or None
            self.refresh()

    def set_patterns(self, patterns: list[tuple[str, str]]) -> None:
        self.patterns = tuple(patterns)
        self.refresh()

    def set_limits(self, path: str | None) -> None:
        self.limits_path = os.path.abspath(path) if path else None
        self.limits = None
        self.refresh()

    def measure_as_now(self, paths: list[str]) -> None:
        """Accept the files as they are now: a changed capture is measured again."""
        for p in paths:
            it = self.item(p)
            if it is not None:
                it.changed, it.measured = None, None
        self.refresh()

    def clear(self) -> None:
        self.items, self.reference, self.patterns = [], None, ()
        self.limits_path, self.limits = None, None
        self.refresh()

    # -- measuring -----------------------------------------------------------------------

    @property
    def busy(self) -> bool:
        return self.runner.busy

    def refresh(self) -> None:
        """Show the bench as it stands and ask the worker for what is missing."""
        self._draw()
        if not self.items and not self.limits_path:
            self.runner.cancel()
            self.comparison = None
            self._draw()
            self.updated.emit(None)
            return
        req = BenchRequest(self.runner.new_id(), tuple(
            BenchInput(i.path, i.settings, i.sample_interval_s, i.group, i.measured, i.changed)
            for i in self.items), self.reference, self.patterns, self.limits_path)
        self.runner.submit(req, run_bench)

    def cancel(self) -> None:
        self.runner.cancel()

    def explain(self) -> None:
        """One cause for the selected captures (every measured one when none is selected)."""
        self.explainer.explain()

    def show_explanation(self) -> None:
        self.lower.setCurrentWidget(self.explain_panel)

    def _on_answer(self, req: BenchRequest, ans: BenchAnswer) -> None:
        for it in self.items:
            m = ans.measured.get(it.path)
            if m is not None and it.changed is None:
                if it.measured is None:
                    it.size_bytes = ans.sizes.get(it.path)
                it.measured = MeasuredFile(m.path, m.sha256, m.analysis, m.error_type,
                                           m.error_message)
        self.comparison = ans.comparison
        self.limits = ans.limits
        if ans.limits_error:
            self.message.emit(f"The limits were not applied: {ans.limits_error}", "error")
        elif ans.reference_error:
            self.message.emit(f"Reference: {ans.reference_error}; the first capture measured "
                              "is the reference instead.", "info")
        self._draw()
        self.updated.emit(self.comparison)

    def _on_failed(self, _req: BenchRequest, exc: BaseException) -> None:
        from .banner import describe_error
        self.message.emit(f"The comparison could not be made: {describe_error(exc)}", "error")

    def _on_cancelled(self, _req: BenchRequest) -> None:
        waiting = sum(i.measured is None and i.changed is None for i in self.items)
        self.message.emit(f"Measuring was cancelled; {waiting} capture"
                          f"{'s' if waiting != 1 else ''} still waiting (any change to the "
                          "bench measures them).", "info")
        self._draw()

    def _on_busy(self, busy: bool) -> None:
        self.progress.setVisible(busy)
        self.cancel_button.setVisible(busy)
        if busy:
            self.progress.setValue(0)

    # -- drawing -------------------------------------------------------------------------

    def _draw(self) -> None:
        c = self.comparison
        rows = [(i.path, i.group, i.state()) for i in self.items]
        self.table.fill(rows, c)
        order = [i.path for i in self.items]
        self.overlay.fill(c, order)
        self.groups.fill(c)
        self.hint.setVisible(not self.items)
        self._fit_heights()
        if self.limits is not None:
            name = self.limits.name or Path(self.limits.source).name
            verdict = c.verdict if c is not None and c.verdict else "—"
            self.limits_label.setText(f"Limits: {name} · overall {verdict}")
        elif self.limits_path:
            self.limits_label.setText(f"Limits: {Path(self.limits_path).name}")
        else:
            self.limits_label.setText("No limits loaded")

    def _fit_heights(self) -> None:
        """The tables as tall as their rows (up to a dozen captures and six groups), the
        overlay the rest, until the user moves a divider."""
        if self._sized_by_user:
            return
        total = max(self.split.height(), 600)
        top = content_height(self.table, 12)
        mid = content_height(self.groups, 6) + 28  # the group box's title and margins
        self.split.setSizes([top, mid, max(total - top - mid, 320)])

    def resizeEvent(self, event: QtGui.QResizeEvent) -> None:  # noqa: N802
        super().resizeEvent(event)
        self._fit_heights()

    def _choose(self, path: str) -> None:
        it = self.item(path)
        if it is not None:
            self.capture_chosen.emit(it)

    # -- dialogs -------------------------------------------------------------------------

    def add_dialog(self) -> None:
        from .commands import CAPTURE_FILTER
        paths, _ = QtWidgets.QFileDialog.getOpenFileNames(self, "Add captures to the comparison",
                                                          "", CAPTURE_FILTER)
        if paths:
            self.add_files(paths)

    def add_folder_dialog(self) -> None:
        folder = QtWidgets.QFileDialog.getExistingDirectory(self, "Add a folder of captures")
        if folder:
            self.add_files([folder])

    def patterns_dialog(self) -> None:
        text = "\n".join(f"{g} = {p}" for g, p in self.patterns)
        got, ok = QtWidgets.QInputDialog.getMultiLineText(
            self, "Group by pattern", "One group a line, as NAME = PATTERN (e.g. film = "
            "*film*).\nA group typed in the table wins over a pattern.", text)
        if ok:
            pats, bad = parse_patterns(got)
            if bad:
                self.message.emit(f"Not a group line: {bad!r} (write NAME = PATTERN)", "error")
                return
            self.set_patterns(pats)

    # -- drag and drop ---------------------------------------------------------------------

    @staticmethod
    def _dropped(event) -> list[str]:
        md = event.mimeData()
        if md is None or not md.hasUrls():
            return []
        return [u.toLocalFile() for u in md.urls()
                if u.isLocalFile() and os.path.exists(u.toLocalFile())]

    def dragEnterEvent(self, event: QtGui.QDragEnterEvent) -> None:  # noqa: N802
        if self._dropped(event):
            event.acceptProposedAction()
        else:
            event.ignore()

    def dragMoveEvent(self, event: QtGui.QDragMoveEvent) -> None:  # noqa: N802
        if self._dropped(event):
            event.acceptProposedAction()

    def dropEvent(self, event: QtGui.QDropEvent) -> None:  # noqa: N802
        paths = self._dropped(event)
        if paths:
            event.acceptProposedAction()
            self.add_files(paths)


def parse_patterns(text: str) -> tuple[list[tuple[str, str]], str | None]:
    """``NAME = PATTERN`` lines -> [(name, pattern)], and the first line that is not one."""
    out = []
    for line in text.splitlines():
        if not line.strip():
            continue
        name, sep, pattern = line.partition("=")
        if not sep or not name.strip() or not pattern.strip():
            return out, line.strip()
        out.append((name.strip(), pattern.strip()))
    return out, None

