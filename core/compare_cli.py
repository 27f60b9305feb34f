"""``trueslope compare``: several captures side by side, judged against limits, reported.

Exit status: 0 when every capture was measured (and passed its limits, if given), 1 when
every capture was measured but one or more did not pass its limits (failed, or cannot be
decided from the capture), 2 on bad input (any file refused, bad options or limits, an
output that cannot be written). Option names live here and in ``cli``; core reports by
field and the two name the options.
"""

from __future__ import annotations

import argparse
import datetime as _dt
import sys
from pathlib import Path
from typing import Callable

from .cli import (OneLineParser, _emit, _refuse, _settings, add_measure_options, error_line,
                  quiet_numerics)
from .errors import TrueslopeError

#: The capture files a folder given to ``compare`` contributes, by suffix.
CAPTURE_SUFFIXES = (".csv", ".txt", ".tsv", ".dat", ".npy", ".wav")

#: Writes a PDF from the report's HTML, ``(html, out, force, inputs)``: supplied by the
#: window's package (Qt's PDF writer), which core never imports itself.
PdfWriter = Callable[[str, Path, bool, list], None]


def build_parser() -> OneLineParser:
    p = OneLineParser(
        prog="trueslope compare",
        description="Measure several captures and compare them: differences from a reference, "
                    "a ranking by nonlinearity, group statistics, verdicts against limits, a "
                    "report to file.")
    p.add_argument("paths", nargs="*", metavar="FILE|FOLDER",
                   help="capture files, or folders whose capture files are all compared")
    p.add_argument("--reference", metavar="FILE",
                   help="the capture the others are compared with (default: the first)")
    p.add_argument("--group", action="append", default=[], metavar="NAME=GLOB",
                   help="a group of captures by file name, e.g. film='*film*' (repeat)")
    p.add_argument("--limits", metavar="LIMITS.toml", help="judge each capture against limits")
    p.add_argument("--report", metavar="OUT.html|OUT.pdf", help="write a report to file")
    p.add_argument("--operator", help="the report's operator field")
    p.add_argument("--unit", metavar="SERIAL", help="the report's unit or serial number field")
    p.add_argument("--notes", help="free notes for the report")
    p.add_argument("--session", metavar="FILE", help="rerun a saved bench session")
    p.add_argument("--save-session", metavar="FILE", help="save this comparison as a session")
    p.add_argument("--json", action="store_true", help="print the comparison as JSON")
    p.add_argument("--jobs", type=int, default=2, help="worker processes (default 2)")
    p.add_argument("--force", action="store_true",
                   help="let --report and --save-session replace existing files")
    add_measure_options(p, reference_flag="--reference-voltage")
    return p


def capture_files(paths: list[str]) -> list[str]:
    """The files to compare: each file as given, each folder's capture files by name."""
    out: list[str] = []
    for p in paths:
        path = Path(p)
        if path.is_dir():
            out += sorted(str(f) for f in path.iterdir()
                          if f.is_file() and f.suffix.lower() in CAPTURE_SUFFIXES)
        else:
            out.append(p)
    return out


def _groups(specs: list[str]) -> dict[str, str]:
    groups: dict[str, str] = {}
    for spec in specs:
        name, sep, pattern = spec.partition("=")
        if not sep or not name.strip() or not pattern.strip():
            raise TrueslopeError(f"--group: expected NAME=GLOB, e.g. film='*film*', got {spec!r}")
        groups[name.strip()] = pattern.strip()
    return groups


def _progress(total: int) -> Callable[[float], None] | None:
    """A one-line progress bar on stderr when it is a terminal."""
    if not sys.stderr.isatty():
        return None

    def show(fraction: float) -> None:
        done = int(round(fraction * total))
        bar = "#" * int(30 * fraction)
        end = "\n" if done >= total else ""
        print(f"\rmeasuring {done}/{total} [{bar:<30}]", end=end, file=sys.stderr, flush=True)
    return show


