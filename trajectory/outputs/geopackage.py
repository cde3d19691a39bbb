"""Write an assessment result as a GeoPackage (the layers of the output contract)."""

from __future__ import annotations

from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import shapely

from ..chainage import line_substrings
from ..status import station_extents
from .atomic import atomic_path
from .schema import LAYERS, field_names


def _frame(data: dict, layer: str, geometry, crs) -> gpd.GeoDataFrame:
    cols = field_names(layer)
    return gpd.GeoDataFrame({c: data[c] for c in cols}, geometry=geometry, crs=crs)


def _line_ids(result) -> np.ndarray:
    t = result.stations
    return t["line_id"].to_numpy(object) if "line_id" in t else np.full(len(t), "", object)


def station_layer(result) -> gpd.GeoDataFrame:
    t = result.stations
    geom = shapely.points(t["x"].to_numpy(), t["y"].to_numpy())
    return _frame({c: t[c].to_numpy() for c in t.columns}, "stations", geom, result.crs)


def cross_section_layer(result) -> gpd.GeoDataFrame:
    t = result.stations
    hw = float(result.offsets[-1])
    x, y, nx, ny = (t[c].to_numpy() for c in ("x", "y", "nx", "ny"))
    coords = np.stack([np.stack([x - hw * nx, y - hw * ny], 1),
                       np.stack([x + hw * nx, y + hw * ny], 1)], 1)
    geom = shapely.linestrings(coords)
    data = {c: t[c].to_numpy() for c in t.columns}
    data["half_width"] = np.full(len(t), hw)
    return _frame(data, "cross_sections", geom, result.crs)


def crest_line_layer(result) -> gpd.GeoDataFrame:
    """The measured crest as 3-D lines, one per run of readable stations."""
    t = result.stations
    ok = np.isfinite(t["crest_level"].to_numpy())
    lid = _line_ids(result)
    brk = np.flatnonzero((np.diff(ok.astype(int)) != 0) | (lid[1:] != lid[:-1])) + 1
    runs = [r for r in np.split(np.arange(len(t)), brk) if r.size >= 2 and ok[r[0]]]
    geoms, fr, to, ids = [], [], [], []
    for r in runs:
        ids.append(lid[r[0]])
        xyz = np.stack([t["crest_x"].to_numpy()[r], t["crest_y"].to_numpy()[r],
                        t["crest_level"].to_numpy()[r]], 1)
        geoms.append(shapely.linestrings(xyz))
        fr.append(t["chainage"].iloc[r[0]])
        to.append(t["chainage"].iloc[r[-1]])
    return _frame({"line_id": ids, "from_chainage": fr, "to_chainage": to}, "crest_line",
                  geoms, result.crs)


def stretch_layer(result, *, start: float, reverse: bool) -> gpd.GeoDataFrame:
    s = result.stretches
    lines = result.lines or {"": result.line}
    ids = _line_ids(result)[s.first] if len(s.first) else np.array([], object)

    def along(c, length):
        d = c - start
        return length - d if reverse else d

    geoms = np.empty(len(ids), dtype=object)
    for lid, line in lines.items():
        k = np.flatnonzero(ids == lid)
        a = along(s.from_chainage[k], line.length)
        b = along(s.to_chainage[k], line.length)
        geoms[k] = line_substrings(line, np.minimum(a, b), np.maximum(a, b))
    data = {"line_id": ids, "from_chainage": s.from_chainage, "to_chainage": s.to_chainage,
            "length": s.length, "status": s.status, "worst_margin": s.worst_margin,
            "worst_chainage": s.worst_chainage, "stations": s.last - s.first + 1}
    return _frame(data, "stretches", geoms, result.crs)


def metadata_table(result) -> pd.DataFrame:
    items = sorted(result.metadata.items())
    return pd.DataFrame({"key": [k for k, _ in items], "value": [str(v) for _, v in items]})


def write_geopackage(result, path: str | Path, *, overwrite: bool = False) -> Path:
    """Write every contract layer to ``path`` atomically (temp file, then rename)."""
    start = float(result.metadata.get("param_start_chainage", 0.0))
    reverse = bool(result.metadata.get("param_reverse", False))
    layers = {
        "stations": station_layer(result),
        "cross_sections": cross_section_layer(result),
        "crest_line": crest_line_layer(result),
        "stretches": stretch_layer(result, start=start, reverse=reverse),
        "run_metadata": metadata_table(result),
    }
    assert set(layers) == set(LAYERS)
    with atomic_path(path, overwrite=overwrite) as tmp:
        for name, frame in layers.items():
            pyogrio.write_dataframe(frame, tmp, layer=name, driver="GPKG")
    return Path(path)
