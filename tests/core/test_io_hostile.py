"""Hostile inputs to the readers (issue #9): files that are not files, files
built to exhaust time or memory, headers with impossible fields, and samples
no bench can produce.

Every refusal must be a member of the trueslope error family, one line,
naming the file, in words rather than Python's exception text; and no input
file may change. Outside references, named beside the checks that use them:

* POSIX ``stat`` file types, through Python's :mod:`stat` and :func:`os.mkfifo`;
* the RIFF WAVE specification (IBM/Microsoft, "Multimedia Programming Interface
  and Data Specifications 1.0", 1991): a ``RIFF`` header, then chunks of
  4-byte id and little-endian 32-bit size; the 16-byte ``fmt `` body
  ``<HHIIHH`` = format tag, channels, sample rate, byte rate, block align,
  bits per sample; block align = channels x bytes per sample;
* the NPY format (NEP 1, "A simple file format for NumPy arrays", and
  :mod:`numpy.lib.format`): the magic ``\\x93NUMPY``, two version bytes, a
  little-endian header length (2 bytes in version 1.0, 4 bytes in 2.0), then
  a Python literal dict padded with spaces and ending in a newline.
"""

from __future__ import annotations

import os
import re
import stat
import struct
import threading

import numpy as np
import pytest

from trueslope.core import errors as E
from trueslope.core.io import _files, delimited, dialect, load_capture
from trueslope.core.io._assemble import (MAX_ABS_TIME_S, MAX_ABS_VOLTS, MAX_COLUMNS,
                                         MAX_INTERVAL_S, MIN_INTERVAL_S)
from trueslope.core.io._fields import MAX_LINE_BYTES

_PY_WORDS = re.compile(r"\b\w*(Error|Exception)\b|Traceback|local variable|\bmodulo\b")


def _refusal(exc: BaseException, name: str) -> str:
    """The rules every refusal follows; returns its message."""
    assert isinstance(exc, E.TrueslopeError), type(exc)
    text = str(exc)
    assert "\n" not in text, text
    assert name in text, text
    assert not _PY_WORDS.search(text), text
    return text


def _snapshot(path):
    st = os.stat(path)
    return path.read_bytes(), st.st_mtime_ns, st.st_size


def refused(path, cls, *words, **kw):
    """Load ``path``, expect ``cls``; the file must be unchanged afterwards."""
    before = _snapshot(path)
    with pytest.raises(cls) as info:
        load_capture(path, **kw)
    assert _snapshot(path) == before
    text = _refusal(info.value, path.name)
    for w in words:
        assert w in text, (w, text)
    return info.value


def loaded(path, **kw):
    before = _snapshot(path)
    cap = load_capture(path, **kw)
    assert _snapshot(path) == before
    return cap


def ramp_rows(n=64, cols=1):
    return "".join(",".join(f"{0.1 + 0.01 * (k % 12) + j:.4f}" for j in range(cols)) + "\n"
                   for k in range(n))


@pytest.fixture
def no_block_reader(monkeypatch):
    """Fails the test if the block reader is reached: proves a refusal at the sniff."""
    def reached(*a, **k):
        raise AssertionError("the block reader was reached")
    monkeypatch.setattr(delimited, "_read_data", reached)


# --- not regular files (POSIX file types, Python's stat module) -------------------------

def _load_in_thread(path, timeout=10.0):
    out: dict = {}

    def run():
        try:
            out["result"] = load_capture(path)
        except BaseException as exc:  # noqa: BLE001 - handed to the test
            out["exc"] = exc

    t = threading.Thread(target=run, daemon=True)
    t.start()
    t.join(timeout)
    assert not t.is_alive(), "load_capture blocked on a FIFO"
    return out


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="no FIFOs on this system")
def test_fifo_is_refused_without_blocking(tmp_path):
    p = tmp_path / "capture.csv"
    os.mkfifo(p)
    out = _load_in_thread(p)
    assert isinstance(out.get("exc"), E.CaptureReadError), out
    text = _refusal(out["exc"], "capture.csv")
    assert "not a regular file" in text and "FIFO" in text
    assert stat.S_ISFIFO(os.stat(p).st_mode)  # left as it was


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="no FIFOs on this system")
def test_fifo_swapped_in_after_the_check_does_not_block(tmp_path, monkeypatch):
    # Even past the stat check, the non-blocking open and fstat refuse it.
    p = tmp_path / "swap.npy"
    os.mkfifo(p)
    monkeypatch.setattr(_files, "check_regular", lambda path: None)
    done: dict = {}

    def run():
        try:
            _files.open_regular(str(p))
        except E.CaptureReadError as exc:
            done["exc"] = exc

    t = threading.Thread(target=run, daemon=True)
    t.start()
    t.join(10.0)
    assert not t.is_alive(), "open_regular blocked on a FIFO"
    assert "FIFO" in str(done["exc"])


