#!/usr/bin/env bash
# Create (or reuse) .venv at the repository root and install trajectory into it.
# Sourced by demo.sh and test.sh; usable alone: bash scripts/setup_env.sh [extras]
set -euo pipefail
ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
EXTRAS="${1:-test}"
PY="${PYTHON:-python3}"
# the floor is pyproject's requires-python; say so before pip refuses with less clarity
FLOOR="$(sed -n 's/^requires-python = ">=\([0-9][0-9.]*\)"/\1/p' "$ROOT/pyproject.toml")"
if ! "$PY" -c "import sys; sys.exit(sys.version_info < tuple(map(int, '$FLOOR'.split('.'))))" \
        2>/dev/null; then
    echo "setup_env: $PY is $("$PY" -V 2>&1); trajectory needs Python $FLOOR or newer:" \
         "install one and run again with PYTHON=/path/to/python$FLOOR" >&2
    exit 1
fi
if [ ! -x "$ROOT/.venv/bin/python" ]; then
    "$PY" -m venv "$ROOT/.venv"
fi
VPY="$ROOT/.venv/bin/python"
"$VPY" -m pip install --quiet --upgrade pip >/dev/null 2>&1 || true
# pip's own chatter (the build backend's notices) goes to a log, shown only on failure
LOG="$ROOT/.venv/pip-install.log"
if ! "$VPY" -m pip install --quiet -e "$ROOT[$EXTRAS]" >"$LOG" 2>&1; then
    cat "$LOG" >&2
    echo "setup_env: installing trajectory[$EXTRAS] failed (full log: $LOG)" >&2
    exit 1
fi
