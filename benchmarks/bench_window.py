"""Benchmark of the bench window: open-to-first-paint, redraw times, longest event-loop stall.

Usage::

    QT_QPA_PLATFORM=offscreen .venv/bin/python benchmarks/bench_window.py [--sizes 1e6,1e7] [--csv]
        [--cycles 100000] [--sample] [--gaps] [--opens 3]

For each size it writes a synthetic capture (a current source charging a
capacitor through its leakage, reset by a comparator; invented demo data) to
a temporary ``.npy`` file (``--csv`` also times a CSV of the smallest size,
the layout scope exports use), opens it in a 1600 x 1000 window and prints:

* open -> analysis shown, and open -> first paint of the plots, seconds;
* the longest gap between ticks of a 10 ms QTimer from the open to the first
  paint (how long the event loop was blocked); with ``--gaps`` every gap over
  30 ms, and when the analysis was shown (so a gap can be put on the job, the
  window's taking in the answer, or the paint after it);
* redraw times (synchronous repaint of the plots) for zoom-to-all, pans by a
  tenth of the view and zooms by 2x, median and worst, milliseconds;
* the time and longest stall of a re-measure after the window moved.

Figures are printed, never asserted: speed targets belong here, not in tests.
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

import numpy as np  # noqa: E402


def synthetic_ramp(n: int, cycles: int = 20, seed: int = 1) -> tuple[np.ndarray, float]:
    """A leaky current-source ramp, volts, and its sample interval, seconds.

    100 uA into 10 nF with a 10 Mohm shunt (v -> I R (1 - exp(-t / R C))),
    tripped at 5 V, reset in 2 % of the ramp time; 2 mV RMS noise and a
    10-bit converter over 0-6 V.
    """
    i_a, c_f, r_ohm, trip_v = 100e-6, 10e-9, 10e6, 5.0
    tau = r_ohm * c_f
    ramp_s = -tau * np.log1p(-trip_v / (i_a * r_ohm))
    period_s = 1.02 * ramp_s
    dt = cycles * period_s / n
    t = (np.arange(n) * dt + 0.3 * period_s) % period_s
    v = np.where(t < ramp_s, i_a * r_ohm * -np.expm1(-t / tau),
                 trip_v * (1.0 - (t - ramp_s) / (period_s - ramp_s)))
    rng = np.random.default_rng(seed)
    v = v + rng.normal(0.0, 2e-3, n)
    q = 6.0 / 1024
    return np.clip(np.round(v / q), 0, 1023) * q, dt


def _write_csv(path: Path, v: np.ndarray, dt: float) -> None:
    t = dt * np.arange(v.size)
    with open(path, "w", encoding="ascii") as fh:
        fh.write("time [s],CH1 [V]\n")
        np.savetxt(fh, np.column_stack([t, v]), fmt=["%.9e", "%.5f"], delimiter=",")


class StallMeter:
    """Largest gap between ticks of a 10 ms timer: how long the event loop was blocked."""

    #: Gaps longer than this are listed (``gaps``), seconds.
    LISTED_S = 0.03

    def __init__(self) -> None:
        from PySide6 import QtCore
        self.timer = QtCore.QTimer()
        self.timer.setInterval(10)
        self.timer.timeout.connect(self._tick)
        self.worst = 0.0
        self._last = self._start = time.perf_counter()
        #: (start from the meter's start, length), seconds, of every gap over LISTED_S
        self.gaps: list[tuple[float, float]] = []

    def start(self) -> None:
        self.worst = 0.0
        self.gaps = []
        self._last = self._start = time.perf_counter()
        self.timer.start()

    def stop(self) -> float:
        self._tick()
        self.timer.stop()
        return self.worst

    def _tick(self) -> None:
        now = time.perf_counter()
        gap = now - self._last
        self.worst = max(self.worst, gap)
        if gap > self.LISTED_S:
            self.gaps.append((self._last - self._start, gap))
        self._last = now


def _wait(app, cond, timeout_s: float = 600.0) -> None:
    from PySide6 import QtCore
    t0 = time.perf_counter()
    while not cond():
        app.processEvents(QtCore.QEventLoop.ProcessEventsFlag.AllEvents, 5)
        if time.perf_counter() - t0 > timeout_s:
            raise TimeoutError("the window did not answer in time")
        time.sleep(0.001)


def _first_paint_waiter(widget):
    """Returns a list that receives the time the widget's next paint finished."""
    from PySide6 import QtCore

    stamp: list[float] = []

    class Filter(QtCore.QObject):
        def eventFilter(self, obj, event):  # noqa: N802
            if event.type() == QtCore.QEvent.Type.Paint and not stamp:
                # The paint runs after this filter returns; stamp when it is done.
                QtCore.QTimer.singleShot(0, lambda: stamp or stamp.append(time.perf_counter()))
            return False

    f = Filter()
    widget.installEventFilter(f)
    stamp_holder = (stamp, f)
    return stamp_holder