@pytest.mark.parametrize("device", ["/dev/zero", "/dev/urandom", "/dev/null"])
def test_devices_are_not_captures(device):
    if not os.path.exists(device):
        pytest.skip(f"{device} does not exist here")
    with pytest.raises(E.CaptureReadError) as info:
        load_capture(device)
    text = _refusal(info.value, os.path.basename(device))
    assert "not a regular file" in text and "device" in text


def test_a_system_file_under_proc_is_not_called_empty():
    p = "/proc/self/status"
    if not os.path.exists(p) or os.stat(p).st_size != 0:
        pytest.skip("no /proc file reporting 0 bytes here")
    with pytest.raises(E.CaptureReadError) as info:
        load_capture(p)
    text = _refusal(info.value, "status")
    assert "empty" not in text and "system file" in text


def test_a_folder_is_still_called_a_folder(tmp_path):
    with pytest.raises(E.CaptureReadError, match="folder"):
        load_capture(tmp_path)


# --- time and memory: bounds met before anything is parsed ---------------------------

def test_megabyte_line_of_fields_is_refused_before_the_sniff(tmp_path, monkeypatch,
                                                              no_block_reader):
    def sniffed(*a, **k):
        raise AssertionError("the sniff split the long line")
    monkeypatch.setattr(delimited, "sniff_lines", sniffed)
    p = tmp_path / "wide.csv"
    p.write_bytes(b"1," * 524_000 + b"\n")
    err = refused(p, E.CaptureFormatError, f"{MAX_LINE_BYTES // 1024} KiB", "','")
    assert err.line == 1


def test_many_columns_of_long_lines_are_refused_before_the_sniff(tmp_path, monkeypatch,
                                                                 no_block_reader):
    monkeypatch.setattr(delimited, "sniff_lines",
                        lambda *a, **k: pytest.fail("the sniff split a 300 KiB line"))
    rng = np.random.default_rng(9)
    p = tmp_path / "grid.csv"
    with open(p, "w") as f:
        for _ in range(20):
            f.write(",".join(f"{v:.3f}" for v in rng.random(50_000)) + "\n")
    err = refused(p, E.CaptureFormatError, "fields separated by ','")
    assert err.line == 1


def test_short_wide_rows_are_refused_by_the_sniff_with_line_and_count(tmp_path,
                                                                      no_block_reader):
    p = tmp_path / "wide_rows.csv"
    p.write_text("# export\n" + ramp_rows(30, cols=MAX_COLUMNS + 36))
    err = refused(p, E.CaptureFormatError, f"{MAX_COLUMNS + 36} numbers", f"{MAX_COLUMNS}")
    assert err.line == 2


def test_wide_rows_separated_by_spaces_too(tmp_path, no_block_reader):
    p = tmp_path / "wide.dat"
    p.write_text(ramp_rows(30, cols=200).replace(",", " "))
    refused(p, E.CaptureFormatError, "200 numbers separated by spaces")


def test_the_column_bound_itself(tmp_path):
    ok = tmp_path / "edge.csv"
    ok.write_text(ramp_rows(40, cols=MAX_COLUMNS))
    assert len(loaded(ok, sample_interval_s=1e-6).channels) == MAX_COLUMNS
    over = tmp_path / "over.csv"
    over.write_text(ramp_rows(40, cols=MAX_COLUMNS + 1))
    refused(over, E.CaptureFormatError, f"{MAX_COLUMNS + 1} numbers", sample_interval_s=1e-6)


