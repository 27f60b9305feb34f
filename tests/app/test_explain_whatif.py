"""The window's "Explain" (one cause for bench captures) and "What it would take".

The captures are a current ``I`` into ``C`` with a resistance ``R`` across it, written
from the exact exponential of that node, ``v(t) = I R - (I R - v0) exp(-t / (R C))``
(the first-order RC response to a constant current; with ``v0 = 0`` it is
``v = I R (1 - exp(-t / RC))``), reset instantly from 4 V to 0.05 V, with 1 mV of noise
and a 12-bit ADC (:func:`tests.support.quantise.quantise` through
:func:`tests.support.builders.capture_from_cycles`). The window's words and numbers are
checked against core called directly on the same analyses.
"""

from __future__ import annotations

import math
import time
from pathlib import Path

import numpy as np
import pytest
from PySide6 import QtCore

from tests.support.builders import capture_from_cycles
from trueslope.core.circuit import CircuitContext
from trueslope.core.explain import explain
from trueslope.core.report.explain_text import explanation_lines
from trueslope.core.report.numbers import figure_text
from trueslope.core.report.prose import requirements_text
from trueslope.core.settings import Settings
from trueslope.core.whatif import (DielectricChange, ShuntChange, predict_change,
                                   requirements)

from .conftest import open_and_wait

C_F, V0, V1 = 10e-9, 0.05, 4.0


def shunted_csv(folder: Path, r_ohm: float, current_a: float, seed: int = 0) -> Path:
    """Twelve ramps of the exact RC exponential (module docstring), 2000 samples each."""
    tau, vinf = r_ohm * C_F, current_a * r_ohm
    T = tau * math.log((vinf - V0) / (vinf - V1))
    cap = capture_from_cycles([(T, lambda t: vinf - (vinf - V0) * np.exp(-t / tau))] * 12,
                              T / 2000, bits=12, noise_v=1e-3, seed=seed)
    path = folder / f"shunt_{r_ohm:.3g}_{current_a:.3g}.csv"
    np.savetxt(path, np.column_stack([cap.time_s(), cap.channels["CH1"]]), delimiter=",",
               header="time,CH1", comments="", fmt="%.10g")
    return path


def context(current_a: float | None = None) -> CircuitContext:
    return CircuitContext(capacitance_f=C_F, current_a=current_a)


def bench_of(qtbot, window, files: list[tuple[Path, CircuitContext | None]]):
    bench = window.bench
    for path, ctx in files:
        bench.add_files([str(path)], settings=Settings(context=ctx))
    qtbot.waitUntil(lambda: not bench.busy and all(i.measured is not None for i in bench.items),
                    timeout=60000)
    return bench


@pytest.fixture
def two_currents(tmp_path):
    """A 2.2 MΩ shunt at 100 µA and 25 µA: ramp times 0.40 ms and 1.66 ms."""
    return [(shunted_csv(tmp_path, 2.2e6, 100e-6, 1), context()),
            (shunted_csv(tmp_path, 2.2e6, 25e-6, 2), context())]


# ------------------------------------------------------------------ Explain

def test_explain_from_the_menu_shows_the_verdict_and_a_plot_per_capture(qtbot, window,
                                                                       two_currents):
    bench = bench_of(qtbot, window, two_currents)
    with qtbot.waitSignal(bench.explainer.explained, timeout=30000) as got:
        window.act_explain.trigger()
        assert window.views.currentWidget() is bench
        assert bench.lower.currentWidget() is bench.explain_panel
    answer = got.args[0]
    # core called directly on the window's analyses says the same, verdict first
    analyses = [i.measured.analysis for i in bench.items]
    expected = explanation_lines(explain(analyses, [ctx for _, ctx in two_currents]))
    panel = bench.explain_panel
    assert panel.lines == expected
    assert expected[0].startswith("Across 2 captures: shunt loading")
    text = panel.plain_text()
    assert text.index(expected[0]) < text.index(expected[1])
    # the shared resistance is the circuit's R (the formula's 2.2 MΩ), within 10 %
    r = next(p for p in answer.explanation.models[0].parameters if p.name == "shunt_ohm")
    assert r.value == pytest.approx(2.2e6, rel=0.10)
    # one plot per capture: the dots and the shared model's curve over them
    assert len(panel.plots) == 2
    for plot, curves in zip(panel.plots, answer.curves):
        items = plot.listDataItems()
        assert len(items) == 2 and items[1].getData()[1].size == curves.u.size
        assert not curves.unexplained
        # the model follows the capture: its curve within the bow's 15 % of the dots
        bow = np.max(np.abs(curves.residual_pct))
        assert np.median(np.abs(curves.residual_pct - curves.model_pct)) < 0.15 * bow


