"""Dielectric absorption simulated live by ngspice (an independent circuit simulator).

One Dow-model branch (series R-C across the timing capacitor; P. C. Dow, 1958,
from memory; SOURCES.md [absorption]) charged by 100 uA and reset
by a hysteretic switch. The relaxation time constant of the two-capacitor
circuit is ``R_b C C_b / (C + C_b)`` (circuit theory: the eigenvalue of the
branch equations); the diagnosis must call it ``dielectric-absorption`` and
find that time constant within 25 %. Skipped when ``ngspice`` (Debian package)
is not on PATH, failed instead when ``CI`` is true (the ``ngspice`` fixture,
tests/conftest.py); about 3 s when it runs.
"""

from __future__ import annotations

import numpy as np
import pytest

from tests.support.quantise import quantise
from tests.support.spice import live_netlist, run_ngspice
from trueslope.core.analysis import analyse
from trueslope.core.capture import Capture
from trueslope.core.settings import Settings

I_A, C_F, R_B, C_B = 100e-6, 10e-9, 200e3, 200e-12
TAU_S = R_B * C_F * C_B / (C_F + C_B)

NETLIST = live_netlist(
    "live check: one Dow-model absorption branch across the timing capacitor",
    f"""I1 0 ramp DC {I_A:g}
C1 ramp 0 {C_F:g} IC=0
RB ramp b {R_B:g}
CB b 0 {C_B:g} IC=0""",
    ".tran 200n 6.4m 1.2m 20n uic")


def test_live_ngspice_dow_branch_is_dielectric_absorption(tmp_path, ngspice):
    t, v = run_ngspice(NETLIST, tmp_path, "dow")
    dt = (t[-1] - t[0]) / (t.size - 1)
    x = quantise(v, 10, (-0.4, 4.5), noise_v=1e-3, seed=17)
    cap = Capture(source="dow.cir", channels={"CH1": x}, sample_interval_s=dt, t0_s=t[0])
    a = analyse(cap, Settings())
    assert a.figures.full_cycles >= 8
    d = a.diagnosis
    assert d.signature == "dielectric-absorption", d.explanation
    assert d.tau_s == pytest.approx(TAU_S, rel=0.25)
