#!/usr/bin/env bash
# Fresh machine to a passing test run: set up .venv with the test extras, run pytest.
set -euo pipefail
ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
cd "$ROOT"
bash scripts/setup_env.sh test,distributed  # Dask LocalCluster tests
exec "$ROOT/.venv/bin/python" -m pytest "$@"
