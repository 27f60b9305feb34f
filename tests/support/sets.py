"""Sets of captures of one circuit at other rates or values, simulated live by ngspice.

Each circuit is a current source charging a timing capacitor, reset by the hysteretic
switch of :func:`tests.support.spice.live_netlist` (4 V down to 0.05 V through 10 ohm).
The displayed node is ``show``: the ramp itself, or what a probe's divider passes of a
buffered ramp. Captures are degraded by :func:`tests.support.quantise.quantise` (noise,
then an ADC of ``bits``). ngspice is the independent reference (SOURCES.md [ngspice]).

From the project root, ``python -m tests.support.sets`` prints what ``explain`` says of
every set.
"""

from __future__ import annotations

import tempfile
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from trueslope.core.capture import Capture
from trueslope.core.circuit import CircuitContext

from .quantise import quantise
from .spice import run_ngspice

#: Comparator levels of the reset switch (volts).
LOW_V, HIGH_V = 0.05, 4.0
#: Timing capacitance of every set unless a case changes it.
C_F = 10e-9


@dataclass(frozen=True)
class Case:
    """One capture of a set: ngspice elements (node ``ramp``, displayed node ``show``),
    the charging current and capacitance, and what the test knows of the truth."""

    name: str
    elements: str
    current_a: float
    capacitance_f: float = C_F

    @property
    def ramp_time_s(self) -> float:
        return self.capacitance_f * (HIGH_V - LOW_V) / self.current_a


def netlist(case: Case, cycles: float = 11.0, points_per_ramp: int = 2000) -> str:
    """The case's netlist: ``cycles`` ramps after two settling ones, the node ``show``
    written on a uniform grid of ``points_per_ramp`` per ramp."""
    T = case.ramp_time_s
    step = T / points_per_ramp
    start = 2.5 * T
    stop = start + cycles * T * 1.01
    return f"""* trueslope explain set: {case.name}
I1 0 ramp DC {case.current_a:.6g}
{case.elements.strip()}
S1 ramp 0 ramp 0 reset
.model reset sw vt={(HIGH_V + LOW_V) / 2:g} vh={(HIGH_V - LOW_V) / 2:g} ron=10 roff=1e15
.options reltol=1e-6 abstol=1e-15 vntol=1e-9 method=trap
.tran {step:.6g} {stop:.6g} {start:.6g} {step / 10:.6g} uic
.control
run
linearize v(show)
option numdgt=12
wrdata ramp.txt v(show)
quit 0
.endc
.end
"""


def simulate(case: Case, folder: Path | None = None, bits: int = 12, noise_v: float = 1e-3,
             seed: int = 0) -> Capture:
    """Run the case in ngspice and return what a scope of ``bits`` would record."""
    if folder is None:
        with tempfile.TemporaryDirectory() as tmp:
            return simulate(case, Path(tmp), bits, noise_v, seed)
    sub = folder / case.name
    sub.mkdir(parents=True, exist_ok=True)
    t, v = run_ngspice(netlist(case), sub, "set")
    dt = (t[-1] - t[0]) / (t.size - 1)
    x = quantise(v, bits, (-0.5, 4.6), noise_v=noise_v, seed=seed)
    return Capture(source=f"{case.name}.cir", channels={"CH1": x}, sample_interval_s=dt,
                   t0_s=float(t[0]))


def context(case: Case, capacitance: bool = True, levels: bool = False) -> CircuitContext:
    """What a user would type for the case: the capacitance, the comparator levels."""
    return CircuitContext(capacitance_f=case.capacitance_f if capacitance else None,
                          current_a=case.current_a if capacitance else None,
                          low_threshold_v=LOW_V if levels else None,
                          high_threshold_v=HIGH_V if levels else None)


# ------------------------------------------------------------------ the circuits
def shunt(r_ohm: float, current_a: float, c_f: float = C_F) -> Case:
    """A resistance across the timing capacitor."""
    return Case(f"shunt_{r_ohm:.3g}_{current_a:.3g}_{c_f:.3g}",
                f"C1 ramp 0 {c_f:.6g} IC=0\nRS ramp 0 {r_ohm:.6g}\nES show 0 ramp 0 1",
                current_a, c_f)


def growing(beta_per_v: float, current_a: float) -> Case:
    """A capacitance growing with voltage, ``C = C0 (1 + beta v)`` (incremental)."""
    return Case(f"growing_{beta_per_v:.3g}_{current_a:.3g}",
                f"C1 ramp 0 C='{C_F:.6g}*(1+{beta_per_v:.6g}*V(ramp))'\nES show 0 ramp 0 1",
                current_a)


def dow(branches: list[tuple[float, float]], current_a: float, c_f: float = C_F,
        ic_v: float = 0.0, name: str = "") -> Case:
    """Dow-model absorption: branches ``(C_i / C, tau_i)`` as series R-C across C, starting
    at ``ic_v`` (the mean ramp level puts branches far slower than the simulated time
    where the periodic steady state holds them)."""
    lines = [f"C1 ramp 0 {c_f:.6g} IC=0", "ES show 0 ramp 0 1"]
    for i, (k, tau) in enumerate(branches, 1):
        ci = k * c_f
        lines += [f"RA{i} ramp a{i} {tau / ci:.6g}", f"CA{i} a{i} 0 {ci:.6g} IC={ic_v:g}"]
    return Case(name or f"dow_{len(branches)}_{current_a:.3g}", "\n".join(lines), current_a,
                c_f)


def probe_tail(tip_c_f: float, current_a: float, r_tip: float = 9e6, r_scope: float = 1e6,
               c_scope: float = 100e-12) -> Case:
    """A buffered ramp seen through a 10x divider probe (tip ``r_tip || tip_c_f``, scope
    side ``r_scope || c_scope``), scaled back by 10 as the scope does. Compensated when
    ``r_tip tip_c_f = r_scope c_scope``; over-compensated (slope starting high) above."""
    return Case(f"probe_{tip_c_f:.3g}_{current_a:.3g}",
                f"""C1 ramp 0 {C_F:.6g} IC=0
EB buf 0 ramp 0 1
RT buf tip {r_tip:.6g}
CT buf tip {tip_c_f:.6g}
RS tip 0 {r_scope:.6g}
CS tip 0 {c_scope:.6g}
ES show 0 tip 0 {(r_tip + r_scope) / r_scope:.6g}""", current_a)


#: Two film-like absorption branches (C_i / C, tau_i): 0.3 % in all.
FILM = [(0.0015, 30e-6), (0.0015, 150e-6)]


def _report() -> None:  # pragma: no cover - a developer's tool
    from trueslope.core.analysis import analyse
    from trueslope.core.explain import explain
    sets = {"shunt 2.2M": [shunt(2.2e6, 100e-6), shunt(2.2e6, 25e-6)],
            "growing 3%/V": [growing(0.03, 100e-6), growing(0.03, 25e-6)],
            "film DA": [dow(FILM, 100e-6), dow(FILM, 400e-6)],
            "probe over": [probe_tail(11.6e-12, 100e-6), probe_tail(11.6e-12, 400e-6)]}
    for title, cases in sets.items():
        caps = [simulate(c) for c in cases]
        analyses = [analyse(c) for c in caps]
        for levels in (False, True):
            e = explain(analyses, [context(c, levels=levels) for c in cases])
            print(f"{title:14s} levels={levels!s:5s} {e.cause:22s} best={e.best_model} "
                  f"runner-up={e.runner_up} evidence={e.evidence:.1f} "
                  f"{[(p.name, round(p.value, 9)) for p in e.models[0].parameters]}")


if __name__ == "__main__":  # pragma: no cover
    _report()