def test_explain_runs_in_the_background_and_the_window_stays_live(qtbot, window,
                                                                 two_currents):
    bench = bench_of(qtbot, window, two_currents)
    ticks: list[float] = []
    timer = QtCore.QTimer()
    timer.timeout.connect(lambda: ticks.append(time.monotonic()))
    timer.start(10)
    try:
        t0 = time.monotonic()
        with qtbot.waitSignal(bench.explainer.explained, timeout=30000):
            bench.explain_button.click()
            returned = time.monotonic() - t0
            assert bench.explainer.busy and bench.explain_panel.busy_bar.isVisibleTo(bench)
    finally:
        timer.stop()
    took = time.monotonic() - t0
    assert returned < 0.1  # the click only hands the work to the worker
    # the timer kept ticking while the worker ran: no gap near the whole run
    gaps = np.diff([t0] + ticks)
    assert len(ticks) >= 3 and gaps.max() < max(0.25, 0.6 * took)
    assert not bench.explain_panel.busy_bar.isVisibleTo(bench)


def test_cancel_drops_the_explanation(qtbot, window, two_currents):
    bench = bench_of(qtbot, window, two_currents)
    explained: list = []
    bench.explainer.explained.connect(explained.append)
    bench.explain()
    assert bench.explainer.busy
    bench.explain_panel.cancel_button.click()
    assert not bench.explainer.busy  # at once, without waiting for the worker
    assert "cancelled" in bench.explain_panel.state.text()
    qtbot.waitUntil(lambda: not bench.explainer.runner.busy, timeout=30000)
    qtbot.wait(50)
    assert explained == [] and bench.explainer.answer is None
    assert bench.explain_panel.lines == []


def test_a_refusal_is_a_message(qtbot, window, two_currents):
    (a, _), (b, _) = two_currents
    bench = bench_of(qtbot, window, [(a, context()), (b, None)])
    with qtbot.waitSignal(bench.explainer.refused, timeout=30000) as got:
        bench.explain()
    assert "give the capacitance for every capture or for none" in got.args[0]
    assert got.args[0] in bench.explain_panel.plain_text()
    assert window.banner.kind == "error"
    assert not bench.explainer.busy


def test_nothing_measured_is_said(qtbot, window):
    with qtbot.waitSignal(window.bench.explainer.refused, timeout=5000) as got:
        window.bench.explain()
    assert "no measured capture" in got.args[0]


def test_a_capture_of_another_circuit_is_marked(qtbot, window, tmp_path, two_currents):
    other = shunted_csv(tmp_path, 0.5e6, 100e-6, 3)  # another resistance, same C
    bench = bench_of(qtbot, window, two_currents + [(other, context())])
    with qtbot.waitSignal(bench.explainer.explained, timeout=30000) as got:
        bench.explain()
    answer = got.args[0]
    marked = [c.name for c in answer.curves if c.unexplained]
    assert marked == [Path(p).name for p in answer.explanation.unexplained] and marked
    titles = [p.titleLabel.text for p in bench.explain_panel.plots]
    assert all(("not explained" in t) == (c.unexplained) for t, c in zip(titles, answer.curves))


# ------------------------------------------------------------------ What it would take

