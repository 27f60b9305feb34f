"""The bench window: open a capture, see the fit, the residual and the findings at a glance.

Layout (our own): a message banner across the top; on the left the trace
view over the residual strip, with the cycle list beneath; on the right the
figures panel over a tabbed pane: the diagnosis, the self-check (the
circuit-context form over it), and the capture's metadata and import warnings.

The circuit values belong to the capture they were given for
(:class:`~trueslope.app.store.CircuitMemory`): another file opens with an
empty form unless the user copies the last capture's values over.

All reading and measuring runs on :class:`~trueslope.app.jobs.JobRunner`;
this class only builds requests, and draws the answers that are still
current. Cycle navigation, its shortcuts and drag and drop live in
:class:`~trueslope.app.navigation.NavigationMixin`. A failed open or re-measure is shown in the banner and leaves what
was on screen untouched. The actions, menus, toolbar, exports and help live
in :class:`~trueslope.app.commands.CommandsMixin`.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any, Callable

import numpy as np
from PySide6 import QtCore, QtGui, QtWidgets

from trueslope.core.errors import TrueslopeError
from trueslope.core.percycle import cycle_column
from trueslope.core.settings import MAX_TRIM_FRACTION, Settings

from . import theme
from .banner import MessageBanner, describe_error
from .bench_commands import BenchMixin
from .commands import CommandsMixin
from .fields import field_label
from .jobs import (AnalyseRequest, JobResult, JobRunner, OpenRequest, Request, TraceData,
                   run_analyse, run_open)
from .circuits import CircuitMixin
from .navigation import NavigationMixin
from .panels import CapturePanel, CycleTable, FiguresPanel, FindingsPanel
from .panels.cycles import CYCLE_NOTE
from .plots import PlotArea, cycle_view
from .store import CircuitMemory, Store
from .welcome import Welcome

if TYPE_CHECKING:
    from trueslope.core.capture import Capture
    from trueslope.core.circuit import CircuitContext
    from trueslope.core.results import Analysis


class MainWindow(BenchMixin, CircuitMixin, NavigationMixin, CommandsMixin,
                 QtWidgets.QMainWindow):
    """The trueslope bench window.

    Parameters
    ----------
    store : Store, optional
        Where settings persist; tests pass one backed by a temporary file.

    Signals
    -------
    analysis_shown(object)
        An analysis was drawn (after an open or a re-measure).
    job_failed(str)
        An open or a re-measure failed; the message shown in the banner.
    job_cancelled()
        The running job was cancelled.
    """

    analysis_shown = QtCore.Signal(object)
    job_failed = QtCore.Signal(str)
    job_cancelled = QtCore.Signal()
    task_finished = QtCore.Signal(str)

    def __init__(self, store: Store | None = None) -> None:
        super().__init__()
        self.store = store or Store()
        self.circuits = CircuitMemory(self.store)
        self.runner = JobRunner(self)
        self.capture: Capture | None = None
        self.analysis: Analysis | None = None
        self.trace: TraceData | None = None
        self.path: str | None = None
        self.settings = Settings(trim_fraction=self.store.trim_fraction)
        self.sample_interval_s: float | None = None
        self._pending: JobResult | None = None
        self._pending_path: str | None = None

        self.setWindowTitle("")  # the platform shows the application's name
        self.setAcceptDrops(True)
        self.setStyleSheet(theme.STYLESHEET)
        self._build_widgets()
        self._build_actions()
        self._build_menus()
        self._build_toolbar()
        self._build_status()
        self._connect()
        self._restore()
        self._show_welcome()

    # -- construction ----------------------------------------------------------------

    def _build_widgets(self) -> None:
        self.banner = MessageBanner()
        self.plots = PlotArea()
        self.welcome = Welcome()
        self.stack = QtWidgets.QStackedWidget()
        self.stack.addWidget(self.welcome)
        self.stack.addWidget(self.plots)
        self.cycles = CycleTable()
        cycles_box = QtWidgets.QGroupBox("Cycles")
        cl = QtWidgets.QVBoxLayout(cycles_box)
        cl.setContentsMargins(4, 4, 4, 4)
        cl.addWidget(self.cycles)
        self.cycle_note = QtWidgets.QLabel(CYCLE_NOTE)
        self.cycle_note.setObjectName("cycleNote")
        self.cycle_note.setWordWrap(True)
        cl.addWidget(self.cycle_note)
        self.left = QtWidgets.QSplitter(QtCore.Qt.Orientation.Vertical)
        self.left.addWidget(self.stack)
        self.left.addWidget(cycles_box)
        self.left.setStretchFactor(0, 4)
        self.left.setStretchFactor(1, 1)
        self.left.setChildrenCollapsible(False)

        self.figures = FiguresPanel()
        self.findings = FindingsPanel(self)
        self.capture_panel = CapturePanel()
        self.tabs = QtWidgets.QTabWidget()
        self.tabs.addTab(self.figures, "Figures")
        self.tabs.addTab(self.findings.diagnosis_page, "Diagnosis")
        self.tabs.addTab(self.findings.check_page, "Self-check")
        self.tabs.addTab(self.capture_panel, "Capture")
        # The headline stays in sight over the tabs; each tab gets the column's height.
        self.right = QtWidgets.QWidget()
        rl = QtWidgets.QVBoxLayout(self.right)
        rl.setContentsMargins(0, 0, 0, 0)
        rl.setSpacing(4)
        rl.addWidget(self.figures.head)
        rl.addWidget(self.tabs, 1)

        self.main_split = QtWidgets.QSplitter(QtCore.Qt.Orientation.Horizontal)
        self.main_split.addWidget(self.left)
        self.main_split.addWidget(self.right)
        self.main_split.setStretchFactor(0, 5)
        self.main_split.setStretchFactor(1, 2)
        self.main_split.setChildrenCollapsible(False)
        self.right.setMinimumWidth(360)

        central = QtWidgets.QWidget()
        lay = QtWidgets.QVBoxLayout(central)
        lay.setContentsMargins(6, 6, 6, 2)
        lay.setSpacing(6)
        lay.addWidget(self.banner)
        lay.addWidget(self._build_bench(self.main_split), 1)
        self.setCentralWidget(central)

    def _connect(self) -> None:
        r = self.runner
        r.progress.connect(self._on_progress)
        r.finished.connect(self._on_finished)
        r.failed.connect(self._on_failed)
        r.cancelled.connect(self._on_cancelled)
        r.busy_changed.connect(self._on_busy)
        self.plots.band_moved.connect(self._on_band_moved)
        self.cycles.cycle_chosen.connect(self.show_cycle)
        self.findings.form.context_changed.connect(self._on_context)
        self.findings.form.stale_changed.connect(self._on_stale)
        self.findings.form.copy_requested.connect(self._copy_last_circuit)
        self.findings.whatif.prediction_changed.connect(self.plots.set_prediction)
        self.cycles.exclusion_requested.connect(self._on_exclusion)
        # Typing 45 must not become 4 % silently: the box takes it, _on_trim clamps and says so.
        self.trim_box.setMaximum(99.0)
        # Short toolbar texts, so every command fits at 1280 px (the menus keep the long ones).
        for act, short in ((self.act_open, "Open…"), (self.act_reset_window, "Reset window"),
                           (self.act_prev, "◀ Cycle"), (self.act_next, "Cycle ▶"),
                           (self.act_zoom_cycle, "Zoom cycle"), (self.act_zoom_all, "Zoom all"),
                           (self.act_all_fits, "All fits")):
            act.setIconText(short)
        self.channel_box.activated.connect(self._on_channel_picked)
        self.sync_box.activated.connect(self._on_channel_picked)
        self.trim_box.valueChanged.connect(self._on_trim)
        self.welcome.open_requested.connect(self.open_file)
        self.welcome.dialog_requested.connect(self.open_dialog)

    def _restore(self) -> None:
        geo = self.store.geometry("geometry")
        if geo is None or not self.restoreGeometry(geo):
            self.resize(1480, 920)
        for key, split in (("split_main", self.main_split), ("split_left", self.left)):
            state = self.store.geometry(key)
            if state is not None:
                split.restoreState(state)
        if self.store.geometry("split_main") is None:
            self.main_split.setSizes([880, 690])
            self.left.setSizes([600, 230])
        self.welcome.refresh(self.store.recent_files)

    def _show_welcome(self) -> None:
        self.stack.setCurrentWidget(self.welcome)
        self._enable_analysis_actions(False)

    # -- opening -----------------------------------------------------------------------

    @property
    def busy(self) -> bool:
        return self.runner.busy

    def open_file(self, path: str, channel: str | int | None = None,
                  sync_channel: str | int | None = None) -> None:
        """Read and measure ``path`` in the background; the current capture stays until it succeeds."""
        try:
            # The file's own circuit values (none for a file never given any).
            settings = Settings(trim_fraction=self.trim_box.value() / 100.0, channel=channel,
                                sync_channel=sync_channel,
                                context=self.circuits.context_for(str(path)))
        except TrueslopeError as exc:
            self._show_error(describe_error(exc))
            return
        req = OpenRequest(self.runner.new_id(), str(path), settings, self.sample_interval_s)
        self._status(f"Reading {Path(path).name}…")
        self.runner.submit(req, run_open)

    # -- re-measuring -----------------------------------------------------------------------

    def reanalyse(self, reason: str, capture: Capture | None = None, **changes: Any) -> None:
        """Measure the loaded capture again with some settings changed (no file is read)."""
        capture = capture if capture is not None else self.capture
        if capture is None:
            return
        if isinstance(self.runner.current, OpenRequest) and capture is self.capture:
            # A file is being opened: measuring the old one again would cancel it.
            self._status(f"Still reading {Path(self.runner.current.path).name}; "
                         "change the settings when it is open")
            if self.analysis is not None:
                self.plots.show_cycle(self.plots.shown)
            return
        try:
            settings = self.settings.with_(**changes)
        except TrueslopeError as exc:
            self._show_error(describe_error(exc))
            self.plots.show_cycle(self.plots.shown)
            return
        req = AnalyseRequest(self.runner.new_id(), capture, settings, reason)
        self._status(f"Measuring ({reason})…")
        self.runner.submit(req, run_analyse)

    def _on_band_moved(self, start_s: float, end_s: float) -> None:
        self.reanalyse("window moved", window_s=(start_s, end_s))

    def _on_context(self, context: CircuitContext | None) -> None:
        self.settings = self.settings.with_(context=context)
        self.reanalyse("circuit context edited", context=context)

    def _on_exclusion(self, excluded: tuple[int, ...]) -> None:
        n = len(excluded)
        self.reanalyse(f"{n} cycle{'s' if n != 1 else ''} left out" if n else "all cycles in",
                       excluded_cycles=tuple(excluded))

    def _on_trim(self, value_pct: float) -> None:
        top = 100.0 * MAX_TRIM_FRACTION
        if value_pct > top:
            self.banner.show_message(
                f"{field_label('trim')}: at most {top:g} % of each ramp can be trimmed at each "
                f"end; {value_pct:g} % was set to {top:g} %.", kind="info")
            self.trim_box.setValue(top)  # measures through this slot again
            return
        self.store.trim_fraction = value_pct / 100.0
        self.reanalyse("trim changed", trim_fraction=value_pct / 100.0, window_s=None)

    def reset_window(self) -> None:
        self.reanalyse("window reset", window_s=None)

    def _on_channel_picked(self) -> None:
        ch = self.channel_box.currentData()
        sync = self.sync_box.currentData()
        if ch is None:
            return
        if sync == ch:  # a channel cannot mark its own resets
            sync = None
        self.reanalyse("channel changed", channel=ch, sync_channel=sync, window_s=None,
                       excluded_cycles=())

    def _choose_channel_for_pending(self) -> None:
        pend = self._pending
        if pend is None:
            return
        names = pend.capture.channel_names
        name, ok = QtWidgets.QInputDialog.getItem(
            self, "Choose the ramp channel", f"Channel of {Path(pend.capture.source).name} to measure:",
            names, 0, False)
        if ok and name:
            path = self._pending_path or str(pend.capture.source)
            self.reanalyse("channel chosen", capture=pend.capture, channel=name, window_s=None,
                           sync_channel=None, excluded_cycles=(),
                           context=self.circuits.context_for(path))

    # -- answers from the worker ---------------------------------------------------------------

    def _on_busy(self, busy: bool) -> None:
        self.progress.setVisible(busy)
        self.cancel_button.setVisible(busy)
        self.act_cancel.setEnabled(busy)
        if busy:
            self.progress.setValue(0)

    def _on_progress(self, _req: Request, fraction: float) -> None:
        self.progress.setValue(int(round(1000 * min(max(fraction, 0.0), 1.0))))

    def _on_finished(self, req: Request, result: JobResult) -> None:
        if result.analysis is None:
            self._measure_failed(req, result)
            return
        new_capture = result.capture is not self.capture
        self._pending = None
        if isinstance(req, OpenRequest):
            self.path = req.path
            self.store.add_recent(req.path)
            self.store.last_folder = str(Path(req.path).resolve().parent)
        elif new_capture and self._pending_path:
            self.path = self._pending_path
            self.store.add_recent(self._pending_path)
        self._pending_path = None
        self.capture = result.capture
        self.settings = req.settings
        old_channel = self.analysis.channel if self.analysis is not None else None
        self._commit(result, new_capture or self.trace is None
                     or result.analysis.channel != old_channel, new_capture)
        # A new capture starts a new story: no message about the last one stays.
        if new_capture or self.banner.kind == "error":
            self.banner.dismiss()
        self._status(f"{Path(self.capture.source).name}: measured in {result.elapsed_s:.2f} s"
                     + (f" ({req.reason})" if isinstance(req, AnalyseRequest) and req.reason else ""))
        self.analysis_shown.emit(result.analysis)

    def _commit(self, result: JobResult, redraw_trace: bool, new_capture: bool = False) -> None:
        a = result.analysis
        assert a is not None  # only measured answers are committed
        old = self.analysis
        fresh = redraw_trace
        self.analysis = a
        self.stack.setCurrentWidget(self.plots)
        shown = self.plots.shown if (old is not None and not fresh) else self._first_cycle(a)
        if redraw_trace and result.trace is not None:
            self.trace = result.trace
            self.plots.set_trace(result.trace, cycle_view(a, shown) if len(a.cycles) else None)
        self.plots.set_analysis(a, shown, all_fits=self.act_all_fits.isChecked())
        self.figures.set_analysis(a)
        self.cycles.set_cycles(a.cycles)
        self.cycles.select_cycle(self.plots.shown)
        self.findings.set_analysis(a)
        self._commit_circuit(a, new_capture)
        self.capture_panel.set_capture(result.capture, a)
        n_warn = len(a.warnings)
        self.tabs.setTabText(self.tabs.indexOf(self.capture_panel), f"Capture ({n_warn} warning{'s' if n_warn != 1 else ''})"
                             if n_warn else "Capture")
        self._set_channel_boxes(result.capture)
        self._enable_analysis_actions(True)
        name = Path(result.capture.source).name
        self.setWindowTitle(f"{name} ({a.channel})")
        if fresh:
            self.plots.zoom_to_cycle()

    def _set_channel_boxes(self, capture: Capture | None) -> None:
        super()._set_channel_boxes(capture)
        # "Resets from" never offers the measured channel itself.
        if capture is not None and self.analysis is not None:
            i = self.sync_box.findData(self.analysis.channel)
            if i > 0:
                self.sync_box.blockSignals(True)
                self.sync_box.removeItem(i)
                self.sync_box.blockSignals(False)

    @staticmethod
    def _first_cycle(a: Analysis) -> int:
        inside = np.flatnonzero(~cycle_column(a.cycles, "outlier"))
        return int(inside[0]) if inside.size else 0

    def _measure_failed(self, req: Request, result: JobResult) -> None:
        exc = result.analysis_error
        msg = describe_error(exc) if exc is not None else "the capture could not be measured"
        name = Path(result.capture.source).name
        if result.capture is not self.capture:
            # A newly read file that cannot be measured: keep what is open, and
            # offer the other channels if there are any.
            self._pending = result
            if isinstance(req, OpenRequest):
                self._pending_path = req.path
            n = len(result.capture.channel_names)
            keep = " The capture already open stays open." if self.capture is not None else ""
            if msg.startswith(name + ":"):
                msg = msg[len(name) + 1:].strip()
            text = f"{name} was read but could not be measured: {msg.rstrip('.')}.{keep}"
            if self.capture is None and result.trace is not None:
                # Nothing else is open: show what was read, so the banner has a picture.
                self.stack.setCurrentWidget(self.plots)
                self.plots.reset()
                self.plots.set_trace(result.trace)
                self.plots.zoom_to_all()
                self.setWindowTitle(f"{name} (not measured)")
            if n > 1:
                self._show_error(text, "Choose channel…", self._choose_channel_for_pending)
            else:
                self._show_error(text)
        else:
            self._show_error(f"Could not measure {name} with these settings: {msg}. "
                             "The previous result is still shown.")
            if self.analysis is not None:
                self.plots.show_cycle(self.plots.shown)  # put the band back
                self._set_channel_boxes(self.capture)
        self._status("")

    def _on_failed(self, req: Request, exc: BaseException) -> None:
        msg = describe_error(exc)
        if isinstance(req, OpenRequest):
            keep = " The capture already open stays open." if self.capture is not None else ""
            name = Path(req.path).name
            # Our errors already start with the file's name.
            what = msg if msg.startswith(name) else f"{name}: {msg}"
            self._show_error(f"Could not open {what.rstrip('.')}.{keep}")
        else:
            self._show_error(f"Could not measure again: {msg}. The previous result is still shown.")
            if self.analysis is not None:
                self.plots.show_cycle(self.plots.shown)
        self._status("")

    def _on_cancelled(self, req: Request) -> None:
        what = f"Reading {Path(req.path).name}" if isinstance(req, OpenRequest) else "Measuring"
        keep = " The capture already open stays open." if self.capture is not None else ""
        self.banner.show_message(f"{what} was cancelled.{keep}", kind="info")
        if isinstance(req, AnalyseRequest) and self.analysis is not None:
            self.plots.show_cycle(self.plots.shown)
        self._status("Cancelled")
        self.job_cancelled.emit()

    def cancel(self) -> None:
        """Stop the running job (its answer is then dropped)."""
        if self.runner.busy:
            self._status("Cancelling…")
            self.runner.cancel()

    def _show_error(self, text: str, action: str | None = None,
                    callback: Callable[[], None] | None = None) -> None:
        self.banner.show_message(text, "error", action, callback)
        self.job_failed.emit(text)

    def _status(self, text: str) -> None:
        self.status_label.setText(text)

    # -- closing --------------------------------------------------------------------------------

    def closeEvent(self, event: QtGui.QCloseEvent) -> None:  # noqa: N802
        self.runner.shutdown()
        self.findings.whatif.shutdown()
        self._shutdown_bench()
        self.store.set_geometry("geometry", self.saveGeometry())
        self.store.set_geometry("split_main", self.main_split.saveState())
        self.store.set_geometry("split_left", self.left.saveState())
        self.store.sync()
        super().closeEvent(event)
