"""The findings: the diagnosis page (its line, explanation and next checks, and what it
would take, :mod:`.whatif`) and the self-check page (the circuit-context form over the
self-check).

It only reads a finished :class:`~trueslope.core.results.Analysis`. Every
sentence comes from :mod:`trueslope.core.report` (the diagnosis line the
terminal prints, the explanation, the bench steps, each self-check item's
likely cause and the self-check's summary), and every number from
:mod:`trueslope.core.report.numbers`, so the window says what the terminal
and the exports say.
"""

from __future__ import annotations

import html
from typing import TYPE_CHECKING

from PySide6 import QtCore, QtGui, QtWidgets

from trueslope.core.report.numbers import MISSING, pct, quantity
from trueslope.core.report.prose import (explanation, likely_cause, next_checks,
                                         selfcheck_summary)
from trueslope.core.report.summary import diagnosis_line
from trueslope.core.selfcheck import DISAGREES

from .. import theme
from .context_form import ContextForm
from .whatif import WhatItTakes

if TYPE_CHECKING:
    from trueslope.core.results import Analysis, CheckItem, ContextCheck, Diagnosis

#: What the self-check says before any circuit value is given.
NO_CONTEXT = "Fill in the circuit context above to compare the circuit with the measurement."
#: Columns of the self-check table; "Expected" says where its value comes from
#: (``CheckItem.basis``: "predicted" by the parts, or the "stated probe").
CHECK_COLUMNS = ("Check", "Expected (from)", "Measured", "Off by", "Verdict")
#: The self-check's title, and the mark it carries while the form has changes not measured.
CHECK_TITLE = "Self-check against the circuit"
STALE_TEXT = ("Out of date: the circuit values above differ from the ones this self-check "
              "was measured with. Apply them (or press Enter) or Revert.")


def _pretty(code: str) -> str:
    """A code or name as a heading: ``"shunt-loading"`` -> ``"Shunt loading"``."""
    text = code.replace("_", " ").replace("-", " ").strip()
    return text[:1].upper() + text[1:]


def _text_label(object_name: str = "") -> QtWidgets.QLabel:
    label = QtWidgets.QLabel("")
    label.setWordWrap(True)
    label.setTextFormat(QtCore.Qt.TextFormat.PlainText)
    label.setTextInteractionFlags(QtCore.Qt.TextInteractionFlag.TextSelectableByMouse)
    if object_name:
        label.setObjectName(object_name)
    return label


def _bullets(title: str, lines: list[str]) -> str:
    """Rich text: a bold title over a bulleted list (each line already escaped)."""
    items = "".join(f"<li>{line}</li>" for line in lines)
    head = f"<b>{html.escape(title)}</b>" if title else ""
    return f"{head}<ul style='margin-left:-20px'>{items}</ul>"


def _page() -> tuple[QtWidgets.QScrollArea, QtWidgets.QVBoxLayout]:
    page = QtWidgets.QScrollArea()
    page.setWidgetResizable(True)
    page.setFrameShape(QtWidgets.QFrame.Shape.NoFrame)
    body = QtWidgets.QWidget()
    lay = QtWidgets.QVBoxLayout(body)
    lay.setContentsMargins(6, 4, 6, 6)
    page.setWidget(body)
    return page, lay


