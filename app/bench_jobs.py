"""Background work of the bench comparison: frozen requests run on a :class:`JobRunner`.

:class:`BenchRequest` measures the captures not measured yet (one after the other,
in the worker thread, through :func:`trueslope.core.compare.measure_files` with
``jobs=1``), reads the limits file, and compares everything
(:func:`trueslope.core.compare.compare`). :class:`TaskRequest` runs one file task
(write a report, save or open a session) off the GUI thread. Both go through
:class:`~trueslope.app.jobs.JobRunner`, so a superseded request is cancelled and
its late answer dropped by its id.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from trueslope.core.compare import Comparison, MeasuredFile, compare, measure_files
from trueslope.core.errors import TrueslopeError
from trueslope.core.limits import Limits, read_limits
from trueslope.core.settings import Settings

from .jobs import CancelFn, ProgressFn

#: The error type of a capture whose file changed since its session was saved.
CHANGED = "SessionChanged"
#: Words for a changed file's reason (``Session.changed_files``).
CHANGE_WORDS = {"missing": "missing or unreadable", "size": "its size changed",
                "content": "its content changed"}


@dataclass(frozen=True)
class BenchInput:
    """One capture of the bench as the worker sees it.

    ``measured`` is its earlier answer (reused as is), None to measure it now;
    ``changed`` the reason its file differs from the session it came from (then it is
    never measured: it becomes an error entry saying so).
    """

    path: str
    settings: Settings
    sample_interval_s: float | None = None
    group: str | None = None
    measured: MeasuredFile | None = None
    changed: str | None = None


@dataclass(frozen=True)
class BenchRequest:
    """Measure what is new and compare the bench.

    Attributes
    ----------
    id : int
    inputs : tuple of BenchInput
        Every capture, in table order.
    reference : str or None
        The reference capture's path (None: the first good one).
    patterns : tuple of (group, glob)
        Groups by file name, for captures without a typed group.
    limits_path : str or None
        The limits file to judge against.
    """

    id: int
    inputs: tuple[BenchInput, ...]
    reference: str | None = None
    patterns: tuple[tuple[str, str], ...] = ()
    limits_path: str | None = None


@dataclass(frozen=True)
class BenchAnswer:
    """What a :class:`BenchRequest` found: each capture's entry and file size (bytes,
    None when unreadable) by path, the comparison (None with no captures), the limits
    read, and the refusal of the limits file or the reference, if any."""

    measured: dict[str, MeasuredFile]
    sizes: dict[str, int | None]
    comparison: Comparison | None
    limits: Limits | None = None
    limits_error: str | None = None
    reference_error: str | None = None


def changed_entry(path: str, reason: str) -> MeasuredFile:
    """The entry of a capture that changed on disk since its session: flagged, not measured."""
    return MeasuredFile(path=path, sha256=None, error_type=CHANGED,
                        error_message=f"{Path(path).name}: changed on disk since the session "
                                      f"was saved ({CHANGE_WORDS.get(reason, reason)}); not "
                                      f"compared as if it were the same capture")


def _size(path: str) -> int | None:
    try:
        return os.stat(path).st_size
    except OSError:
        return None


def run_bench(req: BenchRequest, progress: ProgressFn, cancel: CancelFn) -> BenchAnswer:
    """Measure the new captures and compare them all (runs on a worker thread)."""
    todo = [i for i in req.inputs if i.measured is None and i.changed is None]
    sizes = {i.path: _size(i.path) for i in todo}
    fresh: dict[str, MeasuredFile] = {}
    # One file at a time, each with its own settings and interval: capture files of
    # several instruments may sit side by side.
    for k, item in enumerate(todo):
        def part(f: float, k: int = k) -> None:
            progress(0.95 * (k + f) / max(len(todo), 1))
        (m,) = measure_files([item.path], settings_for=lambda _p, s=item.settings: s, jobs=1,
                             progress=part, cancel=cancel,
                             sample_interval_s=item.sample_interval_s)
        fresh[item.path] = m
    limits = limits_error = None
    if req.limits_path:
        try:
            limits = read_limits(req.limits_path)
        except TrueslopeError as exc:
            limits_error = str(exc)
    entries = []
    for i in req.inputs:
        m = (changed_entry(i.path, i.changed) if i.changed is not None
             else i.measured if i.measured is not None else fresh.get(i.path))
        if m is None:
            continue
        entries.append(MeasuredFile(m.path, m.sha256, m.analysis, m.error_type,
                                    m.error_message, group=i.group))
    comparison = reference_error = None
    if entries:
        patterns = dict(req.patterns) or None
        try:
            comparison = compare(entries, reference=req.reference, groups=patterns,
                                 limits=limits)
        except TrueslopeError as exc:  # the reference left the good captures
            reference_error = str(exc)
            comparison = compare(entries, groups=patterns, limits=limits)
    progress(1.0)
    return BenchAnswer({m.path: m for m in entries}, sizes, comparison, limits, limits_error,
                       reference_error)


@dataclass(frozen=True)
class TaskRequest:
    """One file task off the GUI thread: ``work(progress, cancel)`` returns what the
    window shows (a status line, or a loaded object); ``label`` names it."""

    id: int
    label: str
    work: Callable[[ProgressFn, CancelFn], Any] = field(compare=False)


def run_task(req: TaskRequest, progress: ProgressFn, cancel: CancelFn) -> Any:
    """Run a :class:`TaskRequest` (worker thread)."""
    progress(0.0)
    out = req.work(progress, cancel)
    progress(1.0)
    return out
