"""``trueslope analyze``: the terminal analysis.

Every file is measured on its own: the good ones are reported, each bad one is refused
with one line on stderr naming it (``trueslope: ...``, no traceback). Exit status 0 when
every file was measured, 2 when anything was refused (a bad option included).
"""

from __future__ import annotations

import os

# The analysis makes only small BLAS calls; OpenBLAS's extra threads spin between them (one
# core busy for nothing on a two-core machine). One thread, unless the user says otherwise;
# it must be in the environment before numpy loads, and this module is the first the
# command imports.
for _blas in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_blas, "1")

import argparse  # noqa: E402
import dataclasses
import json
import math
import re
import sys
import warnings
from contextlib import contextmanager
from pathlib import Path
from typing import Any, Iterator, NoReturn, Sequence

from .errors import (AnalysisError, ChannelNotFoundError, NoSampleIntervalError, OutputError,
                     SettingsError, TrueslopeError)
from .outputs import check_output, write_text_atomic
from .settings import Settings

#: An option value argparse would take for an option: a negative number or a list starting
#: with one ("-1,1", "-1u,2u", "-.5").
_NEGATIVE_VALUE = re.compile(r"-[0-9.]")


class Refusal(Exception):
    """Something the command refuses, worded as its one stderr line (without the prefix)."""


class OneLineParser(argparse.ArgumentParser):
    """An argument parser whose refusals are one line on stderr, exit status 2, and which
    takes option values that start with a minus sign (``--thresholds -1,1``)."""

    def _takes_value(self, token: str) -> bool:
        """Whether the long option ``token`` (or the one it abbreviates) takes a value."""
        valued = {s: a.nargs != 0 for a in self._actions for s in a.option_strings
                  if s.startswith("--")}
        if token in valued:
            return valued[token]
        hits = [o for o in valued if o.startswith(token)] if self.allow_abbrev else []
        return len(hits) == 1 and valued[hits[0]]

    def join_negative_values(self, args: Sequence[str]) -> list[str]:
        """``--opt -1,1`` as ``--opt=-1,1``, so argparse does not read the value as an
        option; everything after ``--`` is left alone."""
        out: list[str] = []
        i = 0
        while i < len(args):
            tok = args[i]
            if tok == "--":
                out += args[i:]
                break
            if (tok.startswith("--") and "=" not in tok and i + 1 < len(args)
                    and _NEGATIVE_VALUE.match(args[i + 1]) and self._takes_value(tok)):
                out.append(f"{tok}={args[i + 1]}")
                i += 2
                continue
            out.append(tok)
            i += 1
        return out

    def parse_known_args(self, args: Sequence[str] | None = None,
                         namespace: argparse.Namespace | None = None) -> Any:
        args = sys.argv[1:] if args is None else args
        return super().parse_known_args(self.join_negative_values(list(args)), namespace)

    def error(self, message: str) -> NoReturn:
        self.exit(2, f"trueslope: {one_line(message)} (see '{self.prog} -h')\n")


def add_measure_options(p: argparse.ArgumentParser, reference_flag: str = "--reference") -> None:
    """The options that say how each capture is measured: channels, window, interval and
    the circuit context (``reference_flag`` names the option of the reference voltage,
    which ``compare`` calls ``--reference-voltage``: its ``--reference`` is a file)."""
    add_capture_options(p)
    _add_circuit_options(p, reference_flag)


def add_capture_options(p: argparse.ArgumentParser) -> None:
    """The options that say how a capture is read and windowed: channels, trim, window,
    interval (``explain`` takes these, and its circuit values once or per capture)."""
    p.add_argument("--channel", help="channel to measure, by name or 0-based index "
                   "(default: the first column holding a sawtooth)")
    p.add_argument("--sync-channel", help="logic-level channel marking each reset")
    p.add_argument("--trim", type=float, default=None,
                   help="fraction of each ramp trimmed at each end of the fit window, 0 to 0.4 "
                        "(default 0.05)")
    p.add_argument("--window", metavar="START,END",
                   help="explicit fit window in seconds from the ramp start, e.g. 20u,480u")
    p.add_argument("--sample-interval", metavar="S",
                   help="sample interval when the file has no time column, e.g. 2u or 2e-6")


