"""Benchmark of the core: every figure as a multiple of a reference measured in the same run.

Usage (from the repository root)::

    .venv/bin/python benchmarks/bench_core.py                  # 10 M samples, 10 k and 100 k cycles
    .venv/bin/python benchmarks/bench_core.py --big            # and 100 M samples (about 2 GB)
    .venv/bin/python benchmarks/bench_core.py --samples 1e6    # a quicker run

The first run writes a two-column CSV (``time [s],CH1 [V]``) of a sawtooth to
``benchmarks/_data/`` (gitignored) and later runs reuse it. The sawtooth is a
current source charging a capacitor through a 10 Mohm shunt, reset by a comparator
in 5 samples, with about 1000 samples per cycle (100 for the 100 k-cycle figure),
2 mV RMS noise and an 8-bit converter of 20 mV codes. It is invented benchmark data.

Printed figures, each a ratio to its reference, with its target and PASS/MISS:

* load: ``trueslope.core.io.load_capture`` against a warm ``pyarrow.csv.read_csv`` of
  the same file (read once before timing, default options). Target: at most 1.2x.
* analysis: ``analyse(capture, Settings())`` against ``reference_pass.py`` (a plain-numpy
  segmentation and per-cycle pass: reduceat sums, bincount phase bins, cache-sized
  blocks) on the same samples, at 10 M samples with 10 k and with 100 k cycles (target
  at most 1.3x) and, with ``--big``, at 100 M samples (target at most 1.5x). A naive
  per-cycle ``numpy.polyfit`` loop is timed too, for context.
* peak memory of load + analyse, measured in a fresh child process: the tracemalloc
  peak plus the peak of pyarrow's memory pool (an upper bound), over the bytes of the
  float64 time and voltage arrays (2 x N x 8). Target: at most 2x.
* start-up: ``trueslope analyze sample_captures/film_cap_ramp.csv`` (the bundled 100 k-sample
  capture) end to end (a fresh process, best of 3), split into the import of the command's
  modules and the work. Target: at most 0.5 s.

Like the command, the script holds OpenBLAS to one thread. Figures are printed, never
asserted. The machine is shared, so repeat a run before trusting a small difference.
"""

from __future__ import annotations

import argparse
import json
import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # as the command does (core/cli.py)
import subprocess
import sys
import time
from pathlib import Path
from typing import Callable

import numpy as np

HERE = Path(__file__).resolve().parent
DATA = HERE / "_data"
#: Bump when the generator changes, so an old file is not reused.
GENERATOR_VERSION = 1

LOAD_RATIO_TARGET = 1.2
ANALYSIS_RATIO_TARGET = 1.3
BIG_RATIO_TARGET = 1.5
MEMORY_MULTIPLE_TARGET = 2.0
STARTUP_SECONDS_TARGET = 0.5
#: Size of the warm-up capture of the memory child.
WARMUP_SAMPLES = 20_000


# --- the capture -----------------------------------------------------------------------------

