"""Delimited text layouts: each written by the test into tmp_path, then read.

Values are checked against independent parsers told the dialect explicitly
(numpy.loadtxt, pandas.read_csv): reference libraries. Quoting and CRLF line
ends follow RFC 4180 ("Common Format and MIME Type for CSV Files"). The data
is a simple sawtooth of a few dozen rows: 12 samples per ramp, 0.1 V to
0.5 V, 1 us per sample (test data, not a reference).
"""

from __future__ import annotations

import io
import json

import numpy as np
import pandas as pd
import pytest

from trueslope.core.capture import Capture
from trueslope.core.io import load_capture

N = 48
DT = 1e-6


def saw(n: int = N, dt: float = DT, t0: float = 0.0):
    k = np.arange(n)
    return t0 + k * dt, 0.1 + 0.4 * (k % 12) / 12.0


def write(tmp_path, name: str, text: str, encoding: str = "utf-8"):
    p = tmp_path / name
    with open(p, "w", encoding=encoding, newline="") as f:
        f.write(text)
    return p


def rows(fmt: str, *cols, eol: str = "\n") -> str:
    return "".join(fmt.format(*vals) + eol for vals in zip(*cols))


def check_saw(cap: Capture, channel: str, scale: float = 1.0, dt: float = DT):
    """Values within the print resolution (6 decimals of a volt at worst)."""
    t, v = saw()
    np.testing.assert_allclose(cap.channels[channel], v * scale, rtol=0, atol=5e-7 * scale)
    assert cap.sample_interval_s == pytest.approx(dt, rel=1e-9)
    assert cap.samples == N


def test_comma_csv_with_header_matches_numpy_loadtxt(tmp_path):
    t, v = saw()
    p = write(tmp_path, "ramp.csv", "time (s),CH1 (V),CH2 (V)\n" + rows("{:.6e},{:.6f},{:.6f}", t, v, -v))
    cap = load_capture(p)
    ref = np.loadtxt(p, delimiter=",", skiprows=1)  # reference parser, dialect given
    assert cap.channel_names == ["CH1", "CH2"]
    np.testing.assert_array_equal(cap.channels["CH1"], ref[:, 1])
    np.testing.assert_array_equal(cap.channels["CH2"], ref[:, 2])
    assert cap.t0_s == ref[0, 0]
    assert cap.sample_interval_s == pytest.approx((ref[-1, 0] - ref[0, 0]) / (N - 1), rel=1e-12)
    assert cap.time_column == "time"
    assert cap.layout == "delimited text, ',' separated, header"
    assert cap.warnings == ()
    assert all(a.dtype == np.float64 for a in cap.channels.values())
    assert cap.source == str(p)


def test_semicolon_decimal_comma_preamble_matches_pandas(tmp_path):
    t, v = saw()
    body = rows("{:.6e};{:.6f}", t, v).replace(".", ",")
    text = "Instrument;bench scope\nDate;2026-01-01\nProbe;10x\nZeit (s);Kanal 1 (V)\n" + body
    p = write(tmp_path, "komma.csv", text)
    cap = load_capture(p)
    ref = pd.read_csv(p, sep=";", decimal=",", skiprows=3)  # reference parser
    np.testing.assert_array_equal(cap.channels["Kanal 1"], ref.iloc[:, 1].to_numpy())
    assert cap.layout == "delimited text, ';' separated, decimal comma, header, 3 preamble lines"
    assert dict(cap.metadata) == {"Instrument": "bench scope", "Date": "2026-01-01", "Probe": "10x"}
    assert cap.time_column == "Zeit"


def test_tab_separated_without_header(tmp_path):
    t, v = saw()
    p = write(tmp_path, "ramp.tsv", rows("{:.6e}\t{:.6f}\t{:.6f}", t, v, 2 * v))
    cap = load_capture(p)
    assert cap.channel_names == ["CH1", "CH2"]  # no header: numbered channels
    check_saw(cap, "CH1")
    np.testing.assert_allclose(cap.channels["CH2"], 2 * v, rtol=0, atol=5e-7)
    assert cap.time_column == "column 1"
    assert cap.layout == "delimited text, tab separated, no header"


def test_tab_separated_decimal_comma(tmp_path):
    t, v = saw()
    p = write(tmp_path, "ramp.txt", "t (us)\tCH1 (mV)\n" +
              rows("{:.4f}\t{:.4f}", t * 1e6, v * 1e3).replace(".", ","))
    cap = load_capture(p)
    check_saw(cap, "CH1")
    assert "decimal comma" in cap.layout and "tab separated" in cap.layout


