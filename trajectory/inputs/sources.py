"""Read and validate the inputs: centreline, terrain model, section conditions.

This is an edge module: it touches files. Everything it returns is plain
geometry or columnar numpy so the stages after it stay pure.
"""

from __future__ import annotations

import hashlib
import logging
from dataclasses import dataclass
from pathlib import Path

import geopandas as gpd
import numpy as np
import pyogrio
import rasterio
import shapely
from pyproj import CRS, Transformer
from shapely.geometry import LineString, MultiLineString

from ..checks import check_file, check_parts, check_simple, is_raster, is_vector
from ..errors import InputError, InputFileError
from .joins import join_parts

log = logging.getLogger(__name__)


# ----------------------------------------------------------------- centreline
def read_centreline(
    path: str | Path, *, layer: str | None = None, target_crs: CRS | None = None,
    gap_tolerance: float = 1.0,
) -> tuple[LineString, CRS]:
    """Read the levee centreline as one LineString, in ``target_crs`` if given.

    Multi-feature or multi-part lines are joined in order; gaps up to
    ``gap_tolerance`` (m) are closed, larger ones refused.
    """
    p, df, crs = read_line_layer(path, layer=layer)
    geoms = [g for g in df.geometry if g is not None and not g.is_empty]
    if not geoms:
        raise InputError(f"{p}: layer {_pick_line_layer(p, layer)!r} holds no line geometry")
    return line_from_parts(geoms, crs, target_crs=target_crs, source=str(p),
                           gap_tolerance=gap_tolerance)


def read_line_layer(path: str | Path, *, layer: str | None = None
                    ) -> tuple[Path, gpd.GeoDataFrame, CRS]:
    """The centreline file's line layer (checked: a vector file, one line layer, a CRS)."""
    p = check_file(path, role="centreline", option="--centreline")
    if not is_vector(p) and is_raster(p):
        raise InputFileError(f"{p}: is a raster, not a line layer; give the centreline as a "
                             "vector file (did you swap --centreline and --dem?)")
    layer = _pick_line_layer(p, layer)
    try:
        df = pyogrio.read_dataframe(p, layer=layer)
    except Exception as exc:  # pyogrio raises several kinds for unreadable data
        raise InputFileError(f"{p}: cannot read the centreline ({exc})") from exc
    if df.crs is None:
        raise InputError(f"{p}: the centreline has no coordinate reference system; "
                         "assign one (e.g. in a GIS) and run again")
    return p, df, CRS.from_user_input(df.crs)


def line_from_parts(geoms: list, crs: CRS, *, target_crs: CRS | None, source: str,
                    gap_tolerance: float) -> tuple[LineString, CRS]:
    """One levee line from its parts: reprojected, joined, and checked.

    The parts are reprojected first, so gaps are measured in the working CRS's metres;
    gaps up to ``gap_tolerance`` are closed, larger ones refused; a line that cannot
    be placed, has no length or crosses itself is refused. The one way every
    centreline (one or several per file) is made.
    """
    if target_crs is not None and not crs.equals(target_crs):
        tr = Transformer.from_crs(crs, target_crs, always_xy=True)
        geoms = [shapely.transform(g, lambda c: np.column_stack(tr.transform(c[:, 0], c[:, 1])))
                 for g in geoms]
        crs = target_crs
    line = _join_lines(geoms, source=source, tolerance=gap_tolerance)
    if not np.isfinite(line.length):
        raise InputError(f"{source}: the centreline cannot be placed in the DEM's CRS "
                         f"({crs.name}); check the CRS assigned to the centreline")
    if not line.length > 0:
        raise InputError(f"{source}: the centreline has zero length; digitise the levee line")
    check_simple(line, source=source)
    return line, crs


def _pick_line_layer(p: Path, layer: str | None) -> str:
    try:
        layers = pyogrio.list_layers(p)
    except Exception as exc:
        raise InputFileError(f"{p}: not a vector file GDAL can read ({exc}); "
                             "give a GeoPackage, Shapefile or GeoJSON line layer") from exc
    lines = [str(n) for n, g in layers if g and "LineString" in str(g)]
    if layer is not None:
        if layer not in [str(n) for n, _ in layers]:
            raise InputError(f"{p}: no layer {layer!r}; layers are "
                             f"{', '.join(str(n) for n, _ in layers)}")
        return layer
    if not lines:
        raise InputError(f"{p}: no line layer found; give a file with a LineString layer")
    if len(lines) > 1:
        raise InputError(f"{p}: several line layers ({', '.join(lines)}); choose one with --layer")
    return lines[0]


