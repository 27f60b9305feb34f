"""The explanation of a set of bench captures: the words, and a plot per capture.

:class:`ExplainPanel` only shows a finished :class:`~trueslope.app.explain_jobs.ExplainAnswer`:
the verdict first, then the other lines of
:func:`trueslope.core.report.explain_text.explanation_lines` (the terminal's words),
and for every capture its averaged ramp minus its best-fit line (dots) with the set
model's curve minus the same line over it, so one can see the shared model follow
each capture. A capture the set's model does not explain is marked in its plot's
title. While the worker runs the panel shows a busy bar and a Cancel button.
"""

from __future__ import annotations

import html
import math

import numpy as np
import pyqtgraph as pg
from PySide6 import QtCore, QtWidgets

from . import theme
from .plotparts import direct_axes, key_html, pen

#: What the panel says before anything was explained.
EMPTY_TEXT = ("Explain finds the one cause that accounts for several captures of the same "
              "circuit taken at other currents, swings or capacitances. Select captures in "
              "the table (none selected: every measured capture) and press Explain. Each "
              "capture's circuit values are the ones it was measured with: open it "
              "(double-click), fill in its circuit on the Self-check tab, then choose "
              "File > Add this capture to the comparison.")
#: The set's model's curve over each capture.
MODEL_COLOUR = theme.FIT_LINE
#: A capture the model does not explain: its plot title's colour.
UNEXPLAINED_COLOUR = theme.VERDICT_DISAGREES
#: Captures in one column of plots before a second column starts.
PLOTS_PER_COLUMN = 3


