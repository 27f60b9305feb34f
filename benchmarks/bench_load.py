"""Load speed and memory of trueslope's CSV reader against pyarrow's on 10 M rows.

Usage::

    .venv/bin/python benchmarks/bench_load.py [--rows N] [--repeat R]

Makes ``benchmarks/_data/ramp_<N>.csv`` once (a header row and two columns,
time in seconds and a noisy 8-cycle sawtooth in volts, as an oscilloscope
export would hold them), then times, each in a fresh interpreter so that
memory figures are not mixed up:

* ``pyarrow.csv.read_csv(path)`` with its defaults (the reference), and
* ``trueslope.core.io.load_capture(path, progress=..., cancel=...)``, which
  also sniffs the layout, checks every sample and the time axis, and reports
  progress.

Runs alternate between the two; imports happen before the clock starts for
both. Prints the best of ``R`` runs for each, their ratio (target: at most
1.5) and the peak resident memory of each process (for trueslope this includes
the pages of the memory-mapped file).
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
DATA = HERE / "_data"

_CHILD = r"""
import json, resource, sys, time
path, which = sys.argv[1], sys.argv[2]
import pyarrow.csv as pc  # imports are not timed, for either reader
from trueslope.core.io import load_capture
base = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
if which == "pyarrow":
    t = time.perf_counter()
    table = pc.read_csv(path)
    dt = time.perf_counter() - t
    rows = table.num_rows
else:
    calls = []
    t = time.perf_counter()
    cap = load_capture(path, progress=calls.append, cancel=lambda: False)
    dt = time.perf_counter() - t
    rows = cap.samples
    assert calls[-1] == 1.0 and all(a < b for a, b in zip(calls, calls[1:]))
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
print(json.dumps({"seconds": dt, "rows": rows, "peak_mib": peak, "base_mib": base}))
"""


def make_file(rows: int) -> Path:
    """Write the benchmark CSV (once) and return its path."""
    import numpy as np
    import pyarrow as pa
    import pyarrow.csv as pc

    DATA.mkdir(parents=True, exist_ok=True)
    path = DATA / f"ramp_{rows}.csv"
    if path.exists() and path.stat().st_size > 0:
        return path
    rng = np.random.default_rng(7)
    dt = 1e-7
    k = np.arange(rows, dtype=np.float64)
    per = rows / 8.0
    # Values rounded to the digits a scope export carries, so the text is of
    # realistic width (about 20 bytes per row).
    t = np.round(k * dt, 10)
    v = np.round(0.2 + 4.0 * np.mod(k, per) / per + rng.normal(0.0, 2e-3, rows), 5)
    table = pa.table({"time (s)": t, "CH1 (V)": v})
    tmp = path.with_suffix(".tmp")
    pc.write_csv(table, tmp, write_options=pc.WriteOptions(include_header=True,
                                                            quoting_style="none"))
    tmp.replace(path)
    return path


def run(path: Path, which: str) -> dict:
    out = subprocess.run([sys.executable, "-c", _CHILD, str(path), which],
                         check=True, capture_output=True, text=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rows", type=int, default=10_000_000)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args(argv)
    t = time.perf_counter()
    path = make_file(args.rows)
    made = time.perf_counter() - t
    size_mib = path.stat().st_size / 2**20
    print(f"file: {path.relative_to(HERE.parent)} ({args.rows:,} rows, {size_mib:.0f} MiB"
          f"{f', written in {made:.1f} s' if made > 1 else ''})")
    runs: dict[str, list[dict]] = {"pyarrow": [], "trueslope": []}
    for _ in range(args.repeat):  # interleaved, so both see the same machine load
        for which in runs:
            r = run(path, which)
            assert r["rows"] == args.rows, r
            runs[which].append(r)
    best = {k: min(v, key=lambda r: r["seconds"]) for k, v in runs.items()}
    ours, ref = best["trueslope"], best["pyarrow"]
    data_mib = args.rows * 2 * 8 / 2**20
    for label, r in (("pyarrow.csv.read_csv  ", ref), ("trueslope load_capture", ours)):
        grown = r["peak_mib"] - r["base_mib"]
        print(f"{label}: {r['seconds']:.3f} s   peak memory {r['peak_mib']:.0f} MiB "
              f"(+{grown:.0f} MiB over the interpreter with imports = "
              f"{grown / data_mib:.1f} x the float64 data)")
    ratio = ours["seconds"] / ref["seconds"]
    print(f"ratio (trueslope / pyarrow): {ratio:.2f}  (target <= 1.5; best of {args.repeat})")
    print(f"float64 data: {data_mib:.0f} MiB (2 columns); the file is memory-mapped, so its "
          f"{size_mib:.0f} MiB of pages count in trueslope's resident memory")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