def test_a_long_line_past_the_head_is_refused_where_it_is(tmp_path):
    rows = ramp_rows(12_000, cols=2)
    p = tmp_path / "late.csv"
    p.write_text("a,b\n" + rows + "1," * 40_000 + "\n" + rows)
    assert len(rows) > 64 * 1024  # past the head the sniff reads
    err = refused(p, E.CaptureFormatError, "KiB", sample_interval_s=1e-6)
    assert err.line == 12_002


def test_a_long_preamble_line_is_refused(tmp_path, no_block_reader):
    p = tmp_path / "chatty.csv"
    p.write_text("Note: " + "word " * 20_000 + "\n" + ramp_rows())
    assert refused(p, E.CaptureFormatError, "KiB").line == 1


# --- WAV: fields built byte by byte per the RIFF WAVE specification ------------------

def riff(path, *chunks, riff_size=None):
    body = b"WAVE" + b"".join(chunks)
    size = len(body) if riff_size is None else riff_size
    path.write_bytes(b"RIFF" + struct.pack("<I", size) + body)
    return path


def chunk(cid: bytes, body: bytes, size=None):
    n = len(body) if size is None else size
    return cid + struct.pack("<I", n) + body + (b"\0" if len(body) % 2 else b"")


def fmt(tag=1, channels=1, rate=48_000, bits=16, align=None):
    width = (bits + 7) // 8
    align = channels * width if align is None else align
    return chunk(b"fmt ", struct.pack("<HHIIHH", tag, channels, rate, rate * align, align, bits))


def pcm16(n=480):
    k = np.arange(n)
    return (np.round((-0.5 + (k % 48) / 48.0) * 32767).astype("<i2")).tobytes()


@pytest.mark.parametrize("fields, words", [
    (dict(channels=0), "0 channels"),
    (dict(align=0), "block align"),
    (dict(bits=0, align=2), "0 bits per sample"),
    (dict(bits=40, align=5), "40 bits per sample"),
    (dict(tag=3, bits=16), "16-bit float"),
    (dict(tag=0x55), "format tag 0x0055"),
    (dict(rate=0), "sample rate of 0 Hz"),
    (dict(channels=2, align=2), "requires 4"),
    (dict(channels=MAX_COLUMNS + 1), f"{MAX_COLUMNS + 1} channels"),
])
def test_impossible_fmt_fields_are_refused(tmp_path, fields, words):
    p = riff(tmp_path / "bad.wav", fmt(**fields), chunk(b"data", pcm16()))
    refused(p, E.CaptureFormatError, words)


def test_data_claiming_two_gigabytes_in_six_kilobytes_reads_what_is_there(tmp_path):
    data = pcm16(3000)
    p = riff(tmp_path / "liar.wav", fmt(), chunk(b"data", data, size=2**31))
    cap = loaded(p)
    assert cap.samples == 3000  # whole frames present, none invented
    (w,) = [w for w in cap.warnings if w.code == "truncated-data"]
    assert str(2**31) in w.message and "6000" in w.message and "3000" in w.message
    assert w.code in E.WARNING_CODES


def test_a_data_chunk_of_half_a_frame_is_empty(tmp_path):
    p = riff(tmp_path / "half.wav", fmt(channels=2), chunk(b"data", b"\1\0"))
    refused(p, E.EmptyCaptureError, "no whole frame")


def test_data_before_fmt_and_missing_chunks(tmp_path):
    p = riff(tmp_path / "order.wav", chunk(b"data", pcm16()), fmt())
    refused(p, E.CaptureFormatError, "before its 'fmt ' chunk")
    p = riff(tmp_path / "nodata.wav", fmt())
    refused(p, E.CaptureFormatError, "no data chunk")
    p = riff(tmp_path / "nofmt.wav", chunk(b"LIST", b"INFOtext"))
    refused(p, E.CaptureFormatError, "no 'fmt ' chunk")


def test_a_chunk_cut_short_before_the_data(tmp_path):
    p = riff(tmp_path / "cut.wav", fmt(), chunk(b"LIST", b"INFO", size=10**6))
    refused(p, E.CaptureFormatError, "'LIST' chunk", "cut short")


