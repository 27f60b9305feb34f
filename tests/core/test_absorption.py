"""The absorption a dielectric is known by (core/absorption.py), against outside references
named at each check: ngspice runs of the recovery tests on the true Dow network (SOURCES.md
[ngspice]), scipy.integrate.solve_ivp and scipy.optimize.curve_fit of the circuit
equations (SOURCES.md [reference-libraries]), and the charge-redistribution closed form
of one branch (SOURCES.md [absorption])."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import curve_fit

from tests.support.absorption_spice import short_time_netlist, standard_test_netlist
from tests.support.spice import require_ngspice, run_ngspice
from trueslope.core.absorption import (DIELECTRIC_ABSORPTION, STANDARD_CHARGE_S,
                                       STANDARD_READ_S, STANDARD_SHORT_OHM, STANDARD_SHORT_S,
                                       Branch, absorption_figures, branch_from_relaxation,
                                       even_spread, place_dielectric, recovery)
from trueslope.core.errors import AnalysisError
from trueslope.core.report.absorption_text import absorption_lines

C_F = 1e-6
#: A network with branches below, inside and above a 100 µs ramp's band (1 µs to 100 µs).
MIXED = [(0.004, 2e-6), (0.003, 2e-5), (0.002, 2e-4), (0.01, 5e-3)]
#: Even density: 0.2 % of C per decade, one branch a decade from 3 µs to 30 ks (10 decades).
EVEN = [(0.002, 3e-6 * 10.0 ** j) for j in range(11)]


# ------------------------------------------------------------------ closed forms and solve_ivp

def test_one_branch_recovers_as_its_charge_redistributes():
    # SOURCES.md [absorption]: after an ideal short of t_s the branch holds V_c exp(-t_s/tau);
    # opened, charge rho u0 shares over C (1 + rho) with time constant tau / (1 + rho)
    rho, tau, t_s = 0.01, 1e-4, 1e-6
    u0 = math.exp(-t_s / tau)
    for t in (1e-5, 1e-4, 1e-3, 1.0):
        exact = rho * u0 / (1 + rho) * -math.expm1(-t * (1 + rho) / tau)
        got = recovery([Branch(rho, tau)], math.inf, t_s, t, peak=False)
        assert got == pytest.approx(exact, rel=1e-10)
    # the reading window's highest value is the end value: the recovery only rises
    assert recovery([(rho, tau)], math.inf, t_s, 1e-4) == pytest.approx(
        recovery([(rho, tau)], math.inf, t_s, 1e-4, peak=False), rel=1e-12)


def _solve_ivp_test(branches, charge_s, short_s, read_s, short_ohm, c_f):
    """The recovery test integrated by scipy.integrate.solve_ivp (Radau), phase by phase."""
    r = np.array([b[0] for b in branches])
    tau = np.array([b[1] for b in branches])
    g_s = 1.0 / (short_ohm * c_f)

    def branch_rates(v, u):
        return (v - u) / tau

    def network(_t, x, short):
        v, u = x[0], x[1:]
        du = branch_rates(v, u)
        dv = -np.sum(r * du) - (g_s * v if short else 0.0)
        return np.concatenate(([dv], du))

    opts = dict(method="Radau", rtol=1e-10, atol=1e-14)
    charged = solve_ivp(lambda t, u: branch_rates(1.0, u), (0, charge_s), np.zeros(r.size),
                        **opts).y[:, -1]
    shorted = solve_ivp(network, (0, short_s), np.concatenate(([1.0], charged)), args=(True,),
                        **opts).y[:, -1]
    return solve_ivp(network, (0, read_s), shorted, args=(False,), dense_output=True, **opts)


def test_recovery_matches_solve_ivp_with_a_resistive_short():
    # scipy.integrate.solve_ivp of the Dow network's node equations (SOURCES.md
    # [reference-libraries]); charge finite, short through 2 ohm across 1 µF
    net = [(0.01, 3e-6), (0.02, 4e-5), (0.005, 7e-4)]
    sol = _solve_ivp_test(net, 2e-3, 1e-5, 1e-3, 2.0, C_F)
    got = recovery(net, 2e-3, 1e-5, 1e-3, short_ohm=2.0, capacitance_f=C_F, peak=False)
    assert got == pytest.approx(sol.y[0, -1], rel=1e-6)
    t = np.linspace(0.0, 1e-3, 20001)
    got_peak = recovery(net, 2e-3, 1e-5, 1e-3, short_ohm=2.0, capacitance_f=C_F)
    assert got_peak == pytest.approx(sol.sol(t)[0].max(), rel=1e-6)


def test_branch_from_relaxation_inverts_the_periodic_steady_state():
    # scipy.integrate.solve_ivp of a current into C with one Dow branch, reset ideally to
    # the start level for t_r each cycle, run to its periodic steady state; the last ramp
    # fitted by scipy.optimize.curve_fit to a + b t - A exp(-t / tau')
    rho, tau, ramp, reset = 0.02, 8e-6, 100e-6, 2e-6
    current = 5.0 / ramp  # into C = 1 (the result depends on ratios only)

    def rates(_t, x):
        ib = (x[0] - x[1]) * rho / tau
        return [current - ib, ib / rho]

    x = [0.0, 0.0]
    for _ in range(4):  # a cycle shrinks the start error by D (rho + E) / (1 + rho) ~ 0.02
        sol = solve_ivp(rates, (0, ramp), x, method="Radau", rtol=1e-11, atol=1e-14,
                        dense_output=True)
        x = [0.0, sol.y[1, -1] * math.exp(-reset / tau)]
    t = np.linspace(0, ramp, 4001)

    def model(t, a, b, amp, r):
        return a + b * t - amp * np.exp(-t / r)

    (a, b, amp, r), _ = curve_fit(model, t, sol.sol(t)[0], p0=[0, current, 0.01, tau],
                                  xtol=1e-14, ftol=1e-14)
    got = branch_from_relaxation(amp / (b * ramp), r, ramp, reset)
    assert got.ratio == pytest.approx(rho, rel=1e-5)
    assert got.tau_s == pytest.approx(tau, rel=1e-5)
    assert branch_from_relaxation(0.0, r, ramp, reset) == Branch(0.0, r)


# ------------------------------------------------------------------ ngspice

def test_short_time_recovery_against_ngspice(tmp_path):
    # ngspice (SOURCES.md [ngspice]): every capacitor of the true network at 5 V, a switch
    # of 0.01 ohm shorts the main capacitor for one reset time (1 µs) and opens; read
    # three ramp times (300 µs) later
    require_ngspice()
    ramp, reset = 100e-6, 1e-6
    t, v = run_ngspice(short_time_netlist(C_F, MIXED, 5.0, reset, 3 * ramp, 0.01), tmp_path)
    assert t[-1] == pytest.approx(reset + 3 * ramp, rel=1e-9)
    simulated_pct = 100.0 * v[-1] / 5.0
    fig = absorption_figures(MIXED, ramp, reset)
    assert fig.short_read_s == pytest.approx(3 * ramp)
    # the figure assumes an ideal short; a 10 ns short's lag shifts it by 0.35 %
    assert fig.short_recovery_pct == pytest.approx(simulated_pct, rel=0.02)
    same_short = 100.0 * recovery(MIXED, math.inf, reset, 3 * ramp, short_ohm=0.01,
                                  capacitance_f=C_F, peak=False)
    assert same_short == pytest.approx(simulated_pct, rel=1e-3)  # measured 1e-4


def test_standard_figure_extrapolated_from_a_ramp_against_ngspice(tmp_path):
    # ngspice (SOURCES.md [ngspice]) runs the standard test (IEC 60384-1 as commonly
    # described, SOURCES.md [absorption]) on a network of even density, 0.2 % per decade
    # over ten decades: charge 1 V for 60 min, short 10 s through 5 ohm, open, highest
    # voltage within 15 min
    require_ngspice()
    t, v = run_ngspice(standard_test_netlist(C_F, EVEN, 1.0, STANDARD_CHARGE_S,
                                             STANDARD_SHORT_S, STANDARD_SHORT_OHM,
                                             STANDARD_READ_S, 5.0), tmp_path)
    assert t[-1] == pytest.approx(STANDARD_CHARGE_S + STANDARD_SHORT_S + STANDARD_READ_S)
    simulated_pct = 100.0 * v[t >= STANDARD_CHARGE_S + STANDARD_SHORT_S].max()
    fig = absorption_figures(EVEN, 100e-6, 1e-6, capacitance_f=C_F)
    # only 3 µs and 30 µs lie in a 100 µs ramp's band (1 µs to 100 µs)
    assert fig.visible_branches == 2
    assert fig.absorbed_pct_per_decade == pytest.approx(0.2)
    # the exact computation on the whole true network (a guard on the machinery; measured 1e-5)
    assert fig.standard_from_branches_pct == pytest.approx(simulated_pct, rel=2e-3)
    # The extrapolation differs from the true network only by (a) one branch a decade
    # against a smooth spread, whose ripple over a shift of the grid is below +-0.5 %
    # (checked below), and (b) the ends of the range (1 µs-100 ks assumed against 3 µs-30 ks
    # built), worth well under 1 %; 3 % holds both with room for the simulator's steps and
    # stays far inside the 20 %. Measured: 0.4 %.
    assert fig.standard_recovery_pct == pytest.approx(simulated_pct, rel=0.03)
    shifted = [100.0 * recovery([(0.002, s * 1e-6 * 10.0 ** j) for j in range(12)],
                                STANDARD_CHARGE_S, STANDARD_SHORT_S, STANDARD_READ_S)
               for s in (1.0, 1.8, 3.2, 5.6)]
    assert max(shifted) / min(shifted) - 1.0 < 0.01


# ------------------------------------------------------------------ what the capture sees

def test_band_density_and_the_stated_band():
    fig = absorption_figures(MIXED, 100e-6, 1e-6)
    assert (fig.band_low_s, fig.band_high_s, fig.band_decades) == (1e-6, 100e-6, 2.0)
    assert fig.visible_branches == 2 and fig.visible_ratio == pytest.approx(0.007)
    assert fig.absorbed_pct_per_decade == pytest.approx(0.35)
    wide = absorption_figures(MIXED, 100e-6, 1e-6, visible_band_s=(1e-6, 1e-2))
    assert wide.visible_branches == 4 and wide.absorbed_pct_per_decade == pytest.approx(1.9 / 4)
    edge = absorption_figures([(0.001, 1e-6), (0.001, 1e-4)], 1e-4, 1e-6)
    assert edge.visible_branches == 2  # the band's edges count
    assert absorption_figures([], 1e-4, 1e-6).standard_recovery_pct == 0.0


def test_even_spread_holds_the_density():
    bs = even_spread(0.002, 1e-6, 1e5)
    assert len(bs) == 88
    assert sum(b.ratio for b in bs) == pytest.approx(0.002 * 11)
    taus = np.log10([b.tau_s for b in bs])
    assert np.allclose(np.diff(taus), 1 / 8) and taus[0] == pytest.approx(-6 + 1 / 16)


@pytest.mark.parametrize("value,within,nearest,position", [
    (0.075, ("polypropylene",), "polypropylene", "within"),
    (0.4, ("polyester (PET)", "C0G/NP0 ceramic", "mica"), "polyester (PET)", "within"),
    (1.5, ("tantalum",), "tantalum", "within"),
    (6.0, (), "tantalum", "between"),
    (9.0, (), "aluminium electrolytic", "between"),
    (0.005, (), "PTFE", "below"),
    (40.0, (), "aluminium electrolytic", "above"),
    (0.0, (), "PTFE", "below"),
])
def test_handbook_placement(value, within, nearest, position):
    # the table of SOURCES.md [dielectric-table]
    p = place_dielectric(value)
    assert (p.within, p.nearest, p.position) == (within, nearest, position)
    if position == "between":
        assert p.distance_decades > 0.0


def test_handbook_table_covers_the_dielectrics_asked_for():
    names = " ".join(r.dielectric for r in DIELECTRIC_ABSORPTION)
    for word in ("polystyrene", "polypropylene", "PTFE", "C0G", "polyester", "polycarbonate",
                 "mica", "X7R", "tantalum", "aluminium electrolytic"):
        assert word in names
    assert all(0 < r.low_pct <= r.high_pct for r in DIELECTRIC_ABSORPTION)
    assert {r.basis for r in DIELECTRIC_ABSORPTION} <= {"published", "from memory"}


def test_result_goes_to_json_and_to_words():
    fig = absorption_figures(EVEN, 100e-6, 1e-6, capacitance_f=C_F)
    d = json.loads(json.dumps(fig.to_dict()))
    assert d["absorbed_pct_per_decade"] == pytest.approx(0.2)
    assert d["placement"]["position"] == "within" and "evenly" in d["assumption"]
    text = "\n".join(absorption_lines(fig))
    assert "0.200 % of the capacitance per decade" in text
    assert "60 min" in text and "15 min" in text and "5.00 Ω" in text
    assert fig.assumption in text and "polyester (PET)" in text
    empty = absorption_lines(absorption_figures([], 100e-6, 1e-6))
    assert "below every dielectric" in empty[-1]


@pytest.mark.parametrize("branches", [[(-0.01, 1e-5)], [(0.01, 0.0)], [(0.01, -1e-5)],
                                      [(float("nan"), 1e-5)], [(0.01, float("inf"))]])
def test_bad_branches_raise(branches):
    with pytest.raises(AnalysisError, match="branch"):
        absorption_figures(branches, 1e-4, 1e-6)
    with pytest.raises(ValueError):
        recovery(branches, 1.0, 0.1, 1.0)


def test_bad_times_raise():
    with pytest.raises(AnalysisError, match="band"):
        absorption_figures(MIXED, 1e-6, 1e-4)  # reset longer than the ramp
    with pytest.raises(AnalysisError, match="ramp time"):
        absorption_figures(MIXED, 0.0, 1e-6)
    with pytest.raises(AnalysisError, match="relaxation time"):
        branch_from_relaxation(0.01, 0.0, 1e-4, 1e-6)
    with pytest.raises(AnalysisError, match="amplitude"):
        branch_from_relaxation(-0.01, 1e-5, 1e-4, 1e-6)
