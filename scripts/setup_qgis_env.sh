#!/usr/bin/env bash
# Create (or reuse) .venv-qgis: a venv of the desktop GIS's own interpreter (Debian's
# /usr/bin/python3, which python3-qgis binds to) that sees the system site-packages (qgis,
# PyQt5, the system numpy) and has trajectory and its other dependencies pip-installed.
# numpy is pinned to the system's version so the host's compiled modules keep working.
# Usage: bash scripts/setup_qgis_env.sh   (prints the interpreter path on success)
set -euo pipefail
ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
HOSTPY="${QGIS_PYTHON:-/usr/bin/python3}"
VENV="$ROOT/.venv-qgis"
if ! "$HOSTPY" -c "import qgis.core" >/dev/null 2>&1; then
    echo "setup_qgis_env: $HOSTPY cannot import qgis.core; install the Debian packages" \
         "qgis python3-qgis qgis-providers (see README)" >&2
    exit 1
fi
if [ ! -x "$VENV/bin/python" ]; then
    "$HOSTPY" -m venv --system-site-packages "$VENV"
fi
VPY="$VENV/bin/python"
CONSTRAINTS="$VENV/constraints.txt"
"$HOSTPY" -c "import numpy; print(f'numpy=={numpy.__version__}')" > "$CONSTRAINTS" 2>/dev/null \
    || : > "$CONSTRAINTS"
# eager: Debian's older copies (attrs, pandas, ...) must not satisfy our dependencies
"$VPY" -m pip install --quiet --upgrade --upgrade-strategy eager --constraint "$CONSTRAINTS" -e "$ROOT" 2>&1 \
    | grep -v "^WARNING: Location" >&2 || true
"$VPY" -c "import qgis.core, trajectory.gis_provider" \
    || { echo "setup_qgis_env: trajectory is not importable beside qgis" >&2; exit 1; }
echo "$VPY"
