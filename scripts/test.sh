#!/usr/bin/env bash
# Fresh machine to a passing test run: set up .venv with the test extras, run pytest.
set -euo pipefail
ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
cd "$ROOT"
bash scripts/setup_env.sh test,distributed  # Dask LocalCluster tests
# the desktop GIS's Python side (.venv-qgis) for the provider tests: where QGIS is installed,
# and always in CI (there a missing QGIS fails the run instead of skipping its tests)
if [ "${CI:-}" = "true" ] || /usr/bin/python3 -c "import qgis.core" >/dev/null 2>&1; then
    bash scripts/setup_qgis_env.sh >/dev/null
fi
exec "$ROOT/.venv/bin/python" -m pytest "$@"
