"""``trueslope explain`` on files: ngspice sets written as CSV (SOURCES.md [ngspice]).

The circuits are ``tests.support.sets``'s; the truth is the netlist's resistor. Skipped
without ngspice on a developer's machine, failed under ``CI=true``.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from tests.support import sets as S
from tests.support.spice import require_ngspice
from trueslope.core.explain_cli import main

R_OHM = 4.7e6


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    """name -> CSV path: a shunt at two currents, a film absorption set, written once."""
    require_ngspice()
    folder = tmp_path_factory.mktemp("explain_cli")
    cases = {"shunt_fast": S.shunt(R_OHM, 100e-6), "shunt_slow": S.shunt(R_OHM, 25e-6),
             "film_a": S.dow(S.FILM, 100e-6), "film_b": S.dow(S.FILM, 400e-6)}
    out = {}
    for i, (name, case) in enumerate(cases.items()):
        cap = S.simulate(case, folder, bits=10, noise_v=2e-3, seed=i)
        _, v = cap.channel(None)
        t = cap.t0_s + cap.sample_interval_s * np.arange(v.size)
        path = folder / f"{name}.csv"
        np.savetxt(path, np.column_stack([t, v]), delimiter=",", header="time [s],CH1 [V]",
                   comments="", fmt="%.10g")
        out[name] = str(path)
    return out


def test_a_shunt_set_names_the_shunt_and_its_resistance(files, capsys):
    status = main([files["shunt_fast"], files["shunt_slow"], "--capacitance", "10n", "--json"])
    assert status == 0
    doc = json.loads(capsys.readouterr().out)
    e = doc["explanation"]
    assert e["cause"] == "shunt-loading"
    shunt = e["models"][0]["parameters"][0]
    assert shunt["name"] == "shunt_ohm"
    assert shunt["value"] == pytest.approx(R_OHM, rel=0.10)   # the netlist's resistor
    assert any("shunt loading" in line for line in doc["text"])


def test_one_capture_says_which_to_take_next(files, capsys):
    assert main([files["shunt_fast"], "--capacitance", "10n"]) == 0
    out = capsys.readouterr().out
    assert "not decided" in out
    assert "Take next: a capture with the charging current changed by 0.25x" in out


def test_a_capture_of_another_circuit_is_called_out(files, capsys):
    status = main([files["film_a"], files["film_b"], files["shunt_fast"]])
    assert status == 0
    out = capsys.readouterr().out
    assert "No one cause explains every capture" in out
    assert "shunt_fast.csv" in out.split("No one cause", 1)[1].splitlines()[0]


def test_values_given_neither_once_nor_per_capture_are_refused(files, capsys):
    status = main([files["shunt_fast"], files["shunt_slow"], files["film_a"],
                   "--capacitance", "10n", "--capacitance", "10n"])
    assert status == 2
    err = capsys.readouterr().err
    assert "--capacitance" in err and "once for every capture" in err


def test_a_refused_file_is_named_and_the_rest_explained(files, tmp_path, capsys):
    bad = tmp_path / "empty.csv"
    bad.write_text("")
    status = main([files["shunt_fast"], files["shunt_slow"], str(bad), "--capacitance", "10n"])
    captured = capsys.readouterr()
    assert status == 2
    assert "empty.csv" in captured.err
    assert "shunt loading" in captured.out
