"""Read and validate the inputs: centreline, terrain model, section conditions.

This is an edge module: it touches files. Everything it returns is plain
geometry or columnar numpy so the stages after it stay pure.
"""

from __future__ import annotations

import hashlib
import logging
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import pyogrio
import rasterio
import shapely
from pyproj import CRS, Transformer
from shapely.geometry import LineString, MultiLineString
from shapely.ops import linemerge, transform

from .checks import (
    check_file, check_parts, check_simple, condition_plausibility, is_raster, is_vector,
)
from .errors import ConditionsError, InputError, InputFileError

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
    geoms = [g for g in df.geometry if g is not None and not g.is_empty]
    if not geoms:
        raise InputError(f"{p}: layer {layer!r} holds no line geometry")
    line = _join_lines(geoms, source=str(p), tolerance=gap_tolerance)
    if not line.length > 0:
        raise InputError(f"{p}: the centreline has zero length; digitise the levee line")
    check_simple(line, source=str(p))
    crs = CRS.from_user_input(df.crs)
    if target_crs is not None and not crs.equals(target_crs):
        tr = Transformer.from_crs(crs, target_crs, always_xy=True)
        line = transform(tr.transform, line)
        crs = target_crs
    if not (line.length > 0 and np.isfinite(line.length)):
        raise InputError(f"{p}: the centreline cannot be placed in the DEM's CRS "
                         f"({crs.name}); check the CRS assigned to the centreline")
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
    check_parts(parts, source=source, tolerance=tolerance)
    if len(parts) == 1:
        return LineString(np.asarray(parts[0].coords)[:, :2])
    merged = linemerge(MultiLineString([LineString(np.asarray(q.coords)[:, :2]) for q in parts]))
    if isinstance(merged, LineString):
        return merged
    # close small gaps between consecutive parts in file order
    coords = [np.asarray(parts[0].coords)[:, :2]]
    for q in parts[1:]:
        c = np.asarray(q.coords)[:, :2]
        end = coords[-1][-1]
        d_start, d_end = np.hypot(*(c[0] - end)), np.hypot(*(c[-1] - end))
        if d_end < d_start:
            c, d_start = c[::-1], d_end
        if d_start > tolerance:
            raise InputError(f"{source}: the centreline parts leave a gap of {d_start:.1f} m "
                             f"near ({end[0]:.1f}, {end[1]:.1f}); join them or raise the gap "
                             f"tolerance ({tolerance} m)")
        coords.append(c[1:] if d_start == 0 else c)
    return LineString(np.vstack(coords))


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
#: Conditions columns: name -> (unit, rule). One table; the README quotes it.
CONDITION_COLUMNS: dict[str, tuple[str, str]] = {
    "section_id": ("", "text, unique"),
    "from_chainage": ("m", "number"),
    "to_chainage": ("m", "number > from_chainage"),
    "water_level": ("m (DEM datum)", "number"),
    "hm0": ("m", "number >= 0"),
    "tm10": ("s", "number > 0 (spectral period Tm-1,0)"),
    "wave_angle": ("degrees", "0 <= number <= 90 (wave direction vs levee normal)"),
    "q_allow": ("l/s per m", "number > 0"),
    "sea_level_rise": ("m", "number >= 0"),
    "settlement": ("m", "number >= 0"),
    "roughness": ("-", "0 < number <= 1 (roughness factor gamma_f)"),
    "min_freeboard": ("m", "number >= 0"),
}
OPTIONAL_COLUMNS: dict[str, tuple[str, str]] = {
    "water_side": ("", "left or right (relative to the digitised direction)"),
}
_RULES: dict[str, tuple[float | None, float | None, bool]] = {
    # column: (min, max, min exclusive)
    "hm0": (0.0, 30.0, False),
    "tm10": (0.0, 60.0, True),
    "wave_angle": (0.0, 90.0, False),
    "q_allow": (0.0, 1e4, True),
    "sea_level_rise": (0.0, 10.0, False),
    "settlement": (0.0, 10.0, False),
    "roughness": (0.0, 1.0, True),
    "min_freeboard": (0.0, 20.0, False),
}


@dataclass(frozen=True)
class Conditions:
    """Section conditions, one row per section, columnar and validated."""

    table: pd.DataFrame  # sorted by from_chainage, index 0..n-1

    def lookup(self, chainage: np.ndarray) -> np.ndarray:
        """Row index of the section covering each chainage; -1 where none does."""
        t = self.table
        lo = t["from_chainage"].to_numpy(float)
        hi = t["to_chainage"].to_numpy(float)
        i = np.searchsorted(lo, chainage, side="right") - 1
        ok = (i >= 0) & (chainage <= hi[np.clip(i, 0, None)] + 1e-6)
        return np.where(ok, i, -1)


