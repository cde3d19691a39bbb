"""Cross-section geometry and terrain sampling by windows.

A chunk of stations is sampled with one windowed read of the DEM covering all
its sections and one vectorised bilinear interpolation of every sample point.
"""

from __future__ import annotations

import numpy as np
import rasterio
from rasterio.enums import MaskFlags
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
    return bilinear_window(grid, col, row, col0=0, row0=0, width=w, height=h)


def bilinear_window(grid: np.ndarray, col: np.ndarray, row: np.ndarray, *, col0: int,
                    row0: int, width: int, height: int, nodata: float | None = None
                    ) -> np.ndarray:
    """Bilinear interpolation at dataset pixel coordinates from a window of the dataset.

    ``col, row`` are fractional pixel coordinates in the whole dataset
    (``width`` x ``height`` cells); ``grid`` is the window whose first cell is
    dataset cell (``row0``, ``col0``) and must hold every neighbour used. The
    weights depend on the dataset coordinates only, so a point gets the same
    value whichever window it is read from. Cells equal to ``nodata`` or NaN
    are nodata, treated as in :func:`bilinear`.
    """
    gh, gw = grid.shape
    return _bilinear_flat(grid.ravel(), col, row, col0=col0, row0=row0, grid_width=gw,
                          grid_height=gh, base=0, width=width, height=height, nodata=nodata)


def _bilinear_flat(flat: np.ndarray, col: np.ndarray, row: np.ndarray, *, col0, row0,
                   grid_width, grid_height, base, width: int, height: int,
                   nodata: float | None) -> np.ndarray:
    """:func:`bilinear_window` on windows stored one after the other in ``flat``.

    Each point's window starts at ``flat[base]`` and is ``grid_height x grid_width``
    cells from dataset cell (``row0``, ``col0``); these may be scalars or arrays
    broadcasting against ``col`` (one window per row of points), so a whole chunk
    of sections is interpolated in one pass.
    """
    u = col - 0.5
    v = row - 0.5
    j0 = np.floor(u)
    i0 = np.floor(v)
    fu = u - j0
    fv = v - i0
    j0 = j0.astype(np.int64)
    i0 = i0.astype(np.int64)
    inside = (col >= 0) & (col <= width) & (row >= 0) & (row <= height)
    # window indices; a neighbour beyond the dataset's edge repeats the edge cell (as
    # GDAL does), and the window holds every cell a point inside the dataset needs
    gw1, gh1 = np.subtract(grid_width, 1), np.subtract(grid_height, 1)
    ja = _clip(j0 - col0, gw1) + base
    jb = _clip(j0 + np.subtract(1, col0), gw1) + base
    ia = _clip(i0 - row0, gh1) * grid_width
    ib = _clip(i0 + np.subtract(1, row0), gh1) * grid_width
    gu, gv = 1.0 - fu, 1.0 - fv
    corners = [(ia + ja, gv * gu), (ia + jb, gv * fu), (ib + ja, fv * gu), (ib + jb, fv * fu)]
    zs = [flat[idx].astype(np.float64) for idx, _ in corners]
    oks = [_valid(z, nodata) for z in zs]
    if all(ok.all() for ok in oks):
        # every neighbour valid (the usual case): the same sums without the masking
        acc = zs[0] * corners[0][1]
        wsum = corners[0][1].copy()
        for z, (_, wt) in zip(zs[1:], corners[1:], strict=True):
            acc += z * wt
            wsum += wt
        out = acc / wsum
        out[~(inside & (wsum > 0))] = np.nan
        return out
    acc = np.zeros(col.shape)
    wsum = np.zeros(col.shape)
    for z, ok, (_, wt) in zip(zs, oks, corners, strict=True):
        acc += np.where(ok, z * wt, 0.0)
        wsum += np.where(ok, wt, 0.0)
    # the nearest cell decides whether the point has a value at all
    near = np.where(fv >= 0.5, np.where(fu >= 0.5, oks[3], oks[2]),
                    np.where(fu >= 0.5, oks[1], oks[0]))
    good = inside & near & (wsum > 0)
    out = np.full(col.shape, np.nan)
    out[good] = acc[good] / wsum[good]
    return out


def _clip(i: np.ndarray, hi) -> np.ndarray:
    """``i`` clipped to ``[0, hi]`` (``hi`` a scalar or an array broadcasting against it)."""
    return np.minimum(np.maximum(i, 0), hi)


def _valid(z: np.ndarray, nodata: float | None) -> np.ndarray:
    ok = ~np.isnan(z)
    if nodata is not None and not np.isnan(nodata):
        ok &= z != nodata
    return ok


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


#: a separate window costs about as much as reading this many more cells (per-read
#: overhead); neighbouring stations share a window while that is cheaper
READ_OVERHEAD_CELLS = 5_000


def station_cell_ranges(cols: np.ndarray, rows: np.ndarray, *, width: int, height: int
                        ) -> np.ndarray:
    """Dataset cells each station's samples need: ``[c0, c1, r0, r1)`` per row of points.

    A sample at pixel coordinate ``c`` uses cells ``floor(c - 0.5)`` and the next
    one (bilinear neighbours, which include the nearest cell). Ranges are clipped
    to the dataset; a station entirely outside it gets an empty range.
    """
    with np.errstate(invalid="ignore"):
        jc = np.floor(cols - 0.5)
        ir = np.floor(rows - 0.5)
    fin = np.isfinite(jc) & np.isfinite(ir)
    big = np.iinfo(np.int64).max // 4
    c0 = np.where(fin, jc, big).min(axis=1)
    c1 = np.where(fin, jc, -big).max(axis=1) + 2
    r0 = np.where(fin, ir, big).min(axis=1)
    r1 = np.where(fin, ir, -big).max(axis=1) + 2
    ext = np.stack([np.clip(c0, 0, width), np.clip(c1, 0, width),
                    np.clip(r0, 0, height), np.clip(r1, 0, height)], axis=1)
    return ext.astype(np.int64)


