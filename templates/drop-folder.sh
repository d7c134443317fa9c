#!/bin/sh
# pertbook drop folder - start the watcher (Linux / macOS).
#
# Copy this script beside the shared folder. Then run:
#
#     ./drop-folder.sh                  watch ./pertbook-drop beside this script
#     ./drop-folder.sh /srv/share/plans watch that folder
#     ./drop-folder.sh /srv/share/plans --once      convert what is there, then exit
#
# Anything after the folder is passed to "pertbook watch" (--interval, --workers,
# --json, --iterations, ...). The folder gets inbox/, outbox/, archive/, failed/.
#
# First run: makes a private virtual environment .pertbook-venv/ beside this script
# and installs pertbook into it from, in this order of preference,
#   1. a wheel beside the script               pertbook-*.whl (the newest)
#   2. a copy of the project beside the script pertbook-src/ or pertbook/ (with pyproject.toml)
#   3. the project this script sits in         ../pyproject.toml (templates/ of a checkout)
# Dependencies come from the package index, or, if a folder wheels/ is beside the
# script, from there only (for offices without internet access).
# Later runs just start the watcher. To upgrade: put the new wheel beside the script
# and delete .pertbook-venv/ (or run with PERTBOOK_REINSTALL=1).
#
# Needs only Python 3.10 or newer (set PYTHON=/path/to/python3 to choose one).
set -eu

HERE=$(cd "$(dirname "$0")" && pwd)
VENV="$HERE/.pertbook-venv"
MARK="$VENV/.pertbook-installed"
PYTHON=${PYTHON:-python3}

say() { printf 'drop-folder: %s\n' "$*" >&2; }

find_source() {
    wheel=$(ls -t "$HERE"/pertbook-*.whl 2>/dev/null | head -n 1 || true)
    if [ -n "$wheel" ]; then printf '%s\n' "$wheel"; return 0; fi
    for dir in "$HERE/pertbook-src" "$HERE/pertbook" "$HERE/.."; do
        if [ -f "$dir/pyproject.toml" ] && grep -q '^name = "pertbook"' "$dir/pyproject.toml"
        then
            (cd "$dir" && pwd)
            return 0
        fi
    done
    return 1
}

install() {
    if ! command -v "$PYTHON" >/dev/null 2>&1; then
        say "cannot find $PYTHON; install Python 3.10 or newer (or set PYTHON=...)"
        exit 1
    fi
    if ! "$PYTHON" -c 'import sys; sys.exit(sys.version_info < (3, 10))'; then
        say "$PYTHON is older than 3.10; install a newer Python (or set PYTHON=...)"
        exit 1
    fi
    source=$(find_source) || {
        say "nothing to install: put pertbook-*.whl or the project folder pertbook-src/ beside $0"
        exit 1
    }
    say "first run: making $VENV and installing pertbook from $source"
    rm -rf "$VENV"
    "$PYTHON" -m venv "$VENV"
    if [ -d "$HERE/wheels" ]; then
        "$VENV/bin/python" -m pip install --quiet --no-index --find-links "$HERE/wheels" "$source"
    else
        "$VENV/bin/python" -m pip install --quiet "$source"
    fi
    "$VENV/bin/python" -c 'import converter.watch' # fails loudly if the install is broken
    date > "$MARK"
    say "installed"
}

if [ ! -f "$MARK" ] || [ "${PERTBOOK_REINSTALL:-}" = "1" ]; then
    install
fi

# The folder: the first argument unless it is an option, else pertbook-drop beside this script.
FOLDER="$HERE/pertbook-drop"
if [ $# -gt 0 ]; then
    case "$1" in
        -*) ;;
        *) FOLDER=$1; shift ;;
    esac
fi

exec "$VENV/bin/python" -m converter watch "$FOLDER" "$@"
