"""Start the bench window (``trueslope`` / ``trueslope open FILE``), or render a screenshot.

:func:`launch` is what the command dispatcher in :mod:`trueslope.app.cli`
calls once it has parsed the options.
"""

from __future__ import annotations

import os
import sys
import threading
from pathlib import Path

#: Size of the window in screenshot mode, pixels: wide enough for every panel.
SCREENSHOT_SIZE = (1600, 1000)
#: Smallest and largest window a ``--size`` may ask for, pixels.
SIZE_LIMITS = ((640, 400), (7680, 4320))


def parse_size(text: str) -> tuple[int, int]:
    """``"1280x720"`` -> ``(1280, 720)``; raises ``ValueError`` with a one-line reason."""
    parts = text.lower().replace("×", "x").split("x")
    try:
        w, h = (int(p.strip()) for p in parts)
    except ValueError:
        raise ValueError(f"give the size as WIDTHxHEIGHT in pixels, e.g. 1280x720, "
                         f"not {text!r}") from None
    (w0, h0), (w1, h1) = SIZE_LIMITS
    if not (w0 <= w <= w1 and h0 <= h <= h1):
        raise ValueError(f"{w}x{h} is outside {w0}x{h0} to {w1}x{h1}")
    return w, h
#: Longest wait for the analysis in screenshot mode, milliseconds.
SCREENSHOT_TIMEOUT_MS = 300_000


#: What the first analysis imports, imported on a background thread while Qt starts.
ANALYSIS_MODULES = ("trueslope.core.analysis", "trueslope.core.io", "trueslope.core.report",
                    "pyarrow.csv")


def preload_analysis() -> threading.Thread:
    """Import the analysis modules on a daemon thread, so that opening the first capture
    does not wait for them (the imports overlap Qt's start-up and the first paint)."""
    def work() -> None:
        import importlib
        for name in ANALYSIS_MODULES:
            try:
                importlib.import_module(name)
            except Exception:  # noqa: BLE001  the job that needs it reports the failure
                return
    t = threading.Thread(target=work, name="trueslope-preload", daemon=True)
    t.start()
    return t


def _headless() -> bool:
    return (sys.platform.startswith("linux") and not os.environ.get("DISPLAY")
            and not os.environ.get("WAYLAND_DISPLAY"))


def make_app(argv: list[str] | None = None):
    """The QApplication (created once), with our names and pyqtgraph's options set."""
    from PySide6 import QtWidgets
    import pyqtgraph as pg

    from .store import APPLICATION, ORGANISATION

    app = QtWidgets.QApplication.instance()
    if app is None:
        app = QtWidgets.QApplication(argv if argv is not None else sys.argv[:1])
    app.setOrganizationName(ORGANISATION)
    app.setApplicationName(APPLICATION)
    app.setApplicationDisplayName("trueslope")
    from .icon import set_app_icon
    set_app_icon(app)
    # Antialiasing millions of points costs far more than it shows; the
    # short fit and residual curves look fine without it too.
    pg.setConfigOptions(antialias=False, useOpenGL=False)
    return app


