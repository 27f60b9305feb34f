#!/usr/bin/env bash
# Put trueslope in the desktop's application menu, for this user only: the entry
# packaging/trueslope.desktop goes to ~/.local/share/applications and the icon's renderings to
# ~/.local/share/icons/hicolor (48, 128, 256 px and the scalable SVG).
#
#   bash packaging/install_desktop.sh            # the bundle dist/trueslope/trueslope if built,
#                                                # else the `trueslope` command on PATH
#   bash packaging/install_desktop.sh PROGRAM    # this program instead (an absolute path)
#   bash packaging/install_desktop.sh --remove   # take the entry and the icons away again
set -euo pipefail
ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
DATA="${XDG_DATA_HOME:-$HOME/.local/share}"
APPS="$DATA/applications"
ICONS="$DATA/icons/hicolor"
SIZES=(48 128 256)

refresh() {
    # The entry's file types reach the desktop's "Open with" list sooner; not needed otherwise.
    if command -v update-desktop-database >/dev/null; then update-desktop-database -q "$APPS" || true; fi
}

if [ "${1:-}" = --remove ]; then
    rm -f "$APPS/trueslope.desktop" "$ICONS/scalable/apps/trueslope.svg"
    for s in "${SIZES[@]}"; do rm -f "$ICONS/${s}x${s}/apps/trueslope.png"; done
    refresh
    echo "install_desktop: removed the trueslope entry and its icons from $DATA"
    exit 0
fi

if [ -n "${1:-}" ]; then
    if [ ! -f "$1" ]; then
        echo "install_desktop: $1: no such program" >&2
        exit 1
    fi
    PROGRAM="$(cd "$(dirname "$1")" && pwd)/$(basename "$1")"
elif [ -x "$ROOT/dist/trueslope/trueslope" ]; then
    PROGRAM="$ROOT/dist/trueslope/trueslope"
elif command -v trueslope >/dev/null; then
    PROGRAM="$(command -v trueslope)"
else
    echo "install_desktop: no program to start: build the bundle (bash packaging/build_bundle.sh)," \
         "install the wheel, or name the program" >&2
    exit 1
fi
if [ ! -x "$PROGRAM" ]; then
    echo "install_desktop: $PROGRAM is not an executable program" >&2
    exit 1
fi

mkdir -p "$APPS" "$ICONS/scalable/apps"
for s in "${SIZES[@]}"; do
    mkdir -p "$ICONS/${s}x${s}/apps"
    cp "$ROOT/packaging/icons/trueslope-$s.png" "$ICONS/${s}x${s}/apps/trueslope.png"
done
cp "$ROOT/packaging/icons/trueslope.svg" "$ICONS/scalable/apps/trueslope.svg"
# The entry names the program by its absolute path (a menu does not read the shell's PATH);
# a path with spaces is quoted as the Desktop Entry Specification asks.
quoted="\"${PROGRAM//\"/\\\"}\""
sed -e "s|^Exec=trueslope |Exec=$quoted |" -e "s|^TryExec=trueslope\$|TryExec=$PROGRAM|" \
    "$ROOT/packaging/trueslope.desktop" >"$APPS/trueslope.desktop"
if command -v desktop-file-validate >/dev/null; then
    desktop-file-validate "$APPS/trueslope.desktop"
fi
refresh
echo "install_desktop: $APPS/trueslope.desktop starts $PROGRAM; icons in $ICONS"
