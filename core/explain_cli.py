"""``trueslope explain``: one cause for several captures of one circuit.

Give captures of the same circuit taken at other charging currents, swings or part
values. Circuit values are given once for every capture, or once per capture in the
order of the files (``--capacitance 10n --capacitance 47n``). Exit status: 0 when every
capture was measured and explained, 2 on bad input (any file refused, bad options).
"""

from __future__ import annotations

import argparse
import dataclasses
import json
from pathlib import Path

from .cli import (OneLineParser, _emit, _refuse, _settings, add_capture_options, error_line,
                  quiet_numerics)
from .compare_cli import _progress, capture_files
from .errors import SettingsError, TrueslopeError

#: Circuit options that may be given once (every capture) or once per capture.
PER_CAPTURE = ("capacitance", "current", "probe", "thresholds")


def build_parser() -> OneLineParser:
    p = OneLineParser(
        prog="trueslope explain",
        description="Find the one cause that explains several captures of the same circuit "
                    "(taken at other currents, swings or capacitances): shunt loading, a "
                    "voltage coefficient, dielectric absorption or a probe's compensation, "
                    "with shared parameters, the evidence against the others, and the capture "
                    "to take next when the set cannot decide.")
    p.add_argument("paths", nargs="+", metavar="FILE|FOLDER",
                   help="capture files of one circuit, or folders of them")
    add_capture_options(p)
    g = p.add_argument_group("circuit (once for every capture, or once per capture in file "
                             "order)")
    g.add_argument("--capacitance", action="append", default=[],
                   help="timing capacitance, e.g. 10n: lets the shunt share its resistance")
    g.add_argument("--current", action="append", default=[], help="charging current, e.g. 100u")
    g.add_argument("--probe", action="append", default=[], help="probe loading as R,C")
    g.add_argument("--thresholds", action="append", default=[], metavar="LOW,HIGH",
                   help="the comparator's reset and trip levels, e.g. 0.05,4: tell "
                        "absorption from a probe's compensation")
    p.add_argument("--json", action="store_true", help="print the explanation as JSON")
    p.add_argument("--jobs", type=int, default=2, help="captures measured at once (default 2)")
    return p


def _per_capture(args: argparse.Namespace, n: int) -> list[dict[str, str | None]]:
    """Each capture's circuit options: a value given once serves every capture."""
    rows: list[dict[str, str | None]] = [{} for _ in range(n)]
    for name in PER_CAPTURE:
        values = getattr(args, name)
        if len(values) not in (0, 1, n):
            raise SettingsError(f"give it once for every capture or once for each of the {n} "
                                f"captures, not {len(values)} times", name)
        for i in range(n):
            rows[i][name] = values[0] if len(values) == 1 else (values[i] if values else None)
    return rows


def main(argv: list[str] | None = None) -> int:
    """Run the explanation; returns the exit status (module docstring)."""
    try:
        args = build_parser().parse_args(argv)
    except SystemExit as exc:
        return exc.code if isinstance(exc.code, int) else 2
    with quiet_numerics():
        try:
            return _run(args)
        except TrueslopeError as exc:
            _refuse(error_line(exc))
            return 2


def _run(args: argparse.Namespace) -> int:
    from .circuit import parse_context
    from .compare import measure_files
    from .explain import explain
    from .report.explain_text import captures_line, explanation_lines

    files = capture_files(args.paths)
    if not files:
        raise TrueslopeError("no captures to explain: give capture files or folders")
    rows = _per_capture(args, len(files))
    base_args = argparse.Namespace(**{**vars(args), "capacitance": None, "current": None,
                                      "probe": None, "thresholds": None, "set_resistor": None,
                                      "reference": None, "tolerance": None})
    base, dt = _settings(base_args)
    contexts = {f: parse_context(**row) for f, row in zip(files, rows)}
    measured = measure_files(
        files, settings_for=lambda f: dataclasses.replace(base, context=contexts[f]),
        jobs=max(1, args.jobs), progress=_progress(len(files)), sample_interval_s=dt)
    good = [m for m in measured if m.ok]
    for m in measured:
        if not m.ok:
            _refuse(m.error_message or f"{Path(m.path).name}: not measured")
    if not good:
        return 2
    e = explain([m.analysis for m in good], [contexts[m.path] for m in good])
    lines = explanation_lines(e)
    if args.json:
        _emit(json.dumps({"explanation": e.to_dict(), "text": lines}, indent=1))
    else:
        _emit("\n".join([captures_line(e)] + lines))
    return 0 if len(good) == len(measured) else 2