def launch(path: str | None = None, channel: str | None = None, sync_channel: str | None = None,
           trim: float | None = None, sample_interval: str | None = None,
           screenshot: str | None = None, size: str | None = None,
           circuit: dict[str, str | None] | None = None, session: str | None = None) -> int:
    """Open the bench window, optionally on a capture.

    Parameters
    ----------
    path : str, optional
        Capture to open.
    channel, sync_channel : str, optional
        Channel to measure and logic-level reset channel (name or 0-based index).
    trim : float, optional
        Fraction of each ramp trimmed at each end, 0 to 0.4 (not saved as the
        user's default).
    sample_interval : str, optional
        Sample interval for files without a time column, e.g. ``"2u"`` (seconds).
    screenshot : str, optional
        Render the window with the analysis finished, save it to this PNG and exit.
    size : str, optional
        Window size as ``WIDTHxHEIGHT`` pixels (screenshots default to 1600x1000).
    circuit : dict, optional
        Circuit values for ``path``'s form, by keyword of
        :func:`trueslope.core.circuit.parse_context` (text as typed, e.g. ``"47n"``).
    session : str, optional
        A bench session to open on the comparison tab (a screenshot then waits for
        its comparison).

    Returns
    -------
    int
        Exit status: 0, 1 when a screenshot run could not open or measure the
        capture (the picture is saved all the same), 2 for a bad option.
    """
    from trueslope.core.cli import error_line  # first: it bounds BLAS threads before numpy
    from trueslope.core.errors import SettingsError, TrueslopeError
    from trueslope.core.settings import Settings

    preload_analysis()
    interval_s = None
    window_size = SCREENSHOT_SIZE if screenshot else None
    if size is not None:
        try:
            window_size = parse_size(size)
        except ValueError as exc:
            print(f"trueslope open: --size: {exc}", file=sys.stderr)
            return 2
    try:
        if sample_interval is not None:
            from trueslope.core.units import parse_si
            try:
                interval_s = float(parse_si(sample_interval))
            except SettingsError as exc:
                raise SettingsError(exc.message, "sample_interval") from None
            if not interval_s > 0:
                raise SettingsError(f"must be positive, got {sample_interval}", "sample_interval")
        if trim is not None:
            Settings(trim_fraction=trim)
        circuit = {k: v for k, v in (circuit or {}).items() if v}
        if circuit:
            from trueslope.core.circuit import parse_context
            parse_context(**circuit)
    except TrueslopeError as exc:
        # A terminal message: it names the command line's option, as `analyze` does.
        print(f"trueslope open: {error_line(exc)}", file=sys.stderr)
        return 2
    if screenshot and _headless() and not os.environ.get("QT_QPA_PLATFORM"):
        os.environ["QT_QPA_PLATFORM"] = "offscreen"
    if not screenshot and _headless() and not os.environ.get("QT_QPA_PLATFORM"):
        # Qt would abort on a missing display; say what to do instead
        print("trueslope open: no display found (neither DISPLAY nor WAYLAND_DISPLAY is set): "
              "the window needs a desktop session. In a terminal, use "
              f"'trueslope analyze {path or 'FILE'}', or '--screenshot OUT.png' for a picture.",
              file=sys.stderr)
        return 2

    app = make_app()
    from .store import Store
    from .window import MainWindow

    store = Store.read_only() if screenshot else Store()
    win = MainWindow(store)
    win.sample_interval_s = interval_s
    if trim is not None:
        win.trim_box.blockSignals(True)
        win.trim_box.setValue(100.0 * trim)
        win.trim_box.blockSignals(False)
        win.settings = win.settings.with_(trim_fraction=trim)
    if window_size is not None:
        win.resize(*window_size)
    win.show()
    if path:
        if circuit:
            win.circuits.remember(path, circuit)
            win.tabs.setCurrentWidget(win.findings.check_page)
        win.open_file(path, channel=channel, sync_channel=sync_channel)
    if session:
        win.open_session(session)
    if screenshot:
        return _screenshot(app, win, screenshot, bool(path), bool(session))
    return app.exec()


def _screenshot(app, win, out: str, expect_analysis: bool, expect_bench: bool = False) -> int:
    """Wait for the analysis or the comparison (or a failure), let the window paint, save
    it, close."""
    from PySide6 import QtCore

    outcome = {"ok": not (expect_analysis or expect_bench), "message": ""}
    loop = QtCore.QEventLoop()
    if expect_bench:
        def compared(_c) -> None:
            if all(i.measured is not None or i.changed for i in win.bench.items):
                outcome["ok"] = True
                QtCore.QTimer.singleShot(300, loop.quit)
        win.bench.updated.connect(compared)
        expect_analysis = True

    def shown(_analysis) -> None:
        outcome["ok"] = True
        QtCore.QTimer.singleShot(300, loop.quit)

    def failed(message: str) -> None:
        outcome["message"] = message
        QtCore.QTimer.singleShot(300, loop.quit)

    win.analysis_shown.connect(shown)
    win.job_failed.connect(failed)
    win.job_cancelled.connect(lambda: failed("cancelled"))
    if expect_analysis and (win.busy or win.bench.busy or win.tasks.busy):
        QtCore.QTimer.singleShot(SCREENSHOT_TIMEOUT_MS, loop.quit)
        loop.exec()
    for _ in range(5):  # let layouts and the plots settle
        app.processEvents()
    if expect_analysis and not outcome["ok"] and not outcome["message"]:
        outcome["message"] = "timed out waiting for the analysis"
        win.cancel()
    image = win.grab()
    Path(out).parent.mkdir(parents=True, exist_ok=True)
    saved = image.save(str(out), "PNG")
    win.close()
    if not saved:
        print(f"trueslope open: could not write {out}", file=sys.stderr)
        return 1
    if not outcome["ok"]:
        print(f"trueslope open: {outcome['message']}", file=sys.stderr)
        return 1
    return 0
