"""The analyze command against hostile input (issue #9): one-line refusals, option values
with a minus sign, channel digits, atomic outputs that never land on a capture, formulas
in CSV cells, batches with bad files, silent numerics, and figures that must be finite."""

import csv
import dataclasses
import json
import math
import os
import subprocess
import sys
import warnings
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import pytest

from trueslope.app.cli import main
from trueslope.core.cli import build_parser
from trueslope.core.report.export import CYCLE_COLUMNS, safe_cell


def write_ramp(path, low=0.1, high=3.1, period_s=1e-3, dt=2e-6, n=6000):
    """A clean sawtooth with a time column, written with numpy (no trueslope code)."""
    t = np.arange(n) * dt
    v = low + (high - low) * ((t / period_s) % 1.0)
    np.savetxt(path, np.column_stack([t, v]), fmt=["%.9e", "%.6f"], delimiter=",",
               header="time [s],CH1 [V]", comments="")
    return path


@pytest.fixture
def ramp(tmp_path):
    return write_ramp(tmp_path / "ramp.csv")


def one_refusal(err):
    """The single stderr line of a refusal, checked for its form."""
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith("trueslope: ") and "Traceback" not in err
    return lines[0]


# -- 1. option refusals are one line; values may start with a minus sign ----------------

@pytest.mark.parametrize("argv,words", [
    (["analyze"], "required: FILE"),
    (["analyze", "x.csv", "--no-such-option"], "unrecognized arguments"),
    (["analyze", "x.csv", "--trim", "half"], "--trim"),
    (["analyze", "x.csv", "--trim"], "expected one argument"),
    (["open", "x.csv", "--trim", "half"], "--trim"),
])
def test_option_refusals_are_one_line(capsys, argv, words):
    assert main(argv) == 2
    captured = capsys.readouterr()
    assert words in one_refusal(captured.err)
    assert captured.out == ""


def test_help_still_prints_and_exits_0(capsys):
    assert main(["analyze", "-h"]) == 0
    assert "--force" in capsys.readouterr().out


@pytest.mark.parametrize("argv", [
    ["--thresholds", "-1,1"], ["--thresholds=-1,1"], ["--thresh", "-1,1"]])
def test_thresholds_may_start_with_a_minus_sign(argv):
    assert build_parser().parse_args(["f.csv"] + argv).thresholds == "-1,1"


def test_negative_values_reach_the_settings(tmp_path, capsys):
    bipolar = write_ramp(tmp_path / "bipolar.csv", low=-1.0, high=1.0)
    for argv in (["--thresholds", "-1,1"], ["--thresholds=-1,1"]):
        assert main(["analyze", str(bipolar), "--json"] + argv) == 0, capsys.readouterr().err
        doc = json.loads(capsys.readouterr().out)
        assert doc["slope_v_per_s"] == pytest.approx(2000.0, rel=1e-3)  # 2 V per 1 ms
    # A window starting before the ramp is refused by the settings, not by argparse.
    for argv in (["--window", "-1u,2u"], ["--window=-1u,2u"]):
        assert main(["analyze", str(bipolar)] + argv) == 2
        line = one_refusal(capsys.readouterr().err)
        assert line.startswith("trueslope: --window: ") and "expected one argument" not in line


def test_everything_after_double_dash_is_a_file(tmp_path, capsys):
    assert main(["analyze", "--", "-1,1"]) == 2
    assert "-1,1" in one_refusal(capsys.readouterr().err)


# -- 2. only ASCII digits are a channel index -----------------------------------------

@pytest.mark.parametrize("key", ["\u00b2", "\u0661", "\u0967"])  # superscript 2, Arabic-Indic 1, Devanagari 1
def test_non_ascii_digits_are_a_channel_name(ramp, capsys, key):
    assert str.isdigit(key)  # what str.isdigit alone would take for an index
    assert main(["analyze", str(ramp), "--channel", key]) == 2
    line = one_refusal(capsys.readouterr().err)
    assert "ramp.csv" in line and f"no channel named {key!r}" in line


