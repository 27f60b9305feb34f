"""A shunt and a capacitance growing with voltage: said aloud when the data cannot tell them apart.

Both bend a ramp the same way (concave) and agree to second order in time
(SOURCES.md [voltage-coefficient]). Captures are built from the closed forms
of SOURCES.md [loading] and [voltage-coefficient], or integrated with
scipy.integrate.solve_ivp from the circuit equation, quantised by
``tests.support.quantise`` and run through ``analyse``.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate

from trueslope.core import shapes
from trueslope.core.analysis import analyse
from trueslope.core.circuit import CircuitContext
from trueslope.core.diagnose import BIC_MARGIN
from trueslope.core.report.prose import explanation, next_checks
from trueslope.core.settings import Settings

from tests.support.builders import capture_from_cycles

I_A = 100e-6
C_F = 10e-9
V_LO, V_HI = 0.05, 4.0
SAMPLES_PER_RAMP = 2000.37  # not whole: the sample clock drifts against the ramp


def _growing_c(beta, n=12):
    # C = C0 (1 + beta V) at constant current, exact (SOURCES.md [voltage-coefficient]):
    # V = (sqrt((1 + beta V0)^2 + 2 beta I t / C0) - 1) / beta
    T = C_F * ((V_HI - V_LO) + beta * (V_HI ** 2 - V_LO ** 2) / 2) / I_A
    w0 = 1 + beta * V_LO
    return [(T, lambda t: (np.sqrt(w0 ** 2 + 2 * beta * I_A * t / C_F) - 1) / beta)] * n


def _growing_c_ivp(beta, n):
    # the same circuit integrated from C(V) dV/dt = I by scipy solve_ivp
    T = C_F * ((V_HI - V_LO) + beta * (V_HI ** 2 - V_LO ** 2) / 2) / I_A
    sol = integrate.solve_ivp(lambda _t, v: I_A / (C_F * (1 + beta * v)), (0.0, T), [V_LO],
                              method="DOP853", dense_output=True, rtol=1e-11, atol=1e-13)
    return [(T, lambda t: sol.sol(t)[0])] * n


def _shunt(r_ohm, n=12):
    # current into R || C, exact (SOURCES.md [loading]): V = I R - (I R - V0) exp(-t / (R C))
    tau, vinf = r_ohm * C_F, I_A * r_ohm
    T = tau * math.log((vinf - V_LO) / (vinf - V_HI))
    return [(T, lambda t: vinf - (vinf - V_LO) * np.exp(-t / tau))] * n


def _analyse(cycles, bits, noise_v, seed, context=None):
    dt = cycles[0][0] / SAMPLES_PER_RAMP
    cap = capture_from_cycles(cycles, dt, bits=bits, noise_v=noise_v, seed=seed,
                              phase_s=0.31 * dt)
    return analyse(cap, Settings(context=context)).diagnosis


def _gap(d):
    return d.model_scores["capacitance-growing"] - d.model_scores["shunt-loading"]


def _names_the_rate_check(d):
    first = next_checks(d)[0]
    return "charging current" in first and "same swing" in first and "R C" in first


# ---------------------------------------------------------------- the shape itself

def test_growing_capacitance_shape_matches_solve_ivp_and_reaches_the_line():
    # the shape a (sqrt(1 + 2 g x) - 1) / g against scipy solve_ivp of C0 (1 + beta V) dV/dt = I
    beta, T = 0.3, 1e-3
    x = np.linspace(0.0, 1.0, 201)
    sol = integrate.solve_ivp(lambda _t, v: I_A / (C_F * (1 + beta * v)), (0, T), [V_LO],
                              t_eval=x * T, rtol=1e-12, atol=1e-14)
    w0 = 1 + beta * V_LO
    a, g = I_A * T / (C_F * w0), beta * I_A * T / (C_F * w0 ** 2)
    assert np.max(np.abs(V_LO + a * shapes.growing_capacitance(g, x) - sol.y[0])) < 1e-9
    # continuous to the line as g -> 0; concave; falling_capacitance mirrored
    assert np.allclose(shapes.growing_capacitance(1e-12, x), x)
    assert np.all(np.diff(shapes.growing_capacitance(g, x), 2) < 0)
    assert np.allclose(shapes.growing_capacitance(g, x), shapes.falling_capacitance(-g, x))


# ---------------------------------------------------------------- indistinguishable

@pytest.mark.parametrize("seed", range(4))
def test_small_growing_capacitance_is_never_a_confident_shunt(seed):
    beta = 0.006  # a 0.2 % bow: well above the 8-bit floor, far below telling the shapes apart
    d = _analyse(_growing_c(beta), bits=8, noise_v=2e-3, seed=seed,
                 context=CircuitContext(capacitance_f=C_F))
    assert d.signature in ("shunt-loading", "voltage-coefficient") and d.curvature == "concave"
    assert abs(_gap(d)) <= BIC_MARGIN
    # the likelier cause keeps the signature; the other is named with its coefficient,
    # the slope falling by beta / (1 + beta V0) per volt (SOURCES.md [voltage-coefficient])
    assert d.signature == "shunt-loading"
    assert d.also_consistent == ("voltage-coefficient",)
    assert d.also_voltage_coefficient_per_v == pytest.approx(-beta / (1 + beta * V_LO), rel=0.25)
    text = explanation(d)
    assert "also consistent with a capacitance that grows with voltage" in text
    assert "per volt" in text and _names_the_rate_check(d)
    assert d.to_dict()["also_consistent"] == ["voltage-coefficient"]


@pytest.mark.parametrize("seed", range(3))
def test_small_shunt_names_the_growing_capacitance_too(seed):
    r = 1.8e6  # slope falls about 2 % along the ramp
    d = _analyse(_shunt(r), bits=8, noise_v=2e-3, seed=seed,
                 context=CircuitContext(capacitance_f=C_F))
    assert d.signature == "shunt-loading"
    assert d.equivalent_shunt_ohm == pytest.approx(r, rel=0.1)  # SOURCES.md [loading]
    assert abs(_gap(d)) <= BIC_MARGIN
    assert "voltage-coefficient" in d.also_consistent
    assert "grows with voltage" in explanation(d) and _names_the_rate_check(d)


@pytest.mark.parametrize("beta", [0.006, 0.01])
def test_whenever_the_two_are_within_the_margin_both_are_named(beta):
    # the invariant behind the wording, over seeds and resolutions (closed form above)
    for bits, noise, seed in [(8, 2e-3, 11), (10, 1e-3, 12), (10, 1e-3, 13), (12, 5e-4, 14)]:
        d = _analyse(_growing_c(beta), bits=bits, noise_v=noise, seed=seed)
        if d.signature == "linear":
            continue
        if abs(_gap(d)) <= BIC_MARGIN:
            assert {d.signature, *d.also_consistent} >= {"shunt-loading", "voltage-coefficient"}
            assert _names_the_rate_check(d)
        elif d.signature == "shunt-loading":
            assert _gap(d) > BIC_MARGIN  # a shunt alone only when the data rule the other out


# ---------------------------------------------------------------- clearly distinct

def test_large_growing_capacitance_is_a_voltage_coefficient_not_a_shunt():
    beta = 0.2  # slope falls by a third along the ramp; solve_ivp, 40 cycles, 12 bits
    d = _analyse(_growing_c_ivp(beta, 40), bits=12, noise_v=5e-4, seed=21)
    assert d.signature == "voltage-coefficient" and d.vc_form == "growing"
    assert d.curvature == "concave"
    assert _gap(d) < -BIC_MARGIN and "shunt-loading" not in d.also_consistent
    # the slope falls by beta / (1 + beta V0) per volt at the start
    # (SOURCES.md [voltage-coefficient])
    assert d.voltage_coefficient_per_v == pytest.approx(-beta / (1 + beta * V_LO), rel=0.05)
    assert "grows with voltage" in explanation(d)
    assert _names_the_rate_check(d)


def test_large_shunt_is_a_shunt_and_nothing_else():
    r = 390e3  # slope falls about 10 % along the ramp
    d = _analyse(_shunt(r), bits=10, noise_v=1e-3, seed=5,
                 context=CircuitContext(capacitance_f=C_F))
    assert d.signature == "shunt-loading"
    assert _gap(d) > BIC_MARGIN and "voltage-coefficient" not in d.also_consistent
    assert d.tau_s == pytest.approx(r * C_F, rel=0.05)  # SOURCES.md [loading]
    assert "also consistent" not in explanation(d)
    assert "charging current" not in next_checks(d)[0]