def read_conditions(path: str | Path) -> Conditions:
    """Read and validate the section-conditions CSV; report every bad row at once."""
    p = Path(path)
    if not p.exists():
        raise InputFileError(f"{p}: conditions file not found")
    try:
        raw = pd.read_csv(p, dtype=str, skipinitialspace=True, comment="#")
    except (pd.errors.EmptyDataError, pd.errors.ParserError, UnicodeDecodeError) as exc:
        raise InputError(f"{p}: cannot read the conditions table ({exc})") from exc
    raw.columns = [str(c).strip().lower() for c in raw.columns]
    table, findings = validate_conditions(raw)
    if findings:
        raise ConditionsError(str(p), findings)
    return Conditions(table=table)


def validate_conditions(raw: pd.DataFrame) -> tuple[pd.DataFrame, list[str]]:
    """Check a conditions table; return the clean table and every finding."""
    findings: list[str] = []
    missing = [c for c in CONDITION_COLUMNS if c not in raw.columns]
    if missing:
        return raw, [f"missing column(s): {', '.join(missing)}"]
    unknown = [c for c in raw.columns if c not in CONDITION_COLUMNS and c not in OPTIONAL_COLUMNS]
    if unknown:
        log.warning("conditions: ignoring unknown column(s) %s", ", ".join(unknown))
    if raw.empty:
        return raw, ["the table has no rows"]
    out = pd.DataFrame({"section_id": raw["section_id"].fillna("").str.strip()})
    for col in CONDITION_COLUMNS:
        if col == "section_id":
            continue
        vals = pd.to_numeric(raw[col].str.strip(), errors="coerce")
        for i in np.flatnonzero(vals.isna().to_numpy()):
            findings.append(f"row {i + 2}, column {col}: {raw[col].iloc[i]!r} is not a number")
        for i in np.flatnonzero(np.isinf(vals.to_numpy(float))):
            findings.append(f"row {i + 2}, column {col}: {raw[col].iloc[i]!r} is not a "
                            "finite number")
        out[col] = vals.astype(float)
        if col in _RULES:
            lo, hi, excl = _RULES[col]
            v = vals.to_numpy(float)
            bad = (v < lo) | (excl & (v == lo)) | (v > hi)
            for i in np.flatnonzero(bad):
                findings.append(f"row {i + 2}, column {col}: {v[i]:g} breaks the rule "
                                f"{CONDITION_COLUMNS[col][1]}")
    findings += condition_plausibility(out)
    if "water_side" in raw.columns:
        ws = raw["water_side"].fillna("").str.strip().str.lower()
        for i in np.flatnonzero(~ws.isin(["", "left", "right"]).to_numpy()):
            findings.append(f"row {i + 2}, column water_side: {raw['water_side'].iloc[i]!r} "
                            "must be left or right")
        out["water_side"] = ws
    else:
        out["water_side"] = ""
    for i in np.flatnonzero((out["section_id"] == "").to_numpy()):
        findings.append(f"row {i + 2}, column section_id: empty")
    dup = out["section_id"][out["section_id"].duplicated() & (out["section_id"] != "")]
    for sid in dup.unique():
        findings.append(f"section_id {sid!r} appears more than once")
    if findings:
        return out, findings
    bad_span = out["to_chainage"] <= out["from_chainage"]
    for i in np.flatnonzero(bad_span.to_numpy()):
        findings.append(f"row {i + 2}: to_chainage must be greater than from_chainage")
    out["_row"] = np.arange(2, len(out) + 2)
    out = out.sort_values("from_chainage", kind="stable").reset_index(drop=True)
    lo, hi = out["from_chainage"].to_numpy(), out["to_chainage"].to_numpy()
    for k in range(1, len(out)):
        a, b = out.iloc[k - 1], out.iloc[k]
        if lo[k] > hi[k - 1] + 1e-6:
            findings.append(f"gap in chainage between section {a.section_id!r} (to "
                            f"{hi[k - 1]:g} m) and {b.section_id!r} (from {lo[k]:g} m)")
        elif lo[k] < hi[k - 1] - 1e-6:
            findings.append(f"sections {a.section_id!r} and {b.section_id!r} overlap "
                            f"({lo[k]:g}-{hi[k - 1]:g} m)")
    return out, findings


def check_conditions_cover(cond: Conditions, chainage: np.ndarray, *, source: str) -> None:
    """Refuse a run whose stations are not all covered by a section."""
    idx = cond.lookup(chainage)
    if (idx < 0).any():
        out = chainage[idx < 0]
        raise ConditionsError(source, [
            f"{out.size} station(s) lie outside every section, chainage "
            f"{out.min():.1f}-{out.max():.1f} m; extend the sections to cover "
            f"{chainage.min():.1f}-{chainage.max():.1f} m"])


def line_bounds_overlap(line: LineString, dem: DemInfo, margin: float) -> bool:
    """True where the buffered line touches the DEM extent."""
    return bool(shapely.box(*dem.bounds).intersects(line.buffer(margin)))
