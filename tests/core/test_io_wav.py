"""WAV captures: write-then-read round trips with scipy.io.wavfile.write and
the standard library's ``wave`` module (two independent reference writers).

Sample coding per the RIFF WAVE specification (IBM/Microsoft, "Multimedia
Programming Interface and Data Specifications 1.0", 1991; from memory):
8-bit PCM is unsigned with 128 as zero, wider PCM is signed two's complement,
so full scale is 2**(bits-1); IEEE float samples are fractions of full scale.
"""

from __future__ import annotations

import wave

import numpy as np
import pytest
from scipy.io import wavfile

from trueslope.core import errors as E
from trueslope.core.io import load_capture

N = 480
RATE = 48000


def saw(n: int = N):
    k = np.arange(n)
    return -0.5 + (k % 48) / 48.0  # fractions of full scale, -0.5 .. 0.48


def test_int16_stereo_round_trip(tmp_path):
    v = saw()
    codes = np.round(v * 32767).astype(np.int16)
    p = tmp_path / "stereo.wav"
    wavfile.write(p, RATE, np.column_stack([codes, -codes]))
    cap = load_capture(p)
    assert cap.channel_names == ["left", "right"]
    np.testing.assert_array_equal(cap.channels["left"], codes / 32768.0)
    np.testing.assert_array_equal(cap.channels["right"], -codes / 32768.0)
    assert cap.sample_interval_s == 1.0 / RATE and cap.t0_s == 0.0
    assert cap.layout == "WAV, PCM integer, 16-bit, 2 channels, 48000 Sa/s"
    (w,) = cap.warnings
    assert w.code == "wav-uncalibrated" and "not calibrated" in w.message


def test_uint8_mono(tmp_path):
    v = saw()
    codes = np.round(128 + v * 127).astype(np.uint8)
    p = tmp_path / "mono8.wav"
    wavfile.write(p, 8000, codes)
    cap = load_capture(p)
    assert cap.channel_names == ["CH1"]
    np.testing.assert_array_equal(cap.channels["CH1"], (codes.astype(float) - 128) / 128)
    assert cap.sample_interval_s == 1.0 / 8000
    assert "8-bit" in cap.layout


def test_int32(tmp_path):
    codes = np.round(saw() * 2**31).astype(np.int32)
    p = tmp_path / "i32.wav"
    wavfile.write(p, RATE, codes)
    cap = load_capture(p)
    np.testing.assert_array_equal(cap.channels["CH1"], codes / 2.0**31)
    assert "32-bit" in cap.layout


@pytest.mark.parametrize("dtype", [np.float32, np.float64])
def test_float(tmp_path, dtype):
    v = saw().astype(dtype)
    p = tmp_path / "f.wav"
    wavfile.write(p, RATE, v)
    cap = load_capture(p)
    np.testing.assert_array_equal(cap.channels["CH1"], v.astype(np.float64))
    assert "IEEE float" in cap.layout


def _stdlib_wav(path, width, codes, channels=1, rate=RATE):
    """Write PCM with the standard library (independent of scipy)."""
    with wave.open(str(path), "wb") as w:
        w.setnchannels(channels)
        w.setsampwidth(width)
        w.setframerate(rate)
        frames = b"".join(int(c).to_bytes(width, "little", signed=(width > 1)) for c in codes)
        w.writeframes(frames)


def test_24bit_written_by_the_wave_module(tmp_path):
    codes = np.round(saw() * (2**23 - 1)).astype(np.int64)
    p = tmp_path / "p24.wav"
    _stdlib_wav(p, 3, codes)
    cap = load_capture(p)
    np.testing.assert_allclose(cap.channels["CH1"], codes / 2.0**23, rtol=0, atol=0)
    assert "24-bit" in cap.layout


def test_16bit_written_by_the_wave_module(tmp_path):
    codes = np.round(saw() * 32767).astype(np.int64)
    p = tmp_path / "p16.wav"
    _stdlib_wav(p, 2, codes, rate=44100)
    cap = load_capture(p)
    np.testing.assert_array_equal(cap.channels["CH1"], codes / 32768.0)
    assert cap.sample_interval_s == 1.0 / 44100


def test_four_channels_are_numbered(tmp_path):
    codes = np.round(saw() * 1000).astype(np.int16)
    p = tmp_path / "quad.wav"
    wavfile.write(p, RATE, np.column_stack([codes] * 4))
    assert load_capture(p).channel_names == ["CH1", "CH2", "CH3", "CH4"]


def test_file_rate_wins_over_the_argument(tmp_path):
    p = tmp_path / "r.wav"
    wavfile.write(p, RATE, saw().astype(np.float32))
    cap = load_capture(p, sample_interval_s=1e-3)
    assert cap.sample_interval_s == 1.0 / RATE
    assert "interval-ignored" in [w.code for w in cap.warnings]


def test_too_few_samples(tmp_path):
    p = tmp_path / "few.wav"
    wavfile.write(p, RATE, np.zeros(5, dtype=np.int16))
    with pytest.raises(E.TooFewSamplesError, match="few.wav"):
        load_capture(p)


def test_nan_in_a_float_wav(tmp_path):
    v = saw().astype(np.float32)
    v[100] = np.nan
    p = tmp_path / "nan.wav"
    wavfile.write(p, RATE, v)
    with pytest.raises(E.NonFiniteDataError, match="sample index 100"):
        load_capture(p)


def test_garbage_after_a_riff_header(tmp_path):
    p = tmp_path / "junk.wav"
    p.write_bytes(b"RIFF\x00\x01\x00\x00WAVE" + np.random.default_rng(4).bytes(256))
    with pytest.raises(E.CaptureFormatError, match="junk.wav"):
        load_capture(p)


def test_truncated_wav_keeps_whole_frames_with_a_warning(tmp_path):
    p = tmp_path / "cut.wav"
    wavfile.write(p, RATE, np.round(saw() * 1000).astype(np.int16))
    p.write_bytes(p.read_bytes()[:-7])  # 7 bytes short: 3 frames and a half missing
    cap = load_capture(p)
    assert cap.samples == (2 * N - 7) // 2  # whole 16-bit frames only, none invented
    assert "truncated-data" in [w.code for w in cap.warnings]


def test_wav_content_is_found_whatever_the_name(tmp_path):
    p = tmp_path / "capture.dat"
    wavfile.write(p, RATE, saw().astype(np.float32))
    assert load_capture(p).layout.startswith("WAV")
