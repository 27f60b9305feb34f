"""Acceptance of the measurement engine against an independent circuit simulator.

The issue's acceptance, verbatim: "the engine will be checked on captures of
current-source ramps from an independent circuit simulator, in all the layouts
above, with 8- to 12-bit quantisation and 1-3 mV noise, 10 or more cycles each:
slope within 0.5%, frequency within 0.2%, start and end levels within 20 mV,
nonlinearity within 0.15 percentage points plus 15% of the true value."

Source of truth: ngspice (Debian package) transient runs of the netlists in
``tests/fixtures/spice/netlists``; the true figures come from the noiseless
simulator output by the separate numpy.polyfit computation in
``tests/fixtures/spice/regenerate.py`` (never from trueslope).

Coverage (the full grid of 15 cases x 8 layouts x 3 word lengths x noise is
too slow for a shared machine, so):
- every case in every layout once (120 files), the word length rotating
  through 8, 10 and 12 bits so that each case meets each word length in two or
  three layouts and each layout meets each word length about five times, the
  noise drawn from 1 to 3 mV by a seeded generator;
- every case at every word length with 1, 2 and 3 mV of noise in memory
  (135 captures), without the file layer.

Beside the issue's tolerances, regression guards at about twice the engine's
measured worst error over the same two grids (``GUARD``), so that a change
that makes the engine several times worse fails here even while it stays
inside the issue's much wider tolerances.
"""

from __future__ import annotations

import functools
import importlib.util
import math
import tempfile
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest

from tests.support.quantise import full_scale_for, quantise
from tests.support.spice import (FIXTURES, LAYOUTS, WITH_TIME_COLUMN, list_cases, load_case,
                                 write_layout)
from trueslope.core.analysis import analyse
from trueslope.core.capture import Capture
from trueslope.core.settings import Settings

BITS = (8, 10, 12)
CASES = list_cases()
LAYOUT_NAMES = list(LAYOUTS)

# the issue's tolerances
SLOPE_TOL = 0.005  # relative
FREQ_TOL = 0.002  # relative
LEVEL_TOL_V = 0.020
NL_TOL_PP = 0.15
NL_TOL_REL = 0.15

# Regression guards, near the engine's real accuracy. Measured worst |error| over FILE_GRID
# and MEMORY_GRID with the engine of commit eba2c8a (numpy 2.4.6, scipy 1.17.1, Linux x86-64),
# by running every row below and keeping the largest error of each figure:
#   slope        1.10e-4 relative (0.011 %; da_electrolytic as preamble, 12 bits, 2.19 mV)
#   frequency    1.93e-7 relative (da_x7r as npy, 8 bits, 1.63 mV)
#   start or end 9.10 mV           (da_electrolytic in memory, 8 bits, 3 mV)
#   nonlinearity 0.0193 pp         (da_electrolytic as tab, 8 bits, 2.58 mV)
# (in memory alone: 1.03e-4, 1.66e-7, 9.10 mV, 0.0189 pp). Each guard is about 1.5 to 2 times
# its measured worst; a change that moves one past its guard deserves a look (and, if it is
# right, a new measurement here), even though the issue's tolerances above still hold.
GUARD = {"slope": 2.0e-4, "frequency": 3.5e-7, "level_v": 0.015, "nonlinearity_pp": 0.035}
MEASURED = {"slope": 1.10e-4, "frequency": 1.93e-7, "level_v": 9.10e-3,
            "nonlinearity_pp": 0.0193}


def _file_grid() -> list[tuple[str, str, int, float, int]]:
    rng = np.random.default_rng(20240611)
    grid = []
    for i, case in enumerate(CASES):
        for j, layout in enumerate(LAYOUT_NAMES):
            bits = BITS[(i + j) % len(BITS)]
            noise = float(np.round(rng.uniform(1e-3, 3e-3), 5))
            grid.append((case, layout, bits, noise, int(rng.integers(1 << 30))))
    return grid


FILE_GRID = _file_grid()
MEMORY_GRID = [(c, b, n, 1000 * k + 7 * b + int(n * 1e3))
               for k, c in enumerate(CASES) for b in BITS for n in (1e-3, 2e-3, 3e-3)]


def errors(figures, ref: dict, gain: float = 1.0, offset_v: float = 0.0) -> dict[str, float]:
    """|error| of each guarded figure against the reference (keys of ``GUARD``); NaN stays NaN."""
    levels = [abs(gain * getattr(figures, k) + offset_v - ref[k]) for k in ("start_v", "end_v")]
    return {"slope": abs(gain * figures.slope_v_per_s / ref["slope_v_per_s"] - 1),
            "frequency": abs(figures.frequency_hz / ref["frequency_hz"] - 1),
            "level_v": math.nan if any(map(math.isnan, levels)) else max(levels),
            "nonlinearity_pp": abs(figures.nonlinearity_pct - ref["nonlinearity_pct"])}


