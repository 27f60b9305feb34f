"""Bad capture files: each gets its typed error naming the file, the line and
what was expected; nothing else ever leaves load_capture.

Line numbers are 1-based physical lines of the file, preamble and header
counted. Policy under test: every non-finite sample (NaN, infinity, an empty
field), even a single isolated one, is a NonFiniteDataError.
"""

from __future__ import annotations

import numpy as np
import pytest

from trueslope.core import errors as E
from trueslope.core.io import delimited, load_capture

N = 48


def saw(n: int = N):
    k = np.arange(n)
    return k * 1e-6, 0.1 + 0.4 * (k % 12) / 12.0


def data_rows(n: int = N) -> list[str]:
    t, v = saw(n)
    return [f"{a:.6e},{b:.6f}\n" for a, b in zip(t, v)]


def write(tmp_path, name, content):
    p = tmp_path / name
    if isinstance(content, bytes):
        p.write_bytes(content)
    else:
        with open(p, "w", encoding="utf-8", newline="") as f:
            f.write(content)
    return p


def raises(cls, path, *words, line=None, **kw):
    with pytest.raises(cls) as info:
        load_capture(path, **kw)
    err = info.value
    msg = str(err)
    assert path.name in msg, msg
    for w in words:
        assert w in msg, msg
    if line is not None:
        assert err.line == line, msg
        assert f"line {line}" in msg, msg
    assert isinstance(err, E.TrueslopeError)
    return err


# A preamble of 2 lines and a header: data row r (1-based) is on line r + 3.
PRE = "Model,bench scope\nProbe,10x\nTime (s),CH1 (V)\n"


def test_empty_file(tmp_path):
    raises(E.EmptyCaptureError, write(tmp_path, "empty.csv", b""), "empty")


def test_only_blank_lines(tmp_path):
    raises(E.EmptyCaptureError, write(tmp_path, "blank.csv", "\n\n   \r\n\n"), "blank")


def test_header_without_rows(tmp_path):
    raises(E.EmptyCaptureError, write(tmp_path, "hdr.csv", PRE), "no rows of numbers")


def test_prose_is_not_a_capture(tmp_path):
    raises(E.EmptyCaptureError, write(tmp_path, "notes.txt", "Bench notes\nramp looked fine\n"),
           "no rows of numbers")


def test_ragged_row_names_its_line_and_field_counts(tmp_path):
    r = data_rows(60)
    r[53 - 4] = "5.3e-05,0.2,0.3\n"  # data row 50 -> line 53
    err = raises(E.RaggedRowsError, write(tmp_path, "ragged.csv", PRE + "".join(r)),
                 "3 fields", "expected 2", line=53)
    assert isinstance(err, E.CaptureFormatError) and isinstance(err, ValueError)


def test_short_row_in_the_middle_is_ragged_not_truncated(tmp_path):
    r = data_rows()
    r[20] = "2.1e-05\n"
    raises(E.RaggedRowsError, write(tmp_path, "short.csv", PRE + "".join(r)),
           "1 field", "expected 2", line=24)


@pytest.mark.parametrize("bad", ["abc", "1.2.3", "0x10", "1,5", "N/A"])
def test_field_that_is_not_a_number(tmp_path, bad):
    r = data_rows()
    r[29] = f"2.9e-05;{bad}\n".replace(";", ",", 1)
    err = raises(E.CaptureFormatError, write(tmp_path, "text.csv", PRE + "".join(r)), line=33)
    assert isinstance(err, (E.CaptureFormatError, E.RaggedRowsError))


def test_field_that_is_not_a_number_names_the_column(tmp_path):
    r = data_rows()
    r[29] = "2.9e-05,abc\n"
    err = raises(E.CaptureFormatError, write(tmp_path, "text.csv", PRE + "".join(r)),
                 "'abc'", "not a number", "column 2", line=33)
    assert err.column == 2


