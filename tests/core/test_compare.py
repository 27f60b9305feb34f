"""Comparing captures (issue 11): ranking, differences, group statistics, overlay, bad files.

The captures are ramps of physical models, three parts per dielectric with slightly
different values, written as CSV files and measured through ``measure_files``:

- film: a current source into C with a 40-80 Mohm shunt (exact solution of R || C,
  SOURCES.md [loading]); equivalent shunt 20-40 Mohm at the 10 uA scale of the issue's
  board, same I R;
- X7R: C = C0 (1 - beta V), beta 0.5-1 %/V, solved exactly from the charge balance
  (SOURCES.md [voltage-coefficient]);
- electrolytic: Dow-model absorption branches holding 8-12 % of C, integrated with
  scipy.integrate.solve_ivp (``tests/support/builders.dow_cycles``);

each with 1 mV of noise and a 12-bit ADC (``tests/support/quantise.py``).
"""

from __future__ import annotations

import hashlib
import json
import math

import numpy as np
import pandas as pd
import pytest

from tests.support.builders import capture_from_cycles, dow_cycles
from tests.support.spice import write_csv_units
from trueslope.core.compare import (ALL, OVERLAY_POINTS, UNGROUPED, Comparison, MeasuredFile,
                                    compare, group_of, measure_files, sha256_of)
from trueslope.core.errors import SettingsError
from trueslope.core.limits import read_limits

V_LO, V_HI = 0.05, 4.0
SAMPLES_PER_RAMP = 1000.37  # not whole: the sample clock drifts against the ramp
GROUPS = {"film": "*film*", "x7r": "*x7r*", "electrolytic": "*elec*"}


def shunt_cycles(i_a, c_f, r_ohm, v0=V_LO, v1=V_HI, n=12):
    # current I into R || C (SOURCES.md [loading]): V = I R - (I R - V0) exp(-t / (R C))
    tau, vinf = r_ohm * c_f, i_a * r_ohm
    T = tau * math.log((vinf - v0) / (vinf - v1))
    return [(T, lambda t: vinf - (vinf - v0) * np.exp(-t / tau))] * n


def vc_cycles(i_a, c0_f, beta, n=12):
    # C = C0 (1 - beta V) at constant current (SOURCES.md [voltage-coefficient]):
    # C0 [(V - V0) - beta (V^2 - V0^2) / 2] = I t, so (1 - beta V)^2 = (1 - beta V0)^2 - 2 beta I t / C0
    w0 = 1.0 - beta * V_LO
    T = c0_f * ((V_HI - V_LO) - beta * (V_HI ** 2 - V_LO ** 2) / 2.0) / i_a
    return [(T, lambda t: (1.0 - np.sqrt(w0 ** 2 - 2.0 * beta * i_a * t / c0_f)) / beta)] * n


def dow_parts(i_a, c_f, frac, n=12):
    # Dow branches holding ``frac`` of C over three relaxation times (SOURCES.md [absorption])
    split = [(15e-6, 0.5), (90e-6, 0.3), (240e-6, 0.2)]
    branches = [(tau / (frac * share * c_f), frac * share * c_f) for tau, share in split]
    return dow_cycles(i_a, c_f, branches, V_LO, V_HI, keep=n)


#: name -> (cycles builder, the physical parameter that orders its curvature)
PARTS = {
    "film_a.csv": (lambda: shunt_cycles(20e-6, 2.00e-9, 20e6), 20e6),
    "film_b.csv": (lambda: shunt_cycles(20e-6, 2.04e-9, 30e6), 30e6),
    "film_c.csv": (lambda: shunt_cycles(20e-6, 1.98e-9, 40e6), 40e6),
    "x7r_a.csv": (lambda: vc_cycles(100e-6, 10.0e-9, 0.005), 0.005),
    "x7r_b.csv": (lambda: vc_cycles(100e-6, 10.2e-9, 0.0075), 0.0075),
    "x7r_c.csv": (lambda: vc_cycles(100e-6, 9.9e-9, 0.010), 0.010),
    "elec_a.csv": (lambda: dow_parts(100e-6, 10.0e-9, 0.08), 0.08),
    "elec_b.csv": (lambda: dow_parts(100e-6, 10.3e-9, 0.10), 0.10),
    "elec_c.csv": (lambda: dow_parts(100e-6, 9.8e-9, 0.12), 0.12),
}


def write_capture(path, cycles, bits=12, noise_v=1e-3, seed=0, samples=SAMPLES_PER_RAMP):
    dt = cycles[0][0] / samples
    cap = capture_from_cycles(cycles, dt, bits=bits, noise_v=noise_v, seed=seed,
                              phase_s=0.31 * dt)
    write_csv_units(path, 0.0, dt, cap.channels["CH1"])
    return str(path)


