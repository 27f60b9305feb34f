"""Benchmark of the curvature diagnosis: time per call, and the acceptance figures.

Usage (from the repository root)::

    .venv/bin/python benchmarks/bench_diagnose.py             # everything, about a minute
    .venv/bin/python benchmarks/bench_diagnose.py --quick     # speed and one seed per case

Printed, never asserted:

* ``diagnose()`` time on an averaged cycle of 2000 bins (median and best of 30
  calls). Target: under 50 ms.
* Signatures right on the stored ngspice captures (``tests/fixtures/spice``),
  each degraded as a scope would (noise, then an ADC): every case x 8, 10 and
  12 bits x noise of 0.5 and 1 ADC step x seeds. Target: at least 90 %.
* Equivalent shunt resistance error on the shunt cases with the capacitance
  given. Target: within 20 %.
* False alarms: the ``straight`` case at 8 bits with half a step of noise,
  seeds 0 to 99, counted when not ``linear``. Target: at most 1.
"""

from __future__ import annotations

import argparse
import sys
import time
from collections import Counter
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))  # a script run from anywhere: the project's test helpers

from tests.support.quantise import full_scale_for, quantise  # noqa: E402
from tests.support.spice import list_cases, load_case  # noqa: E402
from trueslope.core.analysis import analyse  # noqa: E402
from trueslope.core.capture import Capture  # noqa: E402
from trueslope.core.circuit import CircuitContext  # noqa: E402
from trueslope.core.diagnose import diagnose  # noqa: E402
from trueslope.core.report.prose import strength_words  # noqa: E402
from trueslope.core.settings import Settings  # noqa: E402


def _capture(case, bits, noise_lsb, seed):
    t0, dt, v, truth = load_case(case)
    fs = full_scale_for(v)
    q = (fs[1] - fs[0]) / 2 ** bits
    x = quantise(v, bits, fs, noise_lsb * q, seed)
    return Capture(source=case, channels={"CH1": x}, sample_interval_s=dt, t0_s=t0), truth


def speed() -> None:
    cap, _ = _capture("shunt_820k", 10, 0.5, 1)
    a = analyse(cap, Settings(phase_bins=2000))
    times = []
    for _ in range(30):
        t = time.perf_counter()
        diagnose(a.averaged, a.figures, a.noise)
        times.append(time.perf_counter() - t)
    med, best = 1e3 * float(np.median(times)), 1e3 * min(times)
    print(f"diagnose() on {a.averaged.time_s.size} bins: median {med:.1f} ms, best {best:.1f} ms"
          f"  target < 50 ms: {'PASS' if med < 50 else 'MISS'}")


def acceptance(seeds: int) -> None:
    right = total = 0
    wrong = []
    r_err = []
    for case in list_cases():
        for bits in (8, 10, 12):
            for noise in (0.5, 1.0):
                for seed in range(seeds):
                    cap, truth = _capture(case, bits, noise, 1000 * bits + 10 * seed + int(noise * 2))
                    ctx = CircuitContext(capacitance_f=truth["capacitance_f"])
                    d = analyse(cap, Settings(context=ctx)).diagnosis
                    total += 1
                    if d.signature == truth["signature"]:
                        right += 1
                    else:
                        wrong.append(f"{case} {bits} bit {noise} LSB: {d.signature} "
                                     f"({strength_words(d.strength)})")
                    r_true = truth.get("equivalent_shunt_ohm")
                    if r_true and d.equivalent_shunt_ohm:
                        r_err.append(100 * (d.equivalent_shunt_ohm / r_true - 1))
    frac = right / total
    print(f"signatures right: {right}/{total} = {100 * frac:.1f} %  target >= 90 %: "
          f"{'PASS' if frac >= 0.9 else 'MISS'}")
    for w in wrong:
        print(f"  wrong: {w}")
    if r_err:
        worst = max(abs(e) for e in r_err)
        print(f"equivalent shunt error: {len(r_err)} cases, median {np.median(np.abs(r_err)):.2f} %,"
              f" worst {worst:.2f} %  target within 20 %: {'PASS' if worst <= 20 else 'MISS'}")


def false_alarms() -> None:
    calls = Counter()
    for seed in range(100):
        cap, _ = _capture("straight", 8, 0.5, seed)
        calls[analyse(cap, Settings()).diagnosis.signature] += 1
    alarms = 100 - calls["linear"]
    print(f"false alarms on the straight ramp, 8 bits, seeds 0-99: {alarms} {dict(calls)}"
          f"  target <= 1: {'PASS' if alarms <= 1 else 'MISS'}")


def main() -> None:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--quick", action="store_true", help="speed, and one seed per grid point")
    args = p.parse_args()
    speed()
    acceptance(1 if args.quick else 3)
    if not args.quick:
        false_alarms()


if __name__ == "__main__":
    main()
