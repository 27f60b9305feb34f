"""Limits files and judging a capture against them (issue 11).

Captures come from physical models run through the whole pipeline: a current source
into C with a shunt (exact solution of R || C, SOURCES.md [loading]), an ideal current
source into C (a straight ramp, below the resolution floor at 12 bits), and a ramp
clipped by the scope's range (``tests/support/bench.clipped``), each with noise and
quantisation (``tests/support/quantise.py``). Expected bands and excesses are the
arithmetic of the limit's definition, written out beside each check.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from tests.support.bench import clipped
from tests.support.builders import capture_from_cycles
from trueslope.core.analysis import analyse
from trueslope.core.errors import LimitsError, SettingsError
from trueslope.core.limits import Limits, judge, read_limits

V_LO, V_HI = 0.05, 4.0

EXAMPLE = """\
# limits for the 1 kHz ramp board, film parts
[limits.nonlinearity_pct]
max = 0.5
[limits.slope_v_per_s]
min = "9.5k"      # strings take SI prefixes, in the figure's unit
max = "10.5k"
[limits.frequency_hz]
nominal = "1k"
within_pct = 2
[limits.signature]
equals = "linear"
"""


def _capture(f, T, n=12, bits=12, noise_v=1e-3, seed=0):
    dt = T / 1000.37
    return capture_from_cycles([(T, f)] * n, dt, bits=bits, noise_v=noise_v, seed=seed,
                               phase_s=0.31 * dt)


@pytest.fixture(scope="module")
def shunted():
    # 20 uA into 2 nF || 20 Mohm (SOURCES.md [loading]): V = I R - (I R - V0) exp(-t / RC)
    i_a, c_f, r = 20e-6, 2e-9, 20e6
    tau, vinf = r * c_f, i_a * r
    T = tau * math.log((vinf - V_LO) / (vinf - V_HI))
    a = analyse(_capture(lambda t: vinf - (vinf - V_LO) * np.exp(-t / tau), T, seed=3))
    assert a.diagnosis.signature == "shunt-loading" and not a.figures.below_floor
    return a


@pytest.fixture(scope="module")
def straight():
    # an ideal current source into C: V = V0 + I t / C, 12 bits and 1 mV of noise
    T = 400e-6
    a = analyse(_capture(lambda t: V_LO + (V_HI - V_LO) * t / T, T, seed=4))
    assert a.figures.below_floor and a.diagnosis.signature == "linear"
    return a


def _write(tmp_path, text, name="board.toml"):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_the_example_file_reads_into_bands_in_si_units(tmp_path):
    lim = read_limits(_write(tmp_path, EXAMPLE))
    assert isinstance(lim, Limits) and lim.source.endswith("board.toml")
    by = {x.figure: x for x in lim.limits}
    assert [x.figure for x in lim.limits] == ["nonlinearity_pct", "slope_v_per_s",
                                              "frequency_hz", "signature"]
    assert (by["nonlinearity_pct"].low, by["nonlinearity_pct"].high) == (None, 0.5)
    assert by["slope_v_per_s"].low == pytest.approx(9500.0)
    assert by["slope_v_per_s"].high == pytest.approx(10500.0)
    # nominal 1 kHz within 2 %: 1000 (1 -+ 0.02)
    assert by["frequency_hz"].low == pytest.approx(980.0)
    assert by["frequency_hz"].high == pytest.approx(1020.0)
    assert by["signature"].one_of == ("linear",)


def test_units_may_be_written_with_the_prefix(tmp_path):
    lim = read_limits(_write(tmp_path, '[limits.slope_v_per_s]\nmin = "9.5 kV/s"\n'
                                       '[limits.ramp_time_s]\nmax = "50 us"\n'
                                       '[limits.nonlinearity_pct]\nmax = "0.5 %"\n'
                                       '[limits.signature]\none_of = ["linear", '
                                       '"shunt-loading"]\n'))
    lows = [x.low for x in lim.limits]
    highs = [x.high for x in lim.limits]
    assert lows[0] == pytest.approx(9500.0)
    assert highs[1] == pytest.approx(50e-6) and highs[2] == pytest.approx(0.5)
    assert lim.limits[3].one_of == ("linear", "shunt-loading")


def test_pass_and_fail_with_the_excess(shunted, tmp_path):
    f = shunted.figures
    nl, slope = f.nonlinearity_pct, f.slope_v_per_s
    text = (f"[limits.nonlinearity_pct]\nmax = {nl / 2!r}\n"
            f"[limits.slope_v_per_s]\nmin = {0.99 * slope!r}\nmax = {1.01 * slope!r}\n"
            f"[limits.frequency_hz]\nnominal = {f.frequency_hz * 1.005!r}\nwithin_pct = 1\n"
            f"[limits.signature]\nequals = \"shunt-loading\"\n")
    v = judge(shunted, read_limits(_write(tmp_path, text)))
    got = {r.figure: r for r in v.results}
    assert [got[k].verdict for k in ("slope_v_per_s", "frequency_hz", "signature")] == \
        ["pass"] * 3
    r = got["nonlinearity_pct"]
    assert r.verdict == "fail" and r.judged_as == "value" and r.bound == nl / 2
    # excess = value - max, and 100 (value - max) / max: here exactly the bound itself
    assert r.excess == pytest.approx(nl - nl / 2, rel=1e-12)
    assert r.excess_pct == pytest.approx(100.0, rel=1e-12)
    assert got["slope_v_per_s"].excess is None
    assert (v.verdict, v.passed, v.failed, v.undecided) == ("fail", 3, 1, 0)
    wrong = judge(shunted, read_limits(_write(tmp_path, '[limits.signature]\n'
                                                        'equals = "linear"\n', "s.toml")))
    assert wrong.verdict == "fail" and wrong.results[0].value == "shunt-loading"


def test_a_limit_tighter_than_the_floor_is_undecided_never_passed(straight, tmp_path):
    f = straight.figures
    floor = f.nonlinearity_floor_pct
    assert f.nonlinearity_pct < floor
    tight = judge(straight, read_limits(_write(
        tmp_path, f"[limits.nonlinearity_pct]\nmax = {floor / 2!r}\n")))
    r = tight.results[0]
    assert (r.verdict, r.judged_as, r.floor) == ("undecided", "floor", floor)
    assert tight.verdict == "undecided"
    loose = judge(straight, read_limits(_write(
        tmp_path, f"[limits.nonlinearity_pct]\nmax = {2 * floor!r}\n"
                  f"[limits.peak_deviation_v]\nmax = {f.fitted_span_v * floor / 100 * 2!r}\n",
        "loose.toml")))
    assert [x.verdict for x in loose.results] == ["pass", "pass"] and loose.verdict == "pass"
    # at most the floor cannot reach a minimum above it
    low = judge(straight, read_limits(_write(
        tmp_path, f"[limits.nonlinearity_pct]\nmin = {2 * floor!r}\n", "min.toml")))
    assert low.results[0].verdict == "fail"
    assert low.results[0].excess == pytest.approx(floor, rel=1e-12)  # 2 floor - floor
    # a bend expected on a ramp the capture resolves as straight: undecided
    sig = judge(straight, read_limits(_write(
        tmp_path, '[limits.signature]\nequals = "shunt-loading"\n', "sig.toml")))
    assert (sig.results[0].verdict, sig.results[0].judged_as) == ("undecided", "unresolved")
    ok = judge(straight, read_limits(_write(
        tmp_path, '[limits.signature]\none_of = ["linear", "shunt-loading"]\n', "ok.toml")))
    assert ok.results[0].verdict == "pass"


def test_a_clipped_figure_is_judged_as_a_bound(tmp_path):
    cap, truth = clipped()
    a = analyse(cap)
    assert "amplitude_v" in a.figures.bounds
    amp = a.figures.amplitude_v
    assert amp < truth["end_v"] - truth["start_v"]  # clipping hides part of the swing

    def one(text, name):
        return judge(a, read_limits(_write(tmp_path, text, name))).results[0]

    over = one(f"[limits.amplitude_v]\nmax = {0.9 * amp!r}\n", "a.toml")
    assert (over.verdict, over.judged_as) == ("fail", "lower-bound")
    assert over.excess == pytest.approx(0.1 * amp, rel=1e-9)
    assert one(f"[limits.amplitude_v]\nmax = {1.1 * amp!r}\n", "b.toml").verdict == "undecided"
    assert one(f"[limits.amplitude_v]\nmin = {0.9 * amp!r}\n", "c.toml").verdict == "pass"


@pytest.mark.parametrize("text, key, words", [
    ("[limits.nonlinearity]\nmax = 1\n", "limits.nonlinearity", "unknown figure"),
    ("[limits.below_floor]\nmax = 1\n", "limits.below_floor", "cannot be limited"),
    ("[limits.slope_v_per_s]\nmin = \"fast\"\n", "limits.slope_v_per_s.min", "cannot read"),
    ("[limits.slope_v_per_s]\nmin = \"9.5 kHz\"\n", "limits.slope_v_per_s.min", "V/s"),
    ("[limits.slope_v_per_s]\nmin = true\n", "limits.slope_v_per_s.min", "expected a number"),
    ("[limits.slope_v_per_s]\nmin = 2\nmax = 1\n", "limits.slope_v_per_s", "min (2) is above"),
    ("[limits.slope_v_per_s]\nmost = 1\n", "limits.slope_v_per_s.most", "unknown option"),
    ("[limits.frequency_hz]\nnominal = 1000\n", "limits.frequency_hz", "within_pct is missing"),
    ("[limits.frequency_hz]\nnominal = 1e3\nwithin_pct = 1\nmax = 2e3\n",
     "limits.frequency_hz", "not both"),
    ("[limits.signature]\nequals = \"bent\"\n", "limits.signature.equals", "not a signature"),
    ("[limits.signature]\none_of = []\n", "limits.signature.one_of", "non-empty list"),
    ("[limit.nonlinearity_pct]\nmax = 1\n", "limit", "unknown key"),
    ("name = \"x\"\n", "limits", "no [limits"),
    ("[limits.nonlinearity_pct\nmax = 1\n", "", "not valid TOML"),
    ("[limits]\nnonlinearity_pct = 1\n", "limits.nonlinearity_pct", "expected a table"),
])
def test_bad_limit_files_name_the_file_and_the_key(tmp_path, text, key, words):
    with pytest.raises(LimitsError) as e:
        read_limits(_write(tmp_path, text))
    msg = str(e.value)
    assert isinstance(e.value, SettingsError) and isinstance(e.value, ValueError)
    assert msg.startswith("board.toml: ") and "\n" not in msg
    assert words in msg
    if key:
        assert e.value.field == key and f"board.toml: {key}: " in msg
    assert e.value.path.endswith("board.toml")


def test_a_missing_limits_file_is_refused(tmp_path):
    with pytest.raises(LimitsError, match=r"^nope\.toml: not a readable file$"):
        read_limits(tmp_path / "nope.toml")
