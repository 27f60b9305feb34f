#!/usr/bin/env bash
# Build trueslope's wheel and prove it installs and runs on its own: a fresh virtual
# environment in a temporary folder, the wheel with its dependencies from PyPI, then
# `trueslope --help`, `trueslope analyze` on a copy of a sample and an offscreen screenshot
# of the window, all run from outside the repository.
#
#   bash packaging/check_wheel.sh        # KEEP=1 keeps the temporary folder
#
# Needs the project's .venv (for the `build` package, installed into it when missing) and
# network access to PyPI. The wheel is left in dist/.
set -euo pipefail
ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
cd "$ROOT"
PY=.venv/bin/python
BASE="${PYTHON:-python3}"
SAMPLE=sample_captures/film_cap_ramp.csv

if [ ! -x "$PY" ]; then
    echo "check_wheel: no .venv here; set it up first with: bash packaging/dev.sh test" >&2
    exit 1
fi
if ! "$PY" -I -c "import build" 2>/dev/null; then  # -I: not the folder build/ here
    echo "check_wheel: installing the build package into .venv" >&2
    "$PY" -m pip install --quiet "build>=1.2"
fi
WORK="$(mktemp -d /tmp/trueslope-wheel.XXXXXX)"
if [ "${KEEP:-0}" != 1 ]; then trap 'rm -rf "$WORK"' EXIT; fi
t0=$(date +%s)

echo "check_wheel: python -m build --wheel (log: $WORK/build.log)" >&2
rm -f dist/trueslope-*.whl
if ! "$PY" -m build --wheel --outdir dist >"$WORK/build.log" 2>&1; then
    tail -n 30 "$WORK/build.log" >&2
    echo "check_wheel: the wheel did not build" >&2
    exit 1
fi
WHEEL="$(ls dist/trueslope-*.whl)"
# What the wheel holds: the trueslope packages (icon included), nothing bare or test-only.
"$PY" - "$WHEEL" <<'EOF'
import sys, zipfile
names = zipfile.ZipFile(sys.argv[1]).namelist()
tops = sorted({n.split("/")[0] for n in names})
bad = [t for t in tops if t != "trueslope" and not t.endswith(".dist-info")]
icons = [n for n in names if n.startswith("trueslope/icons/") and n.endswith(".png")]
if bad or len(icons) != 3 or not any(n == "trueslope/core/analysis.py" for n in names):
    sys.exit(f"check_wheel: unexpected wheel content: top level {tops}, icons {icons}")
print(f"check_wheel: {sys.argv[1]}: {len(names)} files, top level {tops}")
EOF
t1=$(date +%s)

echo "check_wheel: a fresh venv in $WORK/venv, installing the wheel (log: $WORK/install.log)" >&2
"$BASE" -m venv "$WORK/venv"
if ! "$WORK/venv/bin/python" -m pip install "$ROOT/$WHEEL" >"$WORK/install.log" 2>&1; then
    tail -n 30 "$WORK/install.log" >&2
    echo "check_wheel: the wheel did not install" >&2
    exit 1
fi
t2=$(date +%s)

mkdir -p "$WORK/bench/sample_captures"
cp "$SAMPLE" "$WORK/bench/$SAMPLE"
cd "$WORK/bench"  # outside the repository: nothing can come from the working tree
BIN="$WORK/venv/bin"
where="$("$BIN/python" -c 'import trueslope; print(trueslope.__file__)')"
case "$where" in
    "$WORK"/venv/*) ;;
    *) echo "check_wheel: trueslope was imported from $where, not from the fresh venv" >&2; exit 1 ;;
esac
echo "\$ trueslope --help"
"$BIN/trueslope" --help
echo "\$ trueslope analyze $SAMPLE   (its first lines)"
out="$("$BIN/trueslope" analyze "$SAMPLE")"
printf '%s\n' "$out" | sed -n 1,12p
echo "\$ trueslope analyze $SAMPLE --json   (the headline key)"
"$BIN/trueslope" analyze "$SAMPLE" --json >analysis.json
"$BIN/python" -c 'import json; print("nonlinearity_pct:",
    json.load(open("analysis.json"))["nonlinearity_pct"])'
echo "\$ trueslope open $SAMPLE --screenshot window.png   (offscreen)"
QT_QPA_PLATFORM=offscreen timeout 300 "$BIN/trueslope" open "$SAMPLE" --size 1280x800 \
    --screenshot window.png 2>/dev/null
"$BIN/python" - <<'EOF'
import os, sys
from trueslope.app.icon import icon_files
found = len(icon_files())
print(f"window.png: {os.path.getsize('window.png')} bytes; the window's icon files: {found} of 3")
sys.exit(0 if found == 3 and os.path.getsize("window.png") > 50_000 else 1)
EOF
t3=$(date +%s)
echo "check_wheel: passed: wheel built in $((t1 - t0)) s, installed in $((t2 - t1)) s," \
     "ran in $((t3 - t2)) s ($((t3 - t0)) s in all)"
