"""Cross-section geometry and terrain sampling by windows.

A chunk of stations is sampled with one windowed read of the DEM covering all
its sections and one vectorised bilinear interpolation of every sample point.
"""

from __future__ import annotations

import numpy as np
import rasterio
from rasterio.windows import Window

from .chainage import Stations


def section_offsets(half_width: float, step: float) -> np.ndarray:
    """Offsets (m) of the samples of a cross-section, symmetric about 0."""
    n = int(np.floor(half_width / step + 1e-9))
    return np.arange(-n, n + 1, dtype=float) * step


def section_points(stations: Stations, offsets: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Map coordinates (stations x offsets) of every sample; offsets positive to the left."""
    x = stations.x[:, None] + offsets[None, :] * stations.nx[:, None]
    y = stations.y[:, None] + offsets[None, :] * stations.ny[:, None]
    return x, y


def bilinear(grid: np.ndarray, col: np.ndarray, row: np.ndarray) -> np.ndarray:
    """Bilinear interpolation of ``grid`` at fractional pixel coordinates.

    ``col, row`` are in pixel units with cell centres at ``i + 0.5`` (GDAL's
    convention). NaN cells are nodata: where the nearest cell is NaN the result
    is NaN, otherwise the weights of the valid neighbours are renormalised.
    Points outside the grid are NaN.
    """
    h, w = grid.shape
    u = col - 0.5
    v = row - 0.5
    j0 = np.floor(u).astype(np.int64)
    i0 = np.floor(v).astype(np.int64)
    fu = u - j0
    fv = v - i0
    inside = (col >= 0) & (col <= w) & (row >= 0) & (row <= h)
    out = np.full(col.shape, np.nan)
    acc = np.zeros(col.shape)
    wsum = np.zeros(col.shape)
    for di, dj, wt in ((0, 0, (1 - fv) * (1 - fu)), (0, 1, (1 - fv) * fu),
                       (1, 0, fv * (1 - fu)), (1, 1, fv * fu)):
        ii = np.clip(i0 + di, 0, h - 1)
        jj = np.clip(j0 + dj, 0, w - 1)
        z = grid[ii, jj]
        ok = ~np.isnan(z)
        acc += np.where(ok, z, 0.0) * wt * ok
        wsum += wt * ok
    near = grid[np.clip(np.floor(row).astype(np.int64), 0, h - 1),
                np.clip(np.floor(col).astype(np.int64), 0, w - 1)]
    good = inside & ~np.isnan(near) & (wsum > 0)
    out[good] = acc[good] / wsum[good]
    return out


def to_pixel(transform, x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Fractional pixel coordinates (col, row) of map points under an affine transform."""
    a, b, c, d, e, f = (~transform)[:6]
    return a * x + b * y + c, d * x + e * y + f


def read_window(ds: rasterio.io.DatasetReader, x: np.ndarray, y: np.ndarray,
                pad: int = 2) -> tuple[np.ndarray, float, float] | None:
    """Read the DEM window covering points ``x, y``; nodata as NaN.

    Returns the grid and the pixel offset (col0, row0) of its first cell in the
    dataset, or None where the points miss the dataset entirely.
    """
    cols, rows = to_pixel(ds.transform, x.ravel(), y.ravel())
    finite = np.isfinite(cols) & np.isfinite(rows)
    if not finite.any():
        return None
    c0 = max(int(np.floor(cols[finite].min())) - pad, 0)
    r0 = max(int(np.floor(rows[finite].min())) - pad, 0)
    c1 = min(int(np.ceil(cols[finite].max())) + pad, ds.width)
    r1 = min(int(np.ceil(rows[finite].max())) + pad, ds.height)
    if c1 <= c0 or r1 <= r0:
        return None
    win = Window(c0, r0, c1 - c0, r1 - r0)
    band = ds.read(1, window=win, masked=True)
    grid = np.ma.filled(band.astype(np.float64), np.nan)
    return grid, float(c0), float(r0)


def sample_profiles(ds: rasterio.io.DatasetReader, stations: Stations,
                    offsets: np.ndarray) -> np.ndarray:
    """Terrain levels (stations x offsets) along each cross-section, NaN for nodata."""
    x, y = section_points(stations, offsets)
    got = read_window(ds, x, y)
    if got is None:
        return np.full(x.shape, np.nan)
    grid, c0, r0 = got
    cols, rows = to_pixel(ds.transform, x, y)
    return bilinear(grid, cols - c0, rows - r0)
