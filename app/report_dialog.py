"""Reports from the window: the dialog of their free fields, and the writing (worker thread).

The report itself is core's (:func:`trueslope.core.report.html.html_report`): HTML
written by :func:`trueslope.core.outputs.write_text_atomic`, or PDF through
:func:`trueslope.app.pdf.write_pdf`.
"""

from __future__ import annotations

import datetime as _dt
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from PySide6 import QtWidgets

#: Titles of the two reports.
TITLES = {"capture": "Ramp linearity report", "comparison": "Ramp linearity comparison"}


@dataclass(frozen=True)
class ReportFields:
    """The report's free fields, as typed (empty when not given)."""

    title: str = ""
    operator: str = ""
    unit_serial: str = ""
    notes: str = ""


class ReportDialog(QtWidgets.QDialog):
    """What to report (the open capture or the comparison) and the free fields."""

    def __init__(self, parent: QtWidgets.QWidget | None, fields: ReportFields, *,
                 has_capture: bool, has_comparison: bool, comparison_first: bool) -> None:
        super().__init__(parent)
        self.setWindowTitle("Write a report")
        form = QtWidgets.QFormLayout()
        self.capture_button = QtWidgets.QRadioButton("The open capture")
        self.comparison_button = QtWidgets.QRadioButton("The bench comparison")
        self.capture_button.setEnabled(has_capture)
        self.comparison_button.setEnabled(has_comparison)
        pick_comparison = has_comparison and (comparison_first or not has_capture)
        (self.comparison_button if pick_comparison else self.capture_button).setChecked(True)
        what = QtWidgets.QVBoxLayout()
        what.addWidget(self.capture_button)
        what.addWidget(self.comparison_button)
        form.addRow("Report on", what)
        self.title_edit = QtWidgets.QLineEdit(fields.title)
        self.title_edit.setPlaceholderText("default: " + TITLES["comparison" if pick_comparison
                                                               else "capture"])
        self.operator_edit = QtWidgets.QLineEdit(fields.operator)
        self.serial_edit = QtWidgets.QLineEdit(fields.unit_serial)
        self.notes_edit = QtWidgets.QPlainTextEdit(fields.notes)
        self.notes_edit.setMaximumHeight(120)
        form.addRow("Title", self.title_edit)
        form.addRow("Operator", self.operator_edit)
        form.addRow("Unit or serial", self.serial_edit)
        form.addRow("Notes", self.notes_edit)
        note = QtWidgets.QLabel("The next step asks where to write it: a name ending in .pdf "
                                "writes a PDF, any other an HTML page.")
        note.setWordWrap(True)
        buttons = QtWidgets.QDialogButtonBox(QtWidgets.QDialogButtonBox.StandardButton.Ok
                                             | QtWidgets.QDialogButtonBox.StandardButton.Cancel)
        buttons.button(QtWidgets.QDialogButtonBox.StandardButton.Ok).setText("Write…")
        buttons.button(QtWidgets.QDialogButtonBox.StandardButton.Ok).setEnabled(
            has_capture or has_comparison)
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        lay = QtWidgets.QVBoxLayout(self)
        lay.addLayout(form)
        lay.addWidget(note)
        lay.addWidget(buttons)

    def scope(self) -> str:
        return "comparison" if self.comparison_button.isChecked() else "capture"

    def fields(self) -> ReportFields:
        return ReportFields(self.title_edit.text().strip(), self.operator_edit.text().strip(),
                            self.serial_edit.text().strip(),
                            self.notes_edit.toPlainText().strip())


def build_report(path: str, analyses: Sequence[Any], fields: ReportFields,
                 when: _dt.datetime, *, limits: Any = None, limits_path: str | None = None,
                 comparison: Any = None, files_sha256: Mapping[str, str] | None = None,
                 force: bool = False) -> str:
    """Write the report of ``analyses`` (worker thread); returns the status line.

    A comparison's verdicts come from its entries; a single capture is judged against
    ``limits`` here. Files not given a checksum are hashed now.
    """
    from trueslope.core.compare import sha256_of
    from trueslope.core.limits import judge
    from trueslope.core.outputs import check_output, write_text_atomic
    from trueslope.core.report.html import html_report, installed_version

    inputs = [a.source for a in analyses] + ([limits_path] if limits_path else [])
    check_output(path, force, inputs=inputs)
    if comparison is not None:
        by_path = {e.path: e.limits for e in comparison.entries}
        verdicts = [by_path.get(a.source) for a in analyses] if limits is not None else None
        scope = "comparison"
    else:
        verdicts = [judge(a, limits) for a in analyses] if limits is not None else None
        scope = "capture"
    shas = dict(files_sha256 or {})
    for a in analyses:
        if a.source not in shas:
            try:
                shas[a.source] = sha256_of(a.source)
            except OSError:
                pass
    limits_text = None
    if limits_path:
        try:
            limits_text = Path(limits_path).read_text(encoding="utf-8", errors="replace")
        except OSError:
            limits_text = f"{Path(limits_path).name} (could not be read again)"
    html = html_report(list(analyses), title=fields.title or TITLES[scope],
                       operator=fields.operator or None, unit_serial=fields.unit_serial or None,
                       notes=fields.notes or None, limits_text=limits_text, verdicts=verdicts,
                       comparison=comparison, files_sha256=shas,
                       tool_version=installed_version(), generated_at=when)
    if Path(path).suffix.lower() == ".pdf":
        from .pdf import write_pdf
        write_pdf(html, path, force, inputs=inputs)
    else:
        write_text_atomic(path, html, force, inputs=inputs)
    return f"Report written to {Path(path).name}"