def test_runs_of_spaces_with_units_in_header(tmp_path):
    t, v = saw()
    text = "    t (us)     CH1 (mV)\n" + rows("{:10.3f}   {:10.4f}", t * 1e6, v * 1e3)
    p = write(tmp_path, "aligned.dat", text)
    cap = load_capture(p)
    ref = np.loadtxt(p, skiprows=1)  # white-space reference parser
    np.testing.assert_allclose(cap.channels["CH1"], ref[:, 1] * 1e-3, rtol=1e-15)
    assert cap.sample_interval_s == pytest.approx(1e-6, rel=1e-9)
    assert cap.layout == "delimited text, space separated, header"


def test_runs_of_spaces_decimal_comma(tmp_path):
    t, v = saw()
    text = "Zeit [ms]  Spannung [V]\n" + rows("{:12.6f}  {:10.6f}", t * 1e3, v).replace(".", ",")
    cap = load_capture(write(tmp_path, "komma.dat", text))
    check_saw(cap, "Spannung")
    assert "space separated" in cap.layout and "decimal comma" in cap.layout


def test_utf8_bom_and_crlf(tmp_path):
    t, v = saw()
    text = "\ufeffTime (s),CH1 (V)\r\n" + rows("{:.6e},{:.6f}", t, v, eol="\r\n")
    cap = load_capture(write(tmp_path, "bom.csv", text))
    check_saw(cap, "CH1")
    assert cap.time_column == "Time"  # the BOM is not part of the first name


def test_utf8_bom_on_the_first_data_row(tmp_path):
    t, v = saw()
    cap = load_capture(write(tmp_path, "bom.csv", "\ufeff" + rows("{:.6e},{:.6f}", t, v)))
    check_saw(cap, "CH1")


def test_trailing_delimiters_and_blank_lines_at_the_end(tmp_path):
    t, v = saw()
    text = "Time,CH1,\n" + rows("{:.6e},{:.6f},", t, v) + "\n\n  \n"
    cap = load_capture(write(tmp_path, "trail.csv", text))
    assert cap.channel_names == ["CH1"]
    check_saw(cap, "CH1")
    assert cap.warnings == ()


def test_trailing_semicolons_crlf_decimal_comma(tmp_path):
    t, v = saw()
    text = "Time;CH1;\r\n" + rows("{:.6e};{:.6f};", t, v, eol="\r\n").replace(".", ",") + "\r\n"
    cap = load_capture(write(tmp_path, "trail.csv", text))
    check_saw(cap, "CH1")


def test_quoted_fields_rfc4180(tmp_path):
    t, v = saw()
    text = '"Time (s)","CH1, probe A (V)"\r\n' + rows('"{:.6e}","{:.6f}"', t, v, eol="\r\n")
    cap = load_capture(write(tmp_path, "quoted.csv", text))
    assert cap.channel_names == ["CH1, probe A"]  # a quoted delimiter stays in the name
    check_saw(cap, "CH1, probe A")


def test_header_names_are_stripped_and_kept_in_file_order(tmp_path):
    t, v = saw()
    text = " Time ,  B side , A side \n" + rows("{:.6e},{:.6f},{:.6f}", t, v, -v)
    cap = load_capture(write(tmp_path, "order.csv", text))
    assert cap.channel_names == ["B side", "A side"]


def test_duplicate_and_empty_names_are_made_unique(tmp_path):
    t, v = saw()
    text = "Time,CH1,CH1,\n" + rows("{:.6e},{:.6f},{:.6f},{:.6f}", t, v, -v, 2 * v)
    cap = load_capture(write(tmp_path, "dup.csv", text))
    assert cap.channel_names == ["CH1", "CH1_2", "CH3"]


def test_names_row_then_units_row(tmp_path):
    t, v = saw()
    text = "Time,CH1,CH2\ns,mV,V\n" + rows("{:.6e},{:.4f},{:.6f}", t, v * 1e3, v)
    cap = load_capture(write(tmp_path, "units_row.csv", text))
    check_saw(cap, "CH1")
    np.testing.assert_allclose(cap.channels["CH2"], v, rtol=0, atol=5e-7)
    assert "units row" in cap.layout


def test_comment_marked_header_as_numpy_savetxt_writes_it(tmp_path):
    t, v = saw()
    p = tmp_path / "savetxt.txt"
    np.savetxt(p, np.column_stack([t, v]), delimiter=",", header="time (s),ch1 (V)")  # reference writer
    cap = load_capture(p)
    assert cap.channel_names == ["ch1"]
    check_saw(cap, "ch1")


