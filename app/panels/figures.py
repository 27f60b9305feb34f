"""The figures panel: the headline nonlinearity, then every figure with its unit and definition.

It only reads a finished :class:`~trueslope.core.results.Analysis`. Every
label, unit and precision comes from :data:`trueslope.core.report.numbers.FIGURES`
through :func:`~trueslope.core.report.numbers.figure_text`, so a figure reads
the same here as in the terminal and the exports; the tooltips come from
:data:`trueslope.core.report.FIGURE_DEFINITIONS`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Callable

from PySide6 import QtCore, QtGui, QtWidgets

from trueslope.core.report.numbers import FIGURES, MISSING, figure_text, with_ci

if TYPE_CHECKING:
    from trueslope.core.results import Analysis, Figures


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
        ``FIGURES`` and ``FIGURE_DEFINITIONS``).
    label : str
        What the panel calls it: ``FIGURES[key].label``, or a label composed
        from it for a row that shows two figures.
    render : callable(Figures) -> str
        The value as display text.
    """

    key: str
    label: str
    render: Callable[[Figures], str]


def _row(key: str, value: Callable[[Figures], object]) -> FigureRow:
    """A row showing one figure as ``figure_text`` writes it."""
    return FigureRow(key, FIGURES[key].label, lambda f: figure_text(key, value(f)))


def _slope(f: Figures) -> str:
    return with_ci(f.slope_v_per_s, f.slope_ci95_v_per_s, FIGURES["slope_v_per_s"].unit,
                   FIGURES["slope_v_per_s"].digits)


def _midpoint(f: Figures) -> str:
    return (f"{figure_text('midpoint_time_error_s', f.midpoint_time_error_s)}  "
            f"({figure_text('midpoint_time_error_pct', f.midpoint_time_error_pct)})")


def _adc_step(f: Figures) -> str:
    # As the terminal says it: no step is a finding, not a missing value.
    return figure_text("adc_step_v", f.adc_step_v) if f.adc_step_v else "none found"


FIGURE_GROUPS: tuple[tuple[str, tuple[FigureRow, ...]], ...] = (
    ("Linearity", (
        _row("nonlinearity_pct", lambda f: f.nonlinearity_pct),
        _row("terminal_nonlinearity_pct", lambda f: f.terminal_nonlinearity_pct),
        _row("peak_deviation_v", lambda f: f.peak_deviation_v),
        _row("residual_rms_v", lambda f: f.residual_rms_v),
        _row("slope_error_pct", lambda f: f.slope_error_pct),
        _row("displacement_error_pct", lambda f: f.displacement_error_pct),
        _row("transmission_error_pct", lambda f: f.transmission_error_pct),
        FigureRow("midpoint_time_error_s", FIGURES["midpoint_time_error_s"].label, _midpoint),
    )),
    ("Ramp", (
        FigureRow("slope_v_per_s", f"{FIGURES['slope_v_per_s'].label} (95 % interval)", _slope),
        _row("fitted_span_v", lambda f: f.fitted_span_v),
        _row("amplitude_v", lambda f: f.amplitude_v),
        _row("start_v", lambda f: f.start_v),
        _row("end_v", lambda f: f.end_v),
        _row("offset_v", lambda f: f.offset_v),
        _row("direction", lambda f: f.direction),
    )),
    ("Timing", (
        _row("frequency_hz", lambda f: f.frequency_hz),
        _row("period_s", lambda f: f.period_s),
        _row("period_jitter_s", lambda f: f.period_jitter_s),
        _row("ramp_time_s", lambda f: f.ramp_time_s),
        _row("retrace_time_s", lambda f: f.retrace_time_s),
        FigureRow("full_cycles", f"{FIGURES['full_cycles'].label} (partial)",
                  lambda f: f"{figure_text('full_cycles', f.full_cycles)}  "
                            f"({figure_text('partial_cycles', f.partial_cycles)})"),
    )),
    ("Resolution", (
        _row("noise_rms_v", lambda f: f.noise_rms_v),
        FigureRow("adc_step_v", FIGURES["adc_step_v"].label, _adc_step),
        _row("nonlinearity_floor_pct", lambda f: f.nonlinearity_floor_pct),
        _row("below_floor", lambda f: f.below_floor),
    )),
    ("Fit window", (
        _row("window_start_s", lambda f: f.window_start_s),
        _row("window_end_s", lambda f: f.window_end_s),
        _row("trim_fraction", lambda f: f.trim_fraction),
    )),
)


class FiguresPanel(QtWidgets.QWidget):
    """The headline nonlinearity, then every figure with its unit and definition."""

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        self._definitions = _definitions()
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        self.headline = QtWidgets.QLabel(MISSING)
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
                item = QtWidgets.QTreeWidgetItem(self.tree, [row.label, MISSING])
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

    def set_analysis(self, analysis: Analysis) -> None:
        f = analysis.figures
        for _, rows in FIGURE_GROUPS:
            for row in rows:
                self._items[row.key].setText(1, row.render(f))
        self.headline.setText(f"Nonlinearity {figure_text('nonlinearity_pct', f.nonlinearity_pct)}")
        floor = figure_text("nonlinearity_floor_pct", f.nonlinearity_floor_pct)
        below = " — below what this capture resolves" if f.below_floor else ""
        self.headline_sub.setText(
            f"best-fit line over {f.full_cycles} averaged cycles; resolvable down to {floor}{below}")
