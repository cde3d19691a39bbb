#!/usr/bin/env bash
# Create (or reuse) .venv-qgis: a venv of the desktop GIS's own interpreter (Debian's
# /usr/bin/python3, which python3-qgis binds to) that sees the system site-packages (qgis,
# PyQt5, the system numpy) and has trajectory and its other dependencies pip-installed.
#
# Inside the desktop GIS and its command-line runner the host's GDAL, GEOS and PROJ are
# already loaded, and a wheel's own bundled copies would bind to them and crash; so the
# packages that link these libraries (shapely, pyproj, rasterio, pyogrio) are built from
# source against the system libraries (Debian: libgdal-dev libgeos-dev libproj-dev proj-bin
# build-essential python3-dev; a few minutes the first time, then pip's wheel cache).
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
if ! command -v gdal-config >/dev/null || ! command -v geos-config >/dev/null; then
    echo "setup_qgis_env: gdal-config/geos-config missing; install the Debian packages" \
         "libgdal-dev libgeos-dev libproj-dev proj-bin build-essential python3-dev" >&2
    exit 1
fi
if [ ! -x "$VENV/bin/python" ]; then
    "$HOSTPY" -m venv --system-site-packages "$VENV"
fi
VPY="$VENV/bin/python"
LOG="$VENV/setup.log"
: > "$LOG"
# pip's chatter goes to the log, shown only if the final check fails
quiet() { cat >> "$LOG"; }
# a pip recent enough to cache the wheels it builds from source
"$VPY" -m pip install --quiet --upgrade pip 2>&1 | quiet
CONSTRAINTS="$VENV/constraints.txt"
{
    "$HOSTPY" -c "import numpy; print(f'numpy=={numpy.__version__}')" 2>/dev/null || true
    # pyproj 3.7 needs PROJ >= 9.2; Debian bookworm has 9.1
    echo "pyproj<3.7"
} > "$CONSTRAINTS"
NATIVE="shapely,pyproj,rasterio,pyogrio"
# pyproj 3.6 must be compiled with Cython < 3.1 (later Cython breaks its string handling:
# "TypeError: expected bytes, str found" on every CRS). pip 26 reads build constraints
# from PIP_BUILD_CONSTRAINT (--build-constraint) only; older pips from PIP_CONSTRAINT.
printf 'cython<3.1\n' > "$VENV/build-constraints.txt"
PIP_CONSTRAINT="$VENV/build-constraints.txt" PIP_BUILD_CONSTRAINT="$VENV/build-constraints.txt" \
    "$VPY" -m pip install --quiet --no-cache-dir \
    --constraint "$CONSTRAINTS" --no-binary pyproj "pyproj>=3.5" 2>&1 | quiet
# eager: Debian's older copies (attrs, pandas, ...) must not satisfy our dependencies
"$VPY" -m pip install --quiet --upgrade --upgrade-strategy eager --constraint "$CONSTRAINTS" \
    --no-binary "$NATIVE" -e "$ROOT" 2>&1 | quiet
"$VPY" - <<'PY' || { tail -40 "$LOG" >&2; echo "setup_qgis_env: trajectory is not usable beside qgis" \
         "(pip log: $LOG)" >&2; exit 1; }
import qgis.core, shapely, rasterio, trajectory.frontends.gis_provider
from pyproj import CRS
CRS.from_user_input("EPSG:32632")  # a pyproj built with the wrong Cython fails here
# the native packages must use the host's libraries, not bundled copies
assert shapely.geos_version_string == qgis.core.Qgis.geosVersion().split("-")[0], (
    shapely.geos_version_string, qgis.core.Qgis.geosVersion())
from osgeo import gdal
assert rasterio.__gdal_version__ == gdal.__version__, (rasterio.__gdal_version__, gdal.__version__)
PY
echo "$VPY"