def test_numpy_savetxt_default_layout(tmp_path):
    t, v = saw()
    p = tmp_path / "plain.txt"
    np.savetxt(p, np.column_stack([t, v]))  # space separated, '%.18e', no header
    cap = load_capture(p)
    np.testing.assert_array_equal(cap.channels["CH1"], v)
    assert cap.sample_interval_s == pytest.approx(DT, rel=1e-12)


def test_pandas_to_csv_round_trip(tmp_path):
    t, v = saw()
    p = tmp_path / "pandas.csv"
    pd.DataFrame({"time (s)": t, "CH1 (V)": v}).to_csv(p, index=False)  # reference writer
    cap = load_capture(p)
    np.testing.assert_array_equal(cap.channels["CH1"], v)  # exact: shortest round-trip repr


def test_pandas_index_column_is_dropped(tmp_path):
    t, v = saw()
    p = tmp_path / "indexed.csv"
    pd.DataFrame({"CH1": v}).to_csv(p)  # writes an unnamed 0, 1, 2 ... index first
    cap = load_capture(p, sample_interval_s=2e-6)
    assert cap.channel_names == ["CH1"]
    assert cap.sample_interval_s == 2e-6
    assert cap.time_column is None


@pytest.mark.parametrize("preamble,key,value", [
    ("Model,XYZ\n", "Model", "XYZ"),
    ("Model: XYZ\n", "Model", "XYZ"),
    ("# Model: XYZ\n", "Model", "XYZ"),
    ("Model = XYZ\n", "Model", "XYZ"),
    ("# exported by the bench script\n", "exported by the bench script", ""),
    ("Trigger time,12:30:05\n", "Trigger time", "12:30:05"),
    ('"Record Length","48"\n', "Record Length", "48"),
])
def test_preamble_lines_are_kept_as_metadata(tmp_path, preamble, key, value):
    t, v = saw()
    text = preamble + "Time,CH1\n" + rows("{:.6e},{:.6f}", t, v)
    cap = load_capture(write(tmp_path, "pre.csv", text))
    assert cap.metadata[key] == value
    check_saw(cap, "CH1")
    assert "1 preamble line" in cap.layout


def test_metadata_reaches_to_dict_as_json(tmp_path):
    t, v = saw()
    text = "Model,XYZ\nSerial,123\nTime,CH1\n" + rows("{:.6e},{:.6f}", t, v)
    cap = load_capture(write(tmp_path, "pre.csv", text))
    d = json.loads(json.dumps(cap.to_dict()))
    assert d["metadata"] == {"Model": "XYZ", "Serial": "123"}
    assert d["channels"] == ["CH1"] and d["samples"] == N


def test_repeated_preamble_keys_are_all_kept(tmp_path):
    t, v = saw()
    text = "Probe,10x\nProbe,1x\nTime,CH1\n" + rows("{:.6e},{:.6f}", t, v)
    cap = load_capture(write(tmp_path, "pre.csv", text))
    assert cap.metadata["Probe"] == "10x"
    assert cap.metadata["Probe (line 2)"] == "1x"


@pytest.mark.parametrize("time_header,scale", [
    ("time [s]", 1.0), ("t (us)", 1e-6), ("t (\u00b5s)", 1e-6), ("Zeit (ms)", 1e-3),
    ("X [ns]", 1e-9), ("Time/s", 1.0)])
@pytest.mark.parametrize("channel_header,vscale", [
    ("CH1 (mV)", 1e-3), ("V", 1.0), ("Voltage/mV", 1e-3), ("CH1 [uV]", 1e-6),
    ("CH1 (\u00b5V)", 1e-6), ("HV (kV)", 1e3), ("CH1", 1.0)])
def test_units_in_column_names_scale_to_si(tmp_path, time_header, scale, channel_header, vscale):
    t, v = saw()
    text = f"{time_header},{channel_header}\n" + rows("{!r},{!r}", [float(x) for x in t / scale],
                                                           [float(x) for x in v / vscale])
    cap = load_capture(write(tmp_path, "units.csv", text))
    (name,) = cap.channel_names
    np.testing.assert_allclose(cap.channels[name], v, rtol=1e-12)
    assert cap.sample_interval_s == pytest.approx(DT, rel=1e-9)


