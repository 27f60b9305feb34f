"""What it would take (core/whatif.py), against outside references named at each check:
the closed forms of SOURCES.md [loading] and [voltage-coefficient], numpy.polyfit of
the exact exponential, scipy.integrate.solve_ivp of the circuit equation."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from trueslope.core.circuit import CircuitContext, predict_ramp
from trueslope.core.errors import AnalysisError
from trueslope.core.report.prose import requirements_text
from trueslope.core.results import Diagnosis, Figures
from trueslope.core.whatif import (ShuntChange, predict_change, requirements,
                                   vc_nonlinearity_pct)

N_REF = 20001  # points of the independent fits: a grid unlike predict_ramp's 4001, so a
#             discrete least-squares line differs by O(1/N); checks on it allow 1e-3 relative


def figures(start_v=0.0, end_v=5.0, ramp_time_s=50e-6, window=(0.05, 0.95), nl_pct=0.43,
            direction="rising") -> Figures:
    kw = {f.name: 0.0 for f in dataclasses.fields(Figures)
          if f.default is dataclasses.MISSING}
    kw.update(direction=direction, slope_ci95_v_per_s=(0.0, 0.0), adc_step_v=None,
              below_floor=False, start_v=start_v, end_v=end_v, ramp_time_s=ramp_time_s,
              window_start_s=window[0] * ramp_time_s, window_end_s=window[1] * ramp_time_s,
              nonlinearity_pct=nl_pct)
    return Figures(**kw)


SHUNT = Diagnosis("shunt-loading", "", 10.0, "concave", tau_s=1e-3)


def polyfit_nl_pct(t, v):
    """numpy.polyfit line; largest residual over the fitted span, %."""
    u = (t - t[0]) / (t[-1] - t[0])
    p = np.polyfit(u, v, 1)
    return 100 * np.max(np.abs(v - np.polyval(p, u))) / p[0], p[0] / (t[-1] - t[0])


def exp_nl_pct(I, C, R, v0, v1, window):
    """Exact exponential of SOURCES.md [loading], fitted with numpy.polyfit."""
    tau = R * C
    T = tau * math.log((I * R - v0) / (I * R - v1))
    t = np.linspace(window[0] * T, window[1] * T, N_REF)
    return polyfit_nl_pct(t, I * R - (I * R - v0) * np.exp(-t / tau))


def test_min_shunt_at_stated_current_meets_target_exactly():
    fig, ctx = figures(), CircuitContext(capacitance_f=1e-9, current_a=100e-6)
    req = requirements(fig, SHUNT, ctx, 0.1)
    assert req.held == "current"
    nl = predict_ramp(100e-6, 1e-9, 0.0, 5.0, req.min_shunt_ohm, (0.05, 0.95)).nonlinearity_pct
    assert nl == pytest.approx(0.1, rel=1e-6)
    ref, _ = exp_nl_pct(100e-6, 1e-9, req.min_shunt_ohm, 0.0, 5.0, (0.05, 0.95))
    assert ref == pytest.approx(0.1, rel=1e-3)  # numpy.polyfit, independent grid
    # small-error rule of SOURCES.md [loading]/[sweep]: nl ~ (2/3)(1/8) e_s w, e_s = V_s / (I R)
    e_s = 12 * 0.001 / 0.9
    assert req.min_shunt_ohm == pytest.approx(5.0 / (100e-6 * e_s), rel=0.02)
    assert req.min_time_constant_s == pytest.approx(req.min_shunt_ohm * 1e-9, rel=1e-12)


def test_min_shunt_reproduces_the_worked_figure_of_sources():
    # SOURCES.md [loading]: 100 uA into 1 nF over 5 V with 1 Mohm gives 0.4296 % (full window)
    fig = figures(window=(0.0, 1.0))
    req = requirements(fig, SHUNT, CircuitContext(capacitance_f=1e-9, current_a=100e-6), 0.4296)
    assert req.min_shunt_ohm == pytest.approx(1e6, rel=2e-3)


def test_min_shunt_with_ramp_time_held_and_without_capacitance():
    fig = figures()
    with_c = requirements(fig, SHUNT, CircuitContext(capacitance_f=2.2e-9), 0.05)
    no_c = requirements(fig, SHUNT, None, 0.05)
    assert with_c.held == no_c.held == "ramp-time" and no_c.min_shunt_ohm is None
    assert with_c.min_time_constant_s == pytest.approx(no_c.min_time_constant_s, rel=1e-12)
    R, C = with_c.min_shunt_ohm, 2.2e-9
    # the current that makes the measured ramp time with R: T = R C ln((IR - v0)/(IR - v1))
    k = 50e-6 / (R * C)
    I = 5.0 * math.exp(k) / (R * math.expm1(k))
    assert R * C * math.log(I * R / (I * R - 5.0)) == pytest.approx(50e-6, rel=1e-9)
    ref, _ = exp_nl_pct(I, C, R, 0.0, 5.0, (0.05, 0.95))
    assert ref == pytest.approx(0.05, rel=1e-3)  # numpy.polyfit of the exact exponential


def test_voltage_coefficient_bound_against_solve_ivp():
    fig = figures(start_v=0.5, end_v=4.5)
    req = requirements(fig, SHUNT, None, 0.1)
    beta = req.max_voltage_coefficient_per_v
    assert vc_nonlinearity_pct(beta, 0.5, 4.5, (0.05, 0.95)) == pytest.approx(0.1, rel=1e-6)
    # scipy.integrate.solve_ivp of C0 (1 - beta V) dV/dt = I, from 0.5 V until it reaches 4.5 V
    I, C0 = 1e-3, 1e-6
    hit = lambda t, v: v[0] - 4.5  # noqa: E731
    hit.terminal = True
    sol = solve_ivp(lambda t, v: [I / (C0 * (1 - beta * v[0]))], (0, 1.0), [0.5],
                    events=hit, rtol=1e-11, atol=1e-14, dense_output=True, method="DOP853")
    T = sol.t_events[0][0]
    # closed form of SOURCES.md [voltage-coefficient]: C0 [(v1-v0) - beta (v1^2 - v0^2)/2] = I T
    assert T == pytest.approx(C0 * (4.0 - beta * (4.5**2 - 0.5**2) / 2) / I, rel=1e-8)
    t = np.linspace(0.05 * T, 0.95 * T, N_REF)
    ref, _ = polyfit_nl_pct(t, sol.sol(t)[0])
    assert ref == pytest.approx(0.1, rel=1e-3)
    # e_s = -beta V_s / (1 - beta V_s) from 0 V: small-error rule |nl| ~ |e_s| w / 12
    assert requirements(figures(), SHUNT, None, 0.01).max_voltage_coefficient_per_v \
        == pytest.approx(12 * 1e-4 / (0.9 * 5.0), rel=0.02)


def test_longest_ramp_time_scales_with_measured_tau():
    fig = figures()
    req = requirements(fig, SHUNT, None, 0.1)
    T = req.max_ramp_time_s
    R, C = 1e6, 1e-9  # tau = 1 ms, the ramp time T from 0 to 5 V
    k = T / (R * C)
    I = 5.0 * math.exp(k) / (R * math.expm1(k))
    ref, _ = exp_nl_pct(I, C, R, 0.0, 5.0, (0.05, 0.95))
    assert ref == pytest.approx(0.1, rel=1e-3)  # numpy.polyfit of the exact exponential
    assert requirements(fig, dataclasses.replace(SHUNT, tau_s=2e-3), None, 0.1) \
        .max_ramp_time_s == pytest.approx(2 * T, rel=1e-9)
    assert requirements(fig, Diagnosis("linear", "", 0.5, "none"), None, 0.1) \
        .max_ramp_time_s is None


def test_target_met_and_bad_target():
    assert requirements(figures(nl_pct=0.05), SHUNT, None, 0.1).target_met
    assert not requirements(figures(nl_pct=0.43), SHUNT, None, 0.1).target_met
    with pytest.raises(AnalysisError):
        requirements(figures(), SHUNT, None, 0.0)


def test_probe_change_against_exponential_with_new_total_shunt():
    # measured 800 kohm: a 1x probe (1 Mohm) in parallel with 4 Mohm elsewhere
    C = 1e-9
    diag = dataclasses.replace(SHUNT, tau_s=0.8e6 * C)
    ctx = CircuitContext(capacitance_f=C, current_a=100e-6)
    pred = predict_change(figures(), diag, ctx, ShuntChange(1e6, 10e6))
    r_new = 1 / (1 / 0.8e6 - 1 / 1e6 + 1 / 10e6)
    assert pred.new_shunt_ohm == pytest.approx(r_new, rel=1e-12) and not pred.remainder_clamped
    ref, slope = exp_nl_pct(100e-6, C, r_new, 0.0, 5.0, (0.05, 0.95))
    assert pred.nonlinearity_pct == pytest.approx(ref, rel=1e-3)  # numpy.polyfit
    assert pred.slope_v_per_s == pytest.approx(slope, rel=1e-6)
    T = r_new * C * math.log(100e-6 * r_new / (100e-6 * r_new - 5.0))
    assert pred.ramp_time_s == pytest.approx(T, rel=1e-12)
    v_exact = 100e-6 * r_new * -np.expm1(-pred.time_s / (r_new * C))
    np.testing.assert_allclose(pred.voltage_v, v_exact, rtol=1e-12, atol=1e-12)
    assert pred.voltage_v[-1] == pytest.approx(5.0, rel=1e-9)


def test_probe_change_holds_measured_ramp_time_without_current():
    C = 1e-9
    pred = predict_change(figures(), SHUNT, CircuitContext(capacitance_f=C),
                          ShuntChange(1e6, 10e6))
    assert pred.new_shunt_ohm == pytest.approx(10e6, rel=1e-9)
    # the current found reproduces the measured ramp time with the measured 1 Mohm
    I = pred.current_a
    assert 1e6 * C * math.log(I * 1e6 / (I * 1e6 - 5.0)) == pytest.approx(50e-6, rel=1e-9)
    ref, _ = exp_nl_pct(I, C, 10e6, 0.0, 5.0, (0.05, 0.95))
    assert pred.nonlinearity_pct == pytest.approx(ref, rel=1e-3)
    with pytest.raises(AnalysisError):
        predict_change(figures(), SHUNT, CircuitContext(current_a=1e-4), ShuntChange(1e6, 1e7))


def test_falling_ramp_gives_the_answers_of_its_mirror():
    ctx = CircuitContext(capacitance_f=1e-9, current_a=100e-6)
    rising = figures(start_v=-5.0, end_v=0.0)
    falling = figures(start_v=5.0, end_v=0.0, direction="falling")
    a = requirements(rising, SHUNT, ctx, 0.1).to_dict()
    b = requirements(falling, SHUNT, ctx, 0.1).to_dict()
    assert a == b
    pa = predict_change(rising, SHUNT, ctx, ShuntChange(1e6, 10e6))
    pb = predict_change(falling, SHUNT, ctx, ShuntChange(1e6, 10e6))
    assert pb.nonlinearity_pct == pa.nonlinearity_pct
    assert pb.slope_v_per_s == -pa.slope_v_per_s
    np.testing.assert_array_equal(pb.voltage_v, -pa.voltage_v)
    # the mirrored ODE of SOURCES.md [loading]: a shunt to 0 V pulls the falling ramp down
    # to 0 V faster; numpy.polyfit of the exact solution from -5 V
    ref, _ = exp_nl_pct(100e-6, 1e-9, pa.new_shunt_ohm, -5.0, 0.0, (0.05, 0.95))
    assert pa.nonlinearity_pct == pytest.approx(ref, rel=1e-3)


def test_requirements_text_words_every_figure():
    req = requirements(figures(), SHUNT, CircuitContext(capacitance_f=1e-9), 0.1)
    text = " ".join(requirements_text(req))
    assert "0.100 %" in text and "0.430 %" in text and "3.754 MΩ" in text
    assert "13.32 µs" in text and "per volt" in text
    no_c = " ".join(requirements_text(requirements(figures(), SHUNT, None, 0.1)))
    assert "time constant" in no_c and "MΩ" not in no_c
    d = requirements(figures(), SHUNT, None, 0.1).to_dict()
    assert d["min_shunt_ohm"] is None and isinstance(d["max_voltage_coefficient_per_v"], float)


def test_the_terminal_summary_says_what_it_would_take_for_a_bowed_ramp_only():
    # the shunt-loaded ramp of SOURCES.md [loading] (1 Mohm across 10 nF) and a straight one
    import math as _m

    from trueslope.core.analysis import analyse
    from trueslope.core.report import summary_text
    from tests.support.builders import capture_from_cycles
    tau, vinf, v0, v1 = 1e-2, 100.0, 0.05, 4.0
    T = tau * _m.log((vinf - v0) / (vinf - v1))
    bowed = capture_from_cycles([(T, lambda t: vinf - (vinf - v0) * np.exp(-t / tau))] * 10,
                                T / 1000.37, bits=12, noise_v=5e-4, seed=3)
    text = summary_text(analyse(bowed))
    assert "What it would take:" in text and "is above the target of 0.100 %" in text
    straight = capture_from_cycles([(1e-3, lambda t: 0.05 + 4e3 * t)] * 10, 1e-3 / 1000.37,
                                   bits=12, noise_v=5e-4, seed=4)
    assert "What it would take:" not in summary_text(analyse(straight))