def test_a_short_fmt_chunk(tmp_path):
    p = riff(tmp_path / "short.wav", chunk(b"fmt ", b"\1\0\1\0"), chunk(b"data", pcm16()))
    refused(p, E.CaptureFormatError, "needs 16")


def test_a_valid_hand_built_wav_reads_like_the_specification_says(tmp_path):
    data = pcm16()
    p = riff(tmp_path / "good.wav", fmt(), chunk(b"LIST", b"INFOabc"), chunk(b"data", data))
    cap = loaded(p)
    np.testing.assert_array_equal(cap.channels["CH1"],
                                  np.frombuffer(data, "<i2") / 32768.0)


def test_float_wav_with_an_absurd_sample(tmp_path):
    v = np.full(64, 0.25, dtype="<f4")
    v[10] = 1e30
    p = riff(tmp_path / "loud.wav", fmt(tag=3, bits=32), chunk(b"data", v.tobytes()))
    refused(p, E.OutOfRangeError, "sample index 10", f"{MAX_ABS_VOLTS:g}")


# --- NPY headers built per NEP 1 ---------------------------------------------------

def npy(path, header: str, data: bytes = b"", version=1, length=None):
    raw = header.encode("latin-1")
    width = 2 if version == 1 else 4
    n = len(raw) if length is None else length
    path.write_bytes(b"\x93NUMPY" + bytes([version, 0])
                     + n.to_bytes(width, "little") + raw + data)
    return path


def _dict(descr="'<f8'", shape="(64,)"):
    return f"{{'descr': {descr}, 'fortran_order': False, 'shape': {shape}, }}"


def test_garbage_header_is_refused_in_words(tmp_path):
    p = npy(tmp_path / "garbage.npy", "{'descr': '<f8', 'shape': ((,}\n")
    refused(p, E.CaptureFormatError, "header is damaged")


def test_padded_65_kb_header_of_a_valid_array_is_read(tmp_path):
    v = 0.1 + 0.4 * (np.arange(64) % 12) / 12.0
    head = _dict() + " " * 65_000
    head += " " * ((-(12 + len(head) + 1)) % 64) + "\n"  # aligned as NEP 1 asks
    p = npy(tmp_path / "padded.npy", head, v.astype("<f8").tobytes(), version=2)
    np.testing.assert_array_equal(loaded(p, sample_interval_s=1e-6).channels["CH1"], v)


def test_object_array_behind_a_big_header_is_called_pickled(tmp_path):
    head = _dict(descr="'|O'") + " " * 70_000 + "\n"
    p = npy(tmp_path / "obj.npy", head, b"\x80\x04N." * 64, version=2)
    refused(p, E.CaptureFormatError, "pickled")


def test_header_claiming_megabytes_is_refused_before_parsing(tmp_path):
    p = npy(tmp_path / "huge.npy", _dict() + "\n", version=2, length=2**31)
    refused(p, E.CaptureFormatError, "header claims")


def test_shape_larger_than_the_file(tmp_path):
    p = npy(tmp_path / "overflow.npy", _dict(shape="(99999999999999999999,)") + "\n",
            b"\0" * 512)
    refused(p, E.CaptureFormatError, "cut short", "512 bytes")


def test_negative_shape(tmp_path):
    p = npy(tmp_path / "neg.npy", _dict(shape="(-5,)") + "\n", b"\0" * 64)
    refused(p, E.CaptureFormatError, "negative shape")


def test_npy_with_too_many_channels_either_way(tmp_path):
    p = tmp_path / "square.npy"
    np.save(p, np.zeros((100, 100)))
    refused(p, E.CaptureFormatError, f"at most {MAX_COLUMNS}", sample_interval_s=1e-6)


def test_npy_version_byte_out_of_range(tmp_path):
    p = npy(tmp_path / "v9.npy", _dict() + "\n", b"\0" * 512, version=9)
    refused(p, E.CaptureFormatError, "version")


def test_npy_of_absurd_values(tmp_path):
    p = tmp_path / "big.npy"
    np.save(p, np.full(64, 1e300))
    refused(p, E.OutOfRangeError, "1e+300 V", sample_interval_s=1e-6)