@pytest.mark.parametrize("name", ["Zeit", "temps", "tiempo", "X", "t", "Time", "TIME"])
def test_time_column_by_name_in_any_position(tmp_path, name):
    t, v = saw(t0=-2e-5)
    text = f"CH1,{name}\n" + rows("{:.6f},{:.6e}", v, t)
    cap = load_capture(write(tmp_path, "lang.csv", text))
    assert cap.time_column == name
    assert cap.channel_names == ["CH1"]
    assert cap.t0_s == pytest.approx(-2e-5, rel=1e-9)
    check_saw(cap, "CH1")


@pytest.mark.parametrize("name", ["Czas", "Aika", "Horizontal", "Sweep"])
def test_time_column_by_steady_increase_whatever_its_name(tmp_path, name):
    t, v = saw()
    text = f"{name},Kanal A\n" + rows("{:.6e},{:.6f}", t, v)
    cap = load_capture(write(tmp_path, "steady.csv", text))
    assert cap.time_column == name
    assert cap.channel_names == ["Kanal A"]


def test_a_rising_sawtooth_first_column_is_not_taken_for_time(tmp_path):
    t, v = saw()
    cap = load_capture(write(tmp_path, "no_time.csv", rows("{:.6f},{:.6f}", v, -v)),
                       sample_interval_s=DT)
    assert cap.time_column is None
    assert cap.channel_names == ["CH1", "CH2"]


@pytest.mark.parametrize("index_name", ["Index", "No.", "Sample", ""])
def test_sample_number_column_is_neither_channel_nor_time(tmp_path, index_name):
    t, v = saw()
    k = np.arange(1, N + 1)  # 1-based counts are indices too
    text = f"{index_name},Time (s),CH1 (V)\n" + rows("{},{:.6e},{:.6f}", k, t, v)
    cap = load_capture(write(tmp_path, "idx.csv", text))
    assert cap.channel_names == ["CH1"]
    assert cap.time_column == "Time"
    check_saw(cap, "CH1")


def test_index_column_with_interval_from_preamble(tmp_path):
    t, v = saw()
    text = "Sample Interval,2e-6\nNo.,CH1\n" + rows("{},{:.6f}", range(N), v)
    cap = load_capture(write(tmp_path, "idx.csv", text))
    assert cap.channel_names == ["CH1"]
    assert cap.sample_interval_s == 2e-6


@pytest.mark.parametrize("key,value,expected", [
    ("Sample Interval", "1e-6", 1e-6),
    ("interval", "2 us", 2e-6),
    ("Increment", "5E-07", 5e-7),
    ("sample period", "100 ns", 100e-9),
    ("X Increment", "1.0E-06 s", 1e-6),
    ("x_increment", "4e-6", 4e-6),
    ("dt", "0.5u", 0.5e-6),
    ("Sample Interval [us]", "2", 2e-6),
    ("Sample Rate", "1 MSa/s", 1e-6),
    ("sampling rate", "250 kS/s", 4e-6),
    ("Sample rate", "2 GSa/s", 0.5e-9),
    ("sample rate", "500 kHz", 2e-6),
    ("fs", "1e6", 1e-6),
    ("Sample Rate (MSa/s)", "10", 1e-7),
    ("Sampling frequency", "20 Hz", 0.05),
])
def test_sample_interval_from_the_preamble(tmp_path, key, value, expected):
    t, v = saw()
    text = f"{key},{value}\nCH1\n" + rows("{:.6f}", v)
    cap = load_capture(write(tmp_path, "pre.csv", text))
    assert cap.sample_interval_s == pytest.approx(expected, rel=1e-12)
    assert cap.t0_s == 0.0 and cap.time_column is None


@pytest.mark.parametrize("line", ["# sample interval: 1 us", "Sample Interval: 1e-6",
                                  "Sample Interval = 1e-6", "sample rate: 1 MSa/s"])
def test_sample_interval_in_other_preamble_forms(tmp_path, line):
    t, v = saw()
    text = f"{line}\n" + rows("{:.6f}", v)
    assert load_capture(write(tmp_path, "pre.csv", text)).sample_interval_s == pytest.approx(1e-6)


def test_sample_interval_in_a_decimal_comma_preamble(tmp_path):
    t, v = saw()
    text = "Abtastintervall;x\nSample interval;0,000002\nCH1;CH2\n" + \
        rows("{:.6f};{:.6f}", v, -v).replace(".", ",")
    cap = load_capture(write(tmp_path, "pre.csv", text))
    assert cap.sample_interval_s == pytest.approx(2e-6, rel=1e-12)


