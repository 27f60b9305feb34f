"""The ``trueslope`` command: terminal analysis or the bench window.

``trueslope analyze FILE...`` runs the terminal analysis (no Qt is imported);
``trueslope`` alone or ``trueslope open FILE`` starts the window.
"""

from __future__ import annotations

import argparse
import sys

from trueslope.core.cli import OneLineParser


def _open_parser() -> argparse.ArgumentParser:
    p = OneLineParser(
        prog="trueslope open",
        description="Open the trueslope bench window, optionally on a capture.")
    p.add_argument("file", nargs="?", help="capture to open")
    p.add_argument("--channel", help="channel to measure (name or 0-based index)")
    p.add_argument("--sync-channel", help="logic-level channel marking each reset")
    p.add_argument("--trim", type=float, help="fraction trimmed at each ramp end (0-0.4)")
    p.add_argument("--sample-interval", help="sample interval when the file has no time column, e.g. 2u")
    p.add_argument("--session", metavar="SESSION.json",
                   help="open a saved bench session on the comparison tab")
    p.add_argument("--screenshot", metavar="OUT.png",
                   help="render the window with the analysis finished, save it and exit")
    p.add_argument("--size", metavar="WIDTHxHEIGHT",
                   help="window size in pixels, e.g. 1280x720 (screenshots: 1600x1000)")
    g = p.add_argument_group("circuit context (typed into the window's form for this file)")
    g.add_argument("--capacitance", help="timing capacitance, e.g. 47n")
    g.add_argument("--current", help="charging current, e.g. 1.2m")
    g.add_argument("--set-resistor", help="current-setting resistor, e.g. 3.3k (with --reference)")
    g.add_argument("--reference", help="reference voltage across the set resistor, e.g. 1.25")
    g.add_argument("--probe", help="probe loading as R,C, e.g. 10M,12p")
    g.add_argument("--tolerance", help="tolerance of the expected figures, e.g. 10%%")
    return p


def _pdf_writer(html: str, out, force: bool = False, inputs=()) -> None:
    """The report's PDF, written by Qt (imported only when a PDF is asked for); the
    command has already refused an existing file without ``--force``."""
    from trueslope.app.pdf import write_pdf
    write_pdf(html, out, force, inputs=inputs)


def main(argv: list[str] | None = None) -> int:
    """Run the command; ``argv`` None means this process is the command (the terminal
    analysis then ends the process itself once its output is written)."""
    as_program = argv is None
    argv = list(sys.argv[1:] if argv is None else argv)
    if argv and argv[0] in ("analyze", "analyse"):
        from trueslope.core.cli import leave
        from trueslope.core.cli import main as analyze_main
        status = analyze_main(argv[1:])
        if as_program:
            leave(status)
        return status
    if argv and argv[0] == "compare":
        from trueslope.core.cli import leave
        from trueslope.core.compare_cli import main as compare_main
        status = compare_main(argv[1:], pdf_writer=_pdf_writer)
        if as_program:
            leave(status)
        return status
    if argv and argv[0] == "explain":
        from trueslope.core.cli import leave
        from trueslope.core.explain_cli import main as explain_main
        status = explain_main(argv[1:])
        if as_program:
            leave(status)
        return status
    if argv and argv[0] in ("-h", "--help"):
        print("usage: trueslope [open [FILE] [options]] | trueslope analyze FILE... [options]\n"
              "       | trueslope compare FILE|FOLDER... [options]\n"
              "       | trueslope explain FILE|FOLDER... [options]\n\n"
              "  trueslope               open the bench window\n"
              "  trueslope open FILE     open the window on a capture (see 'trueslope open -h')\n"
              "  trueslope analyze FILE  measure in the terminal (see 'trueslope analyze -h')\n"
              "  trueslope compare ...   compare captures, judge limits, write a report "
              "(see 'trueslope compare -h')\n"
              "  trueslope explain ...   one cause for captures of one circuit at other "
              "rates or values (see 'trueslope explain -h')")
        return 0
    if argv and argv[0] == "open":
        argv = argv[1:]
    try:
        args = _open_parser().parse_args(argv)
    except SystemExit as exc:  # -h, or a refusal already printed on one line
        return exc.code if isinstance(exc.code, int) else 2
    from trueslope.app.launch import launch  # Qt is imported only here
    return launch(args.file, channel=args.channel, sync_channel=args.sync_channel,
                  trim=args.trim, sample_interval=args.sample_interval,
                  screenshot=args.screenshot, size=args.size, session=args.session,
                  circuit={k: getattr(args, k) for k in ("capacitance", "current", "set_resistor",
                                                         "reference", "probe", "tolerance")})


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