def window_groups(ext: np.ndarray, *, overhead: int = READ_OVERHEAD_CELLS
                  ) -> list[tuple[int, int, tuple[int, int, int, int]]]:
    """Split consecutive stations into groups that share one DEM window.

    Going along chainage, a station joins the current group while the grown
    window costs fewer cells than reading its own window plus ``overhead``; on a
    curved or diagonal line this keeps the windows close to the cells the
    sections cover instead of one large bounding box per chunk.
    Returns ``(first, stop, (c0, c1, r0, r1))`` per group.
    """
    groups: list[tuple[int, int, tuple[int, int, int, int]]] = []
    rows = [tuple(e) for e in np.asarray(ext, dtype=np.int64).tolist()]
    if not rows:
        return groups

    def area(e: tuple[int, ...]) -> int:
        return max(e[1] - e[0], 0) * max(e[3] - e[2], 0)

    first, cur = 0, rows[0]
    for i in range(1, len(rows)):
        e = rows[i]
        if area(e) == 0:
            merged = cur
        elif area(cur) == 0:
            merged = e
        else:
            merged = (min(cur[0], e[0]), max(cur[1], e[1]), min(cur[2], e[2]),
                      max(cur[3], e[3]))
        if area(merged) <= area(cur) + area(e) + overhead:
            cur = merged
        else:
            groups.append((first, i, cur))
            first, cur = i, e
    groups.append((first, len(rows), cur))
    return groups


def _plain_nodata(ds: rasterio.io.DatasetReader) -> bool:
    """True where band 1's mask is just its nodata value (or all valid)."""
    flags = set(ds.mask_flag_enums[0])
    return flags <= {MaskFlags.nodata, MaskFlags.all_valid}


#: DEM cells held at once while sampling a chunk (64 MB of float32): the windows of a
#: chunk are read and interpolated in batches of at most this many cells (a single
#: larger window is read alone)
BUFFER_CELLS = 16_000_000


def sample_profiles(ds: rasterio.io.DatasetReader, stations: Stations,
                    offsets: np.ndarray, *, overhead: int = READ_OVERHEAD_CELLS,
                    buffer_cells: int = BUFFER_CELLS) -> np.ndarray:
    """Terrain levels (stations x offsets) along each cross-section, NaN for nodata.

    Consecutive stations are read through shared windows (:func:`window_groups`),
    stored one after the other in one buffer of at most ``buffer_cells`` and
    interpolated in one pass per buffer. The cells are kept in the DEM's own data
    type and only the four neighbours of each sample are converted, so the cost
    follows the cells the sections cover.
    """
    x, y = section_points(stations, offsets)
    cols, rows = to_pixel(ds.transform, x, y)
    ext = station_cell_ranges(cols, rows, width=ds.width, height=ds.height)
    out = np.full(x.shape, np.nan)
    plain = _plain_nodata(ds)
    groups = [(a, b, e) for a, b, e in window_groups(ext, overhead=overhead)
              if e[1] > e[0] and e[3] > e[2]]
    batch: list = []
    cells = 0
    for g in groups:
        size = (g[2][1] - g[2][0]) * (g[2][3] - g[2][2])
        if batch and cells + size > buffer_cells:
            _sample_batch(ds, batch, cols, rows, out, plain=plain)
            batch, cells = [], 0
        batch.append(g)
        cells += size
    if batch:
        _sample_batch(ds, batch, cols, rows, out, plain=plain)
    return out


def _sample_batch(ds: rasterio.io.DatasetReader, groups: list, cols: np.ndarray,
                  rows: np.ndarray, out: np.ndarray, *, plain: bool) -> None:
    """Read the windows of ``groups`` into one buffer and interpolate their stations.

    ``plain``: the mask is just the nodata value (:func:`_plain_nodata`), so cells are
    read raw in the DEM's type; otherwise masked, as float64 with NaN.
    """
    # window of each group, and its place in the one buffer holding all the windows
    win = np.array([e for _, _, e in groups], dtype=np.int64)   # c0, c1, r0, r1
    gw, gh = win[:, 1] - win[:, 0], win[:, 3] - win[:, 2]
    base = np.concatenate([[0], np.cumsum(gw * gh)])
    flat = np.empty(int(base[-1]), dtype=ds.dtypes[0] if plain else np.float64)
    for k, (c0, c1, r0, r1) in enumerate(win.tolist()):
        part = flat[base[k]:base[k + 1]].reshape(r1 - r0, c1 - c0)
        window = Window(c0, r0, c1 - c0, r1 - r0)
        if plain:
            ds.read(1, window=window, out=part)
        else:
            part[:] = np.ma.filled(ds.read(1, window=window, masked=True).astype(np.float64),
                                   np.nan)
    # the window of each station's row of points
    first = np.array([a for a, _, _ in groups])
    stop = np.array([b for _, b, _ in groups])
    g = np.repeat(np.arange(len(groups)), stop - first)
    rows_in = np.concatenate([np.arange(a, b) for a, b in zip(first, stop, strict=True)])
    out[rows_in] = _bilinear_flat(
        flat, cols[rows_in], rows[rows_in], col0=win[g, 0][:, None], row0=win[g, 2][:, None],
        grid_width=gw[g][:, None], grid_height=gh[g][:, None], base=base[g][:, None],
        width=ds.width, height=ds.height, nodata=ds.nodata if plain else None)