def _repaint_ms(win, move, repeats: int) -> list[float]:
    vp = win.plots.viewport()
    out = []
    for k in range(repeats):
        t0 = time.perf_counter()
        move(k)
        vp.repaint()
        out.append(1e3 * (time.perf_counter() - t0))
    return out


def _open_once(app, path: Path, sample_interval_s: float | None):
    """Open ``path`` in a new window: (window, analysis shown s, first paint s, longest
    stall s, gaps), or (None, message) when it could not be opened."""
    from trueslope.app.store import Store
    from trueslope.app.window import MainWindow

    win = MainWindow(Store.read_only())
    win.resize(1600, 1000)
    win.show()
    _wait(app, lambda: win.isVisible())
    for _ in range(5):
        app.processEvents()
    win.sample_interval_s = sample_interval_s
    shown: list[float] = []
    failed: list[str] = []
    win.analysis_shown.connect(lambda a: shown.append(time.perf_counter()))
    win.job_failed.connect(failed.append)
    stamp, _keep = _first_paint_waiter(win.plots.viewport())
    meter = StallMeter()
    meter.start()
    t0 = time.perf_counter()
    win.open_file(str(path))
    _wait(app, lambda: shown or failed)
    if failed:
        win.close()
        return None, failed[0]
    _wait(app, lambda: stamp, 30)
    stall = meter.stop()
    return win, shown[0] - t0, stamp[0] - t0, stall, list(meter.gaps)


def _spread(values: list[float], scale: float, fmt: str) -> str:
    """The median, and the range when there are several."""
    med = statistics.median(values)
    text = f"{scale * med:{fmt}}"
    if len(values) > 1:
        text += f" (min {scale * min(values):{fmt}}, max {scale * max(values):{fmt}})"
    return text