def sawtooth(n: int, samples_per_cycle: float = 1000.37, seed: int = 7,
             chunk: tuple[int, int] | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Time (s) and voltage (V) of samples ``chunk = (start, stop)`` of the benchmark sawtooth.

    A 100 uA current source charges 33 nF through a 10 Mohm shunt from 1 V to
    4 V, ``v = V_inf - (V_inf - 1 V) exp(-t / RC)`` with ``V_inf = I R``. A
    linear reset then takes 5 samples. The sample interval is 1 us. The
    voltages are quantised to 20 mV codes from -0.12 V (8 bits) after 2 mV RMS
    of noise. The period is not a whole number of samples, so successive cycles
    fall on different phases of the grid. The noise of a chunk is drawn from
    ``seed + start``; :func:`ensure_csv` always writes chunks of 1 M samples, so
    the file is the same on every run.
    """
    start, stop = chunk if chunk is not None else (0, n)
    dt = 1e-6
    # 33 nF at 1000.37 samples a cycle; scaled with the period, so the ramp always takes
    # the same share of it
    i_a, c_f, r_ohm, v_lo, v_hi = 100e-6, 33e-9 * samples_per_cycle / 1000.37, 10e6, 1.0, 4.0
    tau, v_inf = r_ohm * c_f, i_a * r_ohm
    ramp_s = tau * np.log((v_inf - v_lo) / (v_inf - v_hi))
    period_s = samples_per_cycle * dt
    reset_s = period_s - ramp_s
    k = np.arange(start, stop)
    # whole-microsecond ticks as exact decimals: t = k / 1e6 prints as "0.000123"
    t = k / 1e6
    ph = np.mod((k + 0.3 * samples_per_cycle) * dt, period_s)
    on_ramp = ph < ramp_s
    v = np.where(on_ramp, v_inf - (v_inf - v_lo) * np.exp(-ph / tau),
                 v_hi - (v_hi - v_lo) * (ph - ramp_s) / reset_s)
    rng = np.random.default_rng(seed + start)
    code = np.clip(np.rint((v + rng.normal(0.0, 2e-3, v.size) + 0.12) / 0.02), 0, 255)
    # integer hundredths divided once: the nearest double to the decimal, so it prints short
    return t, (code * 2 - 12) / 100


def ensure_csv(n: int, folder: Path = DATA) -> Path:
    """Write the benchmark CSV of ``n`` samples unless it is already there; return its path."""
    import pyarrow as pa
    import pyarrow.csv as pacsv

    folder.mkdir(parents=True, exist_ok=True)
    path = folder / f"sawtooth_{n}_v{GENERATOR_VERSION}.csv"
    if path.exists():
        return path
    tmp = path.with_suffix(".csv.part")
    schema = pa.schema([("time [s]", pa.float64()), ("CH1 [V]", pa.float64())])
    opts = pacsv.WriteOptions(include_header=False, quoting_style="none")
    step = 1_000_000
    with open(tmp, "wb") as fh:
        fh.write(b"time [s],CH1 [V]\n")
        with pacsv.CSVWriter(fh, schema, write_options=opts) as w:
            for a in range(0, n, step):
                t, v = sawtooth(n, chunk=(a, min(n, a + step)))
                w.write_table(pa.table({"time [s]": t, "CH1 [V]": v}, schema=schema))
    tmp.replace(path)  # a half-written file never carries the final name
    return path


# --- the naive baseline ----------------------------------------------------------------------

def naive_analysis(t: np.ndarray, v: np.ndarray, trim: float = 0.05) -> dict[str, np.ndarray]:
    """Per-cycle straight-line fits the simplest way: a Python loop of ``numpy.polyfit``.

    Reset edges are the runs of samples where ``np.diff(v) < -0.1 * (max - min)``.
    Each ramp runs from the bottom of one reset to the top of the next. It is
    trimmed by ``trim`` of its samples at each end and fitted with
    ``numpy.polyfit(t, v, 1)``. Its nonlinearity is ``100 max|residual| /
    (slope x fitted duration)``.

    Returns
    -------
    dict
        ``slope_v_per_s`` and ``nonlinearity_pct``, one entry per full ramp.
    """
    span = float(v.max() - v.min())
    drops = np.flatnonzero(np.diff(v) < -0.1 * span)
    if drops.size == 0:
        return {"slope_v_per_s": np.empty(0), "nonlinearity_pct": np.empty(0)}
    first = drops[np.diff(drops, prepend=drops[0] - 2) > 1]        # top of each reset
    last = drops[np.diff(drops, append=drops[-1] + 2) > 1] + 1     # bottom of each reset
    slopes, nls = [], []
    for a, b in zip(last[:-1], first[1:]):
        m = b - a + 1
        k = int(trim * m)
        tt, vv = t[a + k:b + 1 - k], v[a + k:b + 1 - k]
        p = np.polyfit(tt, vv, 1)
        r = vv - np.polyval(p, tt)
        slopes.append(p[0])
        nls.append(100.0 * np.max(np.abs(r)) / (p[0] * (tt[-1] - tt[0])))
    return {"slope_v_per_s": np.array(slopes), "nonlinearity_pct": np.array(nls)}


# --- measuring -------------------------------------------------------------------------------

def best_of(repeat: int, fn: Callable[[], object]) -> tuple[float, object]:
    """Shortest wall time of ``repeat`` calls, seconds, and the last call's result."""
    best, out = float("inf"), None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def _rss_bytes() -> int:
    with open("/proc/self/statm") as fh:
        return int(fh.read().split()[1]) * os.sysconf("SC_PAGE_SIZE")


def memory_child(path: str, folder: Path) -> None:
    """Run in a fresh interpreter: load + analyse under tracemalloc, print the peaks as JSON."""
    import resource
    import tracemalloc

    import pyarrow as pa

    from trueslope.core.analysis import analyse
    from trueslope.core.io import load_capture
    from trueslope.core.settings import Settings

    # a small run first, so modules imported lazily do not count as the record's memory
    warm = analyse(load_capture(ensure_csv(WARMUP_SAMPLES, folder)), Settings())
    del warm
    rss0 = _rss_bytes()
    pool = pa.default_memory_pool()
    pool0 = pool.max_memory() or 0
    tracemalloc.start()
    cap = load_capture(path)
    a = analyse(cap, Settings())
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    maxrss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024  # kB on Linux
    print(json.dumps({"tracemalloc_peak": peak, "arrow_pool_peak": (pool.max_memory() or 0) - pool0,
                      "arrow_backend": pool.backend_name, "rss_growth": maxrss - rss0,
                      "samples": cap.samples, "cycles": a.figures.full_cycles}))


def verdict(ok: bool) -> str:
    return "PASS" if ok else "MISS"


def reference_analysis(v: np.ndarray, trim: float = 0.05, bins: int = 1000) -> dict:
    """The plain-numpy reference: ``reference_pass.reference_segment`` then ``reference_pass``."""
    from reference_pass import reference_pass, reference_segment
    starts, stops = reference_segment(v)
    return reference_pass(v, starts, stops, trim, bins)


def compare_analysis(label: str, v: np.ndarray, dt: float, repeat: int, target: float) -> float:
    """Time ``analyse`` and the reference on the same samples; print the ratio."""
    from trueslope.core.analysis import analyse
    from trueslope.core.capture import Capture
    from trueslope.core.settings import Settings
    cap = Capture(source="bench.csv", channels={"CH1 [V]": v}, sample_interval_s=dt)
    # interleaved, so a change in the machine's load between them moves both alike
    t_ref = t_ours = float("inf")
    for _ in range(repeat):
        t, ref = best_of(1, lambda: reference_analysis(v))
        t_ref = min(t_ref, t)
        t, a = best_of(1, lambda: analyse(cap, Settings()))
        t_ours = min(t_ours, t)
    ratio = t_ours / t_ref
    f = a.figures
    print(f"analyse  {label:26s} {t_ours:7.3f} s = {ratio:5.2f}x the reference ({t_ref:.3f} s)"
          f"   target <= {target:g}x   {verdict(ratio <= target)}")
    print(f"         {f.full_cycles} cycles (reference {ref['slope'].size}), slope "
          f"{f.slope_v_per_s:.6g} V/s (reference median "
          f"{np.median(ref['slope']) / dt:.6g}), nonlinearity {f.nonlinearity_pct:.4f} %")
    return ratio


def startup(repeat: int = 3) -> None:
    """``trueslope analyze`` on the bundled sample in a fresh process, and its split."""
    root = HERE.parent
    exe = Path(sys.executable).with_name("trueslope")
    sample = str(root / "sample_captures" / "film_cap_ramp.csv")  # the 100 k-sample capture
    # the command's own steps, timed inside one fresh process: its imports (what
    # trueslope.app.cli and the analysis import), then the measuring and the summary
    split = ("import time, io, contextlib; t0 = time.perf_counter(); "
             "import trueslope.app.cli, trueslope.core.cli, trueslope.core.analysis, "
             "trueslope.core.report, trueslope.core.io; t1 = time.perf_counter(); "
             "out = io.StringIO(); ctx = contextlib.redirect_stdout(out); ctx.__enter__(); "
             f"trueslope.core.cli.main([{sample!r}]); ctx.__exit__(None, None, None); "
             "t2 = time.perf_counter(); import sys; "
             "heavy = [m for m in ('scipy', 'scipy.optimize', 'scipy.signal', 'scipy.stats', "
             "'pandas') if m in sys.modules]; print(t1 - t0, t2 - t1, ' '.join(heavy))")

    def wall(cmd: list[str]) -> float:
        t0 = time.perf_counter()
        subprocess.run(cmd, capture_output=True, cwd=root, check=False)
        return time.perf_counter() - t0

    t_bare = min(wall([sys.executable, "-c", "pass"]) for _ in range(repeat))
    t_full = min(wall([str(exe), "analyze", sample]) for _ in range(repeat))
    runs = [subprocess.run([sys.executable, "-c", split], capture_output=True, text=True,
                           cwd=root).stdout.split(maxsplit=2) for _ in range(repeat)]
    runs = [r + [""] * (3 - len(r)) for r in runs]  # no heavy module: two fields printed
    imp, work, heavy = min(runs, key=lambda r: float(r[0]) + float(r[1]))
    print(f"start    trueslope analyze sample_captures/film_cap_ramp.csv: {t_full:6.3f} s   "
          f"target <= {STARTUP_SECONDS_TARGET:g} s   {verdict(t_full <= STARTUP_SECONDS_TARGET)}")
    print(f"         of which Python itself {t_bare:.3f} s, the imports {float(imp):.3f} s, "
          f"the work {float(work):.3f} s; heavy modules imported: {heavy.strip() or 'none'}")


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--samples", type=float, default=10e6,
                    help="samples in the capture (default 1e7); targets are stated for 1e7")
    ap.add_argument("--repeat", type=int, default=3, help="timed runs of each step; the best counts")
    ap.add_argument("--big", action="store_true", help="also 100 M samples (about 2 GB of memory)")
    ap.add_argument("--data", type=Path, default=DATA, help="folder of the generated CSV")
    ap.add_argument("--memory-child", metavar="CSV", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.memory_child:
        memory_child(args.memory_child, args.data)
        return 0
    sys.path.insert(0, str(HERE))  # reference_pass.py beside this script

    import pyarrow.csv as pacsv

    from trueslope.core.io import load_capture

    n = int(args.samples)
    print(f"trueslope core benchmark: {n:,} samples; best of {args.repeat}; "
          f"{os.cpu_count()} CPU(s), shared; each figure against its reference, same run")
    t0 = time.perf_counter()
    path = ensure_csv(n, args.data)
    made = time.perf_counter() - t0
    print(f"capture  {path} ({path.stat().st_size / 1e6:.1f} MB"
          f"{f', written in {made:.1f} s' if made > 0.5 else ', reused'})")

    pacsv.read_csv(path)  # warm: the file in the page cache, pyarrow's pools started
    load_capture(path)
    t_arrow = t_load = float("inf")
    for _ in range(args.repeat):  # interleaved, as the analyses below
        t_a, table = best_of(1, lambda: pacsv.read_csv(path))
        t_arrow = min(t_arrow, t_a)
        t_l, cap = best_of(1, lambda: load_capture(path))
        t_load = min(t_load, t_l)
    t = table.column(0).to_numpy()
    v = table.column(1).to_numpy()
    del table
    ratio = t_load / t_arrow
    print(f"load     load_capture               {t_load:7.3f} s = {ratio:5.2f}x a warm "
          f"pyarrow.csv.read_csv ({t_arrow:.3f} s)   target <= {LOAD_RATIO_TARGET:g}x   "
          f"{verdict(ratio <= LOAD_RATIO_TARGET)}")
    del cap

    dt = float(t[1] - t[0])
    compare_analysis(f"{n / 1e6:g} M, ~{n / 1000.37 / 1e3:.0f} k cycles", v, dt, args.repeat,
                     ANALYSIS_RATIO_TARGET)
    t_naive, naive = best_of(1, lambda: naive_analysis(t, v))
    print(f"         naive per-cycle numpy.polyfit loop (context): {t_naive:.3f} s, "
          f"{naive['slope_v_per_s'].size} cycles")
    del t, v
    _, v100 = sawtooth(n, samples_per_cycle=100.037)
    compare_analysis(f"{n / 1e6:g} M, ~{n / 100.037 / 1e3:.0f} k cycles", v100, 1e-6,
                     args.repeat, ANALYSIS_RATIO_TARGET)
    del v100
    if args.big:
        _, vb = sawtooth(10 * n)
        compare_analysis(f"{10 * n / 1e6:g} M, ~{10 * n / 1000.37 / 1e3:.0f} k cycles", vb,
                         1e-6, 1, BIG_RATIO_TARGET)
        del vb

    child = subprocess.run([sys.executable, __file__, "--memory-child", str(path),
                            "--data", str(args.data)], capture_output=True, text=True)
    if child.returncode != 0:
        print(f"memory   child failed: {child.stderr.strip().splitlines()[-1:]}")
        return 1
    m = json.loads(child.stdout.strip().splitlines()[-1])
    arrays = 2 * m["samples"] * 8
    peak = m["tracemalloc_peak"] + m["arrow_pool_peak"]
    mult = peak / arrays
    print(f"memory   peak of load + analyse     {peak / 1e6:7.1f} MB = {mult:5.2f}x the float64 "
          f"arrays ({arrays / 1e6:.0f} MB)   target <= {MEMORY_MULTIPLE_TARGET:g}x   "
          f"{verdict(mult <= MEMORY_MULTIPLE_TARGET)}")
    print(f"         (tracemalloc {m['tracemalloc_peak'] / 1e6:.1f} MB + pyarrow pool "
          f"[{m['arrow_backend']}] {m['arrow_pool_peak'] / 1e6:.1f} MB; child RSS growth "
          f"{m['rss_growth'] / 1e6:.1f} MB)")
    startup()
    return 0


if __name__ == "__main__":
    sys.exit(main())
