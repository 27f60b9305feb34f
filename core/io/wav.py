"""WAV captures (a sound card used as a slow oscilloscope).

The RIFF/WAVE chunks are parsed here, following the format's specification
(IBM/Microsoft, "Multimedia Programming Interface and Data Specifications
1.0", 1991; ``WAVE_FORMAT_EXTENSIBLE`` as Microsoft documents it; RF64 as EBU
Tech 3306 defines it), and every ``fmt `` field is checked before a sample is
read: at least one channel (at most ``MAX_COLUMNS``), a rate of at least 1 Hz,
PCM samples of 1 to 32 bits in 1- to 4-byte containers, IEEE float samples of
32 or 64 bits, and ``block_align == channels * container bytes``.

Values become fractions of full scale: ``x / 2**(8 * bytes - 1)`` for signed
integers (a 12-bit sample is left-justified in its 16-bit container, so the
container's full scale applies), ``(x - 128) / 128`` for unsigned 8-bit,
float samples as they are. They are stored as "volts" with a warning: a sound
card input is not calibrated, so the voltage figures are relative to its full
scale.

A data chunk that declares more bytes than the file holds (a recording cut
short, a writer that never came back to fill in the size) is read as far as
whole frames go, with a ``truncated-data`` warning that says how much was
declared and how much is there.

Channels are ``left`` and ``right`` for stereo, ``CH1``, ``CH2``... otherwise;
the sample interval is ``1 / rate``.
"""

from __future__ import annotations

import os
import struct
from dataclasses import dataclass
from typing import BinaryIO, Callable

import numpy as np

from ..capture import Capture
from ..errors import CaptureFormatError, EmptyCaptureError, TrueslopeWarning
from ._assemble import MAX_COLUMNS, Column, SampleLocator, assemble
from ._files import open_regular

BLOCK_SAMPLES = 1 << 20
_FORMATS = {1: "PCM integer", 3: "IEEE float"}
#: Chunks looked at before the data chunk; real files have a handful.
MAX_CHUNKS = 1000


@dataclass(frozen=True)
class _Layout:
    tag: int
    channels: int
    rate: int
    bits: int
    width: int  # bytes per sample (the container)
    offset: int  # of the first sample
    frames: int
    declared: int  # bytes the data chunk declares
    present: int  # bytes of it in the file


def _fmt(body: bytes, path: str) -> tuple[int, int, int, int, int]:
    """Validated (tag, channels, rate, bits, container bytes) of a ``fmt `` chunk."""
    if len(body) < 16:
        raise CaptureFormatError(
            f"the WAV 'fmt ' chunk is {len(body)} bytes; the specification needs 16", path)
    tag, ch, rate, _, align, bits = struct.unpack("<HHIIHH", body[:16])
    if tag == 0xFFFE:  # WAVE_FORMAT_EXTENSIBLE: the real tag opens the SubFormat GUID
        if len(body) < 26:
            raise CaptureFormatError("the WAV 'fmt ' chunk is cut short (extensible format)",
                                     path)
        tag = struct.unpack("<H", body[24:26])[0]
    if tag not in _FORMATS:
        raise CaptureFormatError(
            f"the WAV samples are coded with format tag {tag:#06x} (compressed or unknown); "
            f"expected uncompressed PCM (tag 1) or IEEE float (tag 3)", path)
    if not 1 <= ch <= MAX_COLUMNS:
        raise CaptureFormatError(
            f"the WAV header declares {ch} channels; expected 1 to {MAX_COLUMNS}", path)
    if rate < 1:
        raise CaptureFormatError(
            f"the WAV header gives a sample rate of {rate} Hz; expected at least 1 Hz", path)
    if tag == 3 and bits not in (32, 64):
        raise CaptureFormatError(
            f"the WAV header declares {bits}-bit float samples; expected 32 or 64 bits", path)
    if tag == 1 and not 1 <= bits <= 32:
        raise CaptureFormatError(
            f"the WAV header declares {bits} bits per sample; expected 8, 16, 24 or 32", path)
    width = (bits + 7) // 8
    if align != ch * width:
        raise CaptureFormatError(
            f"the WAV header declares {align} bytes per frame (block align) for {ch} "
            f"channel{'s' if ch != 1 else ''} of {bits}-bit samples; the specification "
            f"requires {ch * width}", path)
    return tag, ch, rate, bits, width


