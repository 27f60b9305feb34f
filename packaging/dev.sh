#!/usr/bin/env bash
# One entry point for set-up on a fresh machine, then the job or the tests.
#   bash packaging/dev.sh run  [trueslope arguments]  -> opens the window on a bundled sample
#   bash packaging/dev.sh test [pytest arguments]     -> runs the whole test suite
# Creates (or reuses) the virtual environment .venv at the project root.
set -euo pipefail
ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
cd "$ROOT"
PY="${PYTHON:-python3}"

need_debs() {
    # Libraries Qt's offscreen/xcb platforms load, plus ngspice for the
    # independent-simulator test. Installed only when missing and when root.
    local missing=()
    for p in libegl1 libgl1 libxkbcommon0 libxkbcommon-x11-0 libfontconfig1 libdbus-1-3 \
             libglib2.0-0 libxcb-cursor0 libxcb-icccm4 libxcb-keysyms1 libxcb-shape0 \
             libxcb-xinerama0 libxcb-randr0 libxcb-render-util0 libxcb-image0 fonts-dejavu-core ngspice "$@"; do
        dpkg -s "$p" >/dev/null 2>&1 || missing+=("$p")
    done
    if [ "${#missing[@]}" -gt 0 ]; then
        if [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null; then
            echo "installing Debian packages: ${missing[*]}" >&2
            if ! { apt-get update -qq >/dev/null &&
                   DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends \
                       "${missing[@]}" >/dev/null; }; then
                echo "warning: could not install ${missing[*]}; the window and the live" \
                     "simulator test may not run" >&2
            fi
        else
            echo "note: missing Debian packages (install them as root): ${missing[*]}" >&2
        fi
    fi
}

setup_venv() {
    if [ ! -x .venv/bin/python ]; then
        "$PY" -m venv .venv
    fi
    local stamp=.venv/.trueslope-installed
    if [ ! -f "$stamp" ] || [ pyproject.toml -nt "$stamp" ]; then
        echo "installing trueslope and its dependencies into .venv (log: .venv/install.log)" >&2
        if ! { .venv/bin/python -m pip install --upgrade pip &&
               .venv/bin/python -m pip install -e ".[test]"; } >.venv/install.log 2>&1; then
            tail -n 30 .venv/install.log >&2
            echo "installation failed; the whole log is in .venv/install.log" >&2
            exit 1
        fi
        touch "$stamp"
    fi
}

cmd="${1:-run}"; shift || true
case "$cmd" in
    run)
        need_debs
        setup_venv
        if [ "$#" -eq 0 ]; then
            if [ "$(uname)" = Linux ] && [ -z "${DISPLAY:-}${WAYLAND_DISPLAY:-}" ]; then
                echo "no display here: showing the terminal analysis of the sample instead" \
                     "(on a desktop this command opens the window)" >&2
                set -- analyze sample_captures/film_cap_ramp.csv
            else
                set -- open sample_captures/film_cap_ramp.csv
            fi
        fi
        exec .venv/bin/trueslope "$@"
        ;;
    test)
        need_debs
        setup_venv
        export QT_QPA_PLATFORM=offscreen
        # -rs: every skipped test is listed with its reason at the end of the run
        exec .venv/bin/python -m pytest -q -rs "$@"
        ;;
    *)
        echo "usage: bash packaging/dev.sh run|test [arguments]" >&2
        exit 2
        ;;
esac
