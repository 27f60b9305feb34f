"""Decimal commas in a file whose fields are separated by commas too.

Each case is written into tmp_path the way a writer set to a decimal-comma
locale would write it: Python's own number formatting (``format(x, "g")``,
``format(x, ".3f")``) with the point replaced by a comma, the fields joined by
the separator named. Ambiguous files must be refused with a CaptureFormatError
naming the file and the line and saying how to export again; unambiguous ones
must read exactly as an independent parser told the dialect reads them:
numpy.loadtxt and pandas.read_csv for plain rows, Python's csv module
(RFC 4180 quoting) for quoted ones. The data is a small sawtooth, 12 samples
per ramp, 1 us per sample (test data, not a reference).
"""

from __future__ import annotations

import csv
import io

import numpy as np
import pandas as pd
import pytest

from trueslope.core import errors as E
from trueslope.core.io import delimited, load_capture

N = 48
DT = 1e-6


def saw(lo: float = 1.1, span: float = 0.4):
    k = np.arange(N)
    return k * DT, lo + span * (k % 12) / 12.0


def comma(x: float, fmt: str) -> str:
    return format(x, fmt).replace(".", ",")


def write(tmp_path, name: str, text: str):
    p = tmp_path / name
    with open(p, "w", encoding="utf-8", newline="") as f:
        f.write(text)
    return p


def refused(path, line: int, *words: str):
    with pytest.raises(E.CaptureFormatError) as info:
        load_capture(path)
    err = info.value
    msg = str(err)
    assert path.name in msg and f"line {line}" in msg and err.line == line, msg
    for w in ("decimal", "semicolon or a tab as the field separator", "point as the decimal mark",
              "export") + words:
        assert w in msg, msg
    return msg


# ---- ambiguous: refused ----------------------------------------------------------------------

def test_header_names_fewer_columns_than_the_rows_have(tmp_path):
    # time 1e-06, voltage "1,015": the row splits into 3 fields under a 2-name header.
    t, v = saw()
    body = "".join(f"{i}e-06,{comma(b, '.3f')}\n" for i, b in enumerate(v))
    assert "." not in body  # times in whole microseconds need no decimal mark
    p = write(tmp_path, "dc_header.csv", "time,voltage\n" + body)
    refused(p, 2, "header on line 1 names 2 columns", "3 fields", "'0e-06,1,100'")


def test_every_value_has_a_fraction_four_fields_for_two_names(tmp_path):
    t, v = saw()
    body = "".join(f"{comma(a, '.6f')},{comma(b, '.3f')}\n" for a, b in zip(t, v))
    p = write(tmp_path, "dc_all.csv", "time,voltage\n" + body)
    refused(p, 2, "names 2 columns", "4 fields", "'0,000000,1,100'")


def test_every_value_has_a_fraction_without_a_header(tmp_path):
    # "0,000001" has a leading zero after the comma: no integer column is written so.
    t, v = saw()
    body = "".join(f"{comma(a, '.6f')},{comma(b, '.3f')}\n" for a, b in zip(t, v))
    p = write(tmp_path, "dc_nohead.csv", body)
    refused(p, 1, "leading zero", "'000000'")


def test_field_count_varies_between_whole_and_fractional_values(tmp_path):
    # "%g" writes 1.0 as "1" and 1.25 as "1,25": 2 fields on some rows, 3 on others.
    k = np.arange(N)
    v = 1.0 + 0.25 * (k % 4)
    body = "".join(f"{i},{comma(b, 'g')}\n" for i, b in zip(k, v))
    p = write(tmp_path, "dc_ragged.csv", "sample,voltage\n" + body)
    refused(p, 3, "line 2 has 2 fields and this row 3", "'1,1,25'")


def test_field_count_varies_in_a_time_column_too(tmp_path):
    t, v = saw(lo=0.5, span=1.0)
    body = "".join(f"{comma(a, 'g')},{comma(b, 'g')}\n" for a, b in zip(t, v))
    p = write(tmp_path, "dc_ragged_t.csv", body)
    refused(p, 7, "line 1 has 3 fields and this row 2", "'6e-06,1'")


