"""Reading capture files: one reader per layout, one entry point.

:func:`load_capture` looks at the first bytes of the file (and its name) and
hands it to the reader of that layout:

=====================  ==========================================  =====================
layout                 recognised by                               reader
=====================  ==========================================  =====================
NumPy ``.npy``         the ``\\x93NUMPY`` magic                     :mod:`.npy`
PCM / float WAV        ``RIFF``/``RF64`` ... ``WAVE``               :mod:`.wav`
delimited text         anything else (``.csv .txt .tsv .dat`` ...)  :mod:`.delimited`
=====================  ==========================================  =====================

Every reader builds :class:`~trueslope.core.io._assemble.Column` objects and
calls :func:`~trueslope.core.io._assemble.assemble`, so the rules about time
columns, index columns, finite samples and the sample interval are the same
for all layouts. Files are only ever opened for reading.
"""

from __future__ import annotations

import math
import os
from pathlib import Path
from typing import Callable

from ..capture import Capture
from ..errors import (Cancelled, CaptureError, CaptureFormatError, CaptureReadError,
                      SettingsError, TrueslopeError)
from ._assemble import MAX_INTERVAL_S, MIN_INTERVAL_S
from ._files import open_regular
from .delimited import read_delimited
from .npy import read_npy
from .wav import read_wav

__all__ = ["load_capture", "READERS", "TEXT_SUFFIXES"]

#: File name endings the open dialog offers as text captures (any text is tried).
TEXT_SUFFIXES = (".csv", ".txt", ".tsv", ".dat")


def _is_npy(magic: bytes, suffix: str) -> bool:
    return magic.startswith(b"\x93NUMPY")


def _is_wav(magic: bytes, suffix: str) -> bool:
    return magic[:4] in (b"RIFF", b"RF64") and magic[8:12] == b"WAVE"


#: (name, test on the first 16 bytes and the lower-case suffix, reader, suffix it owns).
#: The first test that passes picks the reader; delimited text is the fallback.
READERS = (
    ("NumPy .npy", _is_npy, read_npy, ".npy"),
    ("WAV", _is_wav, read_wav, ".wav"),
)


class _CallbackFailed(Exception):
    """Carries an exception raised by the caller's own progress or cancel function."""

    def __init__(self, original: BaseException) -> None:
        super().__init__(str(original))
        self.original = original


class _Progress:
    """Forwards a fraction that only ever rises, 0 first and 1 last."""

    def __init__(self, fn: Callable[[float], None] | None) -> None:
        self.fn = fn
        self.last = -1.0

    def __call__(self, fraction: float) -> None:
        f = min(1.0, max(0.0, float(fraction)))
        if self.fn is None or f <= self.last:
            return
        self.last = f
        try:
            self.fn(f)
        except Exception as exc:  # noqa: BLE001 - re-raised unchanged by load_capture
            raise _CallbackFailed(exc) from exc


def _canceller(cancel: Callable[[], bool] | None, path: str) -> Callable[[], None]:
    def check() -> None:
        if cancel is None:
            return
        try:
            stop = cancel()
        except Exception as exc:  # noqa: BLE001
            raise _CallbackFailed(exc) from exc
        if stop:
            raise Cancelled(f"reading {Path(path).name} was cancelled")
    return check


