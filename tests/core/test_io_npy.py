"""NumPy .npy captures: write-then-read round trips with numpy.save (the
reference writer of the format, NEP 1 "A simple file format for NumPy
arrays"), and the arrays trueslope must refuse."""

from __future__ import annotations

import numpy as np
import pytest

from trueslope.core import errors as E
from trueslope.core.io import load_capture

N = 48
DT = 1e-6


def saw(n: int = N):
    k = np.arange(n)
    return k * DT, 0.1 + 0.4 * (k % 12) / 12.0


def save(tmp_path, name, arr, **kw):
    p = tmp_path / name
    np.save(p, arr, **kw)
    return p


def test_1d_round_trip(tmp_path):
    _, v = saw()
    cap = load_capture(save(tmp_path, "one.npy", v), sample_interval_s=DT)
    assert cap.channel_names == ["CH1"]
    np.testing.assert_array_equal(cap.channels["CH1"], v)  # exact: float64 in, float64 out
    assert cap.sample_interval_s == DT and cap.t0_s == 0.0 and cap.time_column is None
    assert "NumPy .npy" in cap.layout
    assert cap.metadata["npy shape"] == f"({N},)"


def test_1d_without_interval(tmp_path):
    _, v = saw()
    with pytest.raises(E.NoSampleIntervalError, match="Give the sample interval"):
        load_capture(save(tmp_path, "one.npy", v))


def test_2d_columns_with_time_first(tmp_path):
    t, v = saw()
    arr = np.column_stack([t + 5e-6, v, -v])
    cap = load_capture(save(tmp_path, "cols.npy", arr))
    assert cap.channel_names == ["CH1", "CH2"]
    np.testing.assert_array_equal(cap.channels["CH2"], -v)
    assert cap.sample_interval_s == pytest.approx(DT, rel=1e-12)
    assert cap.t0_s == pytest.approx(5e-6, rel=1e-12)
    assert cap.time_column == "column 1"


def test_2d_columns_without_time(tmp_path):
    _, v = saw()
    cap = load_capture(save(tmp_path, "cols.npy", np.column_stack([v, 2 * v])),
                       sample_interval_s=DT)
    assert cap.channel_names == ["CH1", "CH2"] and cap.time_column is None


def test_2d_rows_of_channels(tmp_path):
    t, v = saw()
    arr = np.vstack([t, v, -v])  # shape (3, N): fewer rows than columns -> channels in rows
    cap = load_capture(save(tmp_path, "rows.npy", arr))
    assert cap.channel_names == ["CH1", "CH2"]
    np.testing.assert_array_equal(cap.channels["CH1"], v)
    assert cap.sample_interval_s == pytest.approx(DT)
    assert "rows" in cap.layout


def test_structured_array_with_named_fields(tmp_path):
    t, v = saw()
    arr = np.zeros(N, dtype=[("t (us)", "<f8"), ("ramp", "<f4"), ("sync (mV)", "<i2"),
                             ("label", "U4")])
    arr["t (us)"] = t * 1e6
    arr["ramp"] = v
    arr["sync (mV)"] = (np.arange(N) % 12 == 0) * 3300
    cap = load_capture(save(tmp_path, "rec.npy", arr))
    assert cap.channel_names == ["ramp", "sync"]
    assert cap.time_column == "t"
    np.testing.assert_array_equal(cap.channels["ramp"], v.astype(np.float32).astype(np.float64))
    assert cap.channels["sync"].max() == pytest.approx(3.3)
    assert cap.sample_interval_s == pytest.approx(DT, rel=1e-9)
    assert [w.code for w in cap.warnings] == ["non-numeric-field"]


def test_structured_array_time_field_by_name(tmp_path):
    t, v = saw()
    arr = np.zeros(N, dtype=[("ch1", "<f8"), ("time", "<f8")])
    arr["ch1"], arr["time"] = v, t
    cap = load_capture(save(tmp_path, "rec.npy", arr))
    assert cap.time_column == "time" and cap.channel_names == ["ch1"]


