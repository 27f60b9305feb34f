#!/usr/bin/env bash
# Build the one-folder desktop bundle dist/trueslope/ from packaging/trueslope.spec, then start
# the built program once to prove it runs: it opens a bundled sample capture, renders the
# window offscreen and saves a screenshot, which must be a real picture of the window.
#
#   bash packaging/build_bundle.sh            # build, check, print the times and the size
#
# Needs the project's .venv (bash packaging/dev.sh test, or dev.sh run, creates it); installs
# PyInstaller into it when missing. The build's log is build/pyinstaller/build.log.
set -euo pipefail
ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
cd "$ROOT"
PY=.venv/bin/python
DIST=dist/trueslope
LOG=build/pyinstaller/build.log

if [ ! -x "$PY" ]; then
    echo "build_bundle: no .venv here; set it up first with: bash packaging/dev.sh test" >&2
    exit 1
fi
if ! "$PY" -I -c "import PyInstaller" 2>/dev/null; then
    echo "build_bundle: installing PyInstaller into .venv" >&2
    "$PY" -m pip install --quiet "pyinstaller>=6.10"
fi

mkdir -p build/pyinstaller
echo "build_bundle: building $DIST (log: $LOG)" >&2
t0=$(date +%s)
if ! "$PY" -m PyInstaller --noconfirm --log-level WARN --distpath dist \
        --workpath build/pyinstaller packaging/trueslope.spec >"$LOG" 2>&1; then
    tail -n 30 "$LOG" >&2
    echo "build_bundle: the build failed; the whole log is in $LOG" >&2
    exit 1
fi
t1=$(date +%s)

# The smoke run: the bundled program on its own copy of a sample, from the bundle's folder,
# as a user would start it. Offscreen needs no display; under xvfb-run (when installed) the
# X11 platform plugin is exercised too.
SHOT="$(mktemp -d)/trueslope-bundle.png"
run_bundle() {
    (cd "$DIST" && timeout 300 "$@" ./trueslope open sample_captures/film_cap_ramp.csv \
        --size 1600x1000 --screenshot "$SHOT")
}
echo "build_bundle: starting the bundle: open sample_captures/film_cap_ramp.csv --screenshot $SHOT" >&2
run_bundle env QT_QPA_PLATFORM=offscreen
if command -v xvfb-run >/dev/null; then
    rm -f "$SHOT"
    echo "build_bundle: again under xvfb-run (the X11 platform plugin)" >&2
    run_bundle env -u QT_QPA_PLATFORM xvfb-run -a
fi
"$PY" - "$SHOT" <<'EOF'
# A PNG of the asked size, large enough to hold the plots and figures (an empty or
# unpainted window compresses to a few kilobytes).
import os, struct, sys
path = sys.argv[1]
with open(path, "rb") as f:
    head = f.read(24)
size = os.path.getsize(path)
if head[:8] != b"\x89PNG\r\n\x1a\n":
    sys.exit(f"build_bundle: {path} is not a PNG")
width, height = struct.unpack(">II", head[16:24])
if (width, height) != (1600, 1000) or size < 50_000:
    sys.exit(f"build_bundle: {path} is {width}x{height}, {size} bytes: not the finished window")
print(f"build_bundle: screenshot {path}: {width}x{height}, {size} bytes")
EOF
# Help > User guide reads the README beside the bundle's modules, with its screenshots
for f in README.md packaging/screenshots/film_cap_ramp.png; do
    if [ ! -s "$DIST/_internal/$f" ]; then
        echo "build_bundle: the user guide's $f is missing from $DIST/_internal" >&2
        exit 1
    fi
done
summary="$(cd "$DIST" && ./trueslope analyze sample_captures/film_cap_ramp.csv)"
echo "build_bundle: the bundle's analyze: ${summary%%$'\n'*}"
t2=$(date +%s)

echo "build_bundle: built in $((t1 - t0)) s, checked in $((t2 - t1)) s;" \
     "$DIST is $(du -sh "$DIST" | cut -f1)B; start it with $DIST/trueslope"
