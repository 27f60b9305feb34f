"""The worker machinery: request ids, stale answers dropped, cancel, errors delivered."""

from __future__ import annotations

import threading
import time

import pytest

from trueslope.app.jobs import AnalyseRequest, JobRunner
from trueslope.core.capture import Capture
from trueslope.core.errors import Cancelled
from trueslope.core.settings import Settings

_CAP = Capture(source="mem", channels={"a": __import__("numpy").zeros(4)}, sample_interval_s=1.0)


def _req(runner: JobRunner, reason: str = "") -> AnalyseRequest:
    return AnalyseRequest(runner.new_id(), _CAP, Settings(), reason)


def test_request_is_frozen_and_ids_increase(qtbot):
    runner = JobRunner()
    a, b = _req(runner), _req(runner)
    assert b.id > a.id
    with pytest.raises(AttributeError):
        a.reason = "changed"  # type: ignore[misc]


def test_late_answer_to_old_request_is_dropped(qtbot):
    runner = JobRunner()
    release = threading.Event()

    def slow(req, progress, cancel):
        release.wait(5)
        return "old"

    def fast(req, progress, cancel):
        return "new"

    got = []
    runner.finished.connect(lambda req, result: got.append((req.reason, result)))
    old = _req(runner, "first")
    runner.submit(old, slow)
    new = _req(runner, "second")
    with qtbot.waitSignal(runner.finished, timeout=5000):
        runner.submit(new, fast)
    release.set()
    assert runner.wait_idle(5000)
    qtbot.wait(50)  # let the old job's queued signal arrive, to be dropped
    assert got == [("second", "new")]
    assert runner.dropped == 1
    assert not runner.busy


def test_new_request_raises_the_old_cancel_flag(qtbot):
    runner = JobRunner()
    seen = {}
    started = threading.Event()

    def watch(req, progress, cancel):
        started.set()
        t0 = time.monotonic()
        while not cancel() and time.monotonic() - t0 < 5:
            time.sleep(0.005)
        seen["cancelled"] = cancel()
        raise Cancelled("stopped")

    runner.submit(_req(runner), watch)
    assert started.wait(5)
    with qtbot.waitSignal(runner.finished, timeout=5000):
        runner.submit(_req(runner), lambda r, p, c: "ok")
    assert runner.wait_idle(5000)
    assert seen["cancelled"] is True


def test_cancel_reports_cancelled_and_progress_arrives(qtbot):
    runner = JobRunner()
    fractions = []
    runner.progress.connect(lambda req, f: fractions.append(f))

    def work(req, progress, cancel):
        for i in range(1000):
            progress(i / 1000)
            if cancel():
                raise Cancelled("stopped")
            time.sleep(0.002)
        return "finished"

    req = _req(runner)
    with qtbot.waitSignal(runner.cancelled, timeout=10000) as blocker:
        runner.submit(req, work)
        qtbot.waitUntil(lambda: len(fractions) >= 3, timeout=5000)
        runner.cancel()
    assert blocker.args[0] is req
    assert fractions == sorted(fractions)
    assert 0 < len(fractions) < 1000  # throttled, not one signal per call


def test_worker_error_is_delivered_not_lost(qtbot):
    runner = JobRunner()

    def broken(req, progress, cancel):
        raise RuntimeError("disk on fire")

    with qtbot.waitSignal(runner.failed, timeout=5000) as blocker:
        runner.submit(_req(runner), broken)
    assert isinstance(blocker.args[1], RuntimeError)
    assert "disk on fire" in str(blocker.args[1])
