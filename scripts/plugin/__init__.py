"""Entry point the desktop GIS calls when it loads the trajectory plugin.

The plugin ships the trajectory engine in ``engine/``; that copy is used so the
algorithms always match the plugin's version. Its dependencies (numpy, rasterio,
geopandas, ...) come from the host's Python.
"""

from __future__ import annotations

import sys
from pathlib import Path

_ENGINE = Path(__file__).resolve().parent / "engine"
if _ENGINE.is_dir() and str(_ENGINE) not in sys.path:
    sys.path.insert(0, str(_ENGINE))


def classFactory(iface):  # noqa: N802 (name fixed by the host)
    """Return the plugin object (the host's required entry point)."""
    try:
        from trajectory.frontends.gis_provider.plugin import TrajectoryPlugin
    except ImportError as exc:
        raise ImportError(
            f"trajectory plugin: a dependency is missing from the host's Python ({exc}); "
            "install numpy, scipy, shapely, pyproj, rasterio, pandas, geopandas and pyogrio "
            "into it (see the trajectory README, 'Desktop GIS')") from exc
    return TrajectoryPlugin(iface)
