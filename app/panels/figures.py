"""The figures panel: the headline nonlinearity, then every figure with its unit and definition.

It only reads a finished :class:`~trueslope.core.results.Analysis`; the
tooltips come from :data:`trueslope.core.report.FIGURE_DEFINITIONS`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable

from PySide6 import QtCore, QtGui, QtWidgets

from .. import formatting as fmt


def _definitions() -> dict[str, str]:
    from trueslope.core.report import FIGURE_DEFINITIONS
    return dict(FIGURE_DEFINITIONS)



@dataclass(frozen=True)
class FigureRow:
    """One line of the figures panel.

    Attributes
    ----------
    key : str
        Field of :class:`~trueslope.core.results.Figures` (and key of
        ``FIGURE_DEFINITIONS`` for the tooltip).
    label : str
        What the panel calls it.
    render : callable(Figures) -> str
        The value as display text.
    """

    key: str
    label: str
    render: Callable[[Any], str]


def _q(key: str, unit: str) -> Callable[[Any], str]:
    return lambda f: fmt.quantity(getattr(f, key), unit)


FIGURE_GROUPS: tuple[tuple[str, tuple[FigureRow, ...]], ...] = (
    ("Linearity", (
        FigureRow("nonlinearity_pct", "Nonlinearity (best-fit line)", _q("nonlinearity_pct", "%")),
        FigureRow("terminal_nonlinearity_pct", "Nonlinearity (end-point line)",
                  _q("terminal_nonlinearity_pct", "%")),
        FigureRow("peak_deviation_v", "Peak deviation", _q("peak_deviation_v", "V")),
        FigureRow("residual_rms_v", "Residual RMS", _q("residual_rms_v", "V")),
        FigureRow("slope_error_pct", "Slope error", _q("slope_error_pct", "%")),
        FigureRow("displacement_error_pct", "Displacement error", _q("displacement_error_pct", "%")),
        FigureRow("transmission_error_pct", "Transmission error", _q("transmission_error_pct", "%")),
        FigureRow("midpoint_time_error_s", "Midpoint time error",
                  lambda f: f"{fmt.si(f.midpoint_time_error_s, 's')}  ({fmt.pct(f.midpoint_time_error_pct)})"),
    )),
    ("Ramp", (
        FigureRow("slope_v_per_s", "Slope (95 % interval)",
                  lambda f: fmt.with_ci(f.slope_v_per_s, f.slope_ci95_v_per_s, "V/s")),
        FigureRow("fitted_span_v", "Span in the window", _q("fitted_span_v", "V")),
        FigureRow("amplitude_v", "Amplitude", _q("amplitude_v", "V")),
        FigureRow("start_v", "Start level", _q("start_v", "V")),
        FigureRow("end_v", "End level", _q("end_v", "V")),
        FigureRow("offset_v", "Offset", _q("offset_v", "V")),
        FigureRow("direction", "Direction", lambda f: fmt.plain(f.direction)),
    )),
    ("Timing", (
        FigureRow("frequency_hz", "Repetition rate", _q("frequency_hz", "Hz")),
        FigureRow("period_s", "Period", _q("period_s", "s")),
        FigureRow("period_jitter_s", "Period jitter", _q("period_jitter_s", "s")),
        FigureRow("ramp_time_s", "Ramp time", _q("ramp_time_s", "s")),
        FigureRow("retrace_time_s", "Retrace time", _q("retrace_time_s", "s")),
        FigureRow("full_cycles", "Full cycles (partial)",
                  lambda f: f"{f.full_cycles}  ({f.partial_cycles})"),
    )),
    ("Resolution", (
        FigureRow("noise_rms_v", "Noise per sample (RMS)", _q("noise_rms_v", "V")),
        FigureRow("adc_step_v", "Quantisation step", _q("adc_step_v", "V")),
        FigureRow("nonlinearity_floor_pct", "Smallest resolvable nonlinearity",
                  _q("nonlinearity_floor_pct", "%")),
        FigureRow("below_floor", "Nonlinearity below that floor", lambda f: fmt.plain(f.below_floor)),
    )),
    ("Fit window", (
        FigureRow("window_start_s", "Window from", _q("window_start_s", "s")),
        FigureRow("window_end_s", "Window to", _q("window_end_s", "s")),
        FigureRow("trim_fraction", "Trim at each end", lambda f: fmt.pct(100.0 * f.trim_fraction)),
    )),
)


class FiguresPanel(QtWidgets.QWidget):
    """The headline nonlinearity, then every figure with its unit and definition."""

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        self._definitions = _definitions()
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        self.headline = QtWidgets.QLabel(fmt.MISSING)
        self.headline.setObjectName("headline")
        self.headline_sub = QtWidgets.QLabel("Open a capture to measure it.")
        self.headline_sub.setObjectName("headlineSub")
        self.headline_sub.setWordWrap(True)
        self.headline.setToolTip(self._definitions.get("nonlinearity_pct", ""))
        lay.addWidget(self.headline)
        lay.addWidget(self.headline_sub)
        self.tree = QtWidgets.QTreeWidget()
        self.tree.setColumnCount(2)
        self.tree.setHeaderLabels(["Figure", "Value"])
        self.tree.setRootIsDecorated(False)
        self.tree.setAlternatingRowColors(True)
        self.tree.setUniformRowHeights(True)
        self.tree.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.NoSelection)
        self.tree.header().setStretchLastSection(True)
        self.tree.setIndentation(8)
        lay.addWidget(self.tree, 1)
        self._items: dict[str, QtWidgets.QTreeWidgetItem] = {}
        bold = self.font()
        bold.setBold(True)
        for group, rows in FIGURE_GROUPS:
            head = QtWidgets.QTreeWidgetItem(self.tree, [group, ""])
            head.setFirstColumnSpanned(True)
            head.setFont(0, bold)
            head.setForeground(0, QtGui.QColor("#4b3f2a"))
            for row in rows:
                item = QtWidgets.QTreeWidgetItem(self.tree, [row.label, fmt.MISSING])
                tip = self._definitions.get(row.key, "")
                item.setToolTip(0, tip)
                item.setToolTip(1, tip)
                item.setTextAlignment(1, QtCore.Qt.AlignmentFlag.AlignRight | QtCore.Qt.AlignmentFlag.AlignVCenter)
                self._items[row.key] = item
        self.tree.resizeColumnToContents(0)

    def value_text(self, key: str) -> str:
        """The text shown for one figure (tests, clipboard)."""
        return self._items[key].text(1)

    def tooltip(self, key: str) -> str:
        return self._items[key].toolTip(0)

    def set_analysis(self, analysis: Any) -> None:
        f = analysis.figures
        for _, rows in FIGURE_GROUPS:
            for row in rows:
                try:
                    text = row.render(f)
                except (AttributeError, TypeError, ValueError):
                    text = fmt.MISSING
                self._items[row.key].setText(1, text)
        self.headline.setText(f"Nonlinearity {fmt.pct(f.nonlinearity_pct)}")
        floor = fmt.pct(f.nonlinearity_floor_pct)
        below = " — below what this capture resolves" if f.below_floor else ""
        self.headline_sub.setText(
            f"best-fit line over {f.full_cycles} averaged cycles; resolvable down to {floor}{below}")
