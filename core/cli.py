"""``trueslope analyze``: the terminal analysis.

Exit status 0 on success, 2 on bad input (one line on stderr, no traceback).
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from .errors import NoSampleIntervalError, SettingsError, TrueslopeError
from .settings import Settings


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="trueslope analyze",
        description="Measure how straight the ramps of a sawtooth capture are.")
    p.add_argument("files", nargs="+", metavar="FILE", help="capture file(s): CSV/text, .npy, .wav")
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
    p.add_argument("--json", action="store_true", help="print JSON (one document per file, a list for several)")
    p.add_argument("--cycles-csv", metavar="OUT", help="write the per-cycle figures to this CSV file")
    g = p.add_argument_group("circuit context (enables the self-check)")
    g.add_argument("--capacitance", help="timing capacitance, e.g. 47n")
    g.add_argument("--current", help="charging current, e.g. 1.2m")
    g.add_argument("--set-resistor", help="current-setting resistor, e.g. 3.3k (with --reference)")
    g.add_argument("--reference", help="reference voltage across the set resistor, e.g. 1.25")
    g.add_argument("--probe", help="probe loading as R,C, e.g. 10M,12p")
    g.add_argument("--tolerance", help="tolerance of the expected figures, e.g. 10%%")
    g.add_argument("--thresholds", metavar="LOW,HIGH",
                   help="the comparator's reset and trip levels, e.g. 0.05,4 "
                        "(default: the measured start and end levels)")
    return p


#: The option each settings field is typed into; core's errors name the field.
OPTION_OF_FIELD = {"capacitance": "--capacitance", "current": "--current",
                   "set_resistor": "--set-resistor", "reference": "--reference",
                   "probe": "--probe", "tolerance": "--tolerance", "thresholds": "--thresholds",
                   "trim": "--trim", "window": "--window", "sample_interval": "--sample-interval",
                   "phase_bins": "phase bins"}


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


def main(argv: list[str] | None = None) -> int:
    """Run the terminal analysis; returns the exit status."""
    args = build_parser().parse_args(argv)
    from .analysis import analyse_file
    from .report import cycles_csv, summary_text, to_json
    try:
        settings, dt = _settings(args)
        results = []
        for f in args.files:
            results.append(analyse_file(f, settings, sample_interval_s=dt))
    except TrueslopeError as exc:
        print(f"trueslope: {error_line(exc)}", file=sys.stderr)
        return 2
    except OSError as exc:
        print(f"trueslope: cannot read {exc.filename or ''}: {exc.strerror or exc}", file=sys.stderr)
        return 2
    if args.cycles_csv:
        out = Path(args.cycles_csv)
        inputs = {Path(f).resolve() for f in args.files}
        if out.resolve() in inputs:
            print("trueslope: --cycles-csv would overwrite a capture file; choose another name",
                  file=sys.stderr)
            return 2
        try:
            if len(results) == 1:
                out.write_text(cycles_csv(results[0]), encoding="utf-8")
            else:
                text = []
                for i, r in enumerate(results):
                    body = cycles_csv(r).splitlines()
                    if i == 0:
                        text.append("file," + body[0])
                    text += [f"{Path(r.source).name},{row}" for row in body[1:]]
                out.write_text("\n".join(text) + "\n", encoding="utf-8")
        except OSError as exc:
            print(f"trueslope: cannot write {out}: {exc.strerror or exc}", file=sys.stderr)
            return 2
    if args.json:
        print(to_json(results[0] if len(results) == 1 else results))
    else:
        print("\n\n".join(summary_text(r) for r in results))
    return 0