def _add_circuit_options(p: argparse.ArgumentParser, reference_flag: str) -> None:
    g = p.add_argument_group("circuit context (enables the self-check)")
    g.add_argument("--capacitance", help="timing capacitance, e.g. 47n")
    g.add_argument("--current", help="charging current, e.g. 1.2m")
    g.add_argument("--set-resistor", help=f"current-setting resistor, e.g. 3.3k (with "
                                          f"{reference_flag})")
    g.add_argument(reference_flag, dest="reference",
                   help="reference voltage across the set resistor, e.g. 1.25")
    g.add_argument("--probe", help="probe loading as R,C, e.g. 10M,12p")
    g.add_argument("--tolerance", help="tolerance of the expected figures, e.g. 10%%")
    g.add_argument("--thresholds", metavar="LOW,HIGH",
                   help="the comparator's reset and trip levels, e.g. 0.05,4 or -1,1 "
                        "(default: the measured start and end levels)")


def build_parser() -> OneLineParser:
    p = OneLineParser(
        prog="trueslope analyze",
        description="Measure how straight the ramps of a sawtooth capture are.")
    p.add_argument("files", nargs="+", metavar="FILE", help="capture file(s): CSV/text, .npy, .wav")
    add_measure_options(p)
    p.add_argument("--json", action="store_true",
                   help="print JSON (one document for one file; for several, a list with an "
                        "error entry in place of each refused file)")
    p.add_argument("--cycles-csv", metavar="OUT", help="write the per-cycle figures to this CSV file")
    p.add_argument("--limits", metavar="LIMITS.toml",
                   help="judge each capture against a limits file; exit 1 when any does not "
                        "pass")
    p.add_argument("--force", action="store_true",
                   help="let --cycles-csv replace an existing file (never a capture)")
    return p


#: The option each settings field is typed into; core's errors name the field.
OPTION_OF_FIELD = {"capacitance": "--capacitance", "current": "--current",
                   "set_resistor": "--set-resistor", "reference": "--reference",
                   "probe": "--probe", "tolerance": "--tolerance", "thresholds": "--thresholds",
                   "trim": "--trim", "window": "--window", "sample_interval": "--sample-interval",
                   "phase_bins": "phase bins"}

#: Figures that must be finite for a measurement to be reported.
HEADLINE_FIGURES = ("slope_v_per_s", "frequency_hz", "period_s", "nonlinearity_pct",
                    "start_v", "end_v", "amplitude_v")


def one_line(text: str) -> str:
    """Text with its line breaks (and runs of white space) made single spaces."""
    return " ".join(str(text).split())


def error_line(exc: TrueslopeError) -> str:
    """A core error as the command line words it: the option named for a setting, and
    the option to use when the sample interval is missing."""
    if isinstance(exc, SettingsError) and exc.field:
        return f"{OPTION_OF_FIELD.get(exc.field, exc.field)}: {exc.message}"
    if isinstance(exc, NoSampleIntervalError):
        return f"{exc} (--sample-interval)"
    return str(exc)


def _channel(text: str) -> int | str:
    """A channel by 0-based index (ASCII digits only) or by name."""
    return int(text) if text.isascii() and text.isdigit() else text


