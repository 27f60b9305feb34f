"""The rest of the demo set -- INVENTED DEMO DATA, not measurements.

The scenario: one comparator-reset ramp board (a PNP current source, a window comparator
between 1 V and 4 V, a 100 ohm reset switch) whose timing capacitor is fitted in turn with
parts of several dielectrics, two of each so that groups compare; the same board probed
with a 1x probe at two charging currents (a set for ``trueslope explain``); the board
captured from power-up; a capture clipped by the scope's vertical range; and a file
broken on purpose. ``make_samples.py`` writes them with the first three captures; the
circuit model and the scope model are its own.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from make_samples import (FILM, Branch, RampCircuit, Scope,
                          _common, _fmt_codes, _preamble, record, sample, simulate)

#: The board with a 10 nF part: its dielectric's branches and bias dependence change.
BOARD = FILM

#: A second polypropylene film part: a little more absorption, a little slower.
FILM_B = RampCircuit(**{**BOARD.__dict__, "branches": (Branch(4e-12, 60e-6),)})
#: Two C0G/NP0 ceramic parts: a few tenths of a percent of absorption, spread over decades.
C0G_A = RampCircuit(**{**BOARD.__dict__, "branches": (
    Branch(8e-12, 20e-6), Branch(10e-12, 300e-6), Branch(12e-12, 5e-3))})
C0G_B = RampCircuit(**{**BOARD.__dict__, "branches": (
    Branch(10e-12, 25e-6), Branch(12e-12, 250e-6), Branch(14e-12, 4e-3))})
#: A 10 nF X7R part on the board: the first X7R capture's dielectric (its bias dependence a
#: little smaller, its absorption branches scaled to 10 nF).
X7R_B = RampCircuit(**{**BOARD.__dict__, "voltage_coefficient_per_v": 0.012, "branches": (
    Branch(15e-12, 20e-6), Branch(50e-12, 1e-3), Branch(185e-12, 100e-3))})
#: The film board probed with a 1x probe (1 Mohm with about 100 pF of cable and input).
PROBE_1X = RampCircuit(**{**BOARD.__dict__, "probe_resistance_ohm": 1e6,
                          "probe_capacitance_f": 100e-12})
PROBE_1X_SLOW = RampCircuit(**{**PROBE_1X.__dict__, "current_a": 25e-6})
#: The board from power-up: the current source's soft start and an X7R-like part.
POWER_UP = RampCircuit(**{**BOARD.__dict__, "soft_start_s": 0.6e-3,
                          "branches": (Branch(30e-12, 100e-6),)})

#: A scope at 0.5 V/div (20 mV codes) and 100 ns a sample, 60 000 samples.
SCOPE = Scope(sample_interval_s=100e-9, samples=60_000, pretrigger_samples=5_000,
              step_v=0.02, bottom_v=-0.12)
#: The scope in its high-resolution mode for the film and C0G parts: 12 bits, 1.25 mV codes,
#: 1 mV of noise (what a QA bench uses to see a few hundredths of a percent).
FINE_SCOPE = Scope(sample_interval_s=100e-9, samples=60_000, pretrigger_samples=5_000,
                   step_v=0.02 / 16, bottom_v=-0.12, noise_rms_v=1e-3, bits=12)
#: The slow 1x-probe capture: 400 ns a sample.
SLOW_SCOPE = Scope(sample_interval_s=400e-9, samples=60_000, pretrigger_samples=4_000,
                   step_v=0.02, bottom_v=-0.12)
#: The vertical position moved up by 1.4 V: the top of the ramp leaves the screen.
CLIPPED_SCOPE = Scope(sample_interval_s=100e-9, samples=60_000, pretrigger_samples=5_000,
                      step_v=0.02, bottom_v=-1.52)


def _csv(t: np.ndarray, values: np.ndarray, header: str, head: str) -> str:
    times = np.char.mod("%.5e", t)
    rows = np.char.add(np.char.add(times, ","), values)
    return head + header + "\n" + "\n".join(rows.tolist()) + "\n"


def _capture(c: RampCircuit, scope: Scope, seed: int, scenario: str, warmup_s: float,
             extra: list[tuple[str, str]] = ()) -> str:
    rng = np.random.default_rng(seed)
    t, v, _, _ = record(c, scope, rng, warmup_s=warmup_s)
    common = _common()
    if scope.bits != 8:
        common = [(k, {"vertical resolution": f"{scope.bits} bit (high-resolution mode)",
                       "noise": f"{1e3 * scope.noise_rms_v:g} mV rms before quantisation"
                       }.get(k, v_)) for k, v_ in common]
    code_mv = 1e3 * scope.step_v
    head = _preamble([("scenario", scenario), *common, *extra,
                      ("vertical scale", f"0.5 V/div and {code_mv:g} mV per code"),
                      ("sample interval", f"{scope.sample_interval_s:g}"),
                      ("samples", str(scope.samples)), ("trigger", "reset edge at time 0")])
    decimals = 2 if scope.bits == 8 else 5  # 1.25 mV codes need five decimals of a volt
    return _csv(t, _fmt_codes(scope, scope.digitise(v, rng), decimals=decimals),
                "time [s],CH1 [V]", head)


def _board(part: str) -> str:
    return (f"the ramp board (PNP current source, 100 uA, comparator reset between 1 V and "
            f"4 V) with {part} as its timing capacitor")


def film_b() -> str:
    return _capture(FILM_B, FINE_SCOPE, 20241204, _board("a second 10 nF polypropylene film part"),
                    1e-3)


def c0g_a() -> str:
    return _capture(C0G_A, FINE_SCOPE, 20241205, _board("a 10 nF C0G/NP0 ceramic part"), 30e-3)


def c0g_b() -> str:
    return _capture(C0G_B, FINE_SCOPE, 20241206, _board("a second 10 nF C0G/NP0 ceramic part"),
                    30e-3)


def x7r_b() -> str:
    return _capture(X7R_B, SCOPE, 20241207, _board("a 10 nF X7R ceramic part"), 20e-3)


def probe_1x_fast() -> str:
    return _capture(PROBE_1X, SCOPE, 20241208,
                    _board("a 10 nF polypropylene film part") + ", probed with a 1x probe",
                    1e-3, [("probe note", "1x probe: 1 Mohm with about 100 pF")])


def probe_1x_slow() -> str:
    return _capture(PROBE_1X_SLOW, SLOW_SCOPE, 20241209,
                    _board("a 10 nF polypropylene film part") + ", probed with a 1x probe, "
                    "the charging current turned down to 25 uA", 4e-3,
                    [("probe note", "1x probe: 1 Mohm with about 100 pF")])


def clipped() -> str:
    return _capture(X7R_B, CLIPPED_SCOPE, 20241210,
                    _board("a 10 nF X7R ceramic part") + ", with the scope's vertical position "
                    "moved up by 1.4 V: the top of every ramp is off the screen", 20e-3)


def power_up() -> str:
    """From power-up: the node and the part start discharged, the source soft-starts; the
    record starts at switch-on (time 0)."""
    rng = np.random.default_rng(20241211)
    c, s = POWER_UP, SCOPE
    phases = simulate(c, s.samples * s.sample_interval_s * 1.1, rng,
                      y0=np.zeros(1 + len(c.branches)))
    t = np.arange(s.samples) * s.sample_interval_s
    v, _ = sample(phases, t + rng.uniform(0.0, 1.0) * s.sample_interval_s)
    head = _preamble([("scenario", _board("a 10 nF part") + ", captured from power-up: the "
                                   "current source soft-starts"), *_common(),
                      ("vertical scale", "0.5 V/div and 20 mV per code"),
                      ("sample interval", f"{s.sample_interval_s:g}"),
                      ("samples", str(s.samples)), ("trigger", "power switched on at time 0")])
    return _csv(t, _fmt_codes(s, s.digitise(v, rng)), "time [s],CH1 [V]", head)


def broken() -> str:
    """A capture cut short by a failed copy: a letter O for a zero, then half a row."""
    good = film_b().splitlines()[:400]
    return "\n".join(good) + "\n1.23450e-05,2.O4\n1.23550e-05,2."


CAPTURES = {
    "film_b_ramp.csv": film_b,
    "c0g_a_ramp.csv": c0g_a,
    "c0g_b_ramp.csv": c0g_b,
    "x7r_b_ramp.csv": x7r_b,
    "probe1x_100uA.csv": probe_1x_fast,
    "probe1x_25uA.csv": probe_1x_slow,
    "power_up_ramp.csv": power_up,
    "clipped_ramp.csv": clipped,
    "broken_capture.csv": broken,
}

LIMITS = """# Limits for the timing capacitor of the ramp board (demo; invented)
name = "ramp board, timing capacitor"
[limits.nonlinearity_pct]
max = 0.15
[limits.amplitude_v]
nominal = 3.1
within_pct = 2
"""


def write_extras(folder: Path) -> list[str]:
    """The limits file and the bench session (film, C0G and X7R parts in groups, the first
    film part the reference), written after the captures: the session keeps their SHA-256."""
    from trueslope.core.session import GroupSpec, Session, capture_entry, save_session
    (folder / "film_limits.toml").write_text(LIMITS)
    names = ["film_cap_ramp.csv", "film_b_ramp.csv", "c0g_a_ramp.csv", "c0g_b_ramp.csv",
             "x7r_cap_ramp.csv", "x7r_b_ramp.csv"]
    session = Session(
        captures=tuple(capture_entry(folder / n) for n in names),
        reference=str((folder / "film_cap_ramp.csv").resolve()),
        groups=(GroupSpec("film", ("*film*",)), GroupSpec("C0G", ("c0g*",)),
                GroupSpec("X7R", ("x7r*",))),
        limits_path=str((folder / "film_limits.toml").resolve()),
        title="Ramp board: timing capacitor dielectrics (demo)")
    save_session(folder / "dielectrics_session.json", session, force=True)
    return ["film_limits.toml", "dielectrics_session.json"]
