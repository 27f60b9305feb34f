"""Every demo capture still gives the finding ``sample_captures/README.md`` promises.

The demo set is invented data (a physical model in ``sample_captures/make_samples.py`` and
``demo_set.py``); these checks hold the tool to what the README tells a new user, and the
one cause of the 1x-probe pair to the model's own resistances in parallel (circuit theory:
conductances add).
"""

from __future__ import annotations

import importlib.util
import json
import sys
from pathlib import Path

import pytest

from trueslope.core.analysis import analyse_file
from trueslope.core.circuit import CircuitContext
from trueslope.core.errors import CaptureError
from trueslope.core.explain import explain
from trueslope.core.settings import Settings

SAMPLES = Path(__file__).resolve().parents[2] / "sample_captures"


@pytest.fixture(scope="module")
def measured():
    done: dict[str, object] = {}

    def get(name: str, settings: Settings | None = None):
        key = name if settings is None else f"{name}/{settings!r}"
        if key not in done:
            done[key] = analyse_file(SAMPLES / name, settings)
        return done[key]

    return get


def _codes(a) -> set[str]:
    return {w.code for w in a.warnings}


def test_the_readme_lists_every_file_of_the_folder():
    text = (SAMPLES / "README.md").read_text()
    files = sorted(p.name for p in SAMPLES.iterdir()
                   if p.suffix in (".csv", ".txt", ".toml", ".json"))
    assert 8 <= sum(p.endswith((".csv", ".txt")) for p in files) <= 12
    for name in files:
        assert f"`{name}`" in text, name


def test_film_is_straight_to_within_the_floor_and_has_a_sync_channel(measured):
    a = measured("film_cap_ramp.csv")
    assert a.diagnosis.signature == "linear" and a.figures.below_floor
    synced = measured("film_cap_ramp.csv", Settings(sync_channel="sync"))
    assert synced.segmentation.source == "sync"


@pytest.mark.parametrize("name", ["film_b_ramp.csv", "c0g_a_ramp.csv", "c0g_b_ramp.csv"])
def test_fine_captures_show_absorption(measured, name):
    a = measured(name)
    assert a.diagnosis.signature == "dielectric-absorption"
    assert a.figures.nonlinearity_floor_pct < 0.01


def test_film_b_alone_names_the_capture_to_take_next(measured):
    e = explain([measured("film_b_ramp.csv")], [CircuitContext(capacitance_f=10e-9)])
    assert e.cause == "undecided" and e.next_capture is not None and e.next_capture.decides


@pytest.mark.parametrize("name", ["x7r_cap_ramp.csv", "x7r_b_ramp.csv"])
def test_x7r_parts_show_their_voltage_coefficient(measured, name):
    a = measured(name)
    assert a.diagnosis.signature == "voltage-coefficient"
    assert a.diagnosis.curvature == "convex"


def test_the_decimal_comma_layout_is_read(measured):
    a = measured("x7r_cap_ramp.csv")
    assert a.figures.ramp_time_s == pytest.approx(704e-6, rel=0.02)  # the model's 704.0 us


def test_the_electrolytic_ramp_falls_and_absorbs(measured):
    a = measured("electrolytic_ramp.txt")
    assert a.figures.direction == "falling"
    assert a.diagnosis.signature == "dielectric-absorption"
    assert a.figures.nonlinearity_pct > 1.0


def test_the_1x_probe_pair_has_one_shunt(measured):
    ctx = CircuitContext(capacitance_f=10e-9, probe_resistance_ohm=1e6,
                         probe_capacitance_f=100e-12)
    pair = [measured(n, Settings(context=ctx)) for n in ("probe1x_100uA.csv",
                                                        "probe1x_25uA.csv")]
    for a in pair:
        assert a.diagnosis.signature == "shunt-loading"
        assert a.diagnosis.probe_match == "scope-input"
    e = explain(pair, [ctx, ctx])
    assert e.cause == "shunt-loading"
    # the model's 1 Mohm probe, 20 Mohm source and 1 Tohm leakage in parallel
    truth = 1.0 / (1 / 1e6 + 1 / 20e6 + 1 / 1e12)
    shunt = next(p for p in e.models[0].parameters if p.name == "shunt_ohm")
    assert shunt.value == pytest.approx(truth, rel=0.05)


def test_power_up_is_left_out_and_said(measured):
    a = measured("power_up_ramp.csv")
    assert a.segmentation.unsteady_start_s is not None
    assert a.segmentation.unsteady_start_s[1] > 1e-3


def test_clipping_is_reported_and_kept_out_of_the_fit(measured):
    a = measured("clipped_ramp.csv")
    assert a.segmentation.clipped_top_v == pytest.approx(3.58, abs=0.01)
    assert "amplitude_v" in a.figures.bounds


def test_the_broken_file_is_refused_by_line_and_column():
    with pytest.raises(CaptureError) as info:
        analyse_file(SAMPLES / "broken_capture.csv")
    text = str(info.value)
    assert "broken_capture.csv" in text and "line 401" in text and "column 2" in text


def test_the_session_opens_and_the_limits_split_the_dielectrics(tmp_path):
    from trueslope.core.compare_cli import main
    report = tmp_path / "report.html"
    status = main(["--session", str(SAMPLES / "dielectrics_session.json"), "--json",
                   "--report", str(report)])
    assert status == 1  # measured, and some captures fail their limits
    assert report.stat().st_size > 1000


def test_the_session_file_matches_the_captures():
    from trueslope.core.session import load_session
    session = load_session(SAMPLES / "dielectrics_session.json")
    assert session.changed_files() == ()
    assert {g.name for g in session.groups} == {"film", "C0G", "X7R"}
    doc = json.loads((SAMPLES / "dielectrics_session.json").read_text())
    assert all(not Path(c["path"]).is_absolute() for c in doc["captures"])


def test_the_generator_writes_the_same_bytes():
    """The broken file is the second film part's first 400 rows: regenerating it runs the
    whole model and digitiser for one capture."""
    loaded = {}
    for name in ("make_samples", "demo_set"):  # demo_set imports make_samples by name
        spec = importlib.util.spec_from_file_location(name, SAMPLES / f"{name}.py")
        loaded[name] = importlib.util.module_from_spec(spec)
        sys.modules[name] = loaded[name]
        try:
            spec.loader.exec_module(loaded[name])
        except BaseException:
            sys.modules.pop(name, None)
            raise
    demo = loaded["demo_set"]
    for name in loaded:
        sys.modules.pop(name, None)
    assert demo.broken().encode("ascii") == (SAMPLES / "broken_capture.csv").read_bytes()