def _layout(f: BinaryIO, path: str) -> _Layout:
    """Walk the chunks to ``fmt `` and ``data``; check them against the file size."""
    size = os.fstat(f.fileno()).st_size
    riff = f.read(12)
    rf64 = riff[:4] == b"RF64"
    big_data = None
    fmt = None
    pos = 12
    for _ in range(MAX_CHUNKS):
        head = f.read(8)
        if len(head) < 8:
            break
        cid, csize = head[:4], struct.unpack("<I", head[4:])[0]
        body_at = pos + 8
        if cid == b"ds64" and rf64 and csize >= 16:
            big_data = struct.unpack("<Q", f.read(16)[8:16])[0]
        elif cid == b"fmt ":
            if csize > 1024:
                raise CaptureFormatError(
                    f"the WAV 'fmt ' chunk claims {csize} bytes; it holds at most 40", path)
            fmt = _fmt(f.read(csize), path)
        elif cid == b"data":
            if fmt is None:
                raise CaptureFormatError(
                    "the WAV data chunk comes before its 'fmt ' chunk: the samples cannot be "
                    "decoded", path)
            tag, ch, rate, bits, width = fmt
            declared = big_data if (rf64 and csize == 0xFFFFFFFF and big_data) else csize
            present = min(declared, max(0, size - body_at))
            return _Layout(tag, ch, rate, bits, width, body_at,
                           present // (ch * width), declared, present)
        pos = body_at + csize + (csize & 1)
        if pos > size:
            what = cid.decode("latin-1")
            raise CaptureFormatError(
                f"the WAV file is cut short in its {what!r} chunk at byte {body_at}: the chunk "
                f"declares {csize} bytes, the file has {size} in all", path)
        f.seek(pos)
    missing = "'fmt ' chunk" if fmt is None else "data chunk"
    raise CaptureFormatError(f"the WAV file has no {missing}; expected a 'fmt ' chunk and "
                             f"then a data chunk, as the RIFF WAVE specification lays out",
                             path)


def _frames(mm: np.ndarray, a: int, b: int, j: int, lay: _Layout) -> np.ndarray:
    """Frames [a, b) of channel ``j`` as fractions of full scale."""
    if lay.tag == 3:
        return mm[a:b, j].astype(np.float64)
    if lay.width == 1:
        return (mm[a:b, j].astype(np.float64) - 128.0) / 128.0
    if lay.width == 3:
        raw = mm[a:b, j].astype(np.int32)  # (frames, 3) little-endian bytes
        x = raw[:, 0] | (raw[:, 1] << 8) | (raw[:, 2] << 16)
        x = (x << 8) >> 8  # sign-extend the 24-bit two's complement
        return x.astype(np.float64) / float(1 << 23)
    return mm[a:b, j].astype(np.float64) / float(1 << (8 * lay.width - 1))


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
        A ``fmt `` field out of the specification's range (0 channels, 0 bits,
        a block align that does not match), a compressed coding, a chunk cut
        short before the data, no ``fmt `` or data chunk.
    EmptyCaptureError
        The data chunk holds no whole frame.
    TooFewSamplesError, NonFiniteDataError, OutOfRangeError
        As for every layout.
    """
    with open_regular(path) as f:
        lay = _layout(f, path)
        if lay.frames == 0:
            raise EmptyCaptureError(
                f"the WAV data chunk holds no whole frame ({lay.present} bytes at byte "
                f"{lay.offset}, {lay.channels * lay.width} bytes per frame)", path)
        dtype = {1: "u1", 2: "<i2", 4: "<i4"}.get(lay.width, "u1")
        if lay.tag == 3:
            dtype = "<f4" if lay.width == 4 else "<f8"
        shape = (lay.frames, lay.channels, 3) if lay.width == 3 else (lay.frames, lay.channels)
        mm = np.memmap(f, dtype=np.dtype(dtype), mode="r", offset=lay.offset, shape=shape)
    progress(0.05)
    n, nch = lay.frames, lay.channels
    names = ["left", "right"] if nch == 2 else [f"CH{i + 1}" for i in range(nch)]
    columns = []
    total = max(1, n * nch)
    for j in range(nch):
        out = np.empty(n, dtype=np.float64)
        for a in range(0, n, BLOCK_SAMPLES):
            cancel()
            b = min(n, a + BLOCK_SAMPLES)
            out[a:b] = _frames(mm, a, b, j, lay)
            progress(0.05 + 0.85 * (j * n + b) / total)
        columns.append(Column(values=out, name=names[j], quantity="voltage", number=j + 1))
    del mm
    kind = _FORMATS[lay.tag]
    rate = lay.rate
    layout = (f"WAV, {kind}, {lay.bits}-bit, {nch} channel{'s' if nch != 1 else ''}, "
              f"{rate} Sa/s")
    meta = {"sample rate": f"{rate} Sa/s", "channels": str(nch), "format": kind,
            "bits per sample": str(lay.bits)}
    warns = [TrueslopeWarning(
        "wav-uncalibrated",
        "WAV samples are fractions of full scale (1.0 = full scale), stored as volts: a sound "
        "card input is not calibrated, so the voltage figures are relative, not volts")]
    if lay.present < lay.declared:
        frame = nch * lay.width
        warns.append(TrueslopeWarning(
            "truncated-data",
            f"the WAV data chunk declares {lay.declared} bytes ({lay.declared // frame} "
            f"frames) but the file holds {lay.present} ({n} whole frames, "
            f"{n / rate:.6g} s); the file was cut short or never finished, and the "
            f"{n} frames present were read"))
    elif lay.declared % (nch * lay.width):
        warns.append(TrueslopeWarning(
            "wav-reader",
            f"the WAV data chunk ends {lay.declared % (nch * lay.width)} bytes into a frame; "
            f"that partial frame was left out"))
    return assemble(columns, path=path, locate=SampleLocator(), layout=layout, metadata=meta,
                    warnings=warns, sample_interval_s=sample_interval_s,
                    intrinsic_interval_s=1.0 / float(rate), cancel=cancel)
