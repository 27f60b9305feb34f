"""The analyze command: readable summary, JSON keys, per-cycle CSV, exit codes."""

import json

import numpy as np
import pytest

from trueslope.app.cli import main

#: Keys the issue names for --json (sections 3-6).
REQUIRED_KEYS = {
    "file", "channel", "samples", "sample_interval_s", "direction", "full_cycles",
    "partial_cycles", "frequency_hz", "period_s", "period_jitter_s", "ramp_time_s",
    "retrace_time_s", "offset_v", "start_v", "end_v", "amplitude_v", "slope_v_per_s",
    "slope_ci95_v_per_s", "peak_deviation_v", "nonlinearity_pct", "terminal_nonlinearity_pct",
    "slope_error_pct", "displacement_error_pct", "transmission_error_pct",
    "midpoint_time_error_s", "midpoint_time_error_pct", "residual_rms_v", "noise_rms_v",
    "adc_step_v", "nonlinearity_floor_pct", "trim_fraction", "warnings", "cycles",
}


@pytest.fixture
def ramp_csv(tmp_path):
    dt = 2e-6
    n = 6000
    t = np.arange(n) * dt
    v = 0.1 + 3.0 * ((t / 1e-3) % 1.0)
    p = tmp_path / "ramp.csv"
    with open(p, "w", newline="") as f:
        f.write("time [s],CH1 [V]\n")
        for ti, vi in zip(t, v):
            f.write(f"{ti:.9e},{vi:.6f}\n")
    return p


def test_json_has_every_key(ramp_csv, capsys):
    assert main(["analyze", str(ramp_csv), "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert REQUIRED_KEYS <= set(doc)
    assert doc["direction"] == "rising"
    assert doc["frequency_hz"] == pytest.approx(1000.0, rel=1e-4)
    assert doc["slope_v_per_s"] == pytest.approx(3000.0, rel=1e-3)
    lo, hi = doc["slope_ci95_v_per_s"]
    assert lo <= doc["slope_v_per_s"] <= hi
    assert len(doc["cycles"]) == doc["full_cycles"]


def test_several_files_give_a_json_list(ramp_csv, tmp_path, capsys):
    other = tmp_path / "copy.csv"
    other.write_bytes(ramp_csv.read_bytes())
    assert main(["analyze", str(ramp_csv), str(other), "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert isinstance(doc, list) and len(doc) == 2


def test_readable_summary_and_cycles_csv(ramp_csv, tmp_path, capsys):
    out = tmp_path / "cycles.csv"
    assert main(["analyze", str(ramp_csv), "--cycles-csv", str(out), "--trim", "0.1"]) == 0
    text = capsys.readouterr().out
    assert "nonlinearity" in text and "kHz" in text and "V/s" in text
    rows = out.read_text().splitlines()
    assert rows[0].startswith("index,ramp_start_s")
    assert len(rows) >= 5


@pytest.mark.parametrize("content,words", [
    ("", "empty"),
    ("time,CH1\n" + "".join(f"{i}e-6,{i % 10}\n" for i in range(40)) + "40e-6,1,7\n"
     + "".join(f"{i}e-6,{i % 10}\n" for i in range(41, 80)), "line 42"),
])
def test_bad_input_exits_2_with_one_line(tmp_path, capsys, content, words):
    p = tmp_path / "bad.csv"
    p.write_text(content)
    before = p.read_bytes()
    assert main(["analyze", str(p)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("trueslope: ") and "Traceback" not in err
    assert len(err.strip().splitlines()) == 1
    assert words in err.lower()
    assert p.read_bytes() == before  # never alters a capture file


def test_missing_file_and_bad_trim_exit_2(tmp_path, capsys, ramp_csv):
    assert main(["analyze", str(tmp_path / "nope.csv")]) == 2
    assert main(["analyze", str(ramp_csv), "--trim", "0.6"]) == 2
    err = capsys.readouterr().err
    assert "trim" in err


def test_not_a_sawtooth_exits_2(tmp_path, capsys):
    p = tmp_path / "tri.csv"
    t = np.arange(4000) * 1e-6
    v = np.abs(((t / 1e-3) % 1.0) * 2 - 1)
    p.write_text("t (s),V\n" + "".join(f"{a:.7e},{b:.5f}\n" for a, b in zip(t, v)))
    assert main(["analyze", str(p)]) == 2
    assert "sawtooth" in capsys.readouterr().err
