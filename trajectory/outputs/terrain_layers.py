"""The terrain in the GeoPackage: the DEM's footprint layer and the hillshade raster.

Both come from :class:`trajectory.terrain.hillshade.Terrain`, worked out by the pipeline;
this module only writes them (and reads the shade back for the report).
"""

from __future__ import annotations

import logging
from pathlib import Path

import geopandas as gpd
import numpy as np
import rasterio
import rasterio.errors
import shapely
from rasterio.transform import from_bounds

from .schema import RASTERS, field_names

log = logging.getLogger(__name__)

#: the raster table of the hillshade (declared in :data:`.schema.RASTERS`)
SHADE_TABLE = "terrain_shade"
assert SHADE_TABLE in RASTERS


def dem_extent_layer(result) -> gpd.GeoDataFrame:
    """The DEM's bounds as one polygon (none when the run kept no terrain record)."""
    t = getattr(result, "terrain", None)
    cols = field_names("dem_extent")
    if t is None:
        return gpd.GeoDataFrame({c: [] for c in cols}, geometry=[], crs=result.crs)
    data = {"dem": [t.dem_name], "cell_size": [t.dem_cell], "columns": [t.dem_size[0]],
            "rows": [t.dem_size[1]]}
    return gpd.GeoDataFrame({c: data[c] for c in cols},
                            geometry=[shapely.box(*t.dem_bounds)], crs=result.crs)


def write_terrain_shade(result, path: str | Path) -> None:
    """Append the hillshade to the GeoPackage at ``path`` as PNG tiles (if there is one)."""
    t = getattr(result, "terrain", None)
    if t is None or t.shade is None or t.shade_bounds is None:
        return
    rows, cols = t.shade.shape
    with rasterio.open(path, "w", driver="GPKG", width=cols, height=rows, count=1,
                       dtype="uint8", nodata=0, crs=result.crs,
                       transform=from_bounds(*t.shade_bounds, cols, rows),
                       APPEND_SUBDATASET="YES", RASTER_TABLE=SHADE_TABLE,
                       RASTER_DESCRIPTION=RASTERS[SHADE_TABLE], TILE_FORMAT="PNG") as ds:
        ds.write(t.shade, 1)


def read_terrain_shade(path: str | Path) -> tuple[np.ndarray, tuple[float, ...]] | None:
    """The hillshade of a results GeoPackage and its bounds; ``None`` where it has none."""
    try:
        with rasterio.open(f"GPKG:{path}:{SHADE_TABLE}") as ds:
            return ds.read(1), tuple(float(v) for v in ds.bounds)
    except rasterio.errors.RasterioIOError:  # an older file, or a run without terrain
        return None
