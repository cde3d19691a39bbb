"""The terrain under the line, for context in the map and the GIS view.

A hillshade (Horn 1981 slope and aspect; sun from the north-west, 45 degrees
up, as GDAL's ``gdaldem hillshade`` defaults) of a decimated read of the DEM
in a band along the line, and the DEM's footprint. Neither enters the
assessment: they are background for the report's overview map and the
GeoPackage. :func:`hillshade` is pure; :func:`read_terrain` is the edge.
"""

from __future__ import annotations

import dataclasses
import logging
import math
from dataclasses import dataclass

import numpy as np
import rasterio
import rasterio.errors
from rasterio.enums import Resampling
from rasterio.windows import Window, from_bounds

log = logging.getLogger(__name__)

#: sun azimuth (degrees clockwise from north) and altitude (degrees above the horizon),
#: the defaults of ``gdaldem hillshade``
SUN_AZIMUTH = 315.0
SUN_ALTITUDE = 45.0
#: most pixels across the hillshade: enough for a report figure, cheap to read
MAX_PIXELS = 800
#: decimation of the read (nearest cell: GDAL reads fewer cells than for an average)
RESAMPLING = Resampling.nearest


@dataclass(frozen=True)
class Terrain:
    """The DEM's footprint and a small hillshade of it around the line.

    ``shade`` is uint8 as ``gdaldem hillshade`` writes it: 1 + 254 x illumination,
    0 where there is no value (DEM nodata, the outer ring of cells); row 0 is north.
    """

    dem_name: str
    dem_bounds: tuple[float, float, float, float]   # left, bottom, right, top (working CRS)
    dem_cell: float
    dem_size: tuple[int, int]                       # columns, rows
    shade: np.ndarray | None = None
    shade_bounds: tuple[float, float, float, float] | None = None


def hillshade(z: np.ndarray, cell_x: float, cell_y: float, *,
              azimuth: float = SUN_AZIMUTH, altitude: float = SUN_ALTITUDE,
              z_factor: float = 1.0) -> np.ndarray:
    """Illumination (0-1) of each cell of a north-up grid; NaN on the edge and near nodata.

    Horn (1981) gradient of the 3 x 3 neighbourhood (as in ``gdaldem``): with cells
    a b c / d e f / g h i (row 0 north), dz/dx = ((c+2f+i) - (a+2d+g)) / (8 cell_x) and
    dz/dy (northward) = ((a+2b+c) - (g+2h+i)) / (8 cell_y). The illumination is the
    cosine of the angle between the surface normal and the sun,
    cos(zenith) cos(slope) + sin(zenith) sin(slope) cos(azimuth - aspect), written with
    the normal (-p, -q, 1) / sqrt(1 + p^2 + q^2); shadow (negative) is 0.
    """
    z = np.asarray(z, float) * z_factor
    out = np.full(z.shape, np.nan)
    if z.shape[0] < 3 or z.shape[1] < 3:
        return out
    a, b, c = z[:-2, :-2], z[:-2, 1:-1], z[:-2, 2:]
    d, f = z[1:-1, :-2], z[1:-1, 2:]
    g, h, i = z[2:, :-2], z[2:, 1:-1], z[2:, 2:]
    p = ((c + 2 * f + i) - (a + 2 * d + g)) / (8.0 * cell_x)
    q = ((a + 2 * b + c) - (g + 2 * h + i)) / (8.0 * cell_y)
    az, alt = math.radians(azimuth), math.radians(altitude)
    sx, sy, sz = math.sin(az) * math.cos(alt), math.cos(az) * math.cos(alt), math.sin(alt)
    cang = (sz - p * sx - q * sy) / np.sqrt(1.0 + p * p + q * q)
    cang[np.isnan(z[1:-1, 1:-1])] = np.nan  # Horn leaves the centre out; gdaldem does not
    out[1:-1, 1:-1] = np.clip(cang, 0.0, None)  # NaN in the neighbourhood stays NaN
    return out


