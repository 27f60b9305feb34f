"""The window's bench commands: the comparison tab, limits, following a folder, reports
and sessions.

:class:`BenchMixin` is mixed into :class:`~trueslope.app.window.MainWindow`. It puts
the single-capture view and the :class:`~trueslope.app.bench_view.BenchView` on two
tabs and adds its commands to the File menu. Every file task (writing a report,
saving or opening a session) runs as a :class:`~trueslope.app.bench_jobs.TaskRequest`
on its own :class:`~trueslope.app.jobs.JobRunner`; errors reach the banner.
"""

from __future__ import annotations

import datetime as _dt
from pathlib import Path
from typing import Any, Callable

from PySide6 import QtWidgets

from trueslope.core.session import GroupSpec, Session, SessionCapture

from .banner import describe_error
from .bench_jobs import TaskRequest, run_task
from .bench_view import BenchItem, BenchView
from .follow import FolderFollower
from .jobs import JobRunner, OpenRequest, run_open
from .report_dialog import ReportDialog, ReportFields, build_report

SESSION_FILTER = "trueslope sessions (*.trueslope.json *.json);;All files (*)"
LIMITS_FILTER = "Limits (*.toml);;All files (*)"


def session_entry(it: BenchItem) -> SessionCapture | None:
    """A bench capture as the session keeps it (worker thread: it may read the file).

    A changed capture keeps the entry it was loaded with, so it stays flagged; a measured
    one is kept with the checksum of the bytes that were measured."""
    from trueslope.core.session import capture_entry
    if it.changed is not None:
        return it.saved
    s = it.settings
    if it.measured is not None and it.measured.sha256 and it.size_bytes is not None:
        return SessionCapture(path=it.path, sha256=it.measured.sha256, size_bytes=it.size_bytes,
                              channel=s.channel, sync_channel=s.sync_channel,
                              sample_interval_s=it.sample_interval_s,
                              trim_fraction=s.trim_fraction, window_s=s.window_s,
                              excluded_cycles=tuple(s.excluded_cycles),
                              phase_bins=s.phase_bins, context=s.context, group=it.group)
    try:
        return capture_entry(it.path, s, group=it.group, sample_interval_s=it.sample_interval_s)
    except OSError:
        return None