class FindingsPanel(QtCore.QObject):
    """The diagnosis page and the self-check page (the window puts each on a tab).

    Attributes
    ----------
    diagnosis_page, check_page : QScrollArea
        The two pages.
    """

    def __init__(self, parent: QtCore.QObject | None = None) -> None:
        super().__init__(parent)
        self.diagnosis_page, lay = _page()
        diag = QtWidgets.QGroupBox("Diagnosis")
        dl = QtWidgets.QVBoxLayout(diag)
        self.signature = _text_label("signature")
        self.signature.setText(MISSING)
        self.line = _text_label("muted")
        self.explanation = _text_label()
        self.next_checks = QtWidgets.QLabel("")
        self.next_checks.setWordWrap(True)
        self.next_checks.setTextFormat(QtCore.Qt.TextFormat.RichText)
        for w in (self.signature, self.line, self.explanation, self.next_checks):
            dl.addWidget(w)
        lay.addWidget(diag)
        self.whatif = WhatItTakes()
        lay.addWidget(self.whatif)
        lay.addStretch(1)

        self.check_page, lay = _page()
        lay.setSpacing(4)
        self.check_box = check = QtWidgets.QGroupBox(CHECK_TITLE)
        cl = QtWidgets.QVBoxLayout(check)
        cl.setContentsMargins(6, 4, 6, 6)
        self.stale_mark = QtWidgets.QLabel(STALE_TEXT)
        self.stale_mark.setObjectName("staleMark")
        self.stale_mark.setWordWrap(True)
        self.stale_mark.hide()
        cl.addWidget(self.stale_mark)
        self.check_summary = _text_label()
        self.check_summary.setText(NO_CONTEXT)
        self.check_table = QtWidgets.QTableWidget(0, len(CHECK_COLUMNS))
        self.check_table.setHorizontalHeaderLabels(list(CHECK_COLUMNS))
        self.check_table.verticalHeader().setVisible(False)
        self.check_table.verticalHeader().setDefaultSectionSize(22)
        self.check_table.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.check_table.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.NoSelection)
        self.check_table.horizontalHeader().setStretchLastSection(True)
        self.check_table.setWordWrap(True)
        self.check_table.setHorizontalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.check_table.setVerticalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.check_table.hide()
        self.check_table.installEventFilter(self)
        self.causes = QtWidgets.QLabel("")
        self.causes.setWordWrap(True)
        self.causes.setTextFormat(QtCore.Qt.TextFormat.RichText)
        self.causes.hide()
        cl.addWidget(self.check_summary)
        cl.addWidget(self.check_table)
        cl.addWidget(self.causes)
        self.form = ContextForm()
        self.form.stale_changed.connect(self.set_stale)
        lay.addWidget(self.form)
        lay.addWidget(check)
        lay.addStretch(1)

    def set_stale(self, stale: bool) -> None:
        """Mark the self-check as out of date (the form has changes not measured yet)."""
        self.stale_mark.setVisible(stale)
        self.check_box.setTitle(f"{CHECK_TITLE} (out of date)" if stale else CHECK_TITLE)

    @property
    def stale(self) -> bool:
        return self.stale_mark.isVisibleTo(self.check_page)

    def set_analysis(self, analysis: Analysis) -> None:
        d = analysis.diagnosis
        self.signature.setText(_pretty(d.signature))
        self.line.setText(diagnosis_line(analysis))
        self.explanation.setText(explanation(d))
        steps = [html.escape(step) for step in next_checks(d)]
        self.next_checks.setText(_bullets("Next checks", steps) if steps else "")
        self._set_check(analysis.context_check, d)
        self.whatif.set_analysis(analysis)

    def _set_check(self, cc: ContextCheck | None, d: Diagnosis) -> None:
        if cc is None:
            self.check_summary.setText(NO_CONTEXT)
            self.check_table.setRowCount(0)
            self.check_table.hide()
            self.causes.hide()
            return
        self.check_summary.setText(selfcheck_summary(cc, d))
        items = cc.items
        causes = [likely_cause(it, d) for it in items]
        self.check_table.setRowCount(len(items))
        for r, (it, cause) in enumerate(zip(items, causes)):
            self._set_row(r, it, cause)
        self.check_table.setVisible(bool(items))
        self._fit_table()
        lines = [self._cause_line(it, cause) for it, cause in zip(items, causes) if cause]
        if lines:
            self.causes.setText(_bullets("Likely causes and what each figure is", lines))
            self.causes.show()
        else:
            self.causes.hide()

    def _fit_table(self) -> None:
        """Columns to their contents, the verdict taking what is left (wrapped), and the
        table as tall as its rows: five rows never need a scroll bar."""
        t = self.check_table
        hh = t.horizontalHeader()
        last = t.columnCount() - 1
        for c in range(last):
            hh.setSectionResizeMode(c, QtWidgets.QHeaderView.ResizeMode.ResizeToContents)
        hh.setSectionResizeMode(last, QtWidgets.QHeaderView.ResizeMode.Stretch)
        t.resizeRowsToContents()
        h = hh.height() + 4 + sum(t.rowHeight(r) for r in range(t.rowCount()))
        t.setFixedHeight(h)

    def eventFilter(self, watched: QtCore.QObject, event: QtCore.QEvent) -> bool:  # noqa: N802
        # A narrower page wraps the verdicts onto more lines: keep the table as tall as them.
        if watched is self.check_table and event.type() == QtCore.QEvent.Type.Resize \
                and self.check_table.rowCount():
            QtCore.QTimer.singleShot(0, self._fit_table)
        return False

    def _set_row(self, r: int, it: CheckItem, cause: str) -> None:
        expected = quantity(it.expected, it.unit)
        if it.expected is not None:
            expected = f"{expected} ({it.basis})"
        cells = (_pretty(it.name), expected, quantity(it.measured, it.unit),
                 pct(it.deviation_pct, signed=True), it.verdict)
        for c, text in enumerate(cells):
            cell = QtWidgets.QTableWidgetItem(text)
            if cause:
                cell.setToolTip(cause)
            if c == len(cells) - 1:
                cell.setForeground(QtGui.QBrush(QtGui.QColor(theme.verdict_colour(text))))
                f = cell.font()
                f.setBold(True)
                cell.setFont(f)
            self.check_table.setItem(r, c, cell)

    @staticmethod
    def _cause_line(it: CheckItem, cause: str) -> str:
        # As the terminal puts it: an item outside its tolerance is "likely" its
        # cause; any other item's words say what the figure is.
        name = f"<b>{html.escape(_pretty(it.name))}</b>"
        if it.verdict in DISAGREES:
            return f"{name} ({html.escape(it.verdict)}): likely {html.escape(cause)}"
        return f"{name}: {html.escape(cause)}"

    def check_rows(self) -> list[list[str]]:
        """The self-check table as text (tests)."""
        t = self.check_table
        return [[t.item(r, c).text() for c in range(t.columnCount())] for r in range(t.rowCount())]

    def causes_text(self) -> str:
        """The likely-cause list as shown, without markup (tests)."""
        doc = QtGui.QTextDocument()
        doc.setHtml(self.causes.text())
        return doc.toPlainText() if self.causes.isVisibleTo(self.check_page) else ""
