"""trueslope's slope on a ramp simulated live by ngspice, against the handbook I/C.

Handbook formula: a constant current I into a capacitance C gives a ramp of
slope dV/dt = I / C (i = C dv/dt). Here I = 100 uA and C = 10 nF, so 10 000 V/s.
Skipped when ``ngspice`` (Debian package) is not on PATH, failed instead when
the environment variable ``CI`` is true (the ``ngspice`` fixture, tests/conftest.py).
"""

from __future__ import annotations

import numpy as np
import pytest

from tests.support.spice import live_netlist, run_ngspice
from trueslope.core.analysis import analyse
from trueslope.core.capture import Capture
from trueslope.core.settings import Settings

I_A = 100e-6
C_F = 10e-9

# A current source charging a capacitor; a hysteretic voltage-controlled
# switch (the comparator) resets it from 4 V to 0.05 V through 10 ohm.
NETLIST = live_netlist("live check: constant-current ramp",
                       f"""I1 0 ramp DC {I_A:g}
C1 ramp 0 {C_F:g} IC=0""",
                       ".tran 200n 5.6m 0.4m 20n uic")


def test_slope_of_a_live_ngspice_ramp_matches_i_over_c(tmp_path, ngspice):
    t, v = run_ngspice(NETLIST, tmp_path, "live")
    dt = (t[-1] - t[0]) / (t.size - 1)
    cap = Capture(source="live.cir", channels={"CH1": v}, sample_interval_s=dt, t0_s=t[0])
    f = analyse(cap, Settings()).figures
    assert f.full_cycles >= 10
    assert f.slope_v_per_s == pytest.approx(I_A / C_F, rel=0.005)
