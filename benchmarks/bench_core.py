"""Benchmark of the core: load time, analysis time and peak memory on a large capture.

Usage (from the repository root)::

    .venv/bin/python benchmarks/bench_core.py                  # 10 M samples, ~10 000 cycles
    .venv/bin/python benchmarks/bench_core.py --samples 1e6    # a quicker run

The first run writes a two-column CSV (``time [s],CH1 [V]``) of a sawtooth to
``benchmarks/_data/`` (gitignored) and later runs reuse it. The sawtooth is a
current source charging a capacitor through a 10 Mohm shunt, reset by a comparator
in 5 samples, with about 1000 samples per cycle, 2 mV RMS noise and an 8-bit
converter of 20 mV codes. It is invented benchmark data.

Printed figures, each with its target and PASS/MISS:

* load: ``trueslope.core.io.load_capture`` against ``pyarrow.csv.read_csv`` of
  the same file (default options, best of ``--repeat``). Target: at most 1.5x.
* analysis: ``analyse(capture, Settings())`` against a naive baseline. The
  baseline finds cycle boundaries from ``np.diff(v) < -threshold`` and then loops
  over the cycles in Python, calling ``numpy.polyfit(t, v, 1)`` on each trimmed
  ramp and taking max |residual|. Targets: at least 20x faster than the
  baseline, and at most 1 s (both targets are for 10 M samples).
* peak memory of load + analyse, measured in a fresh child process. It is the
  tracemalloc peak (Python objects and numpy buffers, which numpy reports to
  tracemalloc) plus the peak of pyarrow's memory pool (pyarrow's buffers are
  invisible to tracemalloc; adding the two peaks gives an upper bound). That sum
  is divided by the bytes of the float64 arrays of the record, time plus voltage:
  2 x N x 8 bytes, which is 160 MB for 10 M samples. Target: at most 4x. The
  child's RSS growth is printed beside it for reference.

Figures are printed, never asserted. The machine is shared, so repeat a run
before trusting a small difference.
"""

from __future__ import annotations

import argparse
import json
import os
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

LOAD_RATIO_TARGET = 1.5
SPEEDUP_TARGET = 20.0
ANALYSIS_SECONDS_TARGET = 1.0
MEMORY_MULTIPLE_TARGET = 4.0
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