@pytest.fixture(scope="module")
def measured(tmp_path_factory):
    d = tmp_path_factory.mktemp("parts")
    paths = [write_capture(d / name, build(), seed=k)
             for k, (name, (build, _)) in enumerate(PARTS.items())]
    bad = d / "x7r_broken.csv"
    bad.write_text("this is not,a capture\nat,all\n")
    paths.insert(4, str(bad))  # a bad file among good ones
    paths.append(str(d / "elec_missing.csv"))  # never written
    entries = measure_files(paths, jobs=2)
    return paths, entries


def _good(entries):
    return [m for m in entries if m.ok]


def test_every_file_is_an_entry_in_order_and_the_bad_ones_carry_their_error(measured):
    paths, entries = measured
    assert [m.path for m in entries] == paths
    bad = {m.path: m for m in entries if not m.ok}
    assert set(bad) == {paths[4], paths[-1]}
    for p, m in bad.items():
        assert m.analysis is None and m.error_type
        assert "\n" not in m.error_message
        assert m.error_message.startswith(p.rsplit("/", 1)[-1] + ":")
    assert bad[paths[-1]].sha256 is None
    # sha256 against hashlib on the whole file at once (Python standard library)
    for m in entries:
        if m.sha256 is not None:
            with open(m.path, "rb") as f:
                assert m.sha256 == hashlib.sha256(f.read()).hexdigest()
    assert len(_good(entries)) == 9


def test_serial_measuring_gives_the_same_figures(measured):
    paths, entries = measured
    serial = measure_files(paths[:3], jobs=1)
    for a, b in zip(serial, entries[:3]):
        assert a.sha256 == b.sha256
        assert a.analysis.figures.to_dict() == b.analysis.figures.to_dict()


def test_groups_by_pattern_first_match_wins_else_ungrouped():
    pats = {"film": "*film*", "any": "*.csv"}
    assert group_of("/x/C3_FILM_1.csv", pats) == "film"  # case ignored
    assert group_of("/x/x7r.csv", pats) == "any"
    assert group_of("/x/x7r.txt", pats) == UNGROUPED
    assert group_of("/x/x7r.txt", None) == ALL


def test_ranking_by_nonlinearity_errors_last(measured):
    paths, entries = measured
    c = compare(entries, groups=GROUPS)
    good = _good(entries)
    nl = np.array([m.analysis.figures.nonlinearity_pct for m in good])
    # the order is numpy's stable argsort of the measured figures
    assert list(c.ranking[:9]) == [good[i].path for i in np.argsort(nl, kind="stable")]
    assert set(c.ranking[9:]) == {paths[4], paths[-1]}
    by_path = {e.path: e for e in c.entries}
    assert [by_path[p].rank for p in c.ranking] == list(range(1, 12))
    assert all(by_path[p].status == "error" for p in c.ranking[9:])
    # physics: straighter with a larger shunt (SOURCES.md [loading]), a smaller voltage
    # coefficient ([voltage-coefficient]) and less absorption ([absorption]); film straighter
    # than X7R straighter than electrolytic at these values
    order = [p.rsplit("/", 1)[-1] for p in c.ranking[:9]]
    assert order == ["film_c.csv", "film_b.csv", "film_a.csv", "x7r_a.csv", "x7r_b.csv",
                     "x7r_c.csv", "elec_a.csv", "elec_b.csv", "elec_c.csv"]
    sigs = {e.path.rsplit("/", 1)[-1][:3]: e.signature for e in c.entries if e.status == "ok"}
    assert sigs == {"fil": "shunt-loading", "x7r": "voltage-coefficient",
                    "ele": "dielectric-absorption"}
    assert all(e.strength > 1 for e in c.entries if e.status == "ok")


def test_differences_from_the_reference_against_numpy(measured):
    paths, entries = measured
    good = _good(entries)
    for ref_index, reference in ((0, None), (5, good[5].path)):  # default: the first good one
        c = compare(entries, reference=reference)
        ref = good[ref_index]
        assert c.reference == ref.path
        assert [e.is_reference for e in c.entries].count(True) == 1
        assert [r.path for r in c.table] == [m.path for m in good]
        for name in ("nonlinearity_pct", "slope_v_per_s", "frequency_hz", "amplitude_v"):
            k = c.figures.index(name)
            v = np.array([getattr(m.analysis.figures, name) for m in good])
            r = getattr(ref.analysis.figures, name)
            got = np.array([row.figures[k].difference for row in c.table])
            got_pct = np.array([row.figures[k].difference_pct for row in c.table])
            # numpy: v - r and 100 (v - r) / |r|
            np.testing.assert_allclose(got, v - r, rtol=1e-12, atol=0)
            np.testing.assert_allclose(got_pct, 100.0 * (v - r) / abs(r), rtol=1e-12, atol=0)
            assert c.table[ref_index].figures[k].difference == 0.0