def shortfalls(figures, ref: dict, gain: float = 1.0, offset_v: float = 0.0) -> list[str]:
    """Every figure outside the issue's tolerance, as readable lines (empty when all pass).

    ``gain`` and ``offset_v`` map the importer's units back to volts, for a
    layout (WAV) that holds no unit.
    """
    out = []
    slope = gain * figures.slope_v_per_s
    d = slope / ref["slope_v_per_s"] - 1
    if not abs(d) <= SLOPE_TOL:
        out.append(f"slope {slope:.6g} V/s vs {ref['slope_v_per_s']:.6g} ({100 * d:+.3f} %)")
    d = figures.frequency_hz / ref["frequency_hz"] - 1
    if not abs(d) <= FREQ_TOL:
        out.append(f"frequency {figures.frequency_hz:.6g} Hz vs {ref['frequency_hz']:.6g} "
                   f"({100 * d:+.4f} %)")
    for key in ("start_v", "end_v"):
        got = gain * getattr(figures, key) + offset_v
        if not abs(got - ref[key]) <= LEVEL_TOL_V:
            out.append(f"{key} {got:.4f} V vs {ref[key]:.4f} V ({1e3 * (got - ref[key]):+.1f} mV)")
    true_nl = ref["nonlinearity_pct"]
    tol = NL_TOL_PP + NL_TOL_REL * true_nl
    if not abs(figures.nonlinearity_pct - true_nl) <= tol:
        out.append(f"nonlinearity {figures.nonlinearity_pct:.4f} % vs {true_nl:.4f} % "
                   f"(tolerance {tol:.3f} pp)")
    return out


def _degraded(case: str, bits: int, noise_v: float, seed: int):
    t0, dt, v, truth = load_case(case)
    fs = full_scale_for(v)
    return t0, dt, quantise(v, bits, fs, noise_v, seed), truth, fs


@dataclass(frozen=True)
class _FileRun:
    channel_names: list
    has_time_column: bool
    sample_interval_s: float
    figures: object
    gain: float
    offset_v: float


@functools.lru_cache(maxsize=None)
def _run_file(case: str, layout: str, bits: int, noise_v: float, seed: int) -> _FileRun:
    """One row of FILE_GRID written, read back and analysed (kept for the guard below)."""
    from trueslope.core.io import load_capture

    t0, dt, v, truth, fs = _degraded(case, bits, noise_v, seed)
    with tempfile.TemporaryDirectory() as folder:
        path, kwargs = write_layout(layout, Path(folder), case, t0, dt, v, fs)
        gain, offset = kwargs.pop("_gain", 1.0), kwargs.pop("_offset_v", 0.0)
        cap = load_capture(path, **kwargs)
        figures = analyse(cap, Settings()).figures
    return _FileRun(list(cap.channel_names), cap.time_column is not None, cap.sample_interval_s,
                    figures, gain, offset)


@functools.lru_cache(maxsize=None)
def _run_memory(case: str, bits: int, noise_v: float, seed: int):
    """One row of MEMORY_GRID analysed in memory (kept for the guard below)."""
    t0, dt, v, truth, _ = _degraded(case, bits, noise_v, seed)
    cap = Capture(source=f"{case}.npz", channels={"CH1": v}, sample_interval_s=dt, t0_s=t0)
    return analyse(cap, Settings()).figures


def test_every_case_has_ten_cycles_or_more():
    # the issue asks for 10 or more cycles each; the reference counted them
    assert len(CASES) >= 12
    for case in CASES:
        assert load_case(case)[3]["reference"]["full_cycles"] >= 10, case


@pytest.mark.parametrize("case,layout,bits,noise_v,seed", FILE_GRID,
                         ids=[f"{c}-{l}-{b}bit-{n * 1e3:.2f}mV" for c, l, b, n, _ in FILE_GRID])
def test_engine_on_simulator_capture_files(case, layout, bits, noise_v, seed):
    _, dt, _, truth = load_case(case)
    run = _run_file(case, layout, bits, noise_v, seed)
    # the layout was read as written: one channel, time axis from the file where it has one
    assert run.channel_names == ["CH1"]
    assert run.has_time_column == (layout in WITH_TIME_COLUMN)
    assert run.sample_interval_s == pytest.approx(dt, rel=1e-6)
    assert run.figures.full_cycles >= 10
    assert run.figures.direction == truth["direction"]
    bad = shortfalls(run.figures, truth["reference"], run.gain, run.offset_v)
    assert not bad, f"{case} as {layout}, {bits} bits, {noise_v * 1e3:.2f} mV: " + "; ".join(bad)


