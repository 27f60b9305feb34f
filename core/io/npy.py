"""NumPy ``.npy`` captures (as written by :func:`numpy.save`).

* 1-D numeric array: one channel, ``CH1``.
* 2-D numeric array: channels in columns (shape ``(samples, channels)``) or,
  when there are fewer rows than columns, in rows. A first column (or row)
  that rises steadily is the time axis, in seconds.
* 1-D structured array: one channel per numeric field, named by the field;
  a field named like time, or with a time unit in its name (``"t [us]"``),
  is the time axis.

The sample interval comes from a time axis or from the caller. The file is
memory-mapped read-only and copied to float64 in blocks, with progress and a
cancel check between blocks. Pickled object arrays are refused (never
unpickled).
"""

from __future__ import annotations

import io
import math
import os
import warnings
from typing import Callable

import numpy as np

from ..capture import Capture
from ..errors import CaptureFormatError, EmptyCaptureError, TrueslopeWarning
from ._assemble import MAX_COLUMNS, Column, SampleLocator, assemble, column_units
from ._files import open_regular

#: Samples copied per block (progress and cancel are checked between blocks).
BLOCK_SAMPLES = 1 << 20
#: Longest .npy header read, bytes: four times the most a version 1.0 header can
#: hold (65,535), so a validly padded header of any version reads, while a
#: header claiming megabytes is refused before numpy parses it.
MAX_HEADER_BYTES = 4 * 65536


def _header(f, path: str, size: int) -> tuple[np.dtype, tuple[int, ...], bool, int]:
    """dtype, shape, Fortran order and data offset, from numpy.lib.format's own readers."""
    from numpy.lib import format as npformat
    bad = ("the .npy header is damaged: expected the dictionary of 'descr', "
           "'fortran_order' and 'shape' that numpy.save writes")
    try:
        version = npformat.read_magic(f)
    except Exception:  # noqa: BLE001 - numpy's words about the magic string
        raise CaptureFormatError("the .npy file is damaged: its version bytes are not valid",
                                 path) from None
    if version not in ((1, 0), (2, 0), (3, 0)):
        raise CaptureFormatError(
            f"the .npy file is format version {version[0]}.{version[1]}; trueslope reads "
            f"versions 1.0 to 3.0", path)
    width = 2 if version == (1, 0) else 4
    start = f.tell()
    raw = f.read(width)
    if len(raw) < width:
        raise CaptureFormatError("the .npy file is cut short inside its header", path)
    length = int.from_bytes(raw, "little")
    if length > MAX_HEADER_BYTES:
        raise CaptureFormatError(
            f"the .npy header claims {length} bytes; a NumPy array header is at most "
            f"{MAX_HEADER_BYTES} bytes here: the file is damaged or not a saved array", path)
    if start + width + length > size:
        raise CaptureFormatError(
            f"the .npy file is cut short inside its header ({size} bytes in all, the header "
            f"claims {length})", path)
    f.seek(start)
    src = f
    if version == (3, 0):
        # 3.0 is the 2.0 layout with a UTF-8 header. numpy's public reader decodes 2.0
        # as Latin-1, so non-ASCII field names go to it as Python escapes ('\\u03a9'),
        # which its literal parser turns back into the same names.
        raw = f.read(width + length)[width:]
        try:
            text = raw.decode("utf-8")
        except UnicodeDecodeError:
            raise CaptureFormatError(bad, path) from None
        escaped = text.encode("ascii", "backslashreplace")
        src = io.BytesIO(len(escaped).to_bytes(4, "little") + escaped)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # a header from Python 2 reads, with a warning
            if version == (1, 0):
                shape, fortran, dtype = npformat.read_array_header_1_0(
                    src, max_header_size=MAX_HEADER_BYTES)
            else:
                shape, fortran, dtype = npformat.read_array_header_2_0(
                    src, max_header_size=4 * MAX_HEADER_BYTES if src is not f
                    else MAX_HEADER_BYTES)
    except Exception:  # noqa: BLE001 - numpy's parser words (TokenError, ValueError...)
        raise CaptureFormatError(bad, path) from None
    if dtype.hasobject:
        raise CaptureFormatError(
            "the .npy file holds Python objects (pickled data), which trueslope does not "
            "load; save a numeric array", path)
    if any(d < 0 for d in shape):
        raise CaptureFormatError(f"the .npy header gives a negative shape {shape}", path)
    return dtype, tuple(shape), bool(fortran), start + width + length


def _open(path: str) -> np.ndarray:
    """The array, memory-mapped read-only; refused before mapping when its header
    is damaged, holds objects, or declares more data than the file has."""
    with open_regular(path) as f:
        size = os.fstat(f.fileno()).st_size
        dtype, shape, fortran, offset = _header(f, path, size)
        count = math.prod(shape)
        nbytes = count * dtype.itemsize
        if len(shape) == 2 and min(shape) > MAX_COLUMNS:
            raise CaptureFormatError(
                f"the array has shape {shape}: {min(shape)} channels whichever way it is "
                f"read; trueslope reads at most {MAX_COLUMNS}", path)
        if dtype.names and len(dtype.names) > MAX_COLUMNS:
            raise CaptureFormatError(
                f"the structured array has {len(dtype.names)} fields; trueslope reads at most "
                f"{MAX_COLUMNS} columns", path)
        if offset + nbytes > size:
            raise CaptureFormatError(
                f"the .npy file is cut short: its header declares shape {shape} of {dtype} "
                f"({nbytes} bytes of data) but only {max(0, size - offset)} bytes follow the "
                f"header at byte {offset}", path)
        if nbytes == 0:
            return np.empty(shape, dtype=dtype)
        return np.memmap(f, dtype=dtype, mode="r", offset=offset, shape=shape,
                         order="F" if fortran else "C")


