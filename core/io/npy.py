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

from typing import Callable

import numpy as np

from ..capture import Capture
from ..errors import CaptureFormatError, EmptyCaptureError, TrueslopeWarning
from ._assemble import Column, SampleLocator, assemble, column_units

#: Samples copied per block (progress and cancel are checked between blocks).
BLOCK_SAMPLES = 1 << 20


def _open(path: str) -> np.ndarray:
    try:
        arr = np.load(path, mmap_mode="r", allow_pickle=False)
    except ValueError as exc:
        if "pickle" in str(exc).lower() or "object" in str(exc).lower():
            raise CaptureFormatError(
                "the .npy file holds Python objects (pickled data), which trueslope does not "
                "load; save a numeric array", path) from None
        try:  # some arrays (empty ones) cannot be memory-mapped
            arr = np.load(path, allow_pickle=False)
        except Exception as exc2:  # noqa: BLE001
            raise CaptureFormatError(f"not a readable .npy file ({exc2})", path) from None
    except (OSError, EOFError) as exc:
        raise CaptureFormatError(f"not a readable .npy file ({exc})", path) from None
    if not isinstance(arr, np.ndarray):
        if hasattr(arr, "close"):
            arr.close()
        raise CaptureFormatError(
            "this is an .npz archive of several arrays; save one array with numpy.save", path)
    return arr


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
        if scale != 1.0:
            values *= scale
        columns.append(Column(values=values, name=name, quantity=quantity, number=j + 1))
    del sources, arr  # release the memory map
    return assemble(columns, path=path, locate=SampleLocator(), layout=layout, metadata=meta,
                    warnings=warnings, sample_interval_s=sample_interval_s, cancel=cancel)