def test_ascii_index_still_works(ramp, capsys):
    assert main(["analyze", str(ramp), "--channel", "0", "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["channel"] == "CH1"


# -- 3. the error path never aborts at exit -----------------------------------------

def run_command(*args):
    """The installed command as a fresh process (``python -m``, as the entry point runs)."""
    return subprocess.run([sys.executable, "-m", "trueslope.app.cli", "analyze", *args],
                          capture_output=True, text=True, timeout=120,
                          env=dict(os.environ, PYTHONWARNINGS="default"))


def test_error_path_exits_2_every_time(ramp):
    """40 fresh processes on an error path that has read the file: each leaves with its one
    line and status 2, never an abort (134) from a native thread alive at exit."""
    with ThreadPoolExecutor(max_workers=max(2, os.cpu_count() or 2)) as pool:
        runs = list(pool.map(lambda _: run_command(str(ramp), "--sync-channel", "nope"),
                             range(40)))
    codes = [r.returncode for r in runs]
    assert codes == [2] * 40, [r.stderr for r in runs if r.returncode != 2][:1]
    for r in runs:
        assert r.stdout == ""
        assert "no channel named 'nope'" in one_refusal(r.stderr)


def test_output_is_complete_when_leaving_early(ramp, tmp_path):
    out = tmp_path / "cycles.csv"
    r = run_command(str(ramp), str(ramp), "--json", "--cycles-csv", str(out))
    assert r.returncode == 0 and r.stderr == ""
    docs = json.loads(r.stdout)  # the whole document, flushed before the process ends
    assert len(docs) == 2
    assert len(out.read_text().splitlines()) == 1 + sum(len(d["cycles"]) for d in docs)


# -- 4. outputs: atomic, never onto a capture, never over a file without --force --------

def leftovers(folder, *keep):
    return sorted(p.name for p in folder.iterdir() if p.name not in keep)


@pytest.mark.parametrize("how", ["same", "hardlink", "symlink"])
def test_cycles_csv_never_lands_on_a_capture(ramp, tmp_path, capsys, how):
    out = {"same": lambda: ramp,
           "hardlink": lambda: (os.link(ramp, tmp_path / "alias.csv"), tmp_path / "alias.csv")[1],
           "symlink": lambda: (os.symlink(ramp, tmp_path / "link.csv"), tmp_path / "link.csv")[1],
           }[how]()
    before = ramp.read_bytes()
    for extra in ([], ["--force"]):
        assert main(["analyze", str(ramp), "--cycles-csv", str(out)] + extra) == 2
        line = one_refusal(capsys.readouterr().err)
        assert "input files" in line and out.name in line
    assert ramp.read_bytes() == before
    assert leftovers(tmp_path, "ramp.csv", "alias.csv", "link.csv") == []


def test_existing_output_needs_force(ramp, tmp_path, capsys):
    out = tmp_path / "cycles.csv"
    out.write_text("keep me\n")
    assert main(["analyze", str(ramp), "--cycles-csv", str(out)]) == 2
    line = one_refusal(capsys.readouterr().err)
    assert out.name in line and "--force" in line
    assert out.read_text() == "keep me\n"
    assert main(["analyze", str(ramp), "--cycles-csv", str(out), "--force"]) == 0
    rows = list(csv.reader(out.open(newline="")))
    assert rows[0] == CYCLE_COLUMNS and len(rows) > 3
    assert leftovers(tmp_path) == ["cycles.csv", "ramp.csv"]  # no temporary file left


def test_output_in_a_missing_folder_is_refused_before_measuring(ramp, tmp_path, capsys):
    out = tmp_path / "nowhere" / "cycles.csv"
    assert main(["analyze", str(ramp), "--cycles-csv", str(out)]) == 2
    assert "does not exist" in one_refusal(capsys.readouterr().err)


# -- 5. no formula reaches a spreadsheet --------------------------------------------

@pytest.mark.parametrize("cell,safe", [
    ("=1+1", "'=1+1"), ("+cmd|' /C calc'!A0", "'+cmd|' /C calc'!A0"), ("@SUM(1,2)", "'@SUM(1,2)"),
    ("-2+3", "'-2+3"), ("\t=1", "'\t=1"), ("\r=1", "'\r=1"), ("plain", "plain"),
    ("-1.5e-3", "-1.5e-3"), ("+2", "+2"), (-1.5, -1.5), (3, 3), (True, True), (None, None),
])
def test_safe_cell(cell, safe):
    assert safe_cell(cell) == safe


def test_batch_cycles_csv_neutralises_file_names(tmp_path, capsys):
    names = ['=HYPERLINK("x","y").csv', "+cmd|x.csv", "@SUM(1,2).csv", "a,b.csv",
             "-x.csv"]
    paths = [write_ramp(tmp_path / n) for n in names]
    out = tmp_path / "out" / "cycles.csv"
    out.parent.mkdir()
    assert main(["analyze", *map(str, paths), "--cycles-csv", str(out)]) == 0, \
        capsys.readouterr().err
    rows = list(csv.reader(out.open(newline="", encoding="utf-8")))  # Python's csv module
    assert rows[0] == ["file"] + CYCLE_COLUMNS
    assert all(len(r) == len(rows[0]) for r in rows)  # a comma in a name shifts nothing
    files = {r[0] for r in rows[1:]}
    assert files == {"'" + n if n[0] in "=+@-" else n for n in names}
    for r in rows[1:]:
        assert math.isfinite(float(r[CYCLE_COLUMNS.index("slope_v_per_s") + 1]))


# -- 6. a batch reports every good file ---------------------------------------------

def batch(tmp_path, ramp):
    empty = tmp_path / "empty.csv"
    empty.write_text("")
    return [str(ramp), str(tmp_path / "missing.csv"), str(empty)]


def test_batch_reports_good_files_and_refuses_bad_ones(tmp_path, ramp, capsys):
    out = tmp_path / "cycles.csv"
    assert main(["analyze", *batch(tmp_path, ramp), "--cycles-csv", str(out)]) == 2
    captured = capsys.readouterr()
    assert "nonlinearity" in captured.out and "ramp.csv" in captured.out
    lines = captured.err.strip().splitlines()
    assert len(lines) == 2 and all(ln.startswith("trueslope: ") for ln in lines)
    assert "missing.csv" in lines[0] and "empty.csv" in lines[1]
    rows = list(csv.reader(out.open(newline="")))
    assert rows[0][0] == "file" and {r[0] for r in rows[1:]} == {"ramp.csv"}


def test_batch_json_has_an_error_entry_per_bad_file(tmp_path, ramp, capsys):
    files = batch(tmp_path, ramp)
    assert main(["analyze", *files, "--json"]) == 2
    captured = capsys.readouterr()
    docs = json.loads(captured.out)
    assert [d["file"] for d in docs] == files
    assert "slope_v_per_s" in docs[0]
    for d in docs[1:]:
        assert set(d) == {"file", "error", "error_type"}
        assert os.path.basename(d["file"]) in d["error"]
    assert docs[2]["error_type"] == "EmptyCaptureError"
    assert len(captured.err.strip().splitlines()) == 2


def test_single_file_json_is_one_document(ramp, capsys):
    assert main(["analyze", str(ramp), "--json"]) == 0
    assert isinstance(json.loads(capsys.readouterr().out), dict)


# -- 7. refusals name the file; numerics stay quiet ----------------------------------

def patch_analyse(monkeypatch, change):
    import trueslope.core.analysis as analysis
    real = analysis.analyse
    monkeypatch.setattr(analysis, "analyse", lambda cap, settings: change(real(cap, settings)))


def test_errors_from_the_analysis_are_prefixed_with_the_file(monkeypatch, ramp, capsys):
    def boom(_):
        raise IndexError("index 7 is out of bounds")
    patch_analyse(monkeypatch, boom)
    assert main(["analyze", str(ramp)]) == 2
    line = one_refusal(capsys.readouterr().err)
    assert str(ramp) in line and "IndexError" in line


def test_numpy_and_python_warnings_stay_off_stderr(monkeypatch, ramp, capsys):
    def noisy(a):
        np.float64(1.0) / np.float64(0.0)
        np.log(np.zeros(3))
        warnings.warn("a numerical aside", RuntimeWarning)
        return a
    patch_analyse(monkeypatch, noisy)
    with warnings.catch_warnings():
        warnings.simplefilter("always")
        assert main(["analyze", str(ramp)]) == 0
    assert capsys.readouterr().err == ""
    assert np.geterr()["divide"] == "warn"  # numpy's settings are restored afterwards


# -- 8. nothing non-finite with exit 0 ---------------------------------------------

@pytest.mark.parametrize("field", ["slope_v_per_s", "frequency_hz", "nonlinearity_pct", "end_v"])
def test_non_finite_figures_are_a_refusal(monkeypatch, ramp, tmp_path, capsys, field):
    patch_analyse(monkeypatch, lambda a: dataclasses.replace(
        a, figures=dataclasses.replace(a.figures, **{field: math.nan})))
    assert main(["analyze", str(ramp)]) == 2
    captured = capsys.readouterr()
    line = one_refusal(captured.err)
    assert "ramp.csv" in line and "not finite" in line and field in line
    assert captured.out == ""
    assert main(["analyze", str(ramp), str(ramp), "--json"]) == 2
    docs = json.loads(capsys.readouterr().out)
    assert [d["error_type"] for d in docs] == ["AnalysisError"] * 2