@pytest.fixture
def loaded_1x(qtbot, window, tmp_path):
    """A 1 MΩ load (a 1x probe or scope input) across 10 nF at 100 µA, circuit given."""
    path = shunted_csv(tmp_path, 1e6, 100e-6, 4)
    open_and_wait(qtbot, window, path)
    form = window.findings.form
    form.edits["capacitance"].setText("10n")
    form.edits["current"].setText("100u")
    with qtbot.waitSignal(window.analysis_shown, timeout=30000):
        form.apply()
    w = window.findings.whatif
    qtbot.waitUntil(lambda: bool(w.lines) and not w.busy, timeout=10000)
    return window


def test_what_it_takes_says_the_requirements_for_the_target(qtbot, loaded_1x):
    a = loaded_1x.analysis
    w = loaded_1x.findings.whatif
    assert w.lines == requirements_text(requirements(a.figures, a.diagnosis,
                                                     a.settings.context, 0.1))
    assert w.target.value() == pytest.approx(0.1)
    with qtbot.waitSignal(w.requirements_shown, timeout=10000):
        w.target.setValue(0.5)
    assert w.lines == requirements_text(requirements(a.figures, a.diagnosis,
                                                     a.settings.context, 0.5))
    assert "0.500 %" in w.lines[0]


@pytest.mark.parametrize("key, typed, change", [
    ("probe-10x", None, ShuntChange(1e6, 10e6)),
    ("source-resistance", "50M", ShuntChange(None, 50e6)),
    ("dielectric", "polypropylene", DielectricChange("polypropylene")),
])
def test_a_change_is_drawn_with_its_predicted_figures(qtbot, loaded_1x, key, typed, change):
    win = loaded_1x
    a = win.analysis
    w = win.findings.whatif
    w.kind.setCurrentIndex(w.kind.findData(key))
    if typed is not None and w.value.isVisibleTo(w):
        w.value.setText(typed)
    elif typed is not None:
        w.choice.setCurrentIndex(w.choice.findData(typed))
    with qtbot.waitSignal(w.prediction_changed, timeout=30000) as got:
        w.predict_button.click()
    pred = got.args[0]
    core = predict_change(a.figures, a.diagnosis, a.settings.context, change)
    assert pred.nonlinearity_pct == pytest.approx(core.nonlinearity_pct, rel=1e-9)
    assert w.predicted_text("nonlinearity_pct") == figure_text("nonlinearity_pct",
                                                               core.nonlinearity_pct)
    # the predicted ramp over the trace, its residual over the strip, and their keys
    layer = win.plots.prediction
    assert layer.trace.getData()[0].size == core.time_s.size
    assert layer.residual.getData()[0].size > 100
    assert "predicted" in win.plots.trace_plot.titleLabel.text
    assert "predicted" in win.plots.residual_plot.titleLabel.text
    # the drawn residual's largest excursion is the predicted nonlinearity
    span = core.slope_v_per_s * (a.figures.window_end_s - a.figures.window_start_s) \
        / a.figures.ramp_time_s * core.ramp_time_s
    assert 100 * layer.largest_residual_v() / abs(span) == pytest.approx(
        core.nonlinearity_pct, rel=0.05)
    w.clear_button.click()
    assert layer.trace.getData()[0] is None or layer.trace.getData()[0].size == 0
    assert "predicted" not in win.plots.trace_plot.titleLabel.text


def test_without_the_capacitance_the_field_to_fill_is_named(qtbot, window, tmp_path):
    open_and_wait(qtbot, window, shunted_csv(tmp_path, 1e6, 100e-6, 5))
    w = window.findings.whatif
    assert not w.predict_button.isEnabled()
    assert "fill in Capacitance" in w.note.text()
    qtbot.waitUntil(lambda: bool(w.lines), timeout=10000)  # still says what it would take
    assert "give the capacitance" in " ".join(w.lines)


def test_help_defines_explain_and_what_it_would_take():
    from trueslope.app import helptext
    body = helptext.definitions_html()
    assert "<b>Explain</b>" in body and "<b>What it would take</b>" in body