def load_capture(path: str | os.PathLike, *, sample_interval_s: float | None = None,
                 progress: Callable[[float], None] | None = None,
                 cancel: Callable[[], bool] | None = None) -> Capture:
    """Read a capture file of any supported layout.

    Parameters
    ----------
    path : str or PathLike
        The file. It is opened for reading only and never changed.
    sample_interval_s : float, optional
        Seconds between samples, for files that carry no time of their own
        (no time column, no sample rate). It overrides an interval found in a
        text preamble; a time column or a WAV sample rate wins over it (with
        a warning when they disagree by more than 1 %).
    progress : callable, optional
        Called with the fraction done, rising from 0.0 to exactly 1.0.
    cancel : callable, optional
        Polled while reading; when it returns True the read stops and
        :class:`~trueslope.core.errors.Cancelled` is raised.

    Returns
    -------
    Capture
        Channels in float64 volts keyed by header name (or ``CH1``, ``CH2``
        ... without a header), the sample interval and start time in seconds,
        preamble metadata, typed warnings and a description of the layout.

    Raises
    ------
    CaptureReadError
        The file cannot be opened (missing, a folder, no permission), or is not a
        regular file (a FIFO, a device, a system file under /proc): only regular
        files are opened, so nothing blocks or reads forever.
    EmptyCaptureError, CaptureFormatError, RaggedRowsError, UnknownUnitError,
    TimeAxisError, NonFiniteDataError, TooFewSamplesError, NoSampleIntervalError
        The content cannot be read as a waveform; the message names the file,
        the line (for text) and what was expected.
    SettingsError
        ``sample_interval_s`` is not a number of seconds between
        ``MIN_INTERVAL_S`` and ``MAX_INTERVAL_S``.
    Cancelled
        ``cancel()`` returned True.

    Notes
    -----
    Nothing but the errors of :mod:`trueslope.core.errors` leaves this
    function, except what the caller's own ``progress`` or ``cancel`` raise,
    which passes through unchanged.
    """
    try:
        p = os.fspath(path)
    except TypeError:
        raise CaptureReadError(f"expected a file path, got {type(path).__name__}") from None
    if isinstance(p, bytes):
        p = os.fsdecode(p)
    if sample_interval_s is not None:
        try:
            dt = float(sample_interval_s)
        except (TypeError, ValueError):
            dt = math.nan
        if not (math.isfinite(dt) and dt > 0):
            raise SettingsError(
                f"the sample interval must be a positive number of seconds, got {sample_interval_s!r}",
                field="sample_interval")
        if not MIN_INTERVAL_S <= dt <= MAX_INTERVAL_S:
            raise SettingsError(
                f"the sample interval {dt:g} s is outside what a bench instrument samples at "
                f"({MIN_INTERVAL_S:g} s to {MAX_INTERVAL_S:g} s)", field="sample_interval")
        sample_interval_s = dt
    report = _Progress(progress)
    check = _canceller(cancel, p)
    try:
        report(0.0)
        check()
        with open_regular(p) as f:
            size = os.fstat(f.fileno()).st_size
            magic = f.read(16)
        if size == 0 and magic:
            raise CaptureReadError(
                "is not a regular file on disk: it reports a size of 0 bytes yet has content "
                "(a system file, such as those under /proc); expected a capture file saved "
                "on disk", p)
        suffix = Path(p).suffix.lower()
        reader = None
        for name, test, read, own_suffix in READERS:
            if test(magic, suffix):
                reader = read
                break
        if reader is None:
            for name, test, read, own_suffix in READERS:
                if suffix == own_suffix:
                    raise CaptureFormatError(
                        f"the name ends in {own_suffix} but the content is not a {name} file "
                        f"(its header is missing)", p)
            reader = read_delimited
        capture = reader(p, sample_interval_s=sample_interval_s, progress=report, cancel=check)
        report(1.0)
        return capture
    except _CallbackFailed as exc:
        raise exc.original from None
    except TrueslopeError:
        raise
    except MemoryError:
        raise CaptureError("not enough memory to hold the samples of this file", p) from None
    except OSError as exc:
        raise CaptureReadError(
            f"reading failed: {exc.strerror or 'the system refused'}", p) from None
    except Exception as exc:  # noqa: BLE001 - no library exception may leave core
        # Python's own words (a ZeroDivisionError, a tokenizer error) mean nothing at the
        # bench; the original stays chained for a developer.
        raise CaptureFormatError(
            "could not be read as a capture: the content is damaged or is not a layout "
            "trueslope reads (delimited text, a NumPy .npy file or a WAV file)", p) from exc
