"""Background work for the window: frozen requests with ids, run on a thread pool.

The window never calls the core on its own thread. It builds a frozen request
(:class:`OpenRequest` to read and measure a file, :class:`AnalyseRequest` to
measure an already loaded capture again), hands it to :class:`JobRunner`,
and gets the answer back as a Qt signal on the GUI thread. Each request has
an id; the runner remembers only the newest one, so a late answer to an
older request (the user dragged the band twice, or opened another file) is
recognised by its id and dropped. A new request raises the cancel flag of
the one it replaces, so superseded work stops early.

Progress and cancel reach the core through its plain callbacks
(``progress(fraction)`` and ``cancel() -> bool``); the cancel flag is a
:class:`threading.Event`.
"""

from __future__ import annotations

import itertools
import math
import threading
import time
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Callable, TypeVar, Union

import numpy as np
from PySide6 import QtCore

from trueslope.core.capture import Capture
from trueslope.core.errors import (AnalysisError, Cancelled, ChannelNotFoundError,
                                   SettingsError)
from trueslope.core.settings import Settings

if TYPE_CHECKING:
    from trueslope.core.results import Analysis

#: ``progress(fraction)`` and ``cancel() -> bool``, as the core takes them.
ProgressFn = Callable[[float], None]
CancelFn = Callable[[], bool]

#: Smallest change of the progress fraction worth a signal, and the longest
#: quiet time between two progress signals (seconds): the core may report
#: progress thousands of times a second, and every signal costs the GUI thread.
_PROGRESS_STEP = 0.01
_PROGRESS_QUIET_S = 0.1


@dataclass(frozen=True)
class OpenRequest:
    """Read a capture file and measure it.

    Attributes
    ----------
    id : int
        Unique, increasing id given by :meth:`JobRunner.new_id`.
    path : str
        File to read (opened for reading only).
    settings : Settings
        How to measure it.
    sample_interval_s : float or None
        Sample interval for files without a time column, seconds.
    """

    id: int
    path: str
    settings: Settings
    sample_interval_s: float | None = None


@dataclass(frozen=True)
class AnalyseRequest:
    """Measure an already loaded capture again with new settings.

    Attributes
    ----------
    id : int
        Unique, increasing id given by :meth:`JobRunner.new_id`.
    capture : Capture
        The capture in the window (reused: the file is not read again).
    settings : Settings
        The new settings (a moved window, another channel, a circuit context).
    reason : str
        What the user did, for the status line ("window moved", ...).
    """

    id: int
    capture: Capture
    settings: Settings
    reason: str = ""


#: Every request the runner takes.
Request = Union[OpenRequest, AnalyseRequest]
R = TypeVar("R", OpenRequest, AnalyseRequest)


@dataclass(frozen=True)
class TraceData:
    """What the trace view draws, prepared off the GUI thread.

    Attributes
    ----------
    time_s : ndarray
        Time of every sample, seconds.
    voltage_v : ndarray
        The measured channel, volts.
    all_finite : bool
        True when ``voltage_v`` holds no NaN or infinity (lets the plot skip
        its own check on millions of points).
    voltage_range_v : (float, float) or None
        Least and greatest voltage (of the finite ones), when known: the plot
        then need not search millions of points for its bounds on the GUI thread.
    """

    time_s: np.ndarray
    voltage_v: np.ndarray
    all_finite: bool
    voltage_range_v: tuple[float, float] | None = None


@dataclass(frozen=True)
class JobResult:
    """The answer to an :class:`OpenRequest` or an :class:`AnalyseRequest`.

    Attributes
    ----------
    capture : Capture
        The capture measured.
    analysis : Analysis or None
        The measurement; None when the capture was read but could not be
        measured (then ``analysis_error`` says why).
    trace : TraceData or None
        The measured channel, ready to draw.
    analysis_error : Exception or None
        Why a readable capture could not be measured.
    elapsed_s : float
        Wall time of the job, seconds.
    """

    capture: Capture
    analysis: Analysis | None
    trace: TraceData | None
    analysis_error: Exception | None = None
    elapsed_s: float = 0.0


