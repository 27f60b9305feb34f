"""The window says what the report says: findings prose, figures, messages and exports.

Every sentence and number the window shows must come from
``trueslope.core.report``; these tests compare the panels with the report's
own functions on the electrolytic sample (dielectric absorption, with a
self-check once circuit values are typed).
"""

from __future__ import annotations

import dataclasses
import html
import json
from pathlib import Path

import pytest

from trueslope.app.jobs import OpenRequest, run_open
from trueslope.app.panels.figures import FiguresPanel
from trueslope.app.panels.findings import NO_CONTEXT
from trueslope.core.analysis import LOAD_SHARE
from trueslope.core.report.export import analysis_document, figures_csv
from trueslope.core.report.numbers import FIGURE_GROUPS
from trueslope.core.report.prose import (explanation, likely_cause, next_checks,
                                         selfcheck_summary)
from trueslope.core.report.summary import (diagnosis_line, figure_label, figure_value,
                                           summary_text)
from trueslope.core.settings import Settings

from .conftest import open_and_wait

ROOT = Path(__file__).resolve().parents[2]
ELECTROLYTIC = ROOT / "sample_captures" / "electrolytic_ramp.txt"
#: The parts the electrolytic sample was made with (sample_captures/README.md).
PARTS = {"capacitance": "10u", "current": "1m", "probe": "10M,12p"}


def _type_parts(qtbot, window):
    form = window.findings.form
    with qtbot.waitSignal(window.analysis_shown, timeout=60000) as blocker:
        for key, text in PARTS.items():
            form.edits[key].setText(text)
        form.apply()
    return blocker.args[0]


def test_findings_show_the_reports_diagnosis_explanation_and_next_checks(qtbot, window):
    a = open_and_wait(qtbot, window, ELECTROLYTIC)
    f = window.findings
    d = a.diagnosis
    assert f.line.text() == diagnosis_line(a) and d.signature in f.line.text()
    assert f.explanation.text().strip(), "the explanation is empty"
    assert f.explanation.text() == explanation(d)
    steps = next_checks(d)
    assert steps, "the report has no next checks for this diagnosis"
    shown = f.next_checks.text()
    assert "<li>" in shown
    for step in steps:
        assert html.escape(step) in shown
    assert f.check_summary.text() == NO_CONTEXT


def test_typed_circuit_values_give_a_worded_self_check(qtbot, window):
    open_and_wait(qtbot, window, ELECTROLYTIC)
    a = _type_parts(qtbot, window)
    cc, d = a.context_check, a.diagnosis
    assert cc is not None
    f = window.findings
    assert f.check_summary.text().strip(), "the self-check summary is empty"
    assert f.check_summary.text() == selfcheck_summary(cc, d)
    assert f.explanation.text() == explanation(d) and f.explanation.text()
    rows = f.check_rows()
    assert [r[0].lower() for r in rows] == [it.name.lower() for it in cc.items]
    causes = [likely_cause(it, d) for it in cc.items]
    assert any(causes), "no item of the self-check has a likely cause"
    table = f.check_table
    for r, cause in enumerate(causes):
        assert table.item(r, 0).toolTip() == cause
    listed = f.causes_text()
    for cause in causes:
        if cause:
            assert cause in listed


def test_figures_panel_uses_the_reports_labels_and_precision(qtbot, window):
    a = open_and_wait(qtbot, window, ELECTROLYTIC)
    panel = window.figures
    terminal = summary_text(a)
    for _, keys in FIGURE_GROUPS:
        for key in keys:
            # the panel's row is the terminal's row, label and value
            assert panel.label_text(key) == figure_label(key)
            assert panel.value_text(key) == figure_value(a, key)
            assert f"{figure_label(key)}" in terminal and figure_value(a, key) in terminal


def test_window_and_terminal_write_a_large_percentage_alike(qtbot, window):
    a = open_and_wait(qtbot, window, ELECTROLYTIC)
    big = dataclasses.replace(a, figures=dataclasses.replace(a.figures, nonlinearity_pct=1234.5))
    panel = FiguresPanel()
    qtbot.addWidget(panel)
    panel.set_analysis(big)
    assert panel.value_text("nonlinearity_pct") == "1234 %"
    assert "1234 %" in panel.headline.text()
    line = [ln for ln in summary_text(big).splitlines() if "Nonlinearity (best-fit line)" in ln]
    assert line and line[0].split()[-2:] == ["1234", "%"], line


def test_settings_errors_name_the_windows_fields(qtbot, window):
    a = open_and_wait(qtbot, window, ELECTROLYTIC)
    form = window.findings.form
    form.edits["capacitance"].setText("ten nano")
    form.apply()
    assert form.error.text().startswith("Capacitance: ")
    assert "--" not in form.error.text()
    with qtbot.waitSignal(window.job_failed, timeout=5000) as blocker:
        window.reanalyse("test", window_s=(a.averaged.ramp_time_s, 0.0))
    message = blocker.args[0]
    assert message.startswith("Fit window: ") and "--" not in message


def test_exports_are_the_reports_documents(qtbot, window, tmp_path):
    a = open_and_wait(qtbot, window, ELECTROLYTIC)
    assert window.export_to("json", str(tmp_path / "f.json"))
    doc = json.loads((tmp_path / "f.json").read_text(encoding="utf-8"))
    assert doc == json.loads(json.dumps(analysis_document(a)))
    assert doc["diagnosis"]["explanation"] == explanation(a.diagnosis)
    assert window.export_to("csv", str(tmp_path / "f.csv"))
    assert (tmp_path / "f.csv").read_text(encoding="utf-8") == figures_csv(a)


def test_open_job_splits_progress_as_the_core_does():
    seen: list[float] = []
    req = OpenRequest(1, str(ELECTROLYTIC), Settings())
    result = run_open(req, seen.append, lambda: False)
    assert result.analysis is not None and result.analysis_error is None
    assert seen[-1] == pytest.approx(1.0)
    assert all(b >= a - 1e-12 for a, b in zip(seen, seen[1:]))
    reading = [x for x in seen if x <= LOAD_SHARE + 1e-12]
    assert reading and reading[-1] == pytest.approx(LOAD_SHARE)


def test_open_job_keeps_a_capture_it_cannot_measure():
    req = OpenRequest(1, str(ELECTROLYTIC), Settings(channel="reset"))
    result = run_open(req, lambda f: None, lambda: False)
    assert result.analysis is None and result.analysis_error is not None
    assert "ramp" in result.capture.channel_names
