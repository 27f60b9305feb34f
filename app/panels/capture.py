"""The capture panel: what the file said about itself, and what the import noticed."""

from __future__ import annotations

from typing import TYPE_CHECKING

from PySide6 import QtGui, QtWidgets

from trueslope.core.report.numbers import MISSING, si

if TYPE_CHECKING:
    from trueslope.core.capture import Capture
    from trueslope.core.results import Analysis


class CapturePanel(QtWidgets.QWidget):
    """What the file said about itself, and what the import noticed."""

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        lay = QtWidgets.QVBoxLayout(self)
        lay.setContentsMargins(6, 4, 6, 6)
        wbox = QtWidgets.QGroupBox("Warnings (from the import and the analysis)")
        wl = QtWidgets.QVBoxLayout(wbox)
        self.warnings = QtWidgets.QListWidget()
        self.warnings.setWordWrap(True)
        self.warnings.setMaximumHeight(96)
        wl.addWidget(self.warnings)
        mbox = QtWidgets.QGroupBox("Capture")
        ml = QtWidgets.QVBoxLayout(mbox)
        self.table = QtWidgets.QTableWidget(0, 2)
        self.table.setHorizontalHeaderLabels(["Field", "Value"])
        self.table.verticalHeader().setVisible(False)
        self.table.verticalHeader().setDefaultSectionSize(22)
        self.table.horizontalHeader().setStretchLastSection(True)
        self.table.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setWordWrap(True)
        ml.addWidget(self.table)
        lay.addWidget(wbox)
        lay.addWidget(mbox, 1)

    def set_capture(self, capture: Capture, analysis: Analysis | None) -> None:
        rows: list[tuple[str, str]] = [
            ("File", str(capture.source)),
            ("Layout", capture.layout or MISSING),
            ("Channels", ", ".join(capture.channel_names)),
            ("Measured channel", analysis.channel if analysis is not None else MISSING),
            ("Samples", f"{capture.samples:,}".replace(",", " ")),
            ("Sample interval", si(capture.sample_interval_s, "s")),
            ("Sample rate", si(capture.sample_rate_hz, "Sa/s")),
            ("Record length", si(capture.duration_s, "s")),
            ("Time column", capture.time_column or "none (interval given)"),
        ]
        if analysis is not None:
            rows.append(("Resets found from", "sync channel" if analysis.segmentation.source == "sync"
                         else "the ramp itself"))
        rows += [(f"  {k}", str(v)) for k, v in dict(capture.metadata).items()]
        self.table.setRowCount(len(rows))
        for r, (k, v) in enumerate(rows):
            self.table.setItem(r, 0, QtWidgets.QTableWidgetItem(k))
            self.table.setItem(r, 1, QtWidgets.QTableWidgetItem(v))
        self.table.resizeColumnToContents(0)
        self.warnings.clear()
        warns = analysis.warnings if analysis is not None else capture.warnings
        for w in warns:
            self.warnings.addItem(str(w))
        if not warns:
            item = QtWidgets.QListWidgetItem("No warnings: the file read cleanly.")
            item.setForeground(QtGui.QBrush(QtGui.QColor("#6a6f78")))
            self.warnings.addItem(item)