# --- magnitudes no bench produces ---------------------------------------------------

def test_megavolt_sample_names_value_line_and_range(tmp_path):
    rows = ramp_rows(64).splitlines()
    rows[20] = "2.5e6"
    p = tmp_path / "mv.csv"
    p.write_text("CH1\n" + "\n".join(rows) + "\n")
    err = refused(p, E.OutOfRangeError, "2.5e+06 V", f"{MAX_ABS_VOLTS:g} V",
                  sample_interval_s=1e-6)
    assert err.line == 22 and err.column == 1


def test_value_that_overflows_when_scaled_by_its_unit(tmp_path):
    rows = "".join(f"{k * 1e-6:.6e},{v}\n" for k, v in enumerate(["1e305"] + ["0.1"] * 63))
    p = tmp_path / "kv.csv"
    p.write_text("time (s),CH1 (kV)\n" + rows)
    err = refused(p, E.OutOfRangeError, "1e+305 in the column's unit")
    assert err.line == 2 and err.column == 2


def test_time_steps_of_1e300_seconds(tmp_path):
    rows = "".join(f"{k * 1e300:.6e},{0.1 + 0.01 * (k % 12)}\n" for k in range(64))
    p = tmp_path / "slow.csv"
    p.write_text("time,CH1\n" + rows)
    refused(p, E.OutOfRangeError, "1e+300 s", f"{MAX_ABS_TIME_S:g} s")


def test_time_steps_below_a_femtosecond(tmp_path):
    rows = "".join(f"{k * 1e-18:.6e},{0.1 + 0.01 * (k % 12)}\n" for k in range(64))
    p = tmp_path / "fast.csv"
    p.write_text("time,CH1\n" + rows)
    refused(p, E.OutOfRangeError, "1e-18 s", f"{MIN_INTERVAL_S:g} s")


@pytest.mark.parametrize("entry", ["dt: 1e300", "Sample interval [us]: 1e308", "fs: 1e40"])
def test_preamble_interval_out_of_range(tmp_path, entry):
    p = tmp_path / "pre.csv"
    p.write_text(entry + "\nCH1\n" + ramp_rows())
    refused(p, E.OutOfRangeError, "preamble entry", f"{MAX_INTERVAL_S:g} s")


@pytest.mark.parametrize("dt", [1e-20, 1e6])
def test_given_interval_out_of_range_is_a_settings_error(tmp_path, dt):
    p = tmp_path / "given.csv"
    p.write_text("CH1\n" + ramp_rows())
    with pytest.raises(E.SettingsError, match="outside what a bench instrument") as info:
        load_capture(p, sample_interval_s=dt)
    assert info.value.field == "sample_interval"  # the caller words the option or label


# --- the reader boundary ------------------------------------------------------------

def test_an_unexpected_exception_is_translated_without_its_text(tmp_path, monkeypatch):
    import trueslope.core.io as io_pkg

    def broken(path, **kw):
        return 1 // 0

    monkeypatch.setattr(io_pkg, "read_delimited", broken)
    p = tmp_path / "any.csv"
    p.write_text("CH1\n" + ramp_rows())
    err = refused(p, E.CaptureFormatError, "could not be read", sample_interval_s=1e-6)
    assert isinstance(err.__cause__, ZeroDivisionError)  # kept for a developer


def test_sniff_bound_is_the_shared_one():
    assert dialect.MAX_COLUMNS == MAX_COLUMNS


def test_version_3_header_keeps_non_ascii_field_names(tmp_path):
    # numpy.save writes format 3.0 (a UTF-8 header) only for names Latin-1 cannot hold.
    a = np.zeros(64, dtype=[("t (s)", "<f8"), ("U\u03a9", "<f8")])
    a["t (s)"] = np.arange(64) * 1e-6
    a["U\u03a9"] = np.arange(64) % 7
    p = tmp_path / "v3.npy"
    with pytest.warns(UserWarning):
        np.save(p, a)
    assert p.read_bytes()[6:8] == b"\x03\x00"
    cap = loaded(p)
    assert cap.channel_names == ["U\u03a9"]
    np.testing.assert_array_equal(cap.channels["U\u03a9"], a["U\u03a9"])
