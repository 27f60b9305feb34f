"""The curvature diagnosis against outside references (issue 3, sections 1 and 4).

Each check names its source beside it. Captures are built from closed-form
solutions or from scipy.integrate.solve_ivp (a reference ODE solver), then
quantised and run through the whole pipeline (``analyse``); a few checks call
``diagnose`` on averaged cycles built directly (``tests/support/builders.py``).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from trueslope.core.analysis import analyse
from trueslope.core.circuit import CircuitContext
from trueslope.core.diagnose import BIC_MARGIN, SIGNATURES, diagnose
from trueslope.core.report.prose import explanation, next_checks, strength_words
from trueslope.core.results import Diagnosis
from trueslope.core.settings import Settings

from tests.support.builders import averaged_from_model, capture_from_cycles, dow_cycles

I_A = 100e-6
C_F = 10e-9
V_LO, V_HI = 0.05, 4.0
#: Samples per ramp: not a whole number, so the sample clock drifts against the
#: ramp as it does on a real scope.
SAMPLES_PER_RAMP = 2000.37


def _capture(cycles, bits=10, noise_v=1e-3, seed=0):
    T = cycles[0][0]
    dt = T / SAMPLES_PER_RAMP
    return capture_from_cycles(cycles, dt, bits=bits, noise_v=noise_v, seed=seed,
                               phase_s=0.31 * dt)


def _json_ok(d: Diagnosis) -> dict:
    doc = dict(d.to_dict(), explanation=explanation(d), next_checks=list(next_checks(d)))
    json.dumps(doc, allow_nan=False)
    assert doc["signature"] in SIGNATURES
    return doc


# ---------------------------------------------------------------- shunt loading

def _shunt_cycles(r_ohm, c_f=C_F, n=12):
    # exact solution of a current source into R || C (circuit theory; SOURCES.md [loading],
    # "Loading and probes"): V(t) = I R - (I R - V0) exp(-t / (R C))
    tau = r_ohm * c_f
    vinf = I_A * r_ohm
    T = tau * math.log((vinf - V_LO) / (vinf - V_HI))
    return [(T, lambda t: vinf - (vinf - V_LO) * np.exp(-t / tau))] * n, tau


@pytest.mark.parametrize("r_ohm", [390e3, 1.8e6])
def test_exact_r_parallel_c_recovers_tau_and_r_within_5_percent(r_ohm):
    cycles, tau = _shunt_cycles(r_ohm)
    a = analyse(_capture(cycles, bits=10, noise_v=1e-3, seed=7),
                Settings(context=CircuitContext(capacitance_f=C_F)))
    d = a.diagnosis
    assert d.signature == "shunt-loading"
    assert d.curvature == "concave"
    assert d.tau_s == pytest.approx(tau, rel=0.05)
    assert d.equivalent_shunt_ohm == pytest.approx(r_ohm, rel=0.05)
    assert d.strength > 1 and d.evidence > BIC_MARGIN
    assert d.model_scores["shunt-loading"] < d.model_scores["line"]
    _json_ok(d)


def test_equivalent_shunt_counts_the_probe_capacitance():
    # R = tau / (C + C_probe): the probe's capacitance is part of the node's C
    # (SOURCES.md [loading]: shunt capacitance scales the slope)
    cycles, tau = _shunt_cycles(1e6, c_f=C_F + 100e-12)
    ctx = CircuitContext(capacitance_f=C_F, probe_capacitance_f=100e-12)
    d = analyse(_capture(cycles, seed=3), Settings(context=ctx)).diagnosis
    assert d.signature == "shunt-loading"
    assert d.equivalent_shunt_ohm == pytest.approx(d.tau_s / (C_F + 100e-12), rel=1e-12)
    assert d.equivalent_shunt_ohm == pytest.approx(1e6, rel=0.05)


def test_no_capacitance_no_resistance():
    cycles, tau = _shunt_cycles(820e3)
    d = analyse(_capture(cycles, seed=5)).diagnosis
    assert d.signature == "shunt-loading" and d.equivalent_shunt_ohm is None
    assert d.tau_s == pytest.approx(tau, rel=0.05)
    assert "capacitance" in explanation(d)


def test_falling_ramp_with_shunt_is_shunt_loading():
    # a current sink discharging C from 4.5 V with R to ground: dV/dt = -I/C - V/(RC)
    # (circuit theory), exact: V = -I R + (V0 + I R) exp(-t / RC)
    R, v0, v1 = 1e6, 4.5, 0.5
    tau = R * C_F
    T = tau * math.log((v0 + I_A * R) / (v1 + I_A * R))
    cycles = [(T, lambda t: -I_A * R + (v0 + I_A * R) * np.exp(-t / tau))] * 12
    a = analyse(_capture(cycles, seed=11), Settings(context=CircuitContext(capacitance_f=C_F)))
    assert a.figures.direction == "falling"
    assert a.diagnosis.signature == "shunt-loading"
    assert a.diagnosis.equivalent_shunt_ohm == pytest.approx(R, rel=0.05)


# ---------------------------------------------------------------- dielectric absorption

def test_dow_model_by_solve_ivp_is_dielectric_absorption_with_tau_within_25_percent():
    # Dow model (SOURCES.md [absorption], from memory): one series R-C branch
    # across C, integrated with scipy.integrate.solve_ivp. The branch's relaxation
    # time constant is the eigenvalue of the two-capacitor circuit:
    # tau = R_b (C C_b / (C + C_b)) (circuit theory).
    r_b, c_b = 200e3, 200e-12
    cycles = dow_cycles(I_A, C_F, [(r_b, c_b)], V_LO, V_HI)
    tau = r_b * C_F * c_b / (C_F + c_b)
    d = analyse(_capture(cycles, bits=10, noise_v=1e-3, seed=2)).diagnosis
    assert d.signature == "dielectric-absorption"
    assert d.curvature == "concave"
    assert d.tau_s == pytest.approx(tau, rel=0.25)
    assert any("repetition rate" in c for c in next_checks(d))
    assert any("compensation" in c for c in next_checks(d))
    _json_ok(d)


def test_absorption_strength_ranks_film_ceramic_electrolytic():
    # Trade fact (common practice): among timing capacitors film gives the straightest
    # ramp, X7R ceramic a little curvature, aluminium electrolytic the most.
    # Dielectric-absorption fractions: polypropylene 0.05-0.1 %, X7R 2-2.5 %,
    # aluminium electrolytic 10-15 % (Wikipedia "Dielectric absorption" and "Ceramic
    # capacitor", SOURCES.md [absorption]). Each is modelled as Dow branches holding that
    # fraction of C, split 50/30/20 % over time constants of 15, 90 and 240 us
    # (the same for all three: an assumption of this test, not a datum).
    strengths, nonlin = [], []
    for frac in (0.001, 0.02, 0.10):
        split = [(15e-6, 0.5), (90e-6, 0.3), (240e-6, 0.2)]
        branches = [(tau / (frac * share * C_F), frac * share * C_F) for tau, share in split]
        a = analyse(_capture(dow_cycles(I_A, C_F, branches, V_LO, V_HI), bits=12,
                             noise_v=0.5e-3, seed=4))
        strengths.append(a.diagnosis.strength)
        nonlin.append(a.figures.nonlinearity_pct)
        if frac >= 0.02:
            assert a.diagnosis.signature == "dielectric-absorption"
    assert strengths[0] < strengths[1] < strengths[2]
    assert nonlin[0] < nonlin[1] < nonlin[2]


# ---------------------------------------------------------------- voltage coefficient

def test_capacitance_falling_linearly_with_voltage_is_voltage_coefficient():
    # C = C0 (1 - beta V) at constant current, solved exactly (charge balance,
    # SOURCES.md [voltage-coefficient]): C0 [(V - V0) - beta (V^2 - V0^2) / 2] = I t
    beta, v0, v1 = 0.004, 0.05, 5.0
    T = C_F * ((v1 - v0) - beta * (v1 ** 2 - v0 ** 2) / 2) / I_A

    def v(t):
        k = v0 - beta * v0 ** 2 / 2 + I_A * t / C_F
        return (1 - np.sqrt(1 - 2 * beta * k)) / beta

    a = analyse(_capture([(T, v)] * 12, bits=10, noise_v=1e-3, seed=9))
    d = a.diagnosis
    assert d.signature == "voltage-coefficient"
    assert d.curvature == "convex"
    # the slope rises by beta per volt, referred to the ramp's start: beta / (1 - beta V0)
    assert d.voltage_coefficient_per_v == pytest.approx(beta / (1 - beta * v0), rel=0.15)
    assert any("C0G" in c for c in next_checks(d))
    _json_ok(d)


def test_current_growing_with_voltage_is_voltage_coefficient():
    # I = I0 (1 + alpha V) into C (circuit theory): V = ((1 + alpha V0) exp(alpha I0 t / C) - 1) / alpha
    alpha = 0.01
    T = C_F / (alpha * I_A) * math.log((1 + alpha * V_HI) / (1 + alpha * V_LO))
    f = lambda t: ((1 + alpha * V_LO) * np.exp(alpha * I_A * t / C_F) - 1) / alpha  # noqa: E731
    d = analyse(_capture([(T, f)] * 12, seed=13)).diagnosis
    assert d.signature == "voltage-coefficient"
    assert d.voltage_coefficient_per_v == pytest.approx(alpha / (1 + alpha * V_LO), rel=0.15)


# ---------------------------------------------------------------- linear and unclassified

def test_straight_ramp_is_linear_with_words():
    cycles = [(V_HI * C_F / I_A, lambda t: V_LO + I_A / C_F * t)] * 12
    d = analyse(_capture(cycles, bits=8, noise_v=5e-3, seed=1)).diagnosis
    assert d.signature == "linear" and d.curvature == "none"
    assert d.strength < 1 and strength_words(d.strength).startswith("not above the noise")
    assert d.tau_s is None and d.equivalent_shunt_ohm is None
    _json_ok(d)


def test_ripple_on_the_ramp_is_unclassified_and_described():
    # three cycles of ripple along the ramp: no physical model of the list makes it
    T = 1e-3
    av, fig, nf = averaged_from_model(lambda t: 0.1 + 4000 * t + 4e-3 * np.sin(6 * np.pi * t / T),
                                      T, bins=1500, sigma_v=2e-4, seed=3)
    d = diagnose(av, fig, nf)
    assert d.signature == "unclassified"
    assert "wavy" in explanation(d) or "S-shaped" in explanation(d)
    assert "None of shunt loading" in explanation(d)
    assert d.unexplained_pct is not None and d.unexplained_pct > fig.nonlinearity_floor_pct
    _json_ok(d)


def test_slope_starting_low_is_not_called_absorption():
    # an early relaxation of the wrong sign (slope low after the reset, as an
    # under-compensated probe gives; SOURCES.md [probe-comp])
    T = 1e-3
    av, fig, nf = averaged_from_model(
        lambda t: 4000 * t - 0.05 * (1 - np.exp(-t / (0.08 * T))), T, bins=1500,
        sigma_v=5e-4, seed=8)
    d = diagnose(av, fig, nf)
    assert d.signature == "unclassified"
    assert "starts low" in explanation(d)
    assert d.tau_s == pytest.approx(0.08 * T, rel=0.1)
    assert any("compensation" in c for c in next_checks(d))


def test_noise_free_exact_data_is_classified():
    # no noise at all (a simulator's output): the floor never falls to zero
    T = 1e-3
    av, fig, nf = averaged_from_model(lambda t: 40 * (1 - np.exp(-t / (10 * T))), T,
                                      bins=800, sigma_v=0.0)
    d = diagnose(av, fig, nf)
    assert d.signature == "shunt-loading"
    assert d.tau_s == pytest.approx(10 * T, rel=1e-3)


@pytest.mark.parametrize("shape", ["step", "nan-bins", "flat", "few-bins", "huge-noise",
                                   "zero-stderr", "spike"])
def test_strange_shapes_never_raise(shape):
    T = 1e-3
    model = {"step": lambda t: 4000 * t + 0.2 * (t > 0.5 * T),
             "spike": lambda t: 4000 * t + 0.5 * (np.abs(t - 0.3 * T) < 0.004 * T)}.get(
        shape, lambda t: 4000 * t)
    bins = 12 if shape == "few-bins" else 600
    sigma = 2.0 if shape == "huge-noise" else 1e-3
    av, fig, nf = averaged_from_model(model, T, bins=bins, sigma_v=sigma, seed=1)
    if shape == "nan-bins":
        av.voltage_v[100:110] = np.nan
        av.stderr_v[200:205] = np.nan
    if shape == "zero-stderr":
        av.stderr_v[:] = 0.0
    if shape == "flat":
        av.voltage_v[:] = 1.0
    d = diagnose(av, fig, nf)
    doc = _json_ok(d)
    assert isinstance(doc["next_checks"], list) and doc["explanation"]
    if shape in ("step", "spike"):
        assert d.signature == "unclassified"


def test_strength_words_scale():
    assert strength_words(0.4).startswith("not above the noise")
    assert strength_words(1.8) == "slight (1.8x the resolution)"
    assert strength_words(4.2).startswith("clear")
    assert strength_words(31).startswith("strong (31x")
    assert strength_words(math.nan) == "not measurable"