def _numeric(dtype: np.dtype) -> bool:
    return dtype.kind in "iuf" and dtype.shape == ()


def _copy(src: np.ndarray, progress: Callable[[float], None], cancel: Callable[[], None],
          done: int, total: int) -> np.ndarray:
    out = np.empty(src.shape[0], dtype=np.float64)
    for a in range(0, src.shape[0], BLOCK_SAMPLES):
        cancel()
        b = min(src.shape[0], a + BLOCK_SAMPLES)
        out[a:b] = src[a:b]
        progress(0.02 + 0.9 * (done + b) / total)
    return out


def read_npy(path: str, *, sample_interval_s: float | None = None,
             progress: Callable[[float], None] = lambda f: None,
             cancel: Callable[[], None] = lambda: None) -> Capture:
    """Read a NumPy ``.npy`` capture (see the module docstring).

    Parameters
    ----------
    path : str
        The file (opened read-only).
    sample_interval_s : float, optional
        Seconds per sample when the array has no time axis.
    progress, cancel : callable
        Fraction done; raises Cancelled to stop.

    Returns
    -------
    Capture

    Raises
    ------
    CaptureFormatError
        Not a numeric array of 1 or 2 dimensions (complex, strings, objects,
        3-D...), or not a valid .npy file.
    EmptyCaptureError, TooFewSamplesError, NonFiniteDataError, TimeAxisError,
    NoSampleIntervalError
        As for every layout.
    """
    arr = _open(path)
    progress(0.02)
    warnings: list[TrueslopeWarning] = []
    meta = {"npy dtype": str(arr.dtype), "npy shape": str(tuple(arr.shape))}
    names: list[str]
    sources: list[np.ndarray]
    if arr.dtype.names:
        if arr.ndim != 1:
            raise CaptureFormatError(
                f"a structured array must be 1-D, this one has shape {arr.shape}", path)
        names, sources = [], []
        for name in arr.dtype.names:
            if _numeric(arr.dtype.fields[name][0]):
                names.append(name)
                sources.append(arr[name])
            else:
                warnings.append(TrueslopeWarning(
                    "non-numeric-field", f"field {name!r} is not numeric; it was left out"))
        if not sources:
            raise CaptureFormatError("the structured array has no numeric field", path)
        layout = f"NumPy .npy, structured array with fields {', '.join(names)}"
    else:
        if arr.dtype.kind == "c":
            raise CaptureFormatError(
                f"the array holds complex numbers ({arr.dtype}); save the real samples", path)
        if not _numeric(arr.dtype):
            raise CaptureFormatError(
                f"the array holds {arr.dtype} values, not numbers; expected integer or "
                f"floating-point samples", path)
        if arr.ndim == 0:
            raise CaptureFormatError("the array holds a single number, not a waveform", path)
        if arr.ndim > 2:
            raise CaptureFormatError(
                f"the array has {arr.ndim} dimensions {arr.shape}; expected 1 (one channel) "
                f"or 2 (channels in columns or rows)", path)
        if arr.ndim == 1:
            sources = [arr]
            layout = f"NumPy .npy, {arr.dtype}, 1-D, one channel"
        elif arr.shape[0] >= arr.shape[1]:
            sources = [arr[:, j] for j in range(arr.shape[1])]
            layout = f"NumPy .npy, {arr.dtype}, {arr.shape[1]} columns"
        else:
            sources = [arr[i, :] for i in range(arr.shape[0])]
            layout = f"NumPy .npy, {arr.dtype}, {arr.shape[0]} rows of channels"
        names = [""] * len(sources)
        if arr.dtype.kind in "iu":
            warnings.append(TrueslopeWarning(
                "integer-samples",
                f"the array holds integers ({arr.dtype}); they were taken as volts unscaled"))
    if not sources or sources[0].shape[0] == 0:
        raise EmptyCaptureError("the array holds no samples", path)
    units = column_units(names, path, None)
    total = sum(s.shape[0] for s in sources)
    columns, done = [], 0
    for j, (src, (name, quantity, scale)) in enumerate(zip(sources, units)):
        values = _copy(src, progress, cancel, done, total)
        done += src.shape[0]
        columns.append(Column(values=values, name=name, quantity=quantity, number=j + 1,
                              scale=scale))
    del sources, arr  # release the memory map
    return assemble(columns, path=path, locate=SampleLocator(), layout=layout, metadata=meta,
                    warnings=warnings, sample_interval_s=sample_interval_s, cancel=cancel)