def _settings(args: argparse.Namespace) -> tuple[Settings, float | None]:
    from .units import parse_si

    def si(field: str, text: str, unit: str) -> float:
        try:
            return parse_si(text, unit)
        except SettingsError as exc:
            raise SettingsError(exc.message, field) from None

    kw: dict = {}
    if args.trim is not None:
        kw["trim_fraction"] = args.trim
    if args.window:
        parts = args.window.split(",")
        if len(parts) != 2:
            raise SettingsError(f"expects START,END in seconds, got {args.window!r}", "window")
        kw["window_s"] = (si("window", parts[0], "s"), si("window", parts[1], "s"))
    if args.channel is not None:
        kw["channel"] = _channel(args.channel)
    if args.sync_channel is not None:
        kw["sync_channel"] = _channel(args.sync_channel)
    if any(getattr(args, k) for k in ("capacitance", "current", "set_resistor", "reference", "probe", "tolerance",
                                        "thresholds")):
        from .circuit import parse_context
        kw["context"] = parse_context(capacitance=args.capacitance, current=args.current,
                                      set_resistor=args.set_resistor, reference=args.reference,
                                      probe=args.probe, tolerance=args.tolerance,
                                      thresholds=args.thresholds)
    dt = si("sample_interval", args.sample_interval, "s") if args.sample_interval else None
    return Settings(**kw), dt


# -- one file -----------------------------------------------------------------------------

@dataclasses.dataclass(frozen=True)
class Failure:
    """A refused file: the file as typed, the one-line reason, the error's class name."""

    file: str
    error: str
    error_type: str

    def to_dict(self) -> dict[str, str]:
        return {"file": self.file, "error": self.error, "error_type": self.error_type}


def _channel_name(capture: Any, key: str | int | None) -> str | None:
    """The exact name of the channel a typed key means; only ASCII digits are an index."""
    if key is None:
        return None
    if isinstance(key, str) and key not in capture.channels and key.strip().isdigit() \
            and not key.strip().isascii():
        # Digits of other scripts are a name, never an index.
        raise ChannelNotFoundError(f"no channel named {key!r}; the capture has: "
                                   f"{', '.join(capture.channel_names)}", capture.source)
    return capture.channel(key)[0]


def _check_finite(a: Any) -> None:
    values = {k: getattr(a.figures, k) for k in HEADLINE_FIGURES}
    values["low_level_v"] = a.segmentation.levels.low_v
    values["high_level_v"] = a.segmentation.levels.high_v
    bad = [f"{k}={v}" for k, v in values.items()
           if not (isinstance(v, (int, float)) and math.isfinite(v))]
    if bad:
        raise AnalysisError(f"{Path(a.source).name}: the figures are not finite: {', '.join(bad)}")


def _named(file: str, message: str) -> str:
    message = one_line(message)
    if Path(file).name in message or file in message:
        return message
    return f"{file}: {message}"


def measure(file: str, settings: Settings, dt: float | None, as_json: bool
            ) -> tuple[Any, Any] | Failure:
    """Read and measure one file: ``(analysis, its JSON document or terminal text)``, or
    the :class:`Failure` that refuses it."""
    try:
        from .io import load_capture
        capture = load_capture(file, sample_interval_s=dt)
        # Channels are checked before the analysis modules are imported: a quick refusal.
        settings = dataclasses.replace(
            settings, channel=_channel_name(capture, settings.channel),
            sync_channel=_channel_name(capture, settings.sync_channel))
        from .analysis import analyse
        from .report import analysis_document, summary_text
        a = analyse(capture, settings)
        _check_finite(a)
        if as_json:
            doc = analysis_document(a)
            json.dumps(doc, allow_nan=False)  # refuse here what could not be printed
            return a, doc
        return a, summary_text(a)
    except TrueslopeError as exc:
        return Failure(file, _named(file, error_line(exc)), type(exc).__name__)
    except OSError as exc:
        reason = exc.strerror or str(exc)
        return Failure(file, _named(file, f"cannot read {exc.filename or file}: {reason}"),
                       type(exc).__name__)
    except MemoryError as exc:
        return Failure(file, _named(file, "not enough memory to measure it"), type(exc).__name__)
    except Exception as exc:  # a bug met on this input: refuse the file, keep the batch going
        return Failure(file, _named(file, f"unexpected failure, please report it "
                                          f"({type(exc).__name__}: {exc})"), type(exc).__name__)