def test_float32_and_big_endian_and_fortran_order(tmp_path):
    _, v = saw()
    for arr in (v.astype(np.float32), v.astype(">f8"),
                np.asfortranarray(np.column_stack([v, -v]))):
        cap = load_capture(save(tmp_path, "x.npy", arr), sample_interval_s=DT)
        np.testing.assert_array_equal(cap.channels["CH1"], np.asarray(arr, dtype=np.float64).reshape(N, -1)[:, 0])


def test_integer_samples_are_read_with_a_warning(tmp_path):
    codes = (np.arange(N) % 12 * 100).astype(np.int16)
    cap = load_capture(save(tmp_path, "codes.npy", codes), sample_interval_s=DT)
    np.testing.assert_array_equal(cap.channels["CH1"], codes.astype(float))
    assert [w.code for w in cap.warnings] == ["integer-samples"]


def test_index_column_in_an_array(tmp_path):
    _, v = saw()
    cap = load_capture(save(tmp_path, "idx.npy", np.column_stack([np.arange(N), v])),
                       sample_interval_s=DT)
    assert cap.channel_names == ["CH1"]


def test_nan_in_npy_names_the_sample(tmp_path):
    _, v = saw()
    v = v.copy()
    v[20:23] = np.nan
    with pytest.raises(E.NonFiniteDataError) as info:
        load_capture(save(tmp_path, "nan.npy", v), sample_interval_s=DT)
    assert "sample index 20" in str(info.value) and "nan.npy" in str(info.value)
    assert info.value.line is None


def test_time_backwards_in_npy(tmp_path):
    t, v = saw()
    t = t.copy()
    t[30] = t[28]
    with pytest.raises(E.TimeAxisError, match="sample index 30"):
        load_capture(save(tmp_path, "t.npy", np.column_stack([t, v])))


@pytest.mark.parametrize("arr,words", [
    (np.arange(N) + 1j, "complex"),
    (np.zeros((4, 4, 4)), "3 dimensions"),
    (np.float64(1.0), "single number"),
    (np.array(["a", "b"] * 20), "not numbers"),
    (np.ones(N, dtype=bool), "not numbers"),
])
def test_arrays_that_are_not_captures(tmp_path, arr, words):
    with pytest.raises(E.CaptureFormatError, match=words):
        load_capture(save(tmp_path, "bad.npy", arr), sample_interval_s=DT)


def test_object_array_is_never_unpickled(tmp_path):
    p = save(tmp_path, "obj.npy", np.array([{"a": 1}, None], dtype=object), allow_pickle=True)
    with pytest.raises(E.CaptureFormatError, match="pickled"):
        load_capture(p, sample_interval_s=DT)


def test_empty_array(tmp_path):
    with pytest.raises(E.EmptyCaptureError):
        load_capture(save(tmp_path, "empty.npy", np.zeros(0)), sample_interval_s=DT)


def test_too_few_samples(tmp_path):
    with pytest.raises(E.TooFewSamplesError):
        load_capture(save(tmp_path, "few.npy", np.zeros(8)), sample_interval_s=DT)


def test_truncated_npy_file(tmp_path):
    _, v = saw(4000)
    p = save(tmp_path, "cut.npy", v)
    p.write_bytes(p.read_bytes()[:1000])
    with pytest.raises(E.CaptureFormatError) as info:
        load_capture(p, sample_interval_s=DT)
    assert "cut.npy" in str(info.value)


def test_npz_archive_is_refused(tmp_path):
    _, v = saw()
    p = tmp_path / "arch.npz"
    np.savez(p, v=v)
    with pytest.raises(E.CaptureFormatError):
        load_capture(p, sample_interval_s=DT)


def test_npy_content_under_another_name_is_recognised(tmp_path):
    _, v = saw()
    p = save(tmp_path, "ramp.npy", v)
    renamed = p.rename(tmp_path / "ramp.bin")
    cap = load_capture(renamed, sample_interval_s=DT)
    np.testing.assert_array_equal(cap.channels["CH1"], v)