def trace_for(capture: Capture, channel: str) -> TraceData:
    """Time and voltage of one channel, ready to plot."""
    _, v = capture.channel(channel)
    if not v.size:
        return TraceData(capture.time_s(), v, True)
    # a NaN makes both bounds NaN and an infinity one of them: finite bounds, finite samples
    lo, hi = float(np.min(v)), float(np.max(v))
    finite = math.isfinite(lo) and math.isfinite(hi)
    return TraceData(capture.time_s(), v, finite, (lo, hi) if finite else None)


def _raw_trace(capture: Capture, channel: str | int | None) -> TraceData | None:
    """The asked-for channel of a capture that could not be measured, else its first,
    so the window can show what was read."""
    for ch in (channel, 0):
        if ch is None:
            continue
        try:
            return trace_for(capture, capture.channel(ch)[0])
        except (ChannelNotFoundError, IndexError, ValueError):
            continue
    return None


#: Errors raised after the file was read: the capture is fine, this channel
#: (or these settings) cannot be measured.
_MEASURE_ERRORS = (AnalysisError, SettingsError, ChannelNotFoundError)

#: What a job does with its request: ``fn(request, progress, cancel) -> JobResult``.
JobFn = Callable[[R, ProgressFn, CancelFn], JobResult]


def run_open(req: OpenRequest, progress: ProgressFn, cancel: CancelFn) -> JobResult:
    """Read and measure a file (runs on a worker thread).

    One call to :func:`trueslope.core.analysis.load_and_analyse`, which splits
    the progress between reading and measuring. A capture that reads but
    cannot be measured is returned with the error, so the window can offer
    another channel; errors of the read are raised.
    """
    from trueslope.core.analysis import load_and_analyse

    t0 = time.perf_counter()
    try:
        capture, analysis = load_and_analyse(req.path, req.settings, req.sample_interval_s,
                                             progress=progress, cancel=cancel)
    except _MEASURE_ERRORS as exc:
        # load_and_analyse keeps the capture to itself when the measuring fails;
        # read it again (only in this case) so the window can offer the others.
        from trueslope.core.io import load_capture
        capture = load_capture(req.path, sample_interval_s=req.sample_interval_s, cancel=cancel)
        return JobResult(capture, None, _raw_trace(capture, req.settings.channel), exc,
                         time.perf_counter() - t0)
    return _answer(capture, analysis, progress, t0)


def run_analyse(req: AnalyseRequest, progress: ProgressFn, cancel: CancelFn) -> JobResult:
    """Measure a loaded capture again (runs on a worker thread)."""
    from trueslope.core.analysis import analyse

    t0 = time.perf_counter()
    try:
        analysis = analyse(req.capture, req.settings, progress=progress, cancel=cancel)
    except _MEASURE_ERRORS as exc:
        return JobResult(req.capture, None, None, exc, time.perf_counter() - t0)
    return _answer(req.capture, analysis, progress, t0)


def _answer(capture: Capture, analysis: Analysis, progress: ProgressFn, t0: float) -> JobResult:
    trace = trace_for(capture, analysis.channel)
    progress(1.0)
    return JobResult(capture, analysis, trace, None, time.perf_counter() - t0)


class _Signals(QtCore.QObject):
    # Emitted from the worker thread; the receiver lives on the GUI thread,
    # so Qt queues them there.
    progress = QtCore.Signal(object, float)
    done = QtCore.Signal(object, object)
    failed = QtCore.Signal(object, object)
    cancelled = QtCore.Signal(object)


class _Job:
    """One request's work on the pool: a plain object whose ``run`` the pool is given as a
    callable, so that no Qt wrapper (a Python subclass of QRunnable) is deleted by the pool
    on its worker thread (see ``JobRunner._retire``)."""

    def __init__(self, request: R, fn: JobFn[R], flag: threading.Event,
                 signals: _Signals) -> None:
        self.request = request
        self.fn = fn
        self.flag = flag
        self.signals = signals

    def run(self) -> None:  # worker thread
        last = [-1.0, 0.0]

        def progress(fraction: float) -> None:
            now = time.monotonic()
            if (fraction - last[0] >= _PROGRESS_STEP or now - last[1] >= _PROGRESS_QUIET_S
                    or fraction >= 1.0):
                last[0], last[1] = fraction, now
                self.signals.progress.emit(self.request, float(fraction))

        try:
            result = self.fn(self.request, progress, self.flag.is_set)
        except Cancelled:
            self.signals.cancelled.emit(self.request)
        except BaseException as exc:  # noqa: BLE001 - every failure must reach the user
            if self.flag.is_set():
                self.signals.cancelled.emit(self.request)
            else:
                self.signals.failed.emit(self.request, exc)
        else:
            if self.flag.is_set():
                self.signals.cancelled.emit(self.request)
            else:
                self.signals.done.emit(self.request, result)