def test_clash_after_the_sniffed_head_names_its_line(tmp_path):
    # 1100 rows of whole numbers, then "1,5": found by the block reader, not the sniff.
    rows = [f"{i},{i % 7}\n" for i in range(1100)] + [f"{i},{comma(1.5, 'g')}\n"
                                                       for i in range(1100, 1120)]
    p = write(tmp_path, "dc_late.csv", "t_us,code\n" + "".join(rows))
    refused(p, 1102, "3 fields where the rows above have 2")


def test_clash_across_small_blocks(tmp_path, monkeypatch):
    monkeypatch.setattr(delimited, "BLOCK_BYTES", 4096)
    monkeypatch.setattr(delimited, "MIN_BLOCK_BYTES", 1024)
    rows = [f"{i},{i % 7}\n" for i in range(1100)] + ["1100,1,5\n"] + [
        f"{i},{i % 7}\n" for i in range(1101, 1500)]
    p = write(tmp_path, "dc_late_blocks.csv", "t_us,code\n" + "".join(rows))
    refused(p, 1102)


def test_quoted_values_that_could_be_thousands_are_refused(tmp_path):
    # "1,100" in quotes: 1.1 with a decimal comma, or 1100 with a thousands separator.
    t, v = saw()
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")  # reference writer: quotes what holds a comma
    w.writerow(["time", "voltage"])
    for a, b in zip(t, v):
        w.writerow([format(a, "g"), comma(b, ".3f")])
    p = write(tmp_path, "dc_thousands.csv", buf.getvalue())
    refused(p, 2, "thousands", '1,100')


# ---- unambiguous: read ---------------------------------------------------------------------------

def test_quoted_decimal_commas_round_trip_through_the_csv_module(tmp_path):
    # RFC 4180: the comma inside quotes belongs to the field; "0,5" settles a decimal comma.
    t, v = saw(lo=0.1)
    buf = io.StringIO()
    w = csv.writer(buf)  # reference writer, 'excel' dialect, CRLF
    w.writerow(["Time (s)", "CH1 (V)"])
    for a, b in zip(t, v):
        w.writerow([comma(a, ".6e"), comma(b, ".6f")])
    p = write(tmp_path, "dc_quoted.csv", buf.getvalue())
    cap = load_capture(p)
    ref = [[float(x.replace(",", ".")) for x in r]  # reference parser: the csv module
           for r in list(csv.reader(io.StringIO(buf.getvalue())))[1:]]
    np.testing.assert_array_equal(cap.channels["CH1"], [r[1] for r in ref])
    assert cap.t0_s == ref[0][0]
    assert cap.layout == "delimited text, ',' separated, decimal comma, header"
    assert cap.warnings == ()


def test_only_quoted_values_hold_a_comma(tmp_path):
    # Time unquoted in exponent form, voltage quoted: both read.
    t, v = saw(lo=0.1)
    text = "time,voltage\n" + "".join(f'{i}e-06,"{comma(b, ".4f")}"\n' for i, b in enumerate(v))
    cap = load_capture(write(tmp_path, "dc_mixed.csv", text))
    np.testing.assert_allclose(cap.channels["voltage"], np.round(v, 4), rtol=0, atol=1e-12)


def test_quoted_comma_in_a_name_only_changes_nothing(tmp_path):
    t, v = saw()
    text = '"Time (s)","CH1, probe A (V)"\n' + "".join(f"{a:.6e},{b:.6f}\n" for a, b in zip(t, v))
    p = write(tmp_path, "name.csv", text)
    cap = load_capture(p)
    ref = np.loadtxt(p, delimiter=",", skiprows=1)  # reference parser
    np.testing.assert_array_equal(cap.channels["CH1, probe A"], ref[:, 1])
    assert "decimal comma" not in cap.layout


def test_semicolon_file_with_decimal_commas_is_read(tmp_path):
    t, v = saw()
    body = "".join(f"{comma(a, 'g')};{comma(b, 'g')}\n" for a, b in zip(t, v))
    p = write(tmp_path, "semi.csv", "time;voltage\n" + body)
    cap = load_capture(p)
    ref = pd.read_csv(p, sep=";", decimal=",")  # reference parser, dialect given
    np.testing.assert_array_equal(cap.channels["voltage"], ref["voltage"].to_numpy())
    assert "';' separated, decimal comma" in cap.layout