@pytest.mark.parametrize("case,bits,noise_v,seed", MEMORY_GRID,
                         ids=[f"{c}-{b}bit-{n * 1e3:.0f}mV" for c, b, n, _ in MEMORY_GRID])
def test_engine_on_simulator_captures_in_memory(case, bits, noise_v, seed):
    truth = load_case(case)[3]
    bad = shortfalls(_run_memory(case, bits, noise_v, seed), truth["reference"])
    assert not bad, f"{case}, {bits} bits, {noise_v * 1e3:.0f} mV: " + "; ".join(bad)


def _worst_over(grid: str) -> dict[str, tuple[float, str]]:
    worst: dict[str, tuple[float, str]] = {k: (0.0, "") for k in GUARD}
    if grid == "file":
        rows = [(f"{c} as {l}, {b} bits, {n * 1e3:.2f} mV", c, _run_file(c, l, b, n, s))
                for c, l, b, n, s in FILE_GRID]
        runs = [(name, c, r.figures, r.gain, r.offset_v) for name, c, r in rows]
    else:
        runs = [(f"{c} in memory, {b} bits, {n * 1e3:.0f} mV", c, _run_memory(c, b, n, s),
                 1.0, 0.0) for c, b, n, s in MEMORY_GRID]
    for name, case, figures, gain, offset in runs:
        ref = load_case(case)[3]["reference"]
        for key, err in errors(figures, ref, gain, offset).items():
            # NaN compares false: record it as the worst so that it fails
            if math.isnan(err) or err > worst[key][0]:
                worst[key] = (math.inf if math.isnan(err) else err, name)
    return worst


@pytest.mark.parametrize("grid", ["file", "memory"])
def test_engine_errors_stay_near_their_measured_worst(grid):
    # Regression guard (GUARD above): the worst error of each figure over a whole grid, at
    # about twice what the engine achieved when measured. Reuses the runs of the acceptance
    # tests above when they ran first in the same session.
    worst = _worst_over(grid)
    assert len(FILE_GRID if grid == "file" else MEMORY_GRID) >= 120
    over = [f"{key}: worst {err:.3g} ({where}) exceeds the guard {GUARD[key]:.3g} "
            f"(measured worst {MEASURED[key]:.3g})"
            for key, (err, where) in worst.items() if not err <= GUARD[key]]
    assert not over, f"{grid} grid: " + "; ".join(over)


def test_guards_sit_between_the_measurement_and_the_issue_tolerance():
    # the guard must be tighter than the issue's tolerance (else it guards nothing) and
    # looser than the measured worst (else it fails on today's engine)
    issue = {"slope": SLOPE_TOL, "frequency": FREQ_TOL, "level_v": LEVEL_TOL_V,
             "nonlinearity_pp": NL_TOL_PP}
    for key, guard in GUARD.items():
        assert 1.4 * MEASURED[key] <= guard <= 2.2 * MEASURED[key], key
        assert guard < issue[key], key


def _naive_per_cycle_nonlinearity(t0, dt, v, direction) -> float:
    """The cursor-and-maximum figure: per-cycle max |residual| of each cycle's own
    line, averaged -- regenerate.py's reference computation run on the noisy capture."""
    spec = importlib.util.spec_from_file_location("spice_regenerate", FIXTURES / "regenerate.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod.reference_figures(t0, dt, v, direction)["nonlinearity_pct"]


@pytest.mark.parametrize("case", ["straight", "straight_slow", "falling"])
@pytest.mark.parametrize("noise_v", [1e-3, 2e-3, 3e-3])
def test_straight_ramp_on_8_bits_is_reported_straight(case, noise_v):
    # The reason the tool exists: on an 8-bit capture of a perfectly straight
    # ramp, the maximum residual of each cycle against its own line is about
    # half an ADC step plus noise peaks, several tenths of a percent of the
    # span; trueslope must report the ramp straight to within its floor.
    t0, dt, v, truth, _ = _degraded(case, 8, noise_v, seed=int(noise_v * 1e4))
    assert truth["reference"]["nonlinearity_pct"] < 1e-3  # the simulator's ramp is straight
    naive = _naive_per_cycle_nonlinearity(t0, dt, v, truth["direction"])
    assert naive > 0.2  # what a per-cycle maximum would have claimed
    f = analyse(Capture(source=case, channels={"CH1": v}, sample_interval_s=dt, t0_s=t0)).figures
    assert f.nonlinearity_pct < max(f.nonlinearity_floor_pct, 0.15), (naive, f.nonlinearity_pct)
    assert f.nonlinearity_pct < naive / 3
    assert f.below_floor is True
