"""Following a folder: each new capture written into it joins the comparison once complete.

An instrument (or a colleague's script) writes an export over some time; a file is
taken only once it has stopped growing: its size and modification time unchanged
for :data:`SETTLE_S` seconds. The folder is listed every :data:`POLL_MS`
milliseconds by a worker (a network share may be slow to answer), never on the
GUI thread. Files already there when following starts are left alone, as are
hidden files (an atomic writer's temporary names start with a dot) and files whose
suffix is not a capture's.
"""

from __future__ import annotations

import os
import time
from dataclasses import dataclass
from pathlib import Path

from PySide6 import QtCore

from trueslope.core.compare_cli import CAPTURE_SUFFIXES

from .jobs import CancelFn, JobRunner, ProgressFn

#: How often the folder is listed, milliseconds.
POLL_MS = 250
#: How long a file's size and time must stay the same before it is taken, seconds.
SETTLE_S = 1.0


@dataclass(frozen=True)
class ScanRequest:
    id: int
    folder: str


def scan(req: ScanRequest, _progress: ProgressFn, _cancel: CancelFn
         ) -> dict[str, tuple[int, int]]:
    """Size and modification time (ns) of each capture file in the folder (worker thread)."""
    out: dict[str, tuple[int, int]] = {}
    with os.scandir(req.folder) as it:
        for e in it:
            if e.name.startswith(".") or Path(e.name).suffix.lower() not in CAPTURE_SUFFIXES:
                continue
            try:
                if e.is_file():
                    st = e.stat()
                    out[e.path] = (st.st_size, st.st_mtime_ns)
            except OSError:
                continue
    return out


class FolderFollower(QtCore.QObject):
    """Watches one folder and emits :attr:`file_ready` once per new, complete capture.

    Signals
    -------
    file_ready(str)
        A new file that has stopped growing (its path).
    failed(str)
        The folder cannot be listed any more (following stops).
    """

    file_ready = QtCore.Signal(str)
    failed = QtCore.Signal(str)

    def __init__(self, parent: QtCore.QObject | None = None, settle_s: float = SETTLE_S,
                 poll_ms: int = POLL_MS) -> None:
        super().__init__(parent)
        self.settle_s = settle_s
        self.folder: str | None = None
        self._runner = JobRunner(self)
        self._runner.finished.connect(self._on_scan)
        self._runner.failed.connect(self._on_failed)
        self._timer = QtCore.QTimer(self)
        self._timer.setInterval(poll_ms)
        self._timer.timeout.connect(self._poll)
        self._known: set[str] = set()
        self._seen: dict[str, tuple[tuple[int, int], float]] = {}
        self._first = True

    @property
    def active(self) -> bool:
        return self.folder is not None

    def start(self, folder: str) -> None:
        """Follow ``folder``: what is in it now is known; only what comes later is taken."""
        self.stop()
        self.folder = str(Path(folder).resolve())
        self._first = True
        self._poll()
        self._timer.start()

    def stop(self) -> None:
        self._timer.stop()
        self._runner.cancel()
        self.folder = None
        self._known.clear()
        self._seen.clear()

    def shutdown(self) -> None:
        self.stop()
        self._runner.shutdown()

    def _poll(self) -> None:
        if self.folder is not None and not self._runner.busy:
            self._runner.submit(ScanRequest(self._runner.new_id(), self.folder), scan)

    def _on_scan(self, req: ScanRequest, found: dict[str, tuple[int, int]]) -> None:
        if req.folder != self.folder:
            return
        if self._first:  # the folder as it was when following began
            self._known = set(found)
            self._first = False
            return
        now = time.monotonic()
        for path, stamp in found.items():
            if path in self._known:
                continue
            before = self._seen.get(path)
            if before is None or before[0] != stamp:
                self._seen[path] = (stamp, now)  # new, or still growing
            elif stamp[0] > 0 and now - before[1] >= self.settle_s:
                self._known.add(path)
                self._seen.pop(path, None)
                self.file_ready.emit(path)
        for path in set(self._seen) - set(found):
            self._seen.pop(path)  # renamed away before it settled

    def _on_failed(self, req: ScanRequest, exc: BaseException) -> None:
        if req.folder != self.folder:
            return
        name = Path(req.folder).name or req.folder
        self.stop()
        self.failed.emit(f"Stopped following {name}: the folder cannot be listed "
                         f"({getattr(exc, 'strerror', None) or type(exc).__name__}).")
