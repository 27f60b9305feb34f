"""Larger files: progress, cancel, engines agreeing, files left untouched.

A 200 000-row CSV stands in for the 10 M-row case (which belongs to
benchmarks/bench_load.py). It is written once per module with pyarrow's CSV
writer, and its values checked against pandas.read_csv (reference parser).
"""

from __future__ import annotations

import os

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pacsv
import pytest
from scipy.io import wavfile

from trueslope.core import errors as E
from trueslope.core.io import delimited, load_capture, npy, wav

ROWS = 200_000
DT = 1e-7


def _signal(n):
    k = np.arange(n, dtype=np.float64)
    per = 2500.0
    return np.round(k * DT, 10), np.round(0.2 + 4.0 * np.mod(k, per) / per, 6)


@pytest.fixture(scope="module")
def big_csv(tmp_path_factory):
    t, v = _signal(ROWS)
    p = tmp_path_factory.mktemp("big") / "big.csv"
    pacsv.write_csv(pa.table({"time (s)": t, "CH1 (V)": v}), p,
                    write_options=pacsv.WriteOptions(quoting_style="none"))
    return p


@pytest.fixture(scope="module")
def big_dat(tmp_path_factory):
    t, v = _signal(ROWS)
    p = tmp_path_factory.mktemp("big") / "big.dat"
    with open(p, "w") as f:
        f.write("t (s)  CH1 (V)\n")
        f.write("\n".join(f"{a:.7e}  {b:.6f}" for a, b in zip(t, v)) + "\n")
    return p


class Recorder:
    def __init__(self, stop_after: int | None = None):
        self.fractions: list[float] = []
        self.stop_after = stop_after

    def progress(self, f: float) -> None:
        self.fractions.append(f)

    def cancel(self) -> bool:
        return self.stop_after is not None and len(self.fractions) >= self.stop_after


def _monotonic_to_one(fr):
    assert fr[0] == 0.0 and fr[-1] == 1.0
    assert all(a < b for a, b in zip(fr, fr[1:])), fr


@pytest.mark.parametrize("fixture", ["big_csv", "big_dat"])
def test_progress_rises_to_one(request, fixture):
    path = request.getfixturevalue(fixture)
    rec = Recorder()
    cap = load_capture(path, progress=rec.progress, cancel=rec.cancel)
    assert cap.samples == ROWS
    _monotonic_to_one(rec.fractions)
    assert len(rec.fractions) >= 10  # moves in steps, not 0 then 1


def test_big_csv_values_match_pandas(big_csv):
    cap = load_capture(big_csv)
    ref = pd.read_csv(big_csv)  # reference parser
    np.testing.assert_array_equal(cap.channels["CH1"], ref["CH1 (V)"].to_numpy())
    assert cap.sample_interval_s == pytest.approx(DT, rel=1e-9)
    assert cap.warnings == ()


def test_space_separated_values_match_numpy(big_dat):
    cap = load_capture(big_dat)
    ref = np.loadtxt(big_dat, skiprows=1)  # reference parser
    np.testing.assert_array_equal(cap.channels["CH1"], ref[:, 1])


@pytest.mark.parametrize("fixture", ["big_csv", "big_dat"])
def test_cancel_stops_the_read(request, fixture):
    path = request.getfixturevalue(fixture)
    rec = Recorder(stop_after=3)
    with pytest.raises(E.Cancelled, match=path.name):
        load_capture(path, progress=rec.progress, cancel=rec.cancel)
    assert len(rec.fractions) == 3 and rec.fractions[-1] < 0.5  # stopped early


def test_cancel_before_anything_is_read(big_csv):
    with pytest.raises(E.Cancelled):
        load_capture(big_csv, cancel=lambda: True)


def test_exact_reader_agrees_with_pyarrow(big_csv, monkeypatch):
    fast = load_capture(big_csv)

    def no_engine(dialect, threads=False):
        raise ImportError("engine disabled for the test")

    monkeypatch.setattr(delimited, "_arrow_reader", no_engine)
    exact = load_capture(big_csv)
    np.testing.assert_array_equal(fast.channels["CH1"], exact.channels["CH1"])
    assert fast.sample_interval_s == exact.sample_interval_s