def shade_bytes(illumination: np.ndarray) -> np.ndarray:
    """Illumination as ``gdaldem`` stores it: uint8 1 + 254 x value, 0 for no value."""
    v = np.nan_to_num(1.0 + 254.0 * np.asarray(illumination, float), nan=0.0)
    return np.rint(v).astype(np.uint8)


def dem_footprint(path: str) -> Terrain:
    """The terrain record of the DEM at ``path`` without its shade (no cell is read)."""
    with rasterio.open(path) as ds:
        return _footprint(ds, path)


def _footprint(ds: rasterio.io.DatasetReader, path: str) -> Terrain:
    from pathlib import Path

    return Terrain(Path(path).name, tuple(float(v) for v in ds.bounds),
                   float(abs(ds.transform.a)), (int(ds.width), int(ds.height)))


def read_terrain(path: str, line, *, band: float, scale: float = 1.0,
                 fill_values: tuple[float, ...] = (),
                 max_pixels: int = MAX_PIXELS) -> Terrain:
    """The footprint of the DEM at ``path`` and a hillshade of the ground near ``line``.

    The shade's grid spans the line's bounds plus ``band``, at most ``max_pixels``
    across; only its tiles within ``band`` of the line (a shapely geometry) are read,
    each decimated by GDAL (the nearest cell, or an overview where the file has
    one), so the cost follows the corridor, not the bounding box. ``scale`` turns raw
    values into metres and ``fill_values`` are no value
    (:class:`trajectory.terrain.demread.DemReading`). The shade is ``None`` where the
    corridor misses the DEM or holds no value.
    """
    import shapely

    with rasterio.open(path) as ds:
        terrain = _footprint(ds, path)
        left, bottom, right, top = terrain.dem_bounds
        lx0, ly0, lx1, ly1 = line.bounds
        x0, y0 = max(lx0 - band, left), max(ly0 - band, bottom)
        x1, y1 = min(lx1 + band, right), min(ly1 + band, top)
        if x1 <= x0 or y1 <= y0:
            return terrain
        full = from_bounds(x0, y0, x1, y1, ds.transform).round_offsets().round_lengths()
        full = full.intersection(Window(0, 0, ds.width, ds.height))
        k = max(1, math.ceil(max(full.width, full.height) / max_pixels))  # cells per pixel
        rows, cols = max(3, int(full.height // k)), max(3, int(full.width // k))
        # tiles of the grid about the corridor's width, read where the corridor passes
        tile = max(4, math.ceil(2.0 * band / (k * terrain.dem_cell)))
        corridor = shapely.prepared.prep(line.buffer(band))
        levels = np.full((rows, cols), np.nan)
        try:
            for r in range(0, rows, tile):
                for c in range(0, cols, tile):
                    h, w = min(tile, rows - r), min(tile, cols - c)
                    win = Window(full.col_off + c * k, full.row_off + r * k, w * k, h * k)
                    if not corridor.intersects(shapely.box(*ds.window_bounds(win))):
                        continue
                    z = ds.read(1, window=win, out_shape=(h, w), masked=True,
                                resampling=RESAMPLING)
                    levels[r:r + h, c:c + w] = np.ma.filled(z.astype(float), np.nan)
        except rasterio.errors.RasterioIOError as exc:  # background only: never fatal
            log.warning("%s: no hillshade for the map (%s)", path, exc)
            return terrain
        wb = ds.window_bounds(Window(full.col_off, full.row_off, cols * k, rows * k))
    if fill_values:
        levels[np.isin(levels, fill_values)] = np.nan
    levels *= scale
    if not np.isfinite(levels).any():
        return terrain
    shade = shade_bytes(hillshade(levels, k * terrain.dem_cell, k * terrain.dem_cell))
    log.debug("hillshade %d x %d px at %.1f m from %s", cols, rows, k * terrain.dem_cell, path)
    return dataclasses.replace(terrain, shade=shade,
                               shade_bounds=tuple(float(v) for v in wb))