def test_time_going_backwards(tmp_path):
    r = data_rows()
    r[40] = "3.0e-05,0.2\n"  # data row 41 -> line 44, earlier than row 40
    raises(E.TimeAxisError, write(tmp_path, "back.csv", PRE + "".join(r)), "backwards", line=44)


def test_time_repeating(tmp_path):
    r = data_rows()
    r[40] = r[39]
    raises(E.TimeAxisError, write(tmp_path, "rep.csv", PRE + "".join(r)), "repeats",
           "line 43", line=44)


def test_nan_run_names_the_line_range(tmp_path):
    r = data_rows()
    for i in range(19, 24):  # data rows 20-24 -> lines 23-27
        r[i] = f"{i * 1e-6:.6e},NaN\n"
    raises(E.NonFiniteDataError, write(tmp_path, "nan.csv", PRE + "".join(r)),
           "lines 23-27", "CH1", line=23)


def test_infinity_is_refused(tmp_path):
    r = data_rows()
    r[10] = "1.0e-05,inf\n"
    raises(E.NonFiniteDataError, write(tmp_path, "inf.csv", PRE + "".join(r)), line=14)


def test_single_blank_field_is_refused_too(tmp_path):
    r = data_rows()
    r[30] = "3.0e-05,\n"
    raises(E.NonFiniteDataError, write(tmp_path, "blank_field.csv", PRE + "".join(r)),
           "empty field", line=34)


def test_nan_in_the_time_column(tmp_path):
    r = data_rows()
    r[5] = "nan,0.2\n"
    raises(E.NonFiniteDataError, write(tmp_path, "tnan.csv", PRE + "".join(r)), "Time", line=9)


def test_several_nan_runs_are_counted(tmp_path):
    r = data_rows()
    r[5] = "5e-06,nan\n"
    r[30] = "3e-05,nan\n"
    raises(E.NonFiniteDataError, write(tmp_path, "nans.csv", PRE + "".join(r)),
           "2 rows in all", line=9)


def test_too_few_samples(tmp_path):
    raises(E.TooFewSamplesError, write(tmp_path, "few.csv", PRE + "".join(data_rows(10))),
           "10 samples", "16")


def test_fifteen_samples_too_few_sixteen_enough(tmp_path):
    raises(E.TooFewSamplesError, write(tmp_path, "15.csv", PRE + "".join(data_rows(15))))
    assert load_capture(write(tmp_path, "16.csv", PRE + "".join(data_rows(16)))).samples == 16


def test_unknown_unit_names_file_line_column_and_what_is_accepted(tmp_path):
    p = write(tmp_path, "furlong.csv", "Model,x\nTime (s),CH1 (furlong)\n" + "".join(data_rows()))
    err = raises(E.UnknownUnitError, p, "furlong", "column 2", "mV", "us", line=2)
    assert err.column == 2


def test_unknown_unit_in_a_units_row(tmp_path):
    p = write(tmp_path, "units.csv", "Time,CH1\ns,furlong\n" + "".join(data_rows()))
    # "furlong" is no unit, so that row is taken as the names and the first as preamble:
    # the capture reads, named by the second row.
    cap = load_capture(p)
    assert cap.channel_names == ["furlong"]


def test_no_time_no_interval(tmp_path):
    _, v = saw()
    p = write(tmp_path, "bare.csv", "CH1\n" + "".join(f"{x:.6f}\n" for x in v))
    raises(E.NoSampleIntervalError, p, "no time column", "Give the sample interval")


def test_bad_sample_interval_argument(tmp_path):
    p = write(tmp_path, "ok.csv", PRE + "".join(data_rows()))
    for bad in (0.0, -1e-6, float("nan"), float("inf"), "abc"):
        with pytest.raises(E.SettingsError):
            load_capture(p, sample_interval_s=bad)  # type: ignore[arg-type]


def test_truncated_last_line_with_fewer_fields_is_a_warning(tmp_path):
    r = data_rows()
    p = write(tmp_path, "trunc.csv", PRE + "".join(r) + "4.8e-05")  # line 52, no newline
    cap = load_capture(p)
    assert cap.samples == N
    (w,) = cap.warnings
    assert w.code == "truncated-last-line" and "line 52" in w.message


