#!/usr/bin/env bash
# The desktop GIS's command-line processing runner (qgis_process), headless, with
# trajectory's dependencies from .venv-qgis on its Python path (scheduled runs, CI).
# Usage: bash scripts/qgis_process.sh run trajectory:crest_assess -- centreline=... out=...
set -euo pipefail
ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
VPY="$ROOT/.venv-qgis/bin/python"
[ -x "$VPY" ] || { echo "qgis_process.sh: run scripts/setup_qgis_env.sh first" >&2; exit 1; }
SITE="$("$VPY" -c 'import sysconfig; print(sysconfig.get_paths()["purelib"])')"
export PYTHONPATH="$SITE${PYTHONPATH:+:$PYTHONPATH}"
export QT_QPA_PLATFORM="${QT_QPA_PLATFORM:-offscreen}"
# Debian's qgis_process wrapper adds --noversioncheck, which the 3.22 runner refuses
RUNNER=/usr/bin/qgis_process.bin
[ -x "$RUNNER" ] || RUNNER=qgis_process
exec "$RUNNER" "$@"