def test_space_separated_preamble_with_interval(tmp_path):
    t, v = saw()
    text = "Sample interval 1e-6\nCH1 CH2\n" + rows("{:.6f} {:.6f}", v, -v)
    cap = load_capture(write(tmp_path, "pre.dat", text))
    assert cap.sample_interval_s == pytest.approx(1e-6)
    assert cap.channel_names == ["CH1", "CH2"]


def test_argument_overrides_the_preamble_with_a_warning(tmp_path):
    t, v = saw()
    text = "Sample Interval,1e-6\nCH1\n" + rows("{:.6f}", v)
    cap = load_capture(write(tmp_path, "pre.csv", text), sample_interval_s=2e-6)
    assert cap.sample_interval_s == 2e-6
    assert [w.code for w in cap.warnings] == ["interval-overridden"]


def test_argument_used_when_the_file_has_no_time(tmp_path):
    t, v = saw()
    cap = load_capture(write(tmp_path, "bare.csv", rows("{:.6f}", v)), sample_interval_s=5e-9)
    assert cap.sample_interval_s == 5e-9 and cap.warnings == ()
    assert cap.channel_names == ["CH1"]
    assert cap.layout == "delimited text, one column, no header"


def test_time_column_wins_over_a_disagreeing_argument(tmp_path):
    t, v = saw()
    p = write(tmp_path, "t.csv", "Time,CH1\n" + rows("{:.6e},{:.6f}", t, v))
    cap = load_capture(p, sample_interval_s=3e-6)
    assert cap.sample_interval_s == pytest.approx(DT)
    assert [w.code for w in cap.warnings] == ["interval-ignored"]
    assert load_capture(p, sample_interval_s=DT).warnings == ()  # agreeing: silent


def test_non_uniform_time_column_is_a_warning_naming_the_line(tmp_path):
    t, v = saw()
    t = t.copy()
    t[30] += 0.05 * DT  # 5 % of a sample interval off the grid, on data row 31
    cap = load_capture(write(tmp_path, "jitter.csv", "Time,CH1\n" + rows("{:.9e},{:.6f}", t, v)))
    (w,) = cap.warnings
    assert w.code == "non-uniform-time"
    assert "line 32" in w.message  # header is line 1, data row 31 is line 32
    assert cap.sample_interval_s == pytest.approx(DT, rel=1e-9)


def test_tiny_time_jitter_is_silent(tmp_path):
    t, v = saw()
    t = t + np.where(np.arange(N) % 2, 1e-3 * DT, 0.0)  # 0.1 % of dt: below the 1 % mark
    cap = load_capture(write(tmp_path, "jitter.csv", "Time,CH1\n" + rows("{:.12e},{:.6f}", t, v)))
    assert cap.warnings == ()


def test_latin1_encoded_header(tmp_path):
    t, v = saw()
    text = "Time (s),CH1 (\u00b5V)\n" + rows("{:.6e},{:.6f}", t, v * 1e6)
    cap = load_capture(write(tmp_path, "latin1.csv", text, encoding="cp1252"))
    check_saw(cap, "CH1")


def test_decimal_comma_single_column_with_header(tmp_path):
    t, v = saw()
    text = "Voltage\n" + rows("{:.6f}", v).replace(".", ",")
    cap = load_capture(write(tmp_path, "one.csv", text), sample_interval_s=DT)
    assert cap.channel_names == ["Voltage"]
    check_saw(cap, "Voltage")


def test_lower_case_nan_free_integers_read_as_volts(tmp_path):
    # ADC codes without units: read as volts, unscaled.
    t, v = saw()
    codes = np.round(v * 1000).astype(int)
    cap = load_capture(write(tmp_path, "codes.csv", "t,code\n" + rows("{:.6e},{}", t, codes)))
    np.testing.assert_array_equal(cap.channels["code"], codes.astype(float))


def test_plain_text_read_from_a_stringio_written_file(tmp_path):
    # The same content via the csv module's own writer (reference writer, RFC 4180 dialect).
    import csv
    t, v = saw()
    buf = io.StringIO()
    w = csv.writer(buf)  # default 'excel' dialect: CRLF line ends
    w.writerow(["Time (s)", "CH1 (V)"])
    for a, b in zip(t, v):
        w.writerow([repr(float(a)), repr(float(b))])
    cap = load_capture(write(tmp_path, "csvmod.csv", buf.getvalue()))
    np.testing.assert_array_equal(cap.channels["CH1"], v)


def test_text_capture_with_any_extension(tmp_path):
    t, v = saw()
    cap = load_capture(write(tmp_path, "capture.log", "Time,CH1\n" + rows("{:.6e},{:.6f}", t, v)))
    check_saw(cap, "CH1")
