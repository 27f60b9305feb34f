"""Circuit context and the prototype self-check (issue 3, section 2).

Check values come from SOURCES.md [loading] (worked figures derived from the
closed forms of a current into R || C) and from numpy/scipy as references.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from trueslope.core.analysis import analyse
from trueslope.core.circuit import CircuitContext, parse_context, predict_ramp, probe_match
from trueslope.core.cli import main as cli_main
from trueslope.core.diagnose import diagnose
from trueslope.core.errors import SettingsError
from trueslope.core.report import analysis_document, likely_cause, selfcheck_summary
from trueslope.core.selfcheck import AGREES, DISAGREES, check_context
from trueslope.core.settings import Settings

from tests.support.builders import averaged_from_model, capture_from_cycles

I_A, C_F = 100e-6, 10e-9


# ---------------------------------------------------------------- parsing

def test_parse_context_reads_si_prefixes():
    ctx = parse_context(capacitance="47n", current="1.2m", probe="10M,12p", tolerance="5%")
    assert ctx.capacitance_f == pytest.approx(47e-9)
    assert ctx.current_a == pytest.approx(1.2e-3)
    assert ctx.probe_resistance_ohm == pytest.approx(10e6)
    assert ctx.probe_capacitance_f == pytest.approx(12e-12)
    assert ctx.tolerance_frac == pytest.approx(0.05)
    assert ctx.effective_capacitance_f == pytest.approx(47e-9 + 12e-12)
    assert not ctx.is_empty


def test_current_from_set_resistor_and_reference():
    # I = V_ref / R_set (Ohm's law): 1.25 V across 3.3 kohm = 378.8 uA
    ctx = parse_context(set_resistor="3.3k", reference="1.25")
    assert ctx.current_a is None
    assert ctx.effective_current_a == pytest.approx(1.25 / 3300)
    assert ctx.tolerance_frac == pytest.approx(0.10)
    # an explicit current wins
    assert parse_context(current="1m", set_resistor="3.3k", reference="1.25") \
        .effective_current_a == pytest.approx(1e-3)


def test_nothing_given_is_no_context():
    assert parse_context() is None
    assert parse_context(capacitance="", probe=" ") is None
    assert CircuitContext().is_empty and CircuitContext(tolerance_frac=0.2).is_empty


BAD_INPUTS = [
    (dict(capacitance="47q"), "capacitance", "--capacitance"),
    (dict(capacitance="-47n"), "capacitance", "--capacitance"),
    (dict(current="1,2m"), "current", "--current"),
    (dict(capacitance="1n", probe="10M,12p,3"), "probe", "--probe"),
    (dict(capacitance="1n", probe="10M,12pH"), "probe", "--probe"),
    (dict(capacitance="1n", tolerance="150%"), "tolerance", "--tolerance"),
    (dict(set_resistor="3.3k"), "reference", "--reference"),
    (dict(reference="1.25"), "set_resistor", "--set-resistor"),
    (dict(capacitance="1n", thresholds="0.05"), "thresholds", "--thresholds"),
]


@pytest.mark.parametrize("kwargs, field, option", BAD_INPUTS)
def test_bad_input_names_the_field_and_never_an_option(kwargs, field, option):
    with pytest.raises(SettingsError) as err:
        parse_context(**kwargs)
    assert err.value.field == field
    assert "--" not in str(err.value)  # core knows no command-line option
    assert isinstance(err.value, ValueError)


@pytest.mark.parametrize("kwargs, field, option", BAD_INPUTS)
def test_the_command_line_names_its_option(kwargs, field, option, tmp_path, capsys):
    f = tmp_path / "c.csv"
    f.write_text("t,v\n0,0\n1e-6,1\n")
    args = [str(f)] + [f"--{k.replace('_', '-')}={v}" for k, v in kwargs.items()]
    assert cli_main(args) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"trueslope: {option}: ") and err.count("\n") == 1


def test_context_to_dict_is_plain_json():
    ctx = parse_context(capacitance="47n", set_resistor="3.3k", reference="1.25",
                        probe="10M", thresholds="0.05,4")
    doc = json.loads(json.dumps(ctx.to_dict(), allow_nan=False))
    assert doc["effective_current_a"] == pytest.approx(1.25 / 3300)
    assert doc["low_threshold_v"] == 0.05 and doc["high_threshold_v"] == 4.0
    assert Settings(context=ctx).to_dict()["context"]["capacitance_f"] == pytest.approx(47e-9)


# ---------------------------------------------------------------- predictions

def test_predicted_ramp_matches_the_reference_worked_figures():
    # SOURCES.md [loading], worked figures (derived): I = 100 uA,
    # C = 1 nF, V_s = 5 V, R = 1 Mohm: T_s = 51.293 us, least-squares max 0.4296 %
    p = predict_ramp(100e-6, 1e-9, 0.0, 5.0, 1e6, window=(0.0, 1.0))
    assert p.ramp_time_s == pytest.approx(51.293e-6, rel=1e-4)
    assert p.nonlinearity_pct == pytest.approx(0.4296, rel=1e-3)
    assert p.initial_slope_v_per_s == pytest.approx(100e-6 / 1e-9)
    # without the resistance: T = C V / I, a straight ramp (i = C dv/dt)
    q = predict_ramp(100e-6, 1e-9, 0.0, 5.0, None)
    assert q.ramp_time_s == pytest.approx(50e-6) and q.nonlinearity_pct == 0.0


def test_predicted_nonlinearity_follows_the_small_error_rule():
    # SOURCES.md [sweep] (derived): least-squares max ~ (2/3) e_d, e_d ~ e_s / 8,
    # e_s = V_s / (I R); 10 Mohm instead of 1 Mohm: e_s = 0.5 %, e_d = 0.06266 %
    p = predict_ramp(100e-6, 1e-9, 0.0, 5.0, 10e6, window=(0.0, 1.0))
    assert p.nonlinearity_pct == pytest.approx(2 / 3 * 0.06266, rel=0.01)
    # the slope of the least-squares line, against numpy.polyfit on a fine grid
    tau, vinf = 10e6 * 1e-9, 100e-6 * 10e6
    t = np.linspace(0, p.ramp_time_s, 100001)
    ref = np.polyfit(t, vinf * (1 - np.exp(-t / tau)), 1)[0]
    assert p.slope_v_per_s == pytest.approx(ref, rel=1e-6)


def test_probe_cannot_hold_the_ramp_up_to_the_threshold():
    # I R = 1 V < 4 V: the ramp never reaches the upper threshold
    p = predict_ramp(1e-6, 1e-9, 0.05, 4.0, 1e6)
    assert math.isinf(p.ramp_time_s)


def test_probe_match_names_the_familiar_inputs():
    assert probe_match(9.7e6) == "probe-10x"
    assert probe_match(1.05e6) == "scope-input"
    assert probe_match(390e3) == "neither"
    assert probe_match(None) == "none"


# ---------------------------------------------------------------- the check

def _shunt_case(r_ohm, c_f, cycles=12, bits=10, noise_v=1e-3, seed=0, v0=0.05, v1=4.0,
                current=I_A):
    tau, vinf = r_ohm * c_f, current * r_ohm
    T = tau * math.log((vinf - v0) / (vinf - v1))
    dt = T / 2000.37
    f = lambda t: vinf - (vinf - v0) * np.exp(-t / tau)  # noqa: E731  (exact R || C)
    return capture_from_cycles([(T, f)] * cycles, dt, bits=bits, noise_v=noise_v, seed=seed,
                               phase_s=0.29 * dt)


def test_issue_example_ten_megohm_on_one_microfarad_cannot_explain_a_one_percent_bow():
    # Issue 3: "10 Mohm across 1 uF at 1 kHz predicts about 0.01%, far too little to
    # explain a 1% bow". A 1 ms ramp of 4 V on 1 uF takes 4 mA; its bow here is 1 %.
    T, C = 1e-3, 1e-6
    k = 0.13  # T / tau of an exponential with about 1 % least-squares nonlinearity
    av, fig, nf = averaged_from_model(lambda t: 4 / (-math.expm1(-k)) * -np.expm1(-k * t / T),
                                      T, bins=1000, sigma_v=2e-4, seed=2)
    ctx = CircuitContext(capacitance_f=C, current_a=4e-3, probe_resistance_ohm=10e6)
    d = diagnose(av, fig, nf, ctx)
    c = check_context(fig, d, ctx)
    assert 0.8 < c.measured_nonlinearity_pct < 1.5
    # small-error rule (SOURCES.md [sweep]): e_s = V_s / (I R) = 1e-4, e_d = e_s / 8,
    # least squares ~ (2/3) e_d over the window: 8.3e-4 % over the whole ramp, less
    # over the trimmed window; the issue's "about 0.01 %" is the slope error e_s
    assert c.probe_predicted_nonlinearity_pct < 1e-3
    assert c.probe_explains_bow is False
    assert "does not explain" in selfcheck_summary(c, d)
    assert c.probe_match == "neither"
    json.dumps(c.to_dict(), allow_nan=False)


def test_stated_probe_that_is_the_shunt_explains_the_bow():
    # 1 Mohm scope input across 10 nF (SOURCES.md [loading]: scope input about 1 Mohm)
    cap = _shunt_case(1e6, C_F, seed=4)
    ctx = parse_context(capacitance="10n", current="100u", probe="1M")
    a = analyse(cap, Settings(context=ctx))
    c = a.context_check
    assert c.probe_match == "scope-input"
    assert c.probe_explains_bow is True
    assert c.probe_predicted_nonlinearity_pct == pytest.approx(
        a.figures.nonlinearity_pct, rel=0.25)
    assert all(i.verdict in AGREES for i in c.items), c.items
    assert {i.name: i for i in c.items}["nonlinearity"].verdict == "explained by the parts"
    assert "the probe explains the bow" in selfcheck_summary(c, a.diagnosis)


def test_wrong_capacitance_puts_the_slope_outside_and_says_why():
    # a straight ramp of 100 uA into 10 nF stated as 12 nF: I/C is 1/1.2 of the
    # measured slope, deviation +20 % (i = C dv/dt)
    T = 4.0 * C_F / I_A
    cap = capture_from_cycles([(T, lambda t: 0.05 + I_A / C_F * t)] * 12, T / 2000.37,
                              bits=10, noise_v=1e-3, seed=6)
    ctx = parse_context(capacitance="12n", current="100u")
    a = analyse(cap, Settings(context=ctx))
    c = a.context_check
    by = {i.name: i for i in c.items}
    assert by["slope"].verdict == "outside"
    assert by["slope"].deviation_pct == pytest.approx(20.0, abs=0.5)
    assert "capacitance is below its marked value" in likely_cause(by["slope"], a.diagnosis)
    assert by["ramp time"].verdict == "outside"
    assert by["ramp time"].deviation_pct == pytest.approx(100 * (1 / 1.2 - 1), abs=0.5)
    # a straight ramp against straight parts: neither bow is above the capture's floor
    assert by["nonlinearity"].verdict == "below resolution"
    text = selfcheck_summary(c, a.diagnosis)
    assert "against: slope" in text
    # a 25 % tolerance accepts it
    ctx25 = parse_context(capacitance="12n", current="100u", tolerance="25%")
    c25 = analyse(cap, Settings(context=ctx25)).context_check
    assert {i.name: i for i in c25.items}["slope"].verdict == "within tolerance"


def test_given_thresholds_set_the_expected_ramp_time():
    # T = C (V1 - V0) / I between the stated comparator levels
    T = 4.0 * C_F / I_A
    cap = capture_from_cycles([(T, lambda t: 0.05 + I_A / C_F * t)] * 12, T / 2000.37,
                              bits=12, noise_v=2e-4, seed=1)
    ctx = parse_context(capacitance="10n", current="100u", thresholds="0,2")
    c = analyse(cap, Settings(context=ctx)).context_check
    rt = {i.name: i for i in c.items}["ramp time"]
    assert rt.expected == pytest.approx(C_F * 2.0 / I_A)
    assert rt.verdict == "outside"  # the ramp really runs 0.05 V to 4.05 V


def test_only_capacitance_gives_the_implied_current():
    T = 4.0 * C_F / I_A
    cap = capture_from_cycles([(T, lambda t: 0.05 + I_A / C_F * t)] * 12, T / 2000.37,
                              bits=10, noise_v=1e-3, seed=2)
    c = analyse(cap, Settings(context=parse_context(capacitance="10n"))).context_check
    (item,) = [i for i in c.items if i.name == "implied current"]
    assert item.verdict == "not checked"
    assert item.measured == pytest.approx(I_A, rel=0.01)  # I = C dV/dt
    a2 = analyse(cap, Settings(context=parse_context(current="100u")))
    c2 = a2.context_check
    (item2,) = [i for i in c2.items if i.name == "implied capacitance"]
    assert item2.measured == pytest.approx(C_F, rel=0.01)
    assert "implied capacitance" in selfcheck_summary(c2, a2.diagnosis)


def test_falling_ramp_with_a_shunt_to_ground_checks_in_the_mirrored_frame():
    # discharging from 4.5 V with a current sink and R to ground:
    # dV/dt = -I/C - V/(RC) (circuit theory); in the mirrored frame x = -V the
    # same I/C - x/(RC) as a rising ramp, so the probe prediction carries over
    R, v0, v1 = 1e6, 4.5, 0.5
    tau = R * C_F
    T = tau * math.log((v0 + I_A * R) / (v1 + I_A * R))
    f = lambda t: -I_A * R + (v0 + I_A * R) * np.exp(-t / tau)  # noqa: E731
    cap = capture_from_cycles([(T, f)] * 12, T / 2000.37, bits=10, noise_v=1e-3, seed=3)
    ctx = parse_context(capacitance="10n", current="100u", probe="1M")
    a = analyse(cap, Settings(context=ctx))
    assert a.figures.direction == "falling"
    c = a.context_check
    by = {i.name: i for i in c.items}
    assert by["ramp time"].expected == pytest.approx(T, rel=0.01)
    assert by["ramp time"].verdict == "within tolerance"
    assert c.probe_explains_bow is True


def test_check_items_and_check_are_plain_json():
    cap = _shunt_case(820e3, C_F, seed=8)
    ctx = parse_context(capacitance="10n", current="100u", probe="10M,12p")
    a = analyse(cap, Settings(context=ctx))
    doc = json.loads(json.dumps(analysis_document(a), allow_nan=False))
    cc = doc["context_check"]
    assert {"items", "probe_match", "probe_predicted_nonlinearity_pct",
            "measured_nonlinearity_pct", "probe_explains_bow", "summary"} <= set(cc)
    for it in cc["items"]:
        assert it["verdict"] in AGREES | DISAGREES | {"not checked"}
        assert set(it) == {"name", "expected", "measured", "unit", "verdict",
                           "deviation_pct", "causes", "basis", "likely_cause"}
    assert doc["diagnosis"]["signature"] == "shunt-loading"


def test_a_falling_ramp_keeps_the_slope_sign_and_the_bow_verdict_is_honest():
    # issue 10: signed values keep their sign; a bow far above what the parts predict is
    # never "within tolerance". Discharging 10 nF from 4.5 V by 100 uA into 1 Mohm to ground
    # (dV/dt = -I/C - V/(RC), circuit theory), stated as 10 Mohm: predicts a tenth of the bow
    R, v0, v1 = 1e6, 4.5, 0.5
    tau = R * C_F
    T = tau * math.log((v0 + I_A * R) / (v1 + I_A * R))
    f = lambda t: -I_A * R + (v0 + I_A * R) * np.exp(-t / tau)  # noqa: E731
    cap = capture_from_cycles([(T, f)] * 12, T / 2000.37, bits=12, noise_v=5e-4, seed=4)
    a = analyse(cap, Settings(context=parse_context(capacitance="10n", current="100u",
                                                    probe="10M")))
    by = {i.name: i for i in a.context_check.items}
    assert by["slope"].measured < 0 and by["slope"].expected < 0
    assert by["slope"].measured == pytest.approx(a.figures.slope_v_per_s)
    assert by["nonlinearity"].verdict == "more than the parts explain"
    assert by["equivalent shunt"].basis == "stated probe"
    text = selfcheck_summary(a.context_check, a.diagnosis)
    assert "Likely cause:" in text or "Likely cause of the first:" in text
