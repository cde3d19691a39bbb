#!/usr/bin/env bash
# Build the plugin zip and install it into the desktop GIS's default profile (or the
# profile folder under $QGIS_CUSTOM_CONFIG_PATH), then enable it for qgis_process.
# Usage: bash scripts/install_plugin.sh
set -euo pipefail
ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
PY="${PYTHON:-python3}"
BASE="${QGIS_CUSTOM_CONFIG_PATH:-$HOME/.local/share/QGIS/QGIS3}"
PLUGINS="$BASE/profiles/default/python/plugins"
ZIP="$("$PY" "$ROOT/scripts/build_plugin.py" --out "$ROOT/dist" 2>/dev/null | tail -1)"
mkdir -p "$PLUGINS"
rm -rf "$PLUGINS/trajectory_plugin"
"$PY" -m zipfile -e "$ZIP" "$PLUGINS"
bash "$ROOT/scripts/qgis_process.sh" plugins enable trajectory_plugin >/dev/null 2>&1 \
    || echo "install_plugin: installed; enable it in the Plugin Manager" >&2
echo "$PLUGINS/trajectory_plugin"