def naive_same_job(t: np.ndarray, v: np.ndarray, trim: float = 0.05, bins: int = 1000) -> dict:
    """The same figures as ``analyse`` the simplest way: a Python loop over cycles.

    Per cycle: ``numpy.polyfit`` over the trimmed ramp with its maximum residual, the
    terminal line through the window's end samples and its maximum deviation, start and
    end levels from ``numpy.polyfit`` over the ramp's first and last 3 %, and the ramp
    resampled onto ``bins`` phase points with ``numpy.interp`` for the coherent average;
    then the average fitted and smoothed (``scipy.signal.savgol_filter``).
    """
    from scipy.signal import savgol_filter
    span = float(v.max() - v.min())
    drops = np.flatnonzero(np.diff(v) < -0.1 * span)
    first = drops[np.diff(drops, prepend=drops[0] - 2) > 1]
    last = drops[np.diff(drops, append=drops[-1] + 2) > 1] + 1
    grid = (np.arange(bins) + 0.5) / bins
    total = np.zeros(bins)
    slopes, nls, tnls, starts, ends = [], [], [], [], []
    for a, b in zip(last[:-1], first[1:]):
        tt, vv = t[a:b + 1], v[a:b + 1]
        m = tt.size
        k = int(trim * m)
        tw, vw = tt[k:m - k], vv[k:m - k]
        p = np.polyfit(tw, vw, 1)
        r = vw - np.polyval(p, tw)
        slopes.append(p[0])
        nls.append(100.0 * np.max(np.abs(r)) / (p[0] * (tw[-1] - tw[0])))
        bt = (vw[-1] - vw[0]) / (tw[-1] - tw[0])
        tnls.append(100.0 * np.max(np.abs(vw - (vw[0] + bt * (tw - tw[0])))) / (vw[-1] - vw[0]))
        g = max(3, int(0.03 * m))
        starts.append(np.polyval(np.polyfit(tt[:g], vv[:g], 1), tt[0]))
        ends.append(np.polyval(np.polyfit(tt[-g:], vv[-g:], 1), tt[-1]))
        total += np.interp(grid, (tt - tt[0]) / (tt[-1] - tt[0]), vv)
    avg = total / max(len(slopes), 1)
    inw = (grid >= trim) & (grid <= 1 - trim)
    p = np.polyfit(grid[inw], avg[inw], 1)
    smooth = savgol_filter(avg[inw] - np.polyval(p, grid[inw]), 45, 3)
    return {"slope_v_per_s": np.array(slopes), "nonlinearity_pct": np.array(nls),
            "average_nonlinearity_pct": 100 * np.max(np.abs(smooth)) / (p[0] * (1 - 2 * trim))}


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


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--samples", type=float, default=10e6,
                    help="samples in the capture (default 1e7); targets are stated for 1e7")
    ap.add_argument("--repeat", type=int, default=3, help="timed runs of each step; the best counts")
    ap.add_argument("--data", type=Path, default=DATA, help="folder of the generated CSV")
    ap.add_argument("--memory-child", metavar="CSV", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.memory_child:
        memory_child(args.memory_child, args.data)
        return 0

    import pyarrow.csv as pacsv

    from trueslope.core.analysis import analyse
    from trueslope.core.settings import Settings

    n = int(args.samples)
    print(f"trueslope core benchmark: {n:,} samples, about {n / 1000.37:,.0f} cycles "
          f"of ~1000 samples; best of {args.repeat}; {os.cpu_count()} CPU(s), shared")
    t0 = time.perf_counter()
    path = ensure_csv(n, args.data)
    made = time.perf_counter() - t0
    print(f"capture  {path} ({path.stat().st_size / 1e6:.1f} MB"
          f"{f', written in {made:.1f} s' if made > 0.5 else ', reused'})")
    if n != 10_000_000:
        print("         (the targets are stated for 10 M samples; this run is a different size)")

    t_arrow, table = best_of(args.repeat, lambda: pacsv.read_csv(path))
    t = table.column(0).to_numpy()
    v = table.column(1).to_numpy()
    del table
    print(f"load     pyarrow.csv.read_csv      {t_arrow:8.3f} s")

    try:
        from trueslope.core.io import load_capture
    except ImportError as exc:
        load_capture = None
        print(f"         load_capture              not available ({exc})")
    if load_capture is not None:
        t_load, cap = best_of(args.repeat, lambda: load_capture(path))
        ratio = t_load / t_arrow
        print(f"         load_capture              {t_load:8.3f} s   {ratio:6.2f}x pyarrow   "
              f"target <= {LOAD_RATIO_TARGET:g}x   {verdict(ratio <= LOAD_RATIO_TARGET)}")
    else:
        # the analysis can still be timed on the same samples, handed over in memory
        from trueslope.core.capture import Capture
        cap = Capture(source=str(path), channels={"CH1 [V]": v.copy()},
                      sample_interval_s=float(t[1] - t[0]), t0_s=float(t[0]))
        print("         (the analysis below runs on a capture built in memory)")

    t_naive, naive = best_of(args.repeat, lambda: naive_analysis(t, v))
    print(f"analyse  naive polyfit loop        {t_naive:8.3f} s   "
          f"{naive['slope_v_per_s'].size} cycles, median slope "
          f"{np.median(naive['slope_v_per_s']):.6g} V/s")

    status = 0
    t_ours, a = best_of(args.repeat, lambda: analyse(cap, Settings()))
    speedup = t_naive / t_ours
    f = a.figures
    print(f"         analyse(capture)          {t_ours:8.3f} s   {f.full_cycles} cycles, "
          f"slope {f.slope_v_per_s:.6g} V/s, nonlinearity {f.nonlinearity_pct:.4f} %")
    print(f"         speed-up over the naive loop       {speedup:8.1f}x   "
          f"target >= {SPEEDUP_TARGET:g}x   {verdict(speedup >= SPEEDUP_TARGET)}")
    t_same, _ = best_of(max(1, args.repeat // 2), lambda: naive_same_job(t, v))
    print(f"         naive loop, same figures  {t_same:8.3f} s   (per-cycle polyfit, terminal "
          f"line, levels, np.interp average)")
    print(f"         speed-up over that loop            {t_same / t_ours:8.1f}x   "
          f"target >= {SPEEDUP_TARGET:g}x   {verdict(t_same / t_ours >= SPEEDUP_TARGET)}")
    print(f"         analysis time                      {t_ours:8.3f} s   "
          f"target <= {ANALYSIS_SECONDS_TARGET:g} s   "
          f"{verdict(t_ours <= ANALYSIS_SECONDS_TARGET)}")
    # the two must have measured the same record, or the timing compares nothing
    rel = abs(f.slope_v_per_s / np.median(naive["slope_v_per_s"]) - 1)
    if abs(f.full_cycles - naive["slope_v_per_s"].size) > 2 or rel > 1e-3:
        print(f"         WARNING: engine and baseline disagree (cycles {f.full_cycles} vs "
              f"{naive['slope_v_per_s'].size}, slope off by {rel:.2%})")
        status = 1
    del cap, a

    if load_capture is None:
        print("memory   skipped: needs trueslope.core.io.load_capture")
    else:
        child = subprocess.run([sys.executable, __file__, "--memory-child", str(path),
                                "--data", str(args.data)],
                               capture_output=True, text=True)
        if child.returncode != 0:
            print(f"memory   child failed: {child.stderr.strip().splitlines()[-1:]}")
            return 1
        m = json.loads(child.stdout.strip().splitlines()[-1])
        arrays = 2 * m["samples"] * 8
        peak = m["tracemalloc_peak"] + m["arrow_pool_peak"]
        mult = peak / arrays
        print(f"memory   peak of load + analyse    {peak / 1e6:8.1f} MB = {mult:.2f}x the float64 "
              f"arrays ({arrays / 1e6:.0f} MB)   target <= {MEMORY_MULTIPLE_TARGET:g}x   "
              f"{verdict(mult <= MEMORY_MULTIPLE_TARGET)}")
        print(f"         (tracemalloc {m['tracemalloc_peak'] / 1e6:.1f} MB + pyarrow pool "
              f"[{m['arrow_backend']}] {m['arrow_pool_peak'] / 1e6:.1f} MB)")
        print(f"         child RSS growth {m['rss_growth'] / 1e6:.1f} MB, for reference: it also "
              f"counts freed memory the allocators kept and file pages mapped into memory")
    return status


if __name__ == "__main__":
    sys.exit(main())