def test_group_statistics_against_pandas_groupby(measured):
    paths, entries = measured
    c = compare(entries, groups=GROUPS)
    good = _good(entries)
    groups = [p.rsplit("/", 1)[-1].split("_")[0] for p in (m.path for m in good)]
    groups = [{"elec": "electrolytic"}.get(g, g) for g in groups]
    assert [e.group for e in c.entries if e.status == "ok"] == groups
    assert [e.group for e in c.entries if e.status == "error"] == ["x7r", "electrolytic"]
    rows = [{f: getattr(m.analysis.figures, f) for f in c.figures} for m in good]
    df = pd.DataFrame(rows, dtype=float).assign(group=groups)
    # pandas' own groupby aggregation is the reference (sample std, ddof = 1, NaN skipped)
    ref = df.groupby("group").agg(["count", "mean", "std", "min", "max"])
    assert {s.group for s in c.statistics} == set(ref.index)
    for s in c.statistics:
        want = ref.loc[s.group, s.figure]
        assert s.count == int(want["count"])
        for stat in ("mean", "std", "min", "max"):
            got = getattr(s, stat)
            if math.isnan(want[stat]):
                assert got is None
            else:
                # rounding: a spread of equal values is 0 to pandas, ~1e-18 to numpy
                tol = 1e-12 * abs(want["mean"]) + 1e-300
                assert got == pytest.approx(want[stat], rel=1e-9, abs=tol)


def test_limits_in_a_comparison_and_the_document_is_plain_json(measured, tmp_path):
    paths, entries = measured
    f = tmp_path / "board.toml"
    f.write_text("[limits.nonlinearity_pct]\nmax = 0.2\n")
    c = compare(entries, groups=GROUPS, limits=read_limits(f))
    verdicts = {e.path.rsplit("/", 1)[-1]: (e.limits.verdict if e.limits else None)
                for e in c.entries}
    assert verdicts["film_a.csv"] == "pass" and verdicts["x7r_a.csv"] == "pass"
    assert verdicts["elec_c.csv"] == "fail" and verdicts["x7r_broken.csv"] is None
    assert c.verdict == "fail" and c.limits_source == str(f)
    doc = json.loads(json.dumps(c.to_dict(), allow_nan=False))
    assert len(doc["overlay"]["u"]) == OVERLAY_POINTS
    assert doc["entries"][4]["status"] == "error"


def test_a_reference_that_is_not_a_good_capture_is_refused(measured):
    paths, entries = measured
    with pytest.raises(SettingsError) as e:
        compare(entries, reference=paths[4])
    assert e.value.field == "reference" and "x7r_broken.csv" in str(e.value)


def test_nothing_measured_compares_to_empty_results():
    c = compare([MeasuredFile("a.csv", None, error_type="CaptureReadError",
                              error_message="a.csv: cannot be read")])
    assert isinstance(c, Comparison) and c.reference is None and c.table == ()
    assert c.ranking == ("a.csv",) and c.overlay.u.size == 0


def _closed_form_bow_pct(k, u, trim=0.05):
    # the exponential sweep v = 1 - exp(-k u) (SOURCES.md [loading]) minus its least-squares
    # line over the trimmed window (numpy.polyfit), % of the line's rise over the window
    s = np.linspace(trim, 1 - trim, 20001)
    slope, icpt = np.polyfit(s, -np.exp(-k * s), 1)
    return 100.0 * (-np.exp(-k * u) - (slope * u + icpt)) / (slope * (1 - 2 * trim))


def test_overlay_of_one_shunt_bow_at_two_rates_and_amplitudes_coincides(tmp_path):
    # A: 20 uA into 2 nF || 5 Mohm, 0.05 V to 4 V. B: 2 V swing from 0.5 V, 2 uA into
    # 50 pF with R chosen for the same k = T / (R C) = ln((I R - V0) / (I R - V1)).
    ir = 20e-6 * 5e6
    ratio = (ir - V_LO) / (ir - V_HI)
    ir_b = (2.5 * ratio - 0.5) / (ratio - 1.0)
    k = math.log(ratio)
    a = write_capture(tmp_path / "a.csv", shunt_cycles(20e-6, 2e-9, 5e6), seed=1)
    b = write_capture(tmp_path / "b.csv", shunt_cycles(2e-6, 0.05e-9, ir_b / 2e-6, 0.5, 2.5),
                      seed=2, samples=700.2)
    entries = measure_files([a, b], jobs=1)
    ta, tb = (m.analysis.figures.ramp_time_s for m in entries)
    assert tb / ta < 0.2  # truly different rates
    c = compare(entries)
    u = c.overlay.u
    assert u.size == OVERLAY_POINTS and u[0] >= 0.04 and u[-1] <= 0.96
    ca, cb = (cv.smoothed_residual_pct for cv in c.overlay.curves)
    ok = np.isfinite(ca) & np.isfinite(cb)
    assert np.count_nonzero(ok) > 0.9 * OVERLAY_POINTS
    floor = max(m.analysis.figures.nonlinearity_floor_pct for m in entries)
    bow = _closed_form_bow_pct(k, u[ok])
    # each against the closed form, and the two against each other, within the floor
    assert np.max(np.abs(ca[ok] - bow)) < floor
    assert np.max(np.abs(cb[ok] - bow)) < floor
    assert np.max(np.abs(ca[ok] - cb[ok])) < floor
    assert np.max(np.abs(bow)) > 5 * floor  # the bow itself is far above that