def test_exact_reader_agrees_with_pandas_on_spaces(big_dat, monkeypatch):
    fast = load_capture(big_dat)
    monkeypatch.setattr(delimited, "_pandas_reader",
                        lambda dialect: (_ for _ in ()).throw(ImportError("disabled")))
    exact = load_capture(big_dat)
    np.testing.assert_array_equal(fast.channels["CH1"], exact.channels["CH1"])


def test_error_deep_in_a_big_file_names_its_line(tmp_path, big_csv):
    lines = big_csv.read_bytes().split(b"\n")
    lines[150_001] = b"0.0150001,abc"  # 0-based index 150001 = line 150002
    p = tmp_path / "bad.csv"
    p.write_bytes(b"\n".join(lines))
    with pytest.raises(E.CaptureFormatError) as info:
        load_capture(p)
    assert info.value.line == 150_002 and "line 150002" in str(info.value)


def test_nan_deep_in_a_big_file_names_its_line(tmp_path, big_csv):
    lines = big_csv.read_bytes().split(b"\n")
    lines[123_457] = lines[123_457].split(b",")[0] + b",nan"
    p = tmp_path / "nan.csv"
    p.write_bytes(b"\n".join(lines))
    with pytest.raises(E.NonFiniteDataError) as info:
        load_capture(p)
    assert info.value.line == 123_458


def test_npy_progress_and_cancel(tmp_path, monkeypatch):
    monkeypatch.setattr(npy, "BLOCK_SAMPLES", 10_000)
    p = tmp_path / "big.npy"
    np.save(p, np.column_stack(_signal(ROWS)))
    rec = Recorder()
    cap = load_capture(p, progress=rec.progress)
    assert cap.samples == ROWS
    _monotonic_to_one(rec.fractions)
    assert len(rec.fractions) >= 10
    rec = Recorder(stop_after=4)
    with pytest.raises(E.Cancelled):
        load_capture(p, progress=rec.progress, cancel=rec.cancel)


def test_wav_progress_and_cancel(tmp_path, monkeypatch):
    monkeypatch.setattr(wav, "BLOCK_SAMPLES", 10_000)
    p = tmp_path / "big.wav"
    wavfile.write(p, 96000, (_signal(ROWS)[1] / 8).astype(np.float32))
    rec = Recorder()
    load_capture(p, progress=rec.progress)
    _monotonic_to_one(rec.fractions)
    assert len(rec.fractions) >= 10
    rec = Recorder(stop_after=4)
    with pytest.raises(E.Cancelled):
        load_capture(p, progress=rec.progress, cancel=rec.cancel)


def _fingerprint(path):
    st = os.stat(path)
    return path.read_bytes(), st.st_mtime_ns, st.st_size


def test_files_are_unchanged_after_load(tmp_path, big_csv):
    paths = {"csv": big_csv}
    paths["npy"] = tmp_path / "x.npy"
    np.save(paths["npy"], _signal(1000)[1])
    paths["wav"] = tmp_path / "x.wav"
    wavfile.write(paths["wav"], 8000, np.zeros(1000, dtype=np.int16))
    bad = tmp_path / "bad.csv"
    bad.write_text("Time,CH1\n" + "1,2\n" * 20 + "1,2,3\n")
    paths["bad"] = bad
    for name, p in paths.items():
        before = _fingerprint(p)
        try:
            load_capture(p, sample_interval_s=1e-6)
        except E.TrueslopeError:
            assert name == "bad"
        assert _fingerprint(p) == before, name


def test_cancelled_read_leaves_the_file_unchanged(big_csv):
    before = _fingerprint(big_csv)
    with pytest.raises(E.Cancelled):
        load_capture(big_csv, progress=lambda f: None, cancel=Recorder(stop_after=0).cancel)
    assert _fingerprint(big_csv) == before


def test_exceptions_of_the_callers_callbacks_pass_through(big_csv):
    class Boom(Exception):
        pass

    def progress(f):
        if f > 0.1:
            raise Boom("from the caller")

    with pytest.raises(Boom):
        load_capture(big_csv, progress=progress)
    with pytest.raises(ZeroDivisionError):
        load_capture(big_csv, cancel=lambda: 1 / 0)
