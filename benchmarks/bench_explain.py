"""How often ``trueslope explain`` names the right cause on held-out ngspice sets.

Usage (from the repository root; needs ngspice)::

    .venv/bin/python benchmarks/bench_explain.py               # 30 sets, seed 0
    .venv/bin/python benchmarks/bench_explain.py --sets 60 --seed 3

Each set is one circuit drawn at random (a shunt; a capacitance growing or falling with
voltage; two or three Dow branches; a probe over- or under-compensated on a buffered
ramp), simulated by ngspice (``tests.support.sets``) at two or three charging currents,
degraded by an ADC of 8 to 12 bits with 1 to 3 mV of noise, and explained with the
capacitance given and, for half the sets, the comparator levels. Invented benchmark data.

Printed: per set the truth and the answer; then the share right, the share answered
with an honest "cannot tell" (``undecided``, or ``absorption-or-probe`` where the levels
are not given or do not decide), the share wrong; the shunt's and the voltage coefficient's errors; and for
absorption sets of three rates the short-time recovery figure against the exact one of
the true network (``absorption.absorption_figures``, itself checked against ngspice).
"""

from __future__ import annotations

import argparse
import math
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from tests.support import sets as S  # noqa: E402
from trueslope.core.absorption import absorption_figures  # noqa: E402
from trueslope.core.analysis import analyse  # noqa: E402
from trueslope.core.explain import explain  # noqa: E402


def draw(rng: np.random.Generator) -> tuple[str, list[S.Case], dict]:
    kind = rng.choice(["shunt", "growing", "falling", "dow", "probe-over", "probe-under"])
    rates = 3 if kind == "dow" else int(rng.integers(2, 4))
    currents = list(rng.permutation([25e-6, 100e-6, 400e-6])[:rates])
    if kind == "shunt":
        r = float(10 ** rng.uniform(6.0, 6.8))
        return kind, [S.shunt(r, i) for i in currents], {"shunt_ohm": r}
    if kind in ("growing", "falling"):
        beta = float(rng.uniform(0.01, 0.05)) * (1 if kind == "growing" else -1)
        return kind, [S.growing(beta, i) for i in currents], {"beta": beta}
    if kind == "dow":
        n = int(rng.integers(2, 4))
        taus = np.sort(10 ** rng.uniform(-5.3, -3.5, n))
        ks = 10 ** rng.uniform(-3.0, -2.0, n)
        branches = [(float(k), float(t)) for k, t in zip(ks, taus)]
        return kind, [S.dow(branches, i, name=f"dow{n}_{i:.3g}") for i in currents], \
            {"branches": branches}
    tip = 11.111e-12 * (1.0 + (1 if kind == "probe-over" else -1) * rng.uniform(0.02, 0.08))
    return kind, [S.probe_tail(tip, i) for i in currents], {}


RIGHT = {"shunt": {"shunt-loading"}, "growing": {"voltage-coefficient"},
         "falling": {"voltage-coefficient"}, "dow": {"dielectric-absorption"},
         "probe-over": {"probe-compensation"}, "probe-under": {"probe-compensation"}}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sets", type=int, default=30)
    ap.add_argument("--seed", type=int, default=0)
    args = ap.parse_args()
    rng = np.random.default_rng(args.seed)
    tally = {"right": 0, "honest": 0, "wrong": 0}
    r_err, b_err, rec_err = [], [], []
    start = time.perf_counter()
    with tempfile.TemporaryDirectory() as tmp:
        for n in range(args.sets):
            kind, cases, truth = draw(rng)
            levels = bool(rng.integers(0, 2))
            bits, noise = int(rng.integers(8, 13)), float(rng.uniform(1e-3, 3e-3))
            caps = [S.simulate(c, Path(tmp) / f"s{n}", bits, noise, seed=n * 10 + i)
                    for i, c in enumerate(cases)]
            e = explain([analyse(c) for c in caps], [S.context(c, levels=levels) for c in cases])
            if e.cause in RIGHT[kind]:
                outcome = "right"
            elif e.cause == "undecided" or (e.cause == "absorption-or-probe"
                                            and kind in ("dow", "probe-over")):
                # absorption or a probe: without the levels, or where the ramp's end moves
                # less than the levels' uncertainty, "cannot tell" with the check named
                outcome = "honest"
            else:
                outcome = "wrong"
            tally[outcome] += 1
            extra = ""
            best = e.model(e.best_model)
            params = {p.name: p.value for p in best.parameters}
            if kind == "shunt" and "shunt_ohm" in params:
                r_err.append(params["shunt_ohm"] / truth["shunt_ohm"] - 1)
                extra = f"R {100 * r_err[-1]:+.1f} %"
            if kind in ("growing", "falling") and "voltage_coefficient_per_v" in params:
                b_err.append(-params["voltage_coefficient_per_v"] / truth["beta"] - 1)
                extra = f"beta {100 * b_err[-1]:+.1f} %"
            if kind == "dow" and e.absorption is not None:
                exact = absorption_figures(truth["branches"], e.absorption.ramp_time_s,
                                           e.absorption.reset_time_s)
                rec_err.append(e.absorption.short_recovery_pct / exact.short_recovery_pct - 1)
                extra = f"short-time recovery {100 * rec_err[-1]:+.1f} %"
            print(f"{n:3d} {kind:12s} {len(cases)} rates levels={levels!s:5s} {bits:2d} bits "
                  f"-> {e.cause:22s} {outcome:6s} {extra}", flush=True)
    total = sum(tally.values())
    print(f"\n{total} sets in {time.perf_counter() - start:.0f} s: right {tally['right']}, "
          f"honest 'cannot tell' {tally['honest']}, wrong {tally['wrong']}")

    def stats(name: str, errs: list[float]) -> None:
        if errs:
            a = 100 * np.abs(errs)
            print(f"{name}: median |error| {np.median(a):.2f} %, worst {np.max(a):.2f} % "
                  f"({len(errs)} sets)")
    stats("shunt resistance", r_err)
    stats("voltage coefficient", b_err)
    stats("short-time recovery (3 rates)", rec_err)
    if not math.isfinite(total):
        raise SystemExit(1)


if __name__ == "__main__":
    main()