def _join_lines(geoms: list, *, source: str, tolerance: float) -> LineString:
    parts: list[LineString] = []
    for g in geoms:
        if isinstance(g, MultiLineString):
            parts.extend(g.geoms)
        elif isinstance(g, LineString):
            parts.append(g)
        else:
            raise InputError(f"{source}: geometry of type {g.geom_type} is not a line; "
                             "give the centreline as a LineString layer")
    parts = [LineString(np.asarray(q.coords)[:, :2]) for q in parts if not q.is_empty]
    if not parts:
        raise InputError(f"{source}: the line features are empty; digitise the levee line")
    check_parts(parts, source=source)
    try:
        line, gaps = join_parts(parts, tolerance=tolerance)
    except InputError as exc:
        raise InputError(f"{source}: {exc}") from exc
    big = [g for g in gaps if g.distance > tolerance]
    if big:
        listed = "\n  - ".join(f"{g.distance:.1f} m between parts {g.parts[0] + 1} and "
                               f"{g.parts[1] + 1} near ({g.x:.1f}, {g.y:.1f})" for g in big)
        raise InputError(f"{source}: the centreline parts leave {len(big)} gap(s) larger than "
                         f"the gap tolerance ({tolerance} m):\n  - {listed}\njoin them or "
                         "raise --gap-tolerance")
    if gaps:
        log.info("%s: closed %d gap(s) between centreline parts, the largest %.2f m", source,
                 len(gaps), max(g.distance for g in gaps))
    return line


# ----------------------------------------------------------------------- DEM
@dataclass(frozen=True)
class DemInfo:
    """What the pipeline needs to know of the terrain model (picklable)."""

    path: str
    crs: CRS
    cell: float
    nodata: float | None
    bounds: tuple[float, float, float, float]


def open_dem(path: str | Path) -> DemInfo:
    """Open the terrain model and check it is usable for metric work."""
    p = str(path)
    if not p.startswith(("/vsi", "http")):
        check_file(p, role="DEM", option="--dem")
    try:
        with rasterio.open(p) as ds:
            crs, res, nodata, b = ds.crs, ds.res, ds.nodata, ds.bounds
    except rasterio.errors.RasterioIOError as exc:
        if is_vector(p):
            raise InputFileError(f"{p}: is a vector file, not a raster; give the terrain "
                                 "model as a raster (did you swap --centreline and --dem?)"
                                 ) from exc
        raise InputFileError(f"{p}: not a raster GDAL can read ({exc})") from exc
    if crs is None:
        raise InputError(f"{p}: the DEM has no coordinate reference system; assign one")
    pcrs = CRS.from_user_input(crs.to_wkt())
    if pcrs.is_compound:  # the horizontal part places the stations; levels: demread.py
        pcrs = next((c for c in pcrs.sub_crs_list if not c.is_vertical), pcrs)
    if pcrs.is_geographic:
        raise InputError(f"{p}: the DEM is in a geographic CRS (degrees); reproject it to a "
                         "projected CRS in metres (e.g. the local UTM zone)")
    return DemInfo(path=p, crs=pcrs, cell=float(min(abs(res[0]), abs(res[1]))),
                   nodata=None if nodata is None else float(nodata),
                   bounds=(b.left, b.bottom, b.right, b.top))


def file_checksum(path: str | Path) -> str:
    """SHA-256 of a file (for the run metadata)."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


# ---------------------------------------------------------------- conditions
# Section conditions live in their own module; their names stay importable from here.
from .conditions import (  # noqa: E402,F401
    CONDITION_COLUMNS,
    OPTIONAL_COLUMNS,
    Conditions,
    assign_sections,
    check_conditions_cover,
    read_conditions,
    validate_conditions,
)


def line_bounds_overlap(line: LineString, dem: DemInfo, margin: float) -> bool:
    """True where the buffered line touches the DEM extent."""
    return bool(shapely.box(*dem.bounds).intersects(line.buffer(margin)))
