"""The ``trueslope`` command: terminal analysis or the bench window.

``trueslope analyze FILE...`` runs the terminal analysis (no Qt is imported);
``trueslope`` alone or ``trueslope open FILE`` starts the window.
"""

from __future__ import annotations

import argparse
import sys


def _open_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="trueslope open",
        description="Open the trueslope bench window, optionally on a capture.")
    p.add_argument("file", nargs="?", help="capture to open")
    p.add_argument("--channel", help="channel to measure (name or 0-based index)")
    p.add_argument("--sync-channel", help="logic-level channel marking each reset")
    p.add_argument("--trim", type=float, help="fraction trimmed at each ramp end (0-0.4)")
    p.add_argument("--sample-interval", help="sample interval when the file has no time column, e.g. 2u")
    p.add_argument("--screenshot", metavar="OUT.png",
                   help="render the window with the analysis finished, save it and exit")
    return p


def main(argv: list[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    if argv and argv[0] in ("analyze", "analyse"):
        from trueslope.core.cli import main as analyze_main
        return analyze_main(argv[1:])
    if argv and argv[0] in ("-h", "--help"):
        print("usage: trueslope [open [FILE] [options]] | trueslope analyze FILE... [options]\n\n"
              "  trueslope               open the bench window\n"
              "  trueslope open FILE     open the window on a capture (see 'trueslope open -h')\n"
              "  trueslope analyze FILE  measure in the terminal (see 'trueslope analyze -h')")
        return 0
    if argv and argv[0] == "open":
        argv = argv[1:]
    args = _open_parser().parse_args(argv)
    from trueslope.app.launch import launch  # Qt is imported only here
    return launch(args.file, channel=args.channel, sync_channel=args.sync_channel,
                  trim=args.trim, sample_interval=args.sample_interval,
                  screenshot=args.screenshot)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