@dataclass
class _Running:
    request: Request
    flag: threading.Event
    signals: _Signals = field(repr=False)


class JobRunner(QtCore.QObject):
    """Runs one request at a time on a thread pool and keeps only the newest answer.

    Signals carry the request, so the receiver knows what was asked. Only
    answers to the current request are forwarded; answers to superseded
    requests are dropped (counted in :attr:`dropped`).
    """

    progress = QtCore.Signal(object, float)
    finished = QtCore.Signal(object, object)
    failed = QtCore.Signal(object, object)
    cancelled = QtCore.Signal(object)
    busy_changed = QtCore.Signal(bool)

    def __init__(self, parent: QtCore.QObject | None = None) -> None:
        super().__init__(parent)
        self._pool = QtCore.QThreadPool(self)
        # Two threads: a superseded job may still be winding down while the
        # new one starts.
        self._pool.setMaxThreadCount(2)
        self._ids = itertools.count(1)
        self._running: dict[int, _Running] = {}
        self._retired: list[_Signals] = []
        self._current: int | None = None
        self.dropped = 0

    def new_id(self) -> int:
        """A fresh request id (increasing)."""
        return next(self._ids)

    @property
    def current(self) -> Request | None:
        """The request whose answer the window is waiting for, or None."""
        run = self._running.get(self._current) if self._current is not None else None
        return None if run is None else run.request

    @property
    def busy(self) -> bool:
        return self.current is not None

    def submit(self, request: R, fn: JobFn[R]) -> None:
        """Start ``fn(request, progress, cancel)`` on the pool; it supersedes the current one."""
        was_busy = self.busy
        self._retired.clear()  # their jobs ended before the answers that retired them
        if self._current is not None and self._current in self._running:
            self._running[self._current].flag.set()
        flag = threading.Event()
        signals = _Signals()
        signals.progress.connect(self._on_progress)
        signals.done.connect(self._on_done)
        signals.failed.connect(self._on_failed)
        signals.cancelled.connect(self._on_cancelled)
        self._running[request.id] = _Running(request, flag, signals)
        self._current = request.id
        self._pool.start(_Job(request, fn, flag, signals).run)
        if not was_busy:
            self.busy_changed.emit(True)

    def cancel(self) -> None:
        """Raise the cancel flag of the current request."""
        if self._current is not None and self._current in self._running:
            self._running[self._current].flag.set()

    def shutdown(self, wait_ms: int = 3000) -> None:
        """Cancel everything and wait a little for the workers to stop."""
        for run in self._running.values():
            run.flag.set()
        self._pool.waitForDone(wait_ms)

    def wait_idle(self, wait_ms: int = 30000) -> bool:
        """Block until the pool is idle (tests and the screenshot mode)."""
        return self._pool.waitForDone(wait_ms)

    # -- answers from the workers (GUI thread) --------------------------------

    def _is_current(self, request: Request) -> bool:
        return request.id == self._current

    def _retire(self, request: Request) -> bool:
        run = self._running.pop(request.id, None)
        if run is not None:
            run.signals.deleteLater()
            # The worker still holds the signals for the few instructions after its last
            # emit; were its reference the last, the wrapper would be freed on the worker
            # thread, whose taking of the bindings' lock there can deadlock with the garbage
            # collector on this thread. Keep it here until the next request.
            self._retired.append(run.signals)
        current = self._is_current(request)
        if current:
            self._current = None
            self.busy_changed.emit(False)
        else:
            self.dropped += 1
        return current

    def _on_progress(self, request: Request, fraction: float) -> None:
        if self._is_current(request):
            self.progress.emit(request, fraction)

    def _on_done(self, request: Request, result: JobResult) -> None:
        if self._retire(request):
            self.finished.emit(request, result)

    def _on_failed(self, request: Request, exc: BaseException) -> None:
        if self._retire(request):
            self.failed.emit(request, exc)

    def _on_cancelled(self, request: Request) -> None:
        if self._retire(request):
            self.cancelled.emit(request)
