"""Render the window's "Explain" and "What it would take" screenshots.

Run from the project root: ``.venv/bin/python packaging/screenshots/make_explain_shots.py``
(writes ``explain_1600x1000.png`` and ``what_it_takes_1600x1000.png`` beside this file).

The captures are invented, not measurements: a current ``I`` charging ``C = 10 nF``
with ``R = 1 MΩ`` across it (a scope input or 1x probe) from 0.05 V to a 4 V reset,
``v(t) = I R - (I R - v0) exp(-t / (R C))`` (the exact exponential of an RC node fed by
a current), at 100, 50 and 25 µA, with 1 mV of noise and a 10-bit scope over -0.5..4.6 V.
"""

from __future__ import annotations

import os
import sys
import tempfile
from pathlib import Path

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

import numpy as np  # noqa: E402

HERE = Path(__file__).resolve().parent
R_OHM, C_F, V0, V1 = 1e6, 10e-9, 0.05, 4.0
CURRENTS_A = (100e-6, 50e-6, 25e-6)


def write_capture(path: Path, current_a: float, cycles: int = 12, per_ramp: int = 2000,
                  retrace: int = 40, seed: int = 0) -> Path:
    """One invented capture as a two-column CSV (time, CH1)."""
    tau = R_OHM * C_F
    vinf = current_a * R_OHM
    T = tau * np.log((vinf - V0) / (vinf - V1))
    dt = T / per_ramp
    t_ramp = dt * np.arange(per_ramp)
    ramp = vinf - (vinf - V0) * np.exp(-t_ramp / tau)
    back = np.linspace(V1, V0, retrace, endpoint=False)
    v = np.tile(np.concatenate([ramp, back]), cycles)
    rng = np.random.default_rng(seed)
    lo, hi, bits = -0.5, 4.6, 10
    step = (hi - lo) / (2 ** bits - 1)
    v = lo + step * np.round((v + rng.normal(0.0, 1e-3, v.size) - lo) / step)
    t = dt * np.arange(v.size)
    np.savetxt(path, np.column_stack([t, v]), delimiter=",", header="time,CH1",
               comments="", fmt="%.9g")
    return path


def wait(app, predicate, timeout_s: float = 60.0) -> None:
    import time
    end = time.monotonic() + timeout_s
    while not predicate():
        app.processEvents()
        if time.monotonic() > end:
            raise TimeoutError("the window did not finish in time")
        time.sleep(0.01)
    for _ in range(20):
        app.processEvents()


def main() -> int:
    from trueslope.app.launch import make_app
    from trueslope.app.store import Store
    from trueslope.app.window import MainWindow
    from trueslope.core.circuit import CircuitContext
    from trueslope.core.settings import Settings

    app = make_app()
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        paths = [write_capture(folder / f"ramp_{round(i * 1e6)}uA.csv", i, seed=k)
                 for k, i in enumerate(CURRENTS_A)]
        win = MainWindow(Store.at(folder / "settings.ini"))
        win.resize(1600, 1000)
        win.show()

        # What it would take: the 100 µA capture with its circuit, a 10x probe tried.
        shown = []
        win.analysis_shown.connect(shown.append)
        win.open_file(str(paths[0]))
        wait(app, lambda: bool(shown))
        form = win.findings.form
        form.edits["capacitance"].setText("10n")
        form.edits["current"].setText("100u")
        form.apply()
        wait(app, lambda: len(shown) >= 2 and not win.busy)
        win.tabs.setCurrentWidget(win.findings.diagnosis_page)
        w = win.findings.whatif
        wait(app, lambda: bool(w.lines))
        w.predict()
        wait(app, lambda: w.prediction is not None)
        win.plots.zoom_to_cycle()
        wait(app, lambda: True)
        win.grab().save(str(HERE / "what_it_takes_1600x1000.png"))

        # Explain: the three captures on the bench, each with its circuit values.
        b = win.bench
        for p, i in zip(paths, CURRENTS_A):
            b.add_files([str(p)], settings=Settings(
                context=CircuitContext(capacitance_f=C_F, current_a=i)))
        win.show_bench()
        wait(app, lambda: not b.busy and all(it.measured is not None for it in b.items))
        b.explain()
        wait(app, lambda: b.explainer.answer is not None and not b.explainer.busy)
        win.grab().save(str(HERE / "explain_1600x1000.png"))
        win.close()
    return 0


if __name__ == "__main__":
    sys.exit(main())