def test_truncated_last_line_with_newline_is_a_warning_too(tmp_path):
    p = write(tmp_path, "trunc.csv", PRE + "".join(data_rows()) + "4.8e-05\n\n")
    cap = load_capture(p)
    assert cap.samples == N
    assert [w.code for w in cap.warnings] == ["truncated-last-line"]


def test_number_cut_short_at_the_end_is_a_warning(tmp_path):
    p = write(tmp_path, "cut.csv", PRE + "".join(data_rows()) + "4.800000e-05,0.12")
    cap = load_capture(p)
    assert cap.samples == N
    assert [w.code for w in cap.warnings] == ["truncated-last-line"]
    assert "cut short" in cap.warnings[0].message


@pytest.mark.parametrize("tail", ["4.800000e-05,0.1e", "4.800000e-05,-", "4.8e-05,1.2e+"])
def test_incomplete_number_at_the_end_is_a_warning(tmp_path, tail):
    cap = load_capture(write(tmp_path, "cut.csv", PRE + "".join(data_rows()) + tail))
    assert cap.samples == N
    assert [w.code for w in cap.warnings] == ["truncated-last-line"]


def test_complete_last_line_without_newline_is_kept(tmp_path):
    p = write(tmp_path, "full.csv", PRE + "".join(data_rows()) + "4.800000e-05,0.123457")
    cap = load_capture(p)
    assert cap.samples == N + 1 and cap.warnings == ()


def test_binary_garbage(tmp_path):
    junk = np.random.default_rng(1).bytes(4096)
    raises(E.CaptureFormatError, write(tmp_path, "junk.csv", junk), "binary")


def test_binary_garbage_without_nul_bytes(tmp_path):
    junk = bytes(b for b in np.random.default_rng(2).bytes(8192) if b)  # no NUL at all
    raises(E.CaptureFormatError, write(tmp_path, "junk.dat", junk), "binary")


def test_utf16_text_is_explained(tmp_path):
    p = write(tmp_path, "u16.csv", (PRE + "".join(data_rows())).encode("utf-16"))
    raises(E.CaptureFormatError, p, "UTF-16")


def test_bare_carriage_returns_are_explained(tmp_path):
    p = write(tmp_path, "mac.csv", (PRE + "".join(data_rows())).replace("\n", "\r"))
    raises(E.CaptureFormatError, p, "carriage return")


@pytest.mark.parametrize("name", ["x.npy", "x.wav"])
def test_extension_without_its_content(tmp_path, name):
    p = write(tmp_path, name, PRE + "".join(data_rows()))
    raises(E.CaptureFormatError, p, name[-4:])


def test_missing_file_and_folder(tmp_path):
    with pytest.raises(E.CaptureReadError, match="no such file"):
        load_capture(tmp_path / "absent.csv")
    with pytest.raises(E.CaptureReadError, match="folder"):
        load_capture(tmp_path)
    with pytest.raises(E.CaptureReadError):
        load_capture(12345)  # type: ignore[arg-type]


def test_all_empty_columns_are_an_empty_capture(tmp_path):
    p = write(tmp_path, "hollow.csv", "CH1,CH2\n" + "1,\n" * 20)
    # Column 2 is empty and dropped; column 1 holds only 1 -> a channel, but no interval.
    raises(E.NoSampleIntervalError, p)
    cap = load_capture(p, sample_interval_s=1e-6)
    assert cap.channel_names == ["CH1"]
    assert [w.code for w in cap.warnings] == ["empty-column"]


def test_only_an_index_column(tmp_path):
    p = write(tmp_path, "index.csv", "n\n" + "".join(f"{i}\n" for i in range(40)))
    raises(E.EmptyCaptureError, p, "no channel", sample_interval_s=1e-6)


def test_only_a_time_column(tmp_path):
    t, _ = saw()
    p = write(tmp_path, "time.csv", "Time (s)\n" + "".join(f"{x:.6e}\n" for x in t))
    raises(E.EmptyCaptureError, p, "no voltage channel")


