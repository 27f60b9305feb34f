"""The bench window: open a capture, see the fit, the residual and the findings at a glance.

Layout (our own): a message banner across the top; on the left the trace
view over the residual strip, with the cycle list beneath; on the right the
figures panel over a tabbed pane holding the findings (diagnosis, self-check,
circuit-context form) and the capture's metadata and import warnings.

All reading and measuring runs on :class:`~trueslope.app.jobs.JobRunner`;
this class only builds requests, and draws the answers that are still
current. A failed open or re-measure is shown in the banner and leaves what
was on screen untouched.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from PySide6 import QtCore, QtGui, QtWidgets

from trueslope.core.errors import TrueslopeError
from trueslope.core.settings import MAX_TRIM_FRACTION, Settings

from . import exporting, helptext, theme
from .jobs import AnalyseRequest, JobResult, JobRunner, OpenRequest, run_analyse, run_open
from .panels import CapturePanel, CycleTable, FiguresPanel, FindingsPanel
from .plots import PlotArea, cycle_view
from .store import Store

#: Open-dialog filter: the layouts trueslope.core.io reads (any text file is tried).
CAPTURE_FILTER = ("Captures (*.csv *.txt *.tsv *.dat *.npy *.wav);;"
                  "Text exports (*.csv *.txt *.tsv *.dat);;All files (*)")


def describe_error(exc: BaseException) -> str:
    """A one-line message for the banner: our errors read well as they are."""
    if isinstance(exc, TrueslopeError):
        return str(exc)
    if isinstance(exc, OSError):
        name = Path(exc.filename).name if getattr(exc, "filename", None) else "the file"
        return f"{name}: {exc.strerror or exc}"
    if isinstance(exc, MemoryError):
        return "not enough memory to hold this capture"
    return f"unexpected {type(exc).__name__}: {exc}"


class MessageBanner(QtWidgets.QFrame):
    """A message strip inside the window (errors stay until dismissed or replaced)."""

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("banner")
        lay = QtWidgets.QHBoxLayout(self)
        lay.setContentsMargins(10, 6, 6, 6)
        self.label = QtWidgets.QLabel("")
        self.label.setWordWrap(True)
        self.label.setTextInteractionFlags(QtCore.Qt.TextInteractionFlag.TextSelectableByMouse)
        self.action = QtWidgets.QPushButton("")
        self.action.hide()
        self.close_button = QtWidgets.QToolButton()
        self.close_button.setText("✕")
        self.close_button.setToolTip("Dismiss")
        self.close_button.setAutoRaise(True)
        self.close_button.clicked.connect(self.dismiss)
        lay.addWidget(self.label, 1)
        lay.addWidget(self.action)
        lay.addWidget(self.close_button)
        self._callback: Any = None
        self.action.clicked.connect(self._act)
        self.kind = ""
        self.hide()

    def _style(self, colours: tuple[str, str, str]) -> None:
        bg, border, fg = colours
        self.setStyleSheet(f"QFrame#banner {{ background: {bg}; border: 1px solid {border}; "
                           f"border-radius: 4px; }} QFrame#banner QLabel {{ color: {fg}; }}")

    def show_message(self, text: str, kind: str = "error", action: str | None = None,
                     callback: Any = None) -> None:
        """Show ``text``; ``kind`` is ``"error"`` or ``"info"``; an optional button runs ``callback``."""
        self.kind = kind
        self._style(theme.BANNER_ERROR if kind == "error" else theme.BANNER_INFO)
        prefix = "Problem: " if kind == "error" else ""
        self.label.setText(prefix + text)
        self._callback = callback
        self.action.setVisible(bool(action and callback))
        self.action.setText(action or "")
        self.show()

    def text(self) -> str:
        return self.label.text() if self.isVisible() else ""

    def dismiss(self) -> None:
        self.kind = ""
        self._callback = None
        self.hide()

    def _act(self) -> None:
        cb = self._callback
        self.dismiss()
        if cb is not None:
            cb()


class Welcome(QtWidgets.QFrame):
    """What the trace area shows before the first capture: how to open one, and recent files."""

    open_requested = QtCore.Signal(str)

    def __init__(self, window: "MainWindow") -> None:
        super().__init__()
        self.setObjectName("welcome")
        self._window = window
        lay = QtWidgets.QVBoxLayout(self)
        lay.setAlignment(QtCore.Qt.AlignmentFlag.AlignCenter)
        title = QtWidgets.QLabel("Open a ramp capture")
        title.setObjectName("welcomeTitle")
        title.setAlignment(QtCore.Qt.AlignmentFlag.AlignCenter)
        hint = QtWidgets.QLabel("File ▸ Open (Ctrl+O), or drop a CSV or text export from the "
                                "scope onto this window.")
        hint.setObjectName("muted")
        hint.setAlignment(QtCore.Qt.AlignmentFlag.AlignCenter)
        button = QtWidgets.QPushButton("Open a capture…")
        button.clicked.connect(window.open_dialog)
        self.recent_box = QtWidgets.QVBoxLayout()
        lay.addWidget(title)
        lay.addWidget(hint)
        lay.addSpacing(10)
        lay.addWidget(button, 0, QtCore.Qt.AlignmentFlag.AlignCenter)
        lay.addSpacing(10)
        lay.addLayout(self.recent_box)

    def refresh(self, recent: list[str]) -> None:
        while self.recent_box.count():
            w = self.recent_box.takeAt(0).widget()
            if w is not None:
                w.deleteLater()
        if recent:
            label = QtWidgets.QLabel("Recent captures")
            label.setObjectName("muted")
            label.setAlignment(QtCore.Qt.AlignmentFlag.AlignCenter)
            self.recent_box.addWidget(label)
        for path in recent[:5]:
            b = QtWidgets.QPushButton(Path(path).name)
            b.setToolTip(path)
            b.setFlat(True)
            b.setCursor(QtCore.Qt.CursorShape.PointingHandCursor)
            b.clicked.connect(lambda _=False, p=path: self.open_requested.emit(p))
            self.recent_box.addWidget(b, 0, QtCore.Qt.AlignmentFlag.AlignCenter)


class MainWindow(QtWidgets.QMainWindow):
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

    def __init__(self, store: Store | None = None) -> None:
        super().__init__()
        self.store = store or Store()
        self.runner = JobRunner(self)
        self.capture: Any = None
        self.analysis: Any = None
        self.trace: Any = None
        self.path: str | None = None
        self.settings = Settings(trim_fraction=self.store.trim_fraction)
        self.sample_interval_s: float | None = None
        self._pending: JobResult | None = None
        self._pending_path: str | None = None
        self._zoom_after_commit = False

        self.setWindowTitle("trueslope")
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
        self.welcome = Welcome(self)
        self.stack = QtWidgets.QStackedWidget()
        self.stack.addWidget(self.welcome)
        self.stack.addWidget(self.plots)
        self.cycles = CycleTable()
        cycles_box = QtWidgets.QGroupBox("Cycles")
        cl = QtWidgets.QVBoxLayout(cycles_box)
        cl.setContentsMargins(4, 4, 4, 4)
        cl.addWidget(self.cycles)
        self.left = QtWidgets.QSplitter(QtCore.Qt.Orientation.Vertical)
        self.left.addWidget(self.stack)
        self.left.addWidget(cycles_box)
        self.left.setStretchFactor(0, 4)
        self.left.setStretchFactor(1, 1)
        self.left.setChildrenCollapsible(False)

        self.figures = FiguresPanel()
        fig_box = QtWidgets.QGroupBox("Figures")
        fl = QtWidgets.QVBoxLayout(fig_box)
        fl.setContentsMargins(6, 4, 6, 6)
        fl.addWidget(self.figures)
        self.findings = FindingsPanel()
        self.capture_panel = CapturePanel()
        self.tabs = QtWidgets.QTabWidget()
        self.tabs.addTab(self.findings, "Findings")
        self.tabs.addTab(self.capture_panel, "Capture")
        self.right = QtWidgets.QSplitter(QtCore.Qt.Orientation.Vertical)
        self.right.addWidget(fig_box)
        self.right.addWidget(self.tabs)
        self.right.setStretchFactor(0, 1)
        self.right.setStretchFactor(1, 1)
        self.right.setChildrenCollapsible(False)

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
        lay.addWidget(self.main_split, 1)
        self.setCentralWidget(central)

    def _action(self, text: str, slot: Any, shortcuts: Any = (), tip: str = "",
                checkable: bool = False) -> QtGui.QAction:
        a = QtGui.QAction(text, self)
        if shortcuts:
            keys = [QtGui.QKeySequence(s) for s in (shortcuts if isinstance(shortcuts, (list, tuple)) else [shortcuts])]
            a.setShortcuts(keys)
        if tip:
            a.setStatusTip(tip)
            a.setToolTip(tip)
        a.setCheckable(checkable)
        a.triggered.connect(slot)
        self.addAction(a)  # shortcuts work wherever the focus is in the window
        return a

    def _build_actions(self) -> None:
        K = QtGui.QKeySequence.StandardKey
        self.act_open = self._action("&Open capture…", self.open_dialog, K.Open, "Open a capture file")
        self.act_quit = self._action("&Quit", self.close, K.Quit)
        self.act_json = self._action("Figures as &JSON…", lambda: self._export("json"))
        self.act_csv = self._action("Figures as &CSV…", lambda: self._export("csv"))
        self.act_png = self._action("Plots as &PNG…", lambda: self._export("png"))
        self.act_svg = self._action("Plots as &SVG…", lambda: self._export("svg"))
        self.act_copy = self._action("&Copy figures", self.copy_figures, "Ctrl+Shift+C",
                                     "Copy the summary figures to the clipboard")
        self.act_next = self._action("&Next cycle", self.next_cycle, ["]", "PgDown"], "Show the next cycle")
        self.act_prev = self._action("&Previous cycle", self.previous_cycle, ["[", "PgUp"],
                                     "Show the previous cycle")
        self.act_zoom_cycle = self._action("&Zoom to cycle", self.zoom_to_cycle, "Z",
                                           "Zoom the trace to the shown cycle")
        self.act_zoom_all = self._action("Zoom to &all", self.zoom_to_all, "A",
                                         "Zoom out to the whole capture")
        self.act_all_fits = self._action("&Fit on every cycle", self._toggle_all_fits, "F",
                                         "Draw the fitted line over every cycle, not only the shown one",
                                         checkable=True)
        self.act_reset_window = self._action("&Reset window to trim", self.reset_window, (),
                                             "Forget the dragged window; trim each ramp end instead")
        self.act_cancel = self._action("Cancel", self.cancel, "Esc", "Stop the running load or analysis")
        self.act_safety = self._action("Bench &safety", self.show_safety)
        self.act_keys = self._action("&Keyboard and mouse", lambda: self._info("Keyboard", helptext.shortcuts_html()))
        self.act_defs = self._action("Measurement &definitions", self.show_definitions)
        self.act_about = self._action("&About trueslope", lambda: self._info("About", helptext.ABOUT_HTML))
        self._needs_analysis = [self.act_json, self.act_csv, self.act_png, self.act_svg, self.act_copy,
                                self.act_next, self.act_prev, self.act_zoom_cycle, self.act_zoom_all,
                                self.act_reset_window]

    def _build_menus(self) -> None:
        mb = self.menuBar()
        m = mb.addMenu("&File")
        m.addAction(self.act_open)
        self.recent_menu = m.addMenu("Open &recent")
        self.recent_menu.aboutToShow.connect(self._fill_recent)
        m.addSeparator()
        ex = m.addMenu("&Export")
        for a in (self.act_json, self.act_csv, self.act_png, self.act_svg):
            ex.addAction(a)
        m.addAction(self.act_copy)
        m.addSeparator()
        m.addAction(self.act_quit)
        v = mb.addMenu("&View")
        for a in (self.act_prev, self.act_next, self.act_zoom_cycle, self.act_zoom_all, self.act_all_fits):
            v.addAction(a)
        an = mb.addMenu("&Analysis")
        an.addAction(self.act_reset_window)
        an.addAction(self.act_cancel)
        h = mb.addMenu("&Help")
        for a in (self.act_safety, self.act_keys, self.act_defs, self.act_about):
            h.addAction(a)

    def _build_toolbar(self) -> None:
        tb = self.addToolBar("Main")
        tb.setObjectName("main_toolbar")
        tb.setMovable(False)
        tb.addAction(self.act_open)
        tb.addSeparator()
        tb.addWidget(QtWidgets.QLabel(" Channel "))
        self.channel_box = QtWidgets.QComboBox()
        self.channel_box.setToolTip("Channel to measure")
        self.channel_box.setMinimumContentsLength(8)
        self.channel_box.setSizeAdjustPolicy(QtWidgets.QComboBox.SizeAdjustPolicy.AdjustToContents)
        tb.addWidget(self.channel_box)
        tb.addWidget(QtWidgets.QLabel("  Resets from "))
        self.sync_box = QtWidgets.QComboBox()
        self.sync_box.setToolTip("A logic-level channel marking each reset, or the ramp itself")
        self.sync_box.setMinimumContentsLength(10)
        self.sync_box.setSizeAdjustPolicy(QtWidgets.QComboBox.SizeAdjustPolicy.AdjustToContents)
        tb.addWidget(self.sync_box)
        tb.addWidget(QtWidgets.QLabel("  Trim each end "))
        self.trim_box = QtWidgets.QDoubleSpinBox()
        self.trim_box.setRange(0.0, 100.0 * MAX_TRIM_FRACTION)
        self.trim_box.setDecimals(1)
        self.trim_box.setSingleStep(1.0)
        self.trim_box.setSuffix(" %")
        self.trim_box.setKeyboardTracking(False)
        self.trim_box.setToolTip("Part of each ramp left out of the fit at each end")
        self.trim_box.setValue(100.0 * self.settings.trim_fraction)
        tb.addWidget(self.trim_box)
        tb.addAction(self.act_reset_window)
        tb.addSeparator()
        tb.addAction(self.act_prev)
        tb.addAction(self.act_next)
        tb.addAction(self.act_zoom_cycle)
        tb.addAction(self.act_zoom_all)
        tb.addAction(self.act_all_fits)
        self._set_channel_boxes(None)

    def _build_status(self) -> None:
        sb = self.statusBar()
        self.status_label = QtWidgets.QLabel("")
        sb.addWidget(self.status_label, 1)
        self.progress = QtWidgets.QProgressBar()
        self.progress.setRange(0, 1000)
        self.progress.setFixedWidth(220)
        self.progress.setTextVisible(True)
        self.progress.setFormat("%p %")
        self.cancel_button = QtWidgets.QPushButton("Cancel")
        self.cancel_button.setToolTip("Stop the running load or analysis (Esc)")
        self.cancel_button.clicked.connect(self.cancel)
        sb.addPermanentWidget(self.progress)
        sb.addPermanentWidget(self.cancel_button)
        self.progress.hide()
        self.cancel_button.hide()

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
        self.channel_box.activated.connect(self._on_channel_picked)
        self.sync_box.activated.connect(self._on_channel_picked)
        self.trim_box.valueChanged.connect(self._on_trim)
        self.welcome.open_requested.connect(self.open_file)

    def _restore(self) -> None:
        geo = self.store.geometry("geometry")
        if geo is None or not self.restoreGeometry(geo):
            self.resize(1480, 920)
        for key, split in (("split_main", self.main_split), ("split_left", self.left),
                           ("split_right", self.right)):
            state = self.store.geometry(key)
            if state is not None:
                split.restoreState(state)
        if self.store.geometry("split_main") is None:
            self.main_split.setSizes([930, 640])
            self.left.setSizes([660, 170])
            self.right.setSizes([360, 500])
        self.welcome.refresh(self.store.recent_files)

    def _show_welcome(self) -> None:
        self.stack.setCurrentWidget(self.welcome)
        self._enable_analysis_actions(False)

    def _enable_analysis_actions(self, on: bool) -> None:
        for a in self._needs_analysis:
            a.setEnabled(on)

    # -- opening -----------------------------------------------------------------------

    @property
    def busy(self) -> bool:
        return self.runner.busy

    def open_dialog(self) -> None:
        path, _ = QtWidgets.QFileDialog.getOpenFileName(
            self, "Open a capture", self.store.last_folder, CAPTURE_FILTER)
        if path:
            self.open_file(path)

    def open_file(self, path: str, channel: str | int | None = None,
                  sync_channel: str | int | None = None) -> None:
        """Read and measure ``path`` in the background; the current capture stays until it succeeds."""
        try:
            settings = Settings(trim_fraction=self.trim_box.value() / 100.0, channel=channel,
                                sync_channel=sync_channel, context=self.settings.context)
        except TrueslopeError as exc:
            self._show_error(str(exc))
            return
        req = OpenRequest(self.runner.new_id(), str(path), settings, self.sample_interval_s)
        self._status(f"Reading {Path(path).name}…")
        self.runner.submit(req, run_open)

    def _fill_recent(self) -> None:
        self.recent_menu.clear()
        files = self.store.recent_files
        for p in files:
            a = self.recent_menu.addAction(Path(p).name)
            a.setToolTip(p)
            a.setStatusTip(p)
            a.triggered.connect(lambda _=False, path=p: self.open_file(path))
        if files:
            self.recent_menu.addSeparator()
            self.recent_menu.addAction("Clear list", self._clear_recent)
        else:
            none = self.recent_menu.addAction("No recent captures")
            none.setEnabled(False)

    def _clear_recent(self) -> None:
        self.store.clear_recent()
        self.welcome.refresh([])

    # drag and drop ---------------------------------------------------------------------

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
            self.open_file(path)

    # -- re-measuring -----------------------------------------------------------------------

    def reanalyse(self, reason: str, capture: Any = None, **changes: Any) -> None:
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
            self._show_error(str(exc))
            self.plots.show_cycle(self.plots.shown)
            return
        req = AnalyseRequest(self.runner.new_id(), capture, settings, reason)
        self._status(f"Measuring ({reason})…")
        self.runner.submit(req, run_analyse)

    def _on_band_moved(self, start_s: float, end_s: float) -> None:
        self.reanalyse("window moved", window_s=(start_s, end_s))

    def _on_context(self, context: Any) -> None:
        self.settings = self.settings.with_(context=context)
        self.reanalyse("circuit context edited", context=context)

    def _on_trim(self, value_pct: float) -> None:
        self.store.trim_fraction = value_pct / 100.0
        self.reanalyse("trim changed", trim_fraction=value_pct / 100.0, window_s=None)

    def reset_window(self) -> None:
        self.reanalyse("window reset", window_s=None)

    def _on_channel_picked(self) -> None:
        ch = self.channel_box.currentData()
        sync = self.sync_box.currentData()
        if ch is None:
            return
        self.reanalyse("channel changed", channel=ch, sync_channel=sync, window_s=None)

    def _choose_channel_for_pending(self) -> None:
        pend = self._pending
        if pend is None:
            return
        names = pend.capture.channel_names
        name, ok = QtWidgets.QInputDialog.getItem(
            self, "Choose the ramp channel", f"Channel of {Path(pend.capture.source).name} to measure:",
            names, 0, False)
        if ok and name:
            self.reanalyse("channel chosen", capture=pend.capture, channel=name, window_s=None)

    # -- answers from the worker ---------------------------------------------------------------

    def _on_busy(self, busy: bool) -> None:
        self.progress.setVisible(busy)
        self.cancel_button.setVisible(busy)
        self.act_cancel.setEnabled(busy)
        if busy:
            self.progress.setValue(0)

    def _on_progress(self, _req: Any, fraction: float) -> None:
        self.progress.setValue(int(round(1000 * min(max(fraction, 0.0), 1.0))))

    def _on_finished(self, req: Any, result: JobResult) -> None:
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
        self._commit(result, new_capture or self.trace is None or
                     result.analysis.channel != getattr(self.analysis, "channel", None))
        if self.banner.kind == "error":
            self.banner.dismiss()
        self._status(f"{Path(self.capture.source).name}: measured in {result.elapsed_s:.2f} s"
                     + (f" ({req.reason})" if isinstance(req, AnalyseRequest) and req.reason else ""))
        self.analysis_shown.emit(result.analysis)

    def _commit(self, result: JobResult, redraw_trace: bool) -> None:
        a = result.analysis
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
        self.capture_panel.set_capture(result.capture, a)
        n_warn = len(a.warnings)
        self.tabs.setTabText(1, f"Capture ({n_warn} warning{'s' if n_warn != 1 else ''})"
                             if n_warn else "Capture")
        self._set_channel_boxes(result.capture)
        self._enable_analysis_actions(True)
        name = Path(result.capture.source).name
        self.setWindowTitle(f"trueslope — {name} ({a.channel})")
        if fresh:
            self.plots.zoom_to_cycle()

    @staticmethod
    def _first_cycle(a: Any) -> int:
        for i, c in enumerate(a.cycles):
            if not c.outlier:
                return i
        return 0

    def _measure_failed(self, req: Any, result: JobResult) -> None:
        exc = result.analysis_error
        msg = describe_error(exc) if exc is not None else "the capture could not be measured"
        name = Path(result.capture.source).name
        if result.capture is not self.capture:
            # A newly read file that cannot be measured: keep what is open, and
            # offer the other channels if there are any.
            self._pending = result
            self._pending_path = getattr(req, "path", None) or self._pending_path
            n = len(result.capture.channel_names)
            keep = " The capture already open stays open." if self.capture is not None else ""
            if msg.startswith(name + ":"):
                msg = msg[len(name) + 1:].strip()
            text = f"{name} was read but could not be measured: {msg.rstrip('.')}.{keep}"
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

    def _on_failed(self, req: Any, exc: BaseException) -> None:
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

    def _on_cancelled(self, req: Any) -> None:
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

    def _show_error(self, text: str, action: str | None = None, callback: Any = None) -> None:
        self.banner.show_message(text, "error", action, callback)
        self.job_failed.emit(text)

    def _status(self, text: str) -> None:
        self.status_label.setText(text)

    def _set_channel_boxes(self, capture: Any) -> None:
        for box in (self.channel_box, self.sync_box):
            box.blockSignals(True)
            box.clear()
        if capture is None:
            self.channel_box.addItem("—", None)
            self.sync_box.addItem("the ramp itself", None)
        else:
            for name in capture.channel_names:
                self.channel_box.addItem(name, name)
            self.sync_box.addItem("the ramp itself", None)
            for name in capture.channel_names:
                self.sync_box.addItem(name, name)
            if self.analysis is not None:
                i = self.channel_box.findData(self.analysis.channel)
                self.channel_box.setCurrentIndex(max(i, 0))
                sync = self.settings.sync_channel
                if sync is not None:
                    try:
                        sync = capture.channel(sync)[0]
                    except TrueslopeError:
                        sync = None
                j = self.sync_box.findData(sync) if sync is not None else 0
                self.sync_box.setCurrentIndex(max(j, 0))
        multi = capture is not None and len(capture.channel_names) > 1
        self.channel_box.setEnabled(multi)
        self.sync_box.setEnabled(multi)
        for box in (self.channel_box, self.sync_box):
            box.blockSignals(False)

    # -- navigation ----------------------------------------------------------------------------

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
        self.show_cycle(self.plots.shown + 1)

    def previous_cycle(self) -> None:
        self.show_cycle(self.plots.shown - 1)

    def zoom_to_cycle(self) -> None:
        self.plots.zoom_to_cycle()

    def zoom_to_all(self) -> None:
        self.plots.zoom_to_all()

    def _toggle_all_fits(self, on: bool) -> None:
        self.plots.set_all_fits(on)

    # -- exports ------------------------------------------------------------------------------

    def _export(self, kind: str) -> None:
        if self.analysis is None:
            return
        stem = Path(self.capture.source).stem
        filters = {"json": "JSON (*.json)", "csv": "CSV (*.csv)", "png": "PNG image (*.png)",
                   "svg": "SVG drawing (*.svg)"}
        suggested = str(Path(self.store.last_folder) / f"{stem}_{'figures' if kind in ('json', 'csv') else 'plots'}.{kind}")
        path, _ = QtWidgets.QFileDialog.getSaveFileName(self, f"Export {kind.upper()}", suggested, filters[kind])
        if path:
            self.export_to(kind, path)

    def export_to(self, kind: str, path: str) -> str:
        """Write one export to ``path``; errors go to the banner. Returns a status line."""
        try:
            if kind == "json":
                exporting.save_json(self.analysis, path)
                note = ""
            elif kind == "csv":
                exporting.save_csv(self.analysis, path)
                note = ""
            elif kind == "png":
                exporting.save_png(self.plots, path)
                note = ""
            elif kind == "svg":
                used = exporting.save_svg(self.plots, path)
                note = " (through Qt's SVG generator)" if used == "qt" else ""
            else:
                raise ValueError(f"unknown export {kind!r}")
        except (OSError, TrueslopeError, ValueError) as exc:
            self._show_error(f"Could not export to {Path(path).name}: {describe_error(exc)}")
            return ""
        text = f"Saved {Path(path).name}{note}"
        self._status(text)
        return text

    def copy_figures(self) -> None:
        if self.analysis is not None:
            exporting.copy_figures(self.analysis)
            self._status("Figures copied to the clipboard")

    # -- help ------------------------------------------------------------------------------------

    def _info(self, title: str, body: str) -> None:
        box = QtWidgets.QMessageBox(self)
        box.setWindowTitle(f"trueslope — {title}")
        box.setTextFormat(QtCore.Qt.TextFormat.RichText)
        box.setText(body)
        box.setIcon(QtWidgets.QMessageBox.Icon.NoIcon)
        box.open()

    def show_safety(self) -> None:
        self._info("Bench safety", helptext.SAFETY_HTML)

    def show_definitions(self) -> None:
        from trueslope.core.report import FIGURE_DEFINITIONS
        self._info("Measurement definitions", helptext.definitions_html(dict(FIGURE_DEFINITIONS)))

    # -- closing --------------------------------------------------------------------------------

    def closeEvent(self, event: QtGui.QCloseEvent) -> None:  # noqa: N802
        self.runner.shutdown()
        self.store.set_geometry("geometry", self.saveGeometry())
        self.store.set_geometry("split_main", self.main_split.saveState())
        self.store.set_geometry("split_left", self.left.saveState())
        self.store.set_geometry("split_right", self.right.saveState())
        self.store.sync()
        super().closeEvent(event)