class BenchMixin:
    """The comparison tab and its commands; mixed into ``MainWindow``."""

    # -- construction ----------------------------------------------------------------

    def _build_bench(self, single: QtWidgets.QWidget) -> QtWidgets.QWidget:
        """The two views on tabs: the single capture (``single``) and the comparison."""
        self.bench = BenchView()
        self.bench.sample_interval_s = self.sample_interval_s
        self.follower = FolderFollower(self)
        self.tasks = _task_runner(self)
        self.report_fields = ReportFields()
        self.views = QtWidgets.QTabWidget()
        self.views.setObjectName("views")
        self.views.addTab(single, "Single capture")
        self.views.addTab(self.bench, "Bench comparison")
        # The single capture's toolbar (channel, trim, cycles) means nothing to the comparison.
        self.views.currentChanged.connect(lambda i: self._single_toolbar_visible(i == 0))
        self.bench.updated.connect(self._on_bench_updated)
        self.bench.message.connect(lambda text, kind: self.banner.show_message(text, kind))
        self.bench.capture_chosen.connect(self.show_bench_capture)
        self.bench.follow_button.clicked.connect(self.toggle_follow)
        self.follower.file_ready.connect(self._on_followed_file)
        self.follower.failed.connect(lambda text: self._show_error(text))
        return self.views

    def _build_bench_actions(self) -> None:
        self.act_add_current = self._action(
            "Add this capture to the &comparison", self.add_current_to_bench, (),
            "Compare the open capture, with its channel, window and cycles left out")
        self.act_limits = self._action("Load &limits…", self.load_limits_dialog, (),
                                       "Judge every capture against a limits file (TOML)")
        self.act_follow = self._action("&Follow a folder…", self.toggle_follow, (),
                                       "Take each new export written into a folder", True)
        self.act_report = self._action("Write &report…", self.report_dialog, (),
                                       "A report of the capture or of the comparison, "
                                       "HTML or PDF")
        self.act_save_session = self._action("&Save session…", self.save_session_dialog,
                                             "Ctrl+S", "Save the bench's captures, how each "
                                             "was measured, groups, reference and limits")
        self.act_open_session = self._action("Open &session…", self.open_session_dialog, (),
                                             "Open a saved bench session")
        self.act_as_now = self._action("Measure changed files as they are &now",
                                       self.measure_changed_as_now, (),
                                       "Accept the selected changed captures as they are now")
        self.act_explain = self._action(
            "&Explain the compared captures (one cause)", self.explain_bench, (),
            "Find the one cause that explains the selected captures of the comparison (every "
            "measured one when none is selected), with circuit values shared across them")
        self._needs_analysis.append(self.act_add_current)

    def _add_bench_menu_items(self, file_menu: QtWidgets.QMenu, before) -> None:
        for a in (self.act_add_current, self.act_follow, self.act_limits, None,
                  self.act_open_session, self.act_save_session, self.act_as_now, None,
                  self.act_report, None):
            if a is None:
                file_menu.insertSeparator(before)
            else:
                file_menu.insertAction(before, a)

    def _add_bench_analysis_items(self, menu: QtWidgets.QMenu) -> None:
        menu.addSeparator()
        menu.addAction(self.act_explain)

    def _shutdown_bench(self) -> None:
        self.follower.shutdown()
        self.bench.runner.shutdown()
        self.bench.explainer.shutdown()
        self.tasks.shutdown()

    def _single_toolbar_visible(self, on: bool) -> None:
        bar = self.findChild(QtWidgets.QToolBar, "main_toolbar")
        if bar is not None:
            bar.setVisible(on)

    # -- the comparison ----------------------------------------------------------------

    def show_bench(self) -> None:
        self.views.setCurrentWidget(self.bench)

    def explain_bench(self) -> None:
        """Show the comparison and explain its chosen captures (in the background)."""
        self.show_bench()
        self.bench.explain()

    def add_current_to_bench(self) -> None:
        if self.path is None or self.analysis is None:
            return
        self.bench.add_files([self.path], settings=self.settings,
                             sample_interval_s=self.sample_interval_s)
        self._status(f"{Path(self.path).name} joins the comparison")

    def show_bench_capture(self, it: BenchItem) -> None:
        """Open a bench capture in the single-capture view, measured as on the bench."""
        self.views.setCurrentIndex(0)
        req = OpenRequest(self.runner.new_id(), it.path, it.settings, it.sample_interval_s)
        self._status(f"Reading {Path(it.path).name}…")
        self.runner.submit(req, run_open)

    def _on_bench_updated(self, c) -> None:
        if c is None:
            return
        bad = sum(e.status != "ok" for e in c.entries)
        self._status(f"Comparison of {len(c.entries)} captures"
                     + (f", {bad} not measured" if bad else "")
                     + (f"; limits: {c.verdict}" if c.verdict else ""))

    def load_limits_dialog(self) -> None:
        path, _ = QtWidgets.QFileDialog.getOpenFileName(self, "Load limits",
                                                        self.store.last_folder, LIMITS_FILTER)
        if path:
            self.bench.set_limits(path)
            self.show_bench()

    def measure_changed_as_now(self) -> None:
        chosen = self.bench.table.selected_paths() or [i.path for i in self.bench.items
                                                       if i.changed is not None]
        self.bench.measure_as_now(chosen)

    # -- following a folder -------------------------------------------------------------

    def toggle_follow(self) -> None:
        if self.follower.active:
            self.stop_following()
            return
        folder = QtWidgets.QFileDialog.getExistingDirectory(self, "Follow a folder",
                                                            self.store.last_folder)
        if folder:
            self.follow(folder)
        else:
            self.act_follow.setChecked(False)

    def follow(self, folder: str) -> None:
        self.follower.start(folder)
        self.act_follow.setChecked(True)
        self.bench.follow_button.setText(f"Stop following {Path(folder).name}")
        self.show_bench()
        self._status(f"Following {folder}: each new export joins the comparison once complete")

    def stop_following(self) -> None:
        self.follower.stop()
        self.act_follow.setChecked(False)
        self.bench.follow_button.setText("Follow folder…")
        self._status("No folder followed")

    def _on_followed_file(self, path: str) -> None:
        self.bench.add_files([path])
        self._status(f"{Path(path).name} written into the followed folder: measuring")

    # -- reports ---------------------------------------------------------------------------

    def report_dialog(self) -> None:
        dlg = ReportDialog(self, self.report_fields, has_capture=self.analysis is not None,
                           has_comparison=self.bench.comparison is not None,
                           comparison_first=self.views.currentWidget() is self.bench)
        if dlg.exec() != QtWidgets.QDialog.DialogCode.Accepted:
            return
        self.report_fields = dlg.fields()
        scope = dlg.scope()
        stem = Path(self.path).stem if scope == "capture" and self.path else "comparison"
        path, _ = QtWidgets.QFileDialog.getSaveFileName(
            self, "Write the report", str(Path(self.store.last_folder) / f"{stem}_report.html"),
            "HTML report (*.html);;PDF report (*.pdf)")
        if path:
            self.write_report(path, scope, force=True)  # the dialog asked before replacing

    def write_report(self, path: str, scope: str, force: bool = False) -> None:
        """Write the report of the ``"capture"`` or the ``"comparison"`` to ``path``
        (.pdf, else HTML) in the background."""
        fields = self.report_fields
        when = _dt.datetime.now().astimezone()
        if scope == "capture":
            if self.analysis is None:
                return
            analyses, comparison, shas = [self.analysis], None, None
        else:
            c = self.bench.comparison
            good = [i for i in self.bench.items if i.measured is not None and i.measured.ok]
            if c is None or not good:
                self._show_error("The comparison holds no measured capture to report.")
                return
            analyses = [i.measured.analysis for i in good]
            comparison = c
            shas = {i.path: i.measured.sha256 for i in good if i.measured.sha256}
        limits, limits_path = self.bench.limits, self.bench.limits_path
        self._run_task(f"Writing {Path(path).name}", lambda p, c: build_report(
            path, analyses, fields, when, limits=limits, limits_path=limits_path,
            comparison=comparison, files_sha256=shas, force=force), self._task_done)

    # -- sessions --------------------------------------------------------------------------

    def save_session_dialog(self) -> None:
        path, _ = QtWidgets.QFileDialog.getSaveFileName(
            self, "Save the bench session", str(Path(self.store.last_folder) / "bench.json"),
            SESSION_FILTER)
        if path:
            self.save_session(path, force=True)

    def save_session(self, path: str, force: bool = False) -> None:
        """Save the bench as a session file (in the background)."""
        from trueslope.core.session import save_session
        items = list(self.bench.items)
        groups: dict[str, list[str]] = {}
        for name, pattern in self.bench.patterns:
            groups.setdefault(name, []).append(pattern)
        f = self.report_fields
        base = dict(reference=self.bench.reference, limits_path=self.bench.limits_path,
                    groups=tuple(GroupSpec(n, tuple(p)) for n, p in groups.items()),
                    title=f.title or None, operator=f.operator or None,
                    unit_serial=f.unit_serial or None, notes=f.notes or None)

        def work(_p, _c) -> str:
            caps = [session_entry(i) for i in items]
            kept = tuple(c for c in caps if c is not None)
            ref = base["reference"] if base["reference"] in {c.path for c in kept} else None
            save_session(path, Session(captures=kept, **{**base, "reference": ref}),
                         force=force)
            missing = len(caps) - len(kept)
            return (f"Saved {Path(path).name}" + (f" ({missing} unreadable capture"
                                                 f"{'s' if missing != 1 else ''} left out)"
                                                 if missing else ""))
        self._run_task(f"Saving {Path(path).name}", work, self._task_done)

    def open_session_dialog(self) -> None:
        path, _ = QtWidgets.QFileDialog.getOpenFileName(self, "Open a bench session",
                                                        self.store.last_folder, SESSION_FILTER)
        if path:
            self.open_session(path)

    def open_session(self, path: str) -> None:
        """Read a session and its files' state in the background, then put it on the bench."""
        from trueslope.core.session import load_session

        def work(_p, _c):
            s = load_session(path)
            return s, {c.path: c.reason for c in s.changed_files()}
        self._run_task(f"Opening {Path(path).name}", work, self._session_loaded)

    def _session_loaded(self, answer: tuple[Session, dict[str, str]]) -> None:
        s, changed = answer
        b = self.bench
        b.items = [BenchItem(c.path, c.settings, c.sample_interval_s, c.group,
                             changed=changed.get(c.path), saved=c) for c in s.captures]
        b.reference = s.reference
        b.patterns = tuple((g.name, p) for g in s.groups for p in g.patterns)
        b.limits_path, b.limits = s.limits_path, None
        self.report_fields = ReportFields(s.title or "", s.operator or "", s.unit_serial or "",
                                          s.notes or "")
        self.show_bench()
        b.refresh()
        if changed:
            names = ", ".join(Path(p).name for p in changed)
            self.banner.show_message(
                f"Changed on disk since the session was saved, so not measured: {names}. "
                "Choose File > Measure changed files as they are now to accept them.", "info")

    # -- file tasks ------------------------------------------------------------------------

    def _run_task(self, label: str, work: Callable[..., Any],
                  done: Callable[[Any], None]) -> None:
        self._status(f"{label}…")
        self.tasks.done_with = done
        self.tasks.submit(TaskRequest(self.tasks.new_id(), label, work), run_task)

    def _task_done(self, text: str) -> None:
        self._status(text)
        self.task_finished.emit(text)

    def _on_task_failed(self, req: TaskRequest, exc: BaseException) -> None:
        self._show_error(f"{req.label} failed: {describe_error(exc)}")


def _task_runner(window) -> JobRunner:
    """A runner for file tasks that hands each answer to the callback of its task."""
    runner = JobRunner(window)
    runner.done_with = None  # type: ignore[attr-defined]
    runner.finished.connect(lambda _r, out: runner.done_with and runner.done_with(out))
    runner.failed.connect(window._on_task_failed)
    return runner