def test_tab_file_with_decimal_commas_is_read(tmp_path):
    t, v = saw()
    body = "".join(f"{comma(a, '.6f')}\t{comma(b, '.3f')}\n" for a, b in zip(t, v))
    p = write(tmp_path, "tab.txt", "time\tvoltage\n" + body)
    cap = load_capture(p)
    ref = pd.read_csv(p, sep="\t", decimal=",")  # reference parser
    np.testing.assert_array_equal(cap.channels["voltage"], ref["voltage"].to_numpy())


def test_comma_separated_adc_codes_with_a_header(tmp_path):
    k = np.arange(N)
    a, b = 40 + 17 * (k % 12), 900 - 13 * (k % 12)
    text = "CH1,CH2\n" + "".join(f"{x},{y}\n" for x, y in zip(a, b))
    p = write(tmp_path, "codes.csv", text)
    cap = load_capture(p, sample_interval_s=DT)
    ref = np.loadtxt(p, delimiter=",", skiprows=1)  # reference parser
    np.testing.assert_array_equal(cap.channels["CH1"], ref[:, 0])
    np.testing.assert_array_equal(cap.channels["CH2"], ref[:, 1])


def test_comma_separated_adc_codes_without_a_header(tmp_path):
    k = np.arange(N)
    text = "".join(f"{i},{40 + 17 * (i % 12)},{900 - 13 * (i % 12)}\n" for i in k)
    p = write(tmp_path, "codes3.csv", text)
    cap = load_capture(p, sample_interval_s=DT)
    ref = np.loadtxt(p, delimiter=",")  # reference parser
    np.testing.assert_array_equal(cap.channels[cap.channel_names[0]], ref[:, 1])


def test_zero_padded_codes_in_every_column_are_not_fractions(tmp_path):
    # A writer that zero-pads pads the first column too: no integer part is written "0007".
    k = np.arange(N)
    text = "".join(f"{40 + 17 * (i % 12):04d},{900 - 13 * (i % 12):04d}\n" for i in k)
    p = write(tmp_path, "padded.csv", text)
    cap = load_capture(p, sample_interval_s=DT)
    ref = np.loadtxt(p, delimiter=",")  # reference parser
    np.testing.assert_array_equal(cap.channels["CH1"], ref[:, 0])


def test_integers_under_a_header_with_a_name_for_every_field(tmp_path):
    # "1e-06,1,015" under three names is three numbers: the header settles it.
    t, v = saw()
    text = "time,whole,frac\n" + "".join(
        f"{a:g},{int(b)},{int(round((b % 1) * 1000)):03d}\n" for a, b in zip(t, v))
    p = write(tmp_path, "three.csv", text)
    cap = load_capture(p)
    ref = pd.read_csv(p)  # reference parser
    np.testing.assert_array_equal(cap.channels["frac"], ref["frac"].to_numpy())


def test_a_real_extra_column_with_decimal_points(tmp_path):
    # Two names, three columns, but decimal points: the comma is only a separator.
    t, v = saw()
    text = "time,voltage\n" + "".join(f"{a:.6e},{b:.6f},{i % 3}\n" for i, (a, b)
                                      in enumerate(zip(t, v)))
    p = write(tmp_path, "extra.csv", text)
    cap = load_capture(p)
    ref = np.loadtxt(p, delimiter=",", skiprows=1)  # reference parser
    np.testing.assert_array_equal(cap.channels[cap.channel_names[0]], ref[:, 1])


def test_point_decimal_csv_is_unchanged(tmp_path):
    t, v = saw()
    text = "time,voltage\n" + "".join(f"{a:g},{b:.3f}\n" for a, b in zip(t, v))
    p = write(tmp_path, "point.csv", text)
    cap = load_capture(p)
    ref = pd.read_csv(p)  # reference parser
    np.testing.assert_array_equal(cap.channels["voltage"], ref["voltage"].to_numpy())
    assert cap.layout == "delimited text, ',' separated, header"
