"""The findings panel: the diagnosis, its explanation and next checks, the self-check, and the context form.

It only reads a finished :class:`~trueslope.core.results.Analysis`.
"""

from __future__ import annotations

import html
from typing import Any

from PySide6 import QtCore, QtGui, QtWidgets

from .. import formatting as fmt
from .. import theme
from .context_form import ContextForm


_CURVATURE_WORDS = {
    "concave": "concave: the slope falls along the ramp",
    "convex": "convex: the slope rises along the ramp",
}


def _pretty(word: Any) -> str:
    text = str(word).replace("_", " ").replace("-", " ").strip()
    return text[:1].upper() + text[1:]


class FindingsPanel(QtWidgets.QScrollArea):
    """The diagnosis, its explanation and next checks, the self-check, and the context form."""

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        self.setWidgetResizable(True)
        self.setFrameShape(QtWidgets.QFrame.Shape.NoFrame)
        body = QtWidgets.QWidget()
        lay = QtWidgets.QVBoxLayout(body)
        lay.setContentsMargins(6, 4, 6, 6)

        diag = QtWidgets.QGroupBox("Diagnosis")
        dl = QtWidgets.QVBoxLayout(diag)
        self.signature = QtWidgets.QLabel(fmt.MISSING)
        self.signature.setObjectName("signature")
        self.signature.setWordWrap(True)
        self.strength = QtWidgets.QLabel("")
        self.strength.setObjectName("muted")
        self.strength.setWordWrap(True)
        self.explanation = QtWidgets.QLabel("")
        self.explanation.setWordWrap(True)
        self.explanation.setTextInteractionFlags(QtCore.Qt.TextInteractionFlag.TextSelectableByMouse)
        self.next_checks = QtWidgets.QLabel("")
        self.next_checks.setWordWrap(True)
        self.next_checks.setTextFormat(QtCore.Qt.TextFormat.RichText)
        for w in (self.signature, self.strength, self.explanation, self.next_checks):
            dl.addWidget(w)
        lay.addWidget(diag)

        check = QtWidgets.QGroupBox("Self-check against the circuit")
        cl = QtWidgets.QVBoxLayout(check)
        self.check_summary = QtWidgets.QLabel("Fill in the circuit context above to compare "
                                              "the circuit with the measurement.")
        self.check_summary.setWordWrap(True)
        self.check_table = QtWidgets.QTableWidget(0, 5)
        self.check_table.setHorizontalHeaderLabels(["Check", "Expected", "Measured", "Off by", "Verdict"])
        self.check_table.verticalHeader().setVisible(False)
        self.check_table.verticalHeader().setDefaultSectionSize(22)
        self.check_table.setEditTriggers(QtWidgets.QAbstractItemView.EditTrigger.NoEditTriggers)
        self.check_table.setSelectionMode(QtWidgets.QAbstractItemView.SelectionMode.NoSelection)
        self.check_table.horizontalHeader().setStretchLastSection(True)
        self.check_table.setVerticalScrollBarPolicy(QtCore.Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.check_table.hide()
        self.probe_line = QtWidgets.QLabel("")
        self.probe_line.setWordWrap(True)
        self.probe_line.setTextFormat(QtCore.Qt.TextFormat.RichText)
        self.probe_line.hide()
        cl.addWidget(self.check_summary)
        cl.addWidget(self.check_table)
        cl.addWidget(self.probe_line)
        self.form = ContextForm()
        lay.addWidget(self.form)
        lay.addWidget(check)
        lay.addStretch(1)
        self.setWidget(body)

    def set_analysis(self, analysis: Any) -> None:
        d = analysis.diagnosis
        if d is None:
            self.signature.setText("No diagnosis")
            self.strength.setText("")
            self.explanation.setText("")
            self.next_checks.setText("")
        else:
            self.signature.setText(_pretty(getattr(d, "signature", "")))
            bits = [str(getattr(d, "strength_words", "") or "")]
            curv = str(getattr(d, "curvature", "") or "")
            if curv in _CURVATURE_WORDS:
                bits.append(_CURVATURE_WORDS[curv])
            tau = getattr(d, "tau_s", None)
            if tau is not None and fmt.si(tau, "s") != fmt.MISSING:
                bits.append(f"time constant {fmt.si(tau, 's', 3)}")
            shunt = getattr(d, "equivalent_shunt_ohm", None)
            if shunt is not None and fmt.si(shunt, "Ω") != fmt.MISSING:
                bits.append(f"like a {fmt.si(shunt, 'Ω', 3)} shunt")
            beta = getattr(d, "voltage_coefficient_per_v", None)
            if beta is not None and fmt.plain(beta) != fmt.MISSING:
                bits.append(f"slope changes {fmt.pct(100.0 * beta)} per volt")
            self.strength.setText(" · ".join(b for b in bits if b))
            self.explanation.setText(str(getattr(d, "explanation", "") or ""))
            checks = [str(c) for c in (getattr(d, "next_checks", ()) or ())]
            if checks:
                items = "".join(f"<li>{html.escape(c)}</li>" for c in checks)
                self.next_checks.setText(f"<b>Next checks</b><ul style='margin-left:-20px'>{items}</ul>")
            else:
                self.next_checks.setText("")
        self._set_check(analysis.context_check)

    def _set_check(self, cc: Any) -> None:
        if cc is None:
            self.check_summary.setText("Fill in the circuit context above to compare the "
                                       "circuit with the measurement.")
            self.check_table.setRowCount(0)
            self.check_table.hide()
            self.probe_line.hide()
            return
        self.check_summary.setText(str(getattr(cc, "summary", "") or ""))
        items = tuple(getattr(cc, "items", ()) or ())
        self.check_table.setRowCount(len(items))
        for r, it in enumerate(items):
            unit = str(getattr(it, "unit", "") or "")
            cells = [
                _pretty(getattr(it, "name", "")),
                fmt.quantity(getattr(it, "expected", None), unit),
                fmt.quantity(getattr(it, "measured", None), unit),
                fmt.pct(getattr(it, "deviation_pct", None)),
                str(getattr(it, "verdict", "")),
            ]
            cause = str(getattr(it, "likely_cause", "") or "")
            for c, text in enumerate(cells):
                cell = QtWidgets.QTableWidgetItem(text)
                if cause:
                    cell.setToolTip(cause)
                if c == 4:
                    cell.setForeground(QtGui.QBrush(QtGui.QColor(theme.verdict_colour(text))))
                    f = cell.font()
                    f.setBold(True)
                    cell.setFont(f)
                self.check_table.setItem(r, c, cell)
        self.check_table.resizeColumnsToContents()
        self.check_table.setVisible(bool(items))
        h = self.check_table.horizontalHeader().height() + 2
        for r in range(len(items)):
            h += self.check_table.rowHeight(r)
        self.check_table.setFixedHeight(h + 2)
        lines = []
        for it in items:
            cause = str(getattr(it, "likely_cause", "") or "")
            if cause and getattr(it, "verdict", "") == "outside":
                lines.append(f"<li><b>{html.escape(_pretty(it.name))}</b>: {html.escape(cause)}</li>")
        match = str(getattr(cc, "probe_match", "") or "")
        if match:
            lines.append(f"<li>The equivalent shunt looks like: {html.escape(match)}.</li>")
        pred = getattr(cc, "probe_predicted_nonlinearity_pct", None)
        if pred is not None and fmt.pct(pred) != fmt.MISSING:
            explains = getattr(cc, "probe_explains_bow", None)
            tail = {True: " That explains the bow measured.",
                    False: ""}.get(explains, "")
            lines.append(f"<li>The stated probe alone would bend the ramp by {fmt.pct(pred)}."
                         f"{tail}</li>")
        if lines:
            self.probe_line.setText(f"<ul style='margin-left:-20px'>{''.join(lines)}</ul>")
            self.probe_line.show()
        else:
            self.probe_line.hide()

    def check_rows(self) -> list[list[str]]:
        """The self-check table as text (tests)."""
        t = self.check_table
        return [[t.item(r, c).text() for c in range(t.columnCount())] for r in range(t.rowCount())]
