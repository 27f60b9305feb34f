"""``trueslope compare`` end to end: exit statuses, a bad file among good ones, limits,
reports and sessions.

Captures are straight and shunt-loaded ramps from the closed form of a current into
R || C (SOURCES.md [loading]), quantised by the one test ADC model; the checks are the
command's contract (README "Using it"), the JSON against the core's own comparison, and
the HTML read back with Python's html.parser.
"""

from __future__ import annotations

import json
import math
from html.parser import HTMLParser

import numpy as np
import pytest

from trueslope.core.compare_cli import main

from tests.support.builders import capture_from_cycles


def _write(path, cap):
    v = cap.channels[cap.channel_names[0]]
    t = cap.t0_s + cap.sample_interval_s * np.arange(v.size)
    np.savetxt(path, np.column_stack([t, v]), delimiter=",", header="time_s,ramp_v",
               comments="")
    return str(path)


def _shunted(r_ohm, seed, c_f=10e-9, i_a=100e-6, v0=0.05, v1=4.0, cycles=12):
    tau, vinf = r_ohm * c_f, i_a * r_ohm
    T = tau * math.log((vinf - v0) / (vinf - v1))
    f = lambda t: vinf - (vinf - v0) * np.exp(-t / tau)  # noqa: E731  (exact R || C)
    return capture_from_cycles([(T, f)] * cycles, T / 1000.37, bits=12, noise_v=5e-4, seed=seed)


@pytest.fixture
def folder(tmp_path):
    d = tmp_path / "caps"
    d.mkdir()
    _write(d / "film_a.csv", _shunted(40e6, 1))
    _write(d / "film_b.csv", _shunted(30e6, 2))
    _write(d / "leaky_a.csv", _shunted(1e6, 3))
    return d


def _limits(tmp_path, text):
    p = tmp_path / "limits.toml"
    p.write_text(text, encoding="utf-8")
    return str(p)


def test_folder_compared_ranked_and_grouped(folder, capsys):
    assert main([str(folder), "--group", "film=*film*", "--json", "--jobs", "1"]) == 0
    doc = json.loads(capsys.readouterr().out)
    ranking = [p.split("/")[-1] for p in doc["ranking"]]
    assert ranking[-1] == "leaky_a.csv"  # the 1 Mohm shunt bows most (SOURCES.md [loading])
    groups = {s["group"] for s in doc["statistics"]}
    assert groups == {"film", "ungrouped"}


def test_limits_pass_gives_0_and_a_failure_gives_1(folder, tmp_path, capsys):
    loose = _limits(tmp_path, "[limits.nonlinearity_pct]\nmax = 50\n")
    assert main([str(folder), "--limits", loose, "--jobs", "1"]) == 0
    tight = _limits(tmp_path, "[limits.nonlinearity_pct]\nmax = 0.2\n")
    assert main([str(folder), "--limits", tight, "--jobs", "1"]) == 1
    out = capsys.readouterr().out
    assert "FAIL" in out and "leaky_a.csv" in out


def test_a_bad_file_among_good_ones(folder, tmp_path, capsys):
    bad = folder / "broken.csv"
    bad.write_text("time,v\n0,1\nnot,numbers\n", encoding="utf-8")
    assert main([str(folder), "--json", "--jobs", "1"]) == 2
    captured = capsys.readouterr()
    doc = json.loads(captured.out)
    status = {e["path"].split("/")[-1]: e["status"] for e in doc["entries"]}
    assert status["broken.csv"] == "error" and status["film_a.csv"] == "ok"
    lines = captured.err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("trueslope: broken.csv")


class _Tags(HTMLParser):
    def __init__(self):
        super().__init__()
        self.text, self.scripts = [], 0

    def handle_starttag(self, tag, attrs):
        self.scripts += tag == "script"

    def handle_data(self, data):
        self.text.append(data)


def test_html_report_written_once_and_escaped(folder, tmp_path, capsys):
    hostile = folder / "=HYPERLINK(x)<b>.csv"
    _write(hostile, _shunted(20e6, 4))
    out = tmp_path / "report.html"
    assert main([str(folder), "--report", str(out), "--operator", "<i>me</i>", "--jobs", "1"]) == 0
    parser = _Tags()
    parser.feed(out.read_text(encoding="utf-8"))
    text = "".join(parser.text)
    assert parser.scripts == 0
    assert "=HYPERLINK(x)<b>.csv" in text and "<i>me</i>" in text  # shown as text
    # never over an existing file without --force, and never onto a capture
    assert main([str(folder), "--report", str(out), "--jobs", "1"]) == 2
    assert "--force" in capsys.readouterr().err
    assert main([str(folder), "--report", str(folder / "film_a.csv"), "--force"]) == 2


def test_session_round_trip_and_a_changed_capture_is_flagged(folder, tmp_path, capsys):
    session = tmp_path / "bench.json"
    assert main([str(folder), "--save-session", str(session), "--jobs", "1"]) == 0
    capsys.readouterr()
    assert main(["--session", str(session), "--json", "--jobs", "1"]) == 0
    first = json.loads(capsys.readouterr().out)
    assert len(first["entries"]) == 3
    with open(folder / "film_b.csv", "a", encoding="utf-8") as fh:
        fh.write("1,1\n")
    assert main(["--session", str(session), "--json", "--jobs", "1"]) == 2
    captured = capsys.readouterr()
    assert "film_b.csv" in captured.err and "changed" in captured.err


def test_pdf_without_the_window_libraries_is_refused_in_one_line(folder, tmp_path, capsys):
    assert main([str(folder), "--report", str(tmp_path / "r.pdf")]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "PDF" in err[0]