@pytest.fixture
def small_blocks(monkeypatch):
    """Blocks of a few hundred bytes, so small files cross many block borders."""
    monkeypatch.setattr(delimited, "BLOCK_BYTES", 300)
    monkeypatch.setattr(delimited, "MIN_BLOCK_BYTES", 300)


def test_line_numbers_stay_right_across_blocks(tmp_path, small_blocks):
    r = data_rows(400)
    r[350] = "3.5e-04,0.2,0.3\n"
    raises(E.RaggedRowsError, write(tmp_path, "deep.csv", PRE + "".join(r)), line=354)


def test_nan_line_numbers_across_blocks_with_blank_lines(tmp_path, small_blocks):
    r = data_rows(400)
    r[100] = "\n" + r[100]  # a blank line inside the data shifts what follows by one
    r[300] = f"{300e-6:.6e},nan\n"
    raises(E.NonFiniteDataError, write(tmp_path, "deep.csv", PRE + "".join(r)), line=305)


def test_time_error_line_across_blocks(tmp_path, small_blocks):
    r = data_rows(400)
    r[250] = r[249]
    raises(E.TimeAxisError, write(tmp_path, "deep.csv", PRE + "".join(r)), line=254)


def test_whitespace_only_lines_inside_data_are_skipped(tmp_path, small_blocks):
    r = data_rows(200)
    r[50] = "   \n" + r[50]
    cap = load_capture(write(tmp_path, "ws.csv", PRE + "".join(r)))
    assert cap.samples == 200


def test_mixed_trailing_delimiters_are_read(tmp_path):
    r = data_rows()
    r = [x.replace("\n", ",\n") if i % 3 == 0 else x for i, x in enumerate(r)]
    cap = load_capture(write(tmp_path, "mixed.csv", PRE + "".join(r)))
    assert cap.samples == N and cap.channel_names == ["CH1"]


def test_space_separated_ragged_row(tmp_path):
    t, v = saw()
    r = [f"{a:.6e}  {b:.6f}\n" for a, b in zip(t, v)]
    r[30] = "3.0e-05\n"
    raises(E.RaggedRowsError, write(tmp_path, "ws.dat", "t v\n" + "".join(r)),
           "1 field", line=32)


def test_space_separated_bad_number(tmp_path):
    t, v = saw()
    r = [f"{a:.6e}  {b:.6f}\n" for a, b in zip(t, v)]
    r[30] = "3.0e-05  x\n"
    raises(E.CaptureFormatError, write(tmp_path, "ws.dat", "t v\n" + "".join(r)), "'x'", line=32)


def test_mangled_files_raise_only_family_errors(tmp_path):
    """Cut and corrupted copies of a good file either read or raise a family error."""
    good = (PRE + "".join(data_rows(60))).encode()
    rng = np.random.default_rng(3)
    variants = [good[:n] for n in range(0, len(good), 41)]
    for _ in range(40):
        b = bytearray(good)
        for i in rng.integers(0, len(b), size=int(rng.integers(1, 6))):
            b[i] = int(rng.integers(0, 256))
        variants.append(bytes(b))
    for i, content in enumerate(variants):
        p = write(tmp_path, f"v{i}.csv", content)
        try:
            load_capture(p, sample_interval_s=1e-6)
        except E.TrueslopeError as exc:
            assert p.name in str(exc)


def test_megabyte_without_a_line_end(tmp_path):
    p = write(tmp_path, "oneline.csv", ",".join(str(i) for i in range(300_000)))
    raises(E.CaptureFormatError, p, "no line end")


def test_error_messages_name_the_file_only_by_its_name(tmp_path):
    # The message stays short: the file's name, not its whole folder path.
    p = write(tmp_path, "few.csv", PRE + "".join(data_rows(5)))
    with pytest.raises(E.TooFewSamplesError) as info:
        load_capture(p)
    assert str(info.value).startswith("few.csv: ")
    assert info.value.path == str(p)
