#!/usr/bin/env bash
# Create (or reuse) .venv at the repository root and install trajectory into it.
# Sourced by demo.sh and test.sh; usable alone: bash scripts/setup_env.sh [extras]
set -euo pipefail
ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
EXTRAS="${1:-test}"
PY="${PYTHON:-python3}"
if [ ! -x "$ROOT/.venv/bin/python" ]; then
    "$PY" -m venv "$ROOT/.venv"
fi
VPY="$ROOT/.venv/bin/python"
"$VPY" -m pip install --quiet --upgrade pip >/dev/null 2>&1 || true
"$VPY" -m pip install --quiet -e "$ROOT[$EXTRAS]"