def main(argv: list[str] | None = None, pdf_writer: PdfWriter | None = None) -> int:
    """Run the comparison; returns the exit status (see the module docstring)."""
    try:
        args = build_parser().parse_args(argv)
    except SystemExit as exc:
        return exc.code if isinstance(exc.code, int) else 2
    with quiet_numerics():
        try:
            return _run(args, pdf_writer)
        except TrueslopeError as exc:
            _refuse(error_line(exc))
            return 2


def _run(args: argparse.Namespace, pdf_writer: PdfWriter | None) -> int:
    from .compare import MeasuredFile, compare, measure_files
    from .outputs import check_output
    from .report.compare_text import comparison_json, comparison_text

    settings, dt = _settings(args)
    groups = _groups(args.group)
    session = None
    changed: dict[str, str] = {}
    if args.session:
        from .session import load_session
        session = load_session(args.session)
        changed = {c.path: c.reason for c in session.changed_files()}
        groups = groups or {g.name: p for g in session.groups for p in g.patterns[:1]}
    files = capture_files(args.paths) + ([c.path for c in session.captures] if session else [])
    if not files:
        raise TrueslopeError("no captures to compare: give files or folders, or --session")
    limits_path = args.limits or (session.limits_path if session else None)
    limits = None
    if limits_path:
        from .limits import read_limits
        limits = read_limits(limits_path)
    inputs = files + ([limits_path] if limits_path else [])
    for out in (args.report, args.save_session):
        if out:
            check_output(out, args.force, inputs=inputs)
    if args.report and Path(args.report).suffix.lower() == ".pdf" and pdf_writer is None:
        raise TrueslopeError("--report: a PDF needs the window's libraries; write .html, or "
                             "run 'trueslope compare' from the installed command")
    todo = [f for f in files if f not in changed]
    settings_for = (lambda f: session.settings_for(f)) if session else (lambda f: settings)
    measured = {m.path: m for m in measure_files(todo, settings_for=settings_for,
                                                  jobs=max(1, args.jobs),
                                                  progress=_progress(len(todo)),
                                                  sample_interval_s=dt)}
    entries = []
    for f in files:
        if f in changed:
            entries.append(MeasuredFile(path=f, sha256=None, error_type="SessionChanged",
                                        error_message=f"{Path(f).name}: changed on disk since "
                                        f"the session was saved ({changed[f]}); not compared "
                                        f"as if it were the same capture"))
        else:
            entries.append(measured[f])
    for e in entries:
        if not e.ok:
            _refuse(e.error_message or f"{Path(e.path).name}: not measured")
    reference = args.reference or (session.reference if session else None)
    c = compare(entries, reference=reference, groups=groups or None, limits=limits)
    if args.report:
        _write_report(args, c, entries, limits_path, pdf_writer, inputs)
    if args.save_session:
        from .session import Session, capture_entry, save_session
        caps = tuple(capture_entry(e.path, settings_for(e.path)) for e in entries if e.ok)
        save_session(args.save_session, Session(captures=caps, reference=c.reference,
                                                limits_path=limits_path), force=args.force)
    _emit(comparison_json(c) if args.json else comparison_text(c))
    if any(not e.ok for e in entries):
        return 2
    return 1 if c.verdict not in (None, "pass") else 0


def _write_report(args: argparse.Namespace, c, entries, limits_path: str | None,
                  pdf_writer: PdfWriter | None, inputs: list[str]) -> None:
    from .outputs import write_text_atomic
    from .report.html import html_report, installed_version
    good = [e for e in entries if e.ok]
    verdicts = {e.path: ce.limits for e in good for ce in c.entries if ce.path == e.path}
    html = html_report(
        [e.analysis for e in good], title="Ramp linearity comparison",
        operator=args.operator, unit_serial=args.unit, notes=args.notes,
        limits_text=Path(limits_path).read_text(encoding="utf-8", errors="replace")
        if limits_path else None,
        verdicts=[verdicts.get(e.path) for e in good], comparison=c,
        files_sha256={e.path: e.sha256 for e in good if e.sha256},
        tool_version=installed_version(), generated_at=_dt.datetime.now().astimezone())
    out = Path(args.report)
    if out.suffix.lower() == ".pdf":
        assert pdf_writer is not None
        pdf_writer(html, out, args.force, inputs)
    else:
        write_text_atomic(out, html, args.force, inputs=inputs)