# -- the command --------------------------------------------------------------------------

@contextmanager
def quiet_numerics() -> Iterator[None]:
    """No numpy floating-point warnings and no Python warnings reach stderr: the
    measurement's own warnings are part of its report."""
    import numpy as np
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore")
        yield


def _refuse(line: str) -> None:
    print(f"trueslope: {one_line(line)}", file=sys.stderr)


def _emit(text: str) -> None:
    try:
        print(text)
    except BrokenPipeError:  # the reader went away (| head): nothing more to say
        pass


def main(argv: list[str] | None = None) -> int:
    """Run the terminal analysis; returns the exit status."""
    try:
        args = build_parser().parse_args(argv)
    except SystemExit as exc:  # -h, or a refusal already printed on one line
        return exc.code if isinstance(exc.code, int) else 2
    with quiet_numerics():
        return _run(args)


def _run(args: argparse.Namespace) -> int:
    try:
        settings, dt = _settings(args)
    except TrueslopeError as exc:
        _refuse(error_line(exc))
        return 2
    out = Path(args.cycles_csv) if args.cycles_csv else None
    try:
        if out is not None:
            check_output(out, args.force, inputs=args.files)
        limits = None
        if args.limits:
            from .limits import read_limits
            limits = read_limits(args.limits)
    except TrueslopeError as exc:
        _refuse(("--cycles-csv: " if isinstance(exc, OutputError) else "") + error_line(exc))
        return 2
    outcomes = []
    for f in args.files:
        outcome = measure(f, settings, dt, args.json)
        if isinstance(outcome, Failure):
            _refuse(outcome.error)
        outcomes.append(outcome)
    good = [o for o in outcomes if not isinstance(o, Failure)]
    status = 0 if len(good) == len(outcomes) else 2
    if out is not None and good:
        from .report.export import batch_cycles_csv, cycles_csv
        analyses = [a for a, _ in good]
        text = cycles_csv(analyses[0]) if len(args.files) == 1 else batch_cycles_csv(analyses)
        try:
            write_text_atomic(out, text, args.force, inputs=args.files)
        except TrueslopeError as exc:
            _refuse(f"--cycles-csv: {error_line(exc)}")
            status = 2
    if limits is not None and good:
        good, failed = judged(good, limits, args.json)
        if failed and status == 0:
            status = 1
    if args.json:
        if len(args.files) == 1:
            if good:
                _emit(json.dumps(good[0][1], indent=2, allow_nan=False))
        else:
            _emit(json.dumps([o.to_dict() if isinstance(o, Failure) else o[1] for o in outcomes],
                             indent=2, allow_nan=False))
    elif good:
        _emit("\n\n".join(text for _, text in good))
    return status


def judged(good: list, limits: Any, as_json: bool) -> tuple[list, bool]:
    """Each good result with its verdict against the limits (the text gains the verdict's
    lines, the JSON document a ``limits`` entry); and whether any did not pass."""
    from .limits import judge
    from .report.compare_text import limit_line, verdict_lines
    out, failed = [], False
    for a, shown in good:
        v = judge(a, limits)
        failed |= v.verdict != "pass"
        if as_json:
            doc = dict(shown)
            doc["limits"] = dict(v.to_dict(), lines=[limit_line(r) for r in v.results])
            out.append((a, doc))
        else:
            out.append((a, shown + "\n" + "\n".join(verdict_lines(v))))
    return out, failed


def leave(status: int) -> NoReturn:
    """End the process once everything is written: flush stdout and stderr, then leave
    at once. Skipping the interpreter's shutdown keeps the worker threads that native
    libraries (the CSV reader's pool) may still hold from aborting the process after the
    output is complete."""
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except (OSError, ValueError):
            pass
    os._exit(status)