def bench_file(app, path: Path, label: str, sample_interval_s: float | None,
               show_gaps: bool = False, opens: int = 1) -> None:
    runs = []
    win = None
    for k in range(max(1, opens)):
        if win is not None:
            win.close()
            app.processEvents()
        got = _open_once(app, path, sample_interval_s)
        if got[0] is None:
            print(f"{label}: could not open: {got[1]}")
            return
        win = got[0]
        runs.append(got[1:])
    a = win.analysis
    shown_s, paint_s, stalls, gaps = zip(*runs)
    many = f", median of {len(runs)} opens" if len(runs) > 1 else ""
    print(f"{label}: {a.samples:,} samples, {a.figures.full_cycles} cycles{many}")
    print(f"  open -> analysis shown   {_spread(list(shown_s), 1, '8.3f')} s")
    print(f"  open -> first paint      {_spread(list(paint_s), 1, '8.3f')} s")
    print(f"  longest event-loop stall {_spread(list(stalls), 1e3, '8.1f')} ms (10 ms timer, "
          f"open to first paint)")
    if show_gaps:
        for (shown, _, _, g) in runs:
            print("  gaps over 30 ms: " + (", ".join(f"{1e3 * d:.0f} ms at {t:.3f} s"
                                                  for t, d in g) or "none")
                  + f"; analysis shown at {shown:.3f} s")

    plot = win.plots.trace_plot

    def zoom_all(_k):
        win.plots.zoom_to_all()

    all_ms = _repaint_ms(win, zoom_all, 5)
    win.plots.zoom_to_cycle()
    app.processEvents()
    lo, hi = win.plots.x_range()
    w = hi - lo

    def pan(k):
        s = 0.1 * w * (k + 1)
        plot.setXRange(lo + s, hi + s, padding=0)

    pan_ms = _repaint_ms(win, pan, 10)
    t_end = a.samples * a.sample_interval_s

    def zoom(k):
        span = t_end / (2 ** (k % 6))
        c = 0.5 * t_end
        plot.setXRange(c - span / 2, c + span / 2, padding=0)

    zoom_ms = _repaint_ms(win, zoom, 12)
    for name, ms in (("zoom to all", all_ms), ("pan 10 %", pan_ms), ("zoom 2x", zoom_ms)):
        print(f"  redraw {name:<12s}  median {statistics.median(ms):7.1f} ms   worst {max(ms):7.1f} ms")

    # Re-measure after the window moved: the capture is reused, not re-read.
    shown: list[float] = []
    failed: list[str] = []
    win.analysis_shown.connect(lambda _a: shown.append(time.perf_counter()))
    win.job_failed.connect(failed.append)
    av = a.averaged
    meter = StallMeter()
    meter.start()
    t0 = time.perf_counter()
    win.reanalyse("benchmark", window_s=(0.1 * av.ramp_time_s, 0.9 * av.ramp_time_s))
    _wait(app, lambda: shown or failed)
    stall = meter.stop()
    if failed:
        print(f"  re-measure failed: {failed[0]}")
    else:
        print(f"  re-measure (window moved) {shown[0] - t0:7.3f} s, longest stall "
              f"{1e3 * stall:6.1f} ms")
    win.close()
    app.processEvents()


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--sizes", default="1e6,1e7", help="sample counts, comma separated")
    p.add_argument("--csv", action="store_true", help="also time a CSV of the smallest size")
    p.add_argument("--cycles", type=int, default=20, help="cycles in each capture (default 20)")
    p.add_argument("--sample", action="store_true",
                   help="first open the bundled sample_captures/film_cap_ramp.csv")
    p.add_argument("--opens", type=int, default=1,
                   help="open each capture this many times (a new window each) and print the "
                        "median and range of the open figures (default 1)")
    p.add_argument("--gaps", action="store_true",
                   help="list every event-loop gap over 30 ms from open to first paint, and "
                        "when the analysis was shown")
    args = p.parse_args(argv)
    sizes = [int(float(s)) for s in args.sizes.split(",") if s.strip()]

    t_start = time.perf_counter()
    from trueslope.app.launch import make_app, preload_analysis
    preload_analysis()  # as launch() does: the analysis imports overlap Qt's start
    app = make_app()
    print(f"Qt platform: {app.platformName()} (Qt and the window's modules imported in "
          f"{time.perf_counter() - t_start:.2f} s)")
    if args.sample:
        bench_file(app, Path(__file__).resolve().parents[1] / "sample_captures" /
                   "film_cap_ramp.csv", "bundled sample (CSV)", None, args.gaps, args.opens)
    with tempfile.TemporaryDirectory() as tmp:
        for n in sizes:
            v, dt = synthetic_ramp(n, cycles=args.cycles)
            path = Path(tmp) / f"ramp_{n}.npy"
            np.save(path, v)
            bench_file(app, path, f"{n / 1e6:g} M samples (.npy)", dt, args.gaps, args.opens)
        if args.csv and sizes:
            n = min(sizes)
            v, dt = synthetic_ramp(n, cycles=args.cycles)
            path = Path(tmp) / f"ramp_{n}.csv"
            t0 = time.perf_counter()
            _write_csv(path, v, dt)
            print(f"(wrote {path.name}, {path.stat().st_size / 1e6:.0f} MB, in {time.perf_counter() - t0:.1f} s)")
            bench_file(app, path, f"{n / 1e6:g} M samples (CSV)", None, args.gaps, args.opens)
    return 0


if __name__ == "__main__":
    sys.exit(main())
