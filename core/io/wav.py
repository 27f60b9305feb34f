"""WAV captures (a sound card used as a slow oscilloscope).

PCM integer samples of 8, 16, 24 or 32 bits and IEEE float samples of 32 or
64 bits are read with :func:`scipy.io.wavfile.read`. Values become fractions
of full scale: ``x / 2**(bits - 1)`` for signed integers (scipy returns 24-bit
samples left-justified in int32, so int32 is divided by ``2**31`` either way),
``(x - 128) / 128`` for unsigned 8-bit, float samples as they are. They are
stored as "volts" with a warning: a sound card input is not calibrated, so
the voltage figures are relative to its full scale.

Channels are ``left`` and ``right`` for stereo, ``CH1``, ``CH2``... otherwise;
the sample interval is ``1 / rate``.
"""

from __future__ import annotations

import struct
import warnings as pywarnings
from typing import Callable

import numpy as np

from ..capture import Capture
from ..errors import CaptureFormatError, TrueslopeWarning
from ._assemble import Column, SampleLocator, assemble

BLOCK_SAMPLES = 1 << 20
_FORMATS = {1: "PCM integer", 3: "IEEE float"}


def _fmt_chunk(path: str) -> dict[str, int]:
    """Format tag, channels, rate and bits from the ``fmt `` chunk (best effort)."""
    out: dict[str, int] = {}
    with open(path, "rb") as f:
        riff = f.read(12)
        if len(riff) < 12:
            return out
        for _ in range(64):
            head = f.read(8)
            if len(head) < 8:
                break
            cid, size = head[:4], struct.unpack("<I", head[4:])[0]
            if cid == b"fmt ":
                body = f.read(min(size, 40))
                if len(body) >= 16:
                    tag, ch, rate, _, _, bits = struct.unpack("<HHIIHH", body[:16])
                    if tag == 0xFFFE and len(body) >= 26:  # WAVE_FORMAT_EXTENSIBLE
                        tag = struct.unpack("<H", body[24:26])[0]
                    out = {"tag": tag, "channels": ch, "rate": rate, "bits": bits}
                break
            f.seek(size + (size & 1), 1)
    return out


def _scale(block: np.ndarray) -> np.ndarray:
    kind = block.dtype.kind
    if kind == "f":
        return block.astype(np.float64)
    if kind == "u" and block.dtype.itemsize == 1:
        return (block.astype(np.float64) - 128.0) / 128.0
    if kind == "i":
        return block.astype(np.float64) / float(-np.iinfo(block.dtype).min)
    raise CaptureFormatError(f"WAV samples of type {block.dtype} are not supported")


def read_wav(path: str, *, sample_interval_s: float | None = None,
             progress: Callable[[float], None] = lambda f: None,
             cancel: Callable[[], None] = lambda: None) -> Capture:
    """Read a WAV capture (see the module docstring).

    Parameters
    ----------
    path : str
        The file (opened read-only).
    sample_interval_s : float, optional
        Ignored in favour of the file's own rate (a warning says so when the
        two disagree by more than 1 %).
    progress, cancel : callable
        Fraction done; raises Cancelled to stop.

    Returns
    -------
    Capture
        Fractions of full scale as "volts", ``sample_interval_s = 1 / rate``.

    Raises
    ------
    CaptureFormatError
        Not a WAV file scipy can read (compressed, malformed, cut short).
    TooFewSamplesError, NonFiniteDataError
        As for every layout.
    """
    from scipy.io import wavfile

    caught: list[str] = []
    with pywarnings.catch_warnings(record=True) as record:
        pywarnings.simplefilter("always")
        try:
            try:
                rate, data = wavfile.read(path, mmap=True)
            except ValueError as exc:
                if "mmap" not in str(exc):
                    raise
                rate, data = wavfile.read(path)  # 24-bit cannot be memory-mapped
        except (ValueError, EOFError, struct.error, IndexError, TypeError, NameError,
                UnboundLocalError, KeyError) as exc:
            raise CaptureFormatError(
                f"not a WAV file trueslope can read ({exc}); expected uncompressed PCM "
                f"(8, 16, 24, 32-bit) or 32-bit float samples", path) from None
        caught = [str(w.message) for w in record]
    progress(0.05)
    fmt = _fmt_chunk(path)
    if not rate or rate <= 0:
        raise CaptureFormatError(f"the WAV header gives a sample rate of {rate}", path)
    frames = data if data.ndim == 2 else data.reshape(-1, 1)
    n, nch = frames.shape
    names = ["left", "right"] if nch == 2 else [f"CH{i + 1}" for i in range(nch)]
    columns = []
    total = max(1, n * nch)
    for j in range(nch):
        out = np.empty(n, dtype=np.float64)
        for a in range(0, n, BLOCK_SAMPLES):
            cancel()
            b = min(n, a + BLOCK_SAMPLES)
            try:
                out[a:b] = _scale(frames[a:b, j])
            except CaptureFormatError as exc:
                raise CaptureFormatError(exc.message, path) from None
            progress(0.05 + 0.85 * (j * n + b) / total)
        columns.append(Column(values=out, name=names[j], quantity="voltage", number=j + 1))
    bits = fmt.get("bits") or 8 * data.dtype.itemsize
    del frames, data
    kind = _FORMATS.get(fmt.get("tag", 0), "PCM")
    layout = f"WAV, {kind}, {bits}-bit, {nch} channel{'s' if nch != 1 else ''}, {rate} Sa/s"
    meta = {"sample rate": f"{rate} Sa/s", "channels": str(nch), "format": kind,
            "bits per sample": str(bits)}
    warns = [TrueslopeWarning(
        "wav-uncalibrated",
        "WAV samples are fractions of full scale (1.0 = full scale), stored as volts: a sound "
        "card input is not calibrated, so the voltage figures are relative, not volts")]
    warns += [TrueslopeWarning("wav-reader", f"WAV reader: {m}") for m in caught]
    return assemble(columns, path=path, locate=SampleLocator(), layout=layout, metadata=meta,
                    warnings=warns, sample_interval_s=sample_interval_s,
                    intrinsic_interval_s=1.0 / float(rate), cancel=cancel)