class ExplainPanel(QtWidgets.QWidget):
    """The words and plots of one explanation.

    Signals
    -------
    cancel_requested()
        The user pressed Cancel while the worker runs.
    """

    cancel_requested = QtCore.Signal()

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        self.lines: list[str] = []
        self.plots: list[pg.PlotItem] = []
        head = QtWidgets.QHBoxLayout()
        head.setContentsMargins(4, 2, 4, 2)
        self.state = QtWidgets.QLabel("")
        self.state.setObjectName("muted")
        self.busy_bar = QtWidgets.QProgressBar()
        self.busy_bar.setRange(0, 0)  # explain() reports no fraction: a busy bar
        self.busy_bar.setFixedWidth(160)
        self.busy_bar.setFormat("explaining…")
        self.cancel_button = QtWidgets.QPushButton("Cancel")
        self.cancel_button.setToolTip("Stop explaining; the captures stay as they are")
        self.cancel_button.clicked.connect(self.cancel_requested)
        head.addWidget(self.state, 1)
        head.addWidget(self.busy_bar)
        head.addWidget(self.cancel_button)
        self.set_busy(False)

        self.text = QtWidgets.QTextBrowser()
        self.text.setObjectName("explainText")
        self.text.setOpenLinks(False)
        self.text.setMinimumWidth(320)
        self.key = QtWidgets.QLabel(key_html([
            ("dot", theme.RESIDUAL_POINTS, "averaged ramp − its best-fit line"),
            ("line", MODEL_COLOUR, "the set's model − the same line")]))
        self.key.setTextFormat(QtCore.Qt.TextFormat.RichText)
        self.key.setStyleSheet(f"background: {theme.PLOT_BACKGROUND}; padding: 3px;")
        self.graphs = pg.GraphicsLayoutWidget()
        self.graphs.setBackground(theme.PLOT_BACKGROUND)
        right = QtWidgets.QWidget()
        rl = QtWidgets.QVBoxLayout(right)
        rl.setContentsMargins(0, 0, 0, 0)
        rl.setSpacing(0)
        rl.addWidget(self.key)
        rl.addWidget(self.graphs, 1)
        self.split = QtWidgets.QSplitter(QtCore.Qt.Orientation.Horizontal)
        self.split.addWidget(self.text)
        self.split.addWidget(right)
        self.split.setStretchFactor(0, 5)
        self.split.setStretchFactor(1, 6)
        self.split.setChildrenCollapsible(False)
        self.split.setSizes([560, 840])  # the words get room to wrap into few lines
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.setSpacing(2)
        lay.addLayout(head)
        lay.addWidget(self.split, 1)
        self.clear()

    # -- state -----------------------------------------------------------------------

    def set_busy(self, busy: bool, what: str = "") -> None:
        """Show the busy bar and Cancel (True) or hide them; ``what`` for the state line."""
        self.busy_bar.setVisible(busy)
        self.cancel_button.setVisible(busy)
        if what:
            self.state.setText(what)

    @property
    def busy(self) -> bool:
        return self.busy_bar.isVisibleTo(self)

    def clear(self) -> None:
        """Back to the hint shown before anything was explained."""
        self.lines = []
        self.text.setHtml(f"<p>{html.escape(EMPTY_TEXT)}</p>")
        self._plots([])
        self.key.hide()
        self.state.setText("Nothing explained yet")

    def show_message(self, text: str, state: str = "Not explained") -> None:
        """A refusal or a note in place of an explanation (the last plots are removed)."""
        self.lines = []
        self.text.setHtml(f"<p style='color:{UNEXPLAINED_COLOUR}'><b>{html.escape(text)}</b></p>"
                          f"<p>{html.escape(EMPTY_TEXT)}</p>")
        self._plots([])
        self.key.hide()
        self.set_busy(False, state)

    def show_answer(self, answer) -> None:
        """Draw an :class:`~trueslope.app.explain_jobs.ExplainAnswer`."""
        self.lines = list(answer.lines)
        verdict, rest = (self.lines[0], self.lines[1:]) if self.lines else ("", [])
        parts = [f"<p style='font-size:11pt'><b>{html.escape(verdict)}</b></p>",
                 f"<p style='color:{theme.VERDICT_DEFAULT}'>"
                 f"{html.escape(answer.captures_line)}</p>"]
        if rest:
            parts.append("<ul style='margin-left:-18px'>" + "".join(
                f"<li style='margin-bottom:4px'>{html.escape(x)}</li>" for x in rest) + "</ul>")
        if answer.left_out:
            names = ", ".join(QtCore.QFileInfo(p).fileName() for p in answer.left_out)
            parts.append(f"<p style='color:{theme.VERDICT_DEFAULT}'>Left out, not measured: "
                         f"{html.escape(names)}.</p>")
        self.text.setHtml("".join(parts))
        self._plots(list(answer.curves))
        self.key.setVisible(bool(answer.curves))
        n = len(answer.explanation.captures)
        self.set_busy(False, f"Explained {n} capture{'s' if n != 1 else ''}")

    def plain_text(self) -> str:
        """What the text pane shows, without markup (tests)."""
        return self.text.toPlainText()

    # -- plots -----------------------------------------------------------------------

    def _plots(self, curves: list) -> None:
        self.graphs.clear()
        self.plots = []
        n = len(curves)
        if not n:
            return
        columns = math.ceil(n / PLOTS_PER_COLUMN)
        rows = math.ceil(n / columns)
        first = None
        for k, c in enumerate(curves):
            row, col = divmod(k, columns)  # in reading order
            p = self.graphs.addPlot(row=row, col=col, axisItems=direct_axes())
            self._style(p, c, bottom=k + columns >= n)
            p.addItem(pg.InfiniteLine(0.0, angle=0, pen=pen(theme.ZERO_LINE, 1)),
                      ignoreBounds=True)
            p.plot(c.u, c.residual_pct, pen=None, symbol="o", symbolSize=3, symbolPen=None,
                   symbolBrush=pg.mkBrush(*theme.RESIDUAL_POINTS))
            if c.model_pct.size:
                p.plot(c.u, c.model_pct, pen=pen(MODEL_COLOUR, 2.2))
            self._fit_y(p, c)
            if first is None:
                first = p
            else:
                p.setXLink(first)
            self.plots.append(p)

    @staticmethod
    def _style(p: pg.PlotItem, c, bottom: bool) -> None:
        title = html.escape(c.name)
        colour = UNEXPLAINED_COLOUR if c.unexplained else theme.PLOT_FOREGROUND
        if c.unexplained:
            title += " — not explained by the set's model"
        p.setTitle(f"<span style='color:{colour}'>{title}</span>", size="9pt")
        p.showGrid(x=True, y=True, alpha=theme.GRID_ALPHA)
        p.setMenuEnabled(False)
        p.setMouseEnabled(x=False, y=False)
        for side in ("left", "bottom"):
            ax = p.getAxis(side)
            ax.setPen(pen(theme.PLOT_FOREGROUND))
            ax.setTextPen(pen(theme.PLOT_FOREGROUND))
            ax.enableAutoSIPrefix(False)
        p.getAxis("left").setWidth(58)
        p.setLabel("left", "% of span")
        if bottom:
            p.setLabel("bottom", "Ramp time, normalised (0 = start, 1 = end)")
        p.setXRange(0.0, 1.0, padding=0.02)

    @staticmethod
    def _fit_y(p: pg.PlotItem, c) -> None:
        """The y range of the model and the bulk of the dots: a stray bin at the window's
        edge must not flatten the bow."""
        r = c.residual_pct[np.isfinite(c.residual_pct)]
        m = c.model_pct[np.isfinite(c.model_pct)] if c.model_pct.size else np.zeros(0)
        top = max(float(np.percentile(np.abs(r), 99.5)) if r.size else 0.0,
                  float(np.max(np.abs(m))) if m.size else 0.0)
        if top > 0 and math.isfinite(top):
            p.setYRange(-1.15 * top, 1.15 * top, padding=0)
