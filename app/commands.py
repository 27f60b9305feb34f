"""The window's commands: actions, menus, toolbar and status bar, and what the
File and Help commands do (open dialog, recent files, exports, help boxes).

:class:`CommandsMixin` is mixed into :class:`~trueslope.app.window.MainWindow`;
it holds no state of its own beyond the widgets it builds, and reads the
window's ``store``, ``settings``, ``capture``, ``analysis`` and ``plots``.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any, Callable

from PySide6 import QtCore, QtGui, QtWidgets

from trueslope.core.errors import TrueslopeError
from trueslope.core.settings import MAX_TRIM_FRACTION, Settings

from . import exporting, helptext
from .banner import describe_error
from .fields import FIELD_LABELS

if TYPE_CHECKING:
    from trueslope.core.capture import Capture
    from trueslope.core.results import Analysis

    from .plots import PlotArea
    from .store import Store
    from .welcome import Welcome

#: Open-dialog filter: the layouts trueslope.core.io reads (any text file is tried).
CAPTURE_FILTER = ("Captures (*.csv *.txt *.tsv *.dat *.npy *.wav);;"
                  "Text exports (*.csv *.txt *.tsv *.dat);;All files (*)")


class CommandsMixin:
    """Builds and runs the window's commands; mixed into ``MainWindow`` (a ``QMainWindow``)."""

    # Set by MainWindow before the build methods run.
    store: Store
    settings: Settings
    capture: Capture | None
    analysis: Analysis | None
    plots: PlotArea
    welcome: Welcome

    # -- construction ----------------------------------------------------------------

    def _action(self, text: str, slot: Callable[..., Any],
                shortcuts: str | QtGui.QKeySequence.StandardKey | Sequence[str] = (), tip: str = "",
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
        self.act_json = self._action("Whole analysis as &JSON…", lambda: self._export("json"), (),
                                     "Figures, settings, diagnosis, self-check and cycles as JSON")
        self.act_csv = self._action("Figures and findings as &CSV…", lambda: self._export("csv"), (),
                                    "Figures, the window used, channels, circuit, diagnosis and "
                                    "self-check as one CSV table")
        self.act_cycles_csv = self._action("Cycles as C&SV…", lambda: self._export("cycles"), (),
                                           "Each cycle's own figures as a CSV table")
        self.act_png = self._action("Plots as &PNG…", lambda: self._export("png"), (),
                                    "The plots with a caption of the headline figures")
        self.act_svg = self._action("Plots as S&VG…", lambda: self._export("svg"), (),
                                    "The plots with a caption of the headline figures")
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
                                         "Draw each cycle's own fitted line "
                                         "(only every few cycles when they would crowd)",
                                         checkable=True)
        self.act_reset_window = self._action("&Reset window to trim", self.reset_window, (),
                                             "Forget the dragged window; trim each ramp end instead")
        self.act_cancel = self._action("Cancel", self.cancel, "Esc", "Stop the running load or analysis")
        self.act_guide = self._action("&User guide", self.show_guide, "F1",
                                      "The guide: a tour, the definitions, the commands")
        self.act_safety = self._action("Bench &safety", self.show_safety)
        self.act_keys = self._action("&Keyboard and mouse", lambda: self._info("Keyboard", helptext.shortcuts_html()))
        self.act_defs = self._action("Measurement &definitions", self.show_definitions)
        self.act_about = self._action("&About trueslope", lambda: self._info("About", helptext.ABOUT_HTML))
        self._needs_analysis = [self.act_json, self.act_csv, self.act_cycles_csv, self.act_png,
                                self.act_svg, self.act_copy,
                                self.act_next, self.act_prev, self.act_zoom_cycle, self.act_zoom_all,
                                self.act_reset_window]
        self._build_bench_actions()

    def _build_menus(self) -> None:
        mb = self.menuBar()
        m = mb.addMenu("&File")
        m.addAction(self.act_open)
        self.recent_menu = m.addMenu("Open &recent")
        self.recent_menu.aboutToShow.connect(self._fill_recent)
        m.addSeparator()
        ex = m.addMenu("&Export")
        for a in (self.act_json, self.act_csv, self.act_cycles_csv, self.act_png, self.act_svg):
            ex.addAction(a)
        m.addAction(self.act_copy)
        m.addSeparator()
        m.addAction(self.act_quit)
        self._add_bench_menu_items(m, self.act_quit)
        v = mb.addMenu("&View")
        for a in (self.act_prev, self.act_next, self.act_zoom_cycle, self.act_zoom_all, self.act_all_fits):
            v.addAction(a)
        an = mb.addMenu("&Analysis")
        an.addAction(self.act_reset_window)
        an.addAction(self.act_cancel)
        self._add_bench_analysis_items(an)
        h = mb.addMenu("&Help")
        for a in (self.act_guide, self.act_safety, self.act_keys, self.act_defs, self.act_about):
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
        self.trim_label = QtWidgets.QLabel(f"  {FIELD_LABELS['trim']} ")
        tb.addWidget(self.trim_label)
        self.trim_box = QtWidgets.QDoubleSpinBox()
        self.trim_box.setRange(0.0, 100.0 * MAX_TRIM_FRACTION)
        self.trim_box.setDecimals(1)
        self.trim_box.setSingleStep(1.0)
        self.trim_box.setSuffix(" %")
        self.trim_box.setKeyboardTracking(False)
        self.trim_box.setToolTip(self._TRIM_TIP)
        self.trim_box.setValue(100.0 * self.settings.trim_fraction)
        tb.addWidget(self.trim_box)
        self.analysis_shown.connect(self._show_window_source)
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

    #: The trim box's tooltip while the trim sets the window.
    _TRIM_TIP = "Part of each ramp left out of the fit at each end"

    def _show_window_source(self, analysis: Analysis) -> None:
        """Mark the trim as unused while the dragged band sets the window, so the toolbar
        never shows a trim beside an explicit window."""
        explicit = analysis is not None and analysis.settings.window_s is not None
        self.trim_box.setSuffix(" % (unused)" if explicit else " %")
        self.trim_box.setToolTip(
            "Unused: the window was set by dragging the band. Change the trim, or use "
            "Reset window to trim, to trim each ramp end again" if explicit else self._TRIM_TIP)
        font = self.trim_box.font()
        font.setItalic(explicit)
        self.trim_box.setFont(font)

    def _enable_analysis_actions(self, on: bool) -> None:
        for a in self._needs_analysis:
            a.setEnabled(on)

    # -- opening ------------------------------------------------------------------------

    def open_dialog(self) -> None:
        path, _ = QtWidgets.QFileDialog.getOpenFileName(
            self, "Open a capture", self.store.last_folder, CAPTURE_FILTER)
        if path:
            self.open_file(path)

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

    # -- view -----------------------------------------------------------------------------

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

    # -- toolbar channel boxes ---------------------------------------------------------

    def _set_channel_boxes(self, capture: Capture | None) -> None:
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

    # -- exports ------------------------------------------------------------------------------

    #: Save-dialog filter and suggested file-name ending of each export.
    _EXPORTS = {"json": ("JSON (*.json)", "analysis.json"), "csv": ("CSV (*.csv)", "figures.csv"),
                "cycles": ("CSV (*.csv)", "cycles.csv"), "png": ("PNG image (*.png)", "plots.png"),
                "svg": ("SVG drawing (*.svg)", "plots.svg")}

    def _export(self, kind: str) -> None:
        if self.analysis is None:
            return
        stem = Path(self.capture.source).stem
        filt, ending = self._EXPORTS[kind]
        suggested = str(Path(self.store.last_folder) / f"{stem}_{ending}")
        title = "Export the cycles as CSV" if kind == "cycles" else f"Export {kind.upper()}"
        path, _ = QtWidgets.QFileDialog.getSaveFileName(self, title, suggested, filt)
        if path:
            self.export_to(kind, path)

    def export_to(self, kind: str, path: str) -> str:
        """Write one export (``json``, ``csv``, ``cycles``, ``png``, ``svg``) of the shown
        analysis to ``path``; errors go to the banner. Returns a status line ("" on failure)."""
        a = self.analysis
        if a is None:
            return ""
        note = ""
        try:
            if kind == "json":
                exporting.save_json(a, path)
            elif kind == "csv":
                exporting.save_csv(a, path)
            elif kind == "cycles":
                exporting.save_cycles_csv(a, path)
            elif kind == "png":
                exporting.save_png(self.plots, path, caption=exporting.caption_lines(a))
            elif kind == "svg":
                used = exporting.save_svg(self.plots, path, caption=exporting.caption_lines(a))
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

    def show_guide(self) -> QtWidgets.QDialog:
        """The README as the user guide (``guide``), non-modal."""
        from .guide import guide_dialog
        dlg = guide_dialog(self)
        dlg.setObjectName("guide")
        dlg.open()
        return dlg

    def show_safety(self) -> None:
        self._info("Bench safety", helptext.SAFETY_HTML)

    def show_definitions(self) -> QtWidgets.QDialog:
        """The figures' labels and definitions, grouped as the figures panel groups them,
        in a scrolling box no taller than :data:`helptext.MAX_SCREEN_SHARE` of the screen."""
        dlg = helptext.scrolling_dialog(self, "trueslope — Measurement definitions",
                                        helptext.definitions_html())
        dlg.setObjectName("definitions")
        dlg.open()
        return dlg
