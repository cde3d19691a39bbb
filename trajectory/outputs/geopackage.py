"""Write an assessment result as a GeoPackage (the layers of the output contract)."""

from __future__ import annotations

import contextlib
import sqlite3
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import shapely

from ..geometry.chainage import line_substrings
from ..inner.stability import arc_points
from .atomic import atomic_path, refuse_overwrite
from .describe import write_data_columns
from .epochs_layer import epoch_layer
from .profiles import encode_levels, profile_table, stored_chainages, worst_stability_chainages
from .schema import LAYERS, field_names
from .style import sld_paths, write_layer_styles, write_slds
from .terrain_layers import dem_extent_layer, write_terrain_shade


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
    off = np.asarray(result.offsets, float)
    data["profile_start"] = np.full(len(t), off[0] if off.size else np.nan)
    data["profile_step"] = np.full(len(t), off[1] - off[0] if off.size > 1 else np.nan)
    data["profile_levels"] = encode_levels(result.profiles)
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


def slip_circle_layer(result) -> gpd.GeoDataFrame:
    """The critical circle of every screened station: its arc in map coordinates and levels.

    The arc lies in the station's section plane: each point sits at its offset
    along the section line (+ towards the water) at the arc's level (Z).
    """
    t = result.stations
    cols = field_names("slip_circles")
    if "stability_fos" not in t:
        return gpd.GeoDataFrame({c: [] for c in cols}, geometry=[], crs=result.crs)
    rows = np.flatnonzero(np.isfinite(t["stability_fos"].to_numpy(float)))
    side = np.where(t["water_side"].to_numpy(object) == "left", 1.0, -1.0)[rows, None]
    v = {k: t[k].to_numpy(float)[rows, None] for k in (
        "slip_centre_offset", "slip_centre_level", "slip_radius", "slip_entry", "slip_exit",
        "x", "y", "nx", "ny")}
    off, lev = arc_points(v["slip_centre_offset"], v["slip_centre_level"], v["slip_radius"],
                          v["slip_entry"], v["slip_exit"])
    xyz = np.stack([v["x"] + side * off * v["nx"], v["y"] + side * off * v["ny"], lev], -1)
    geoms = list(shapely.linestrings(xyz)) if rows.size else []
    data = {c: t[c].to_numpy()[rows] for c in t.columns if c in cols}
    if "line_id" not in data:
        data["line_id"] = np.full(rows.size, "", object)
    return _frame(data, "slip_circles", geoms, result.crs)


def _pieces_along(result, ids: np.ndarray, from_ch: np.ndarray, to_ch: np.ndarray, *,
                  start: float, reverse: bool) -> list:
    """The part of each row's line between its two chainages (rows of several lines)."""
    lines = result.lines or {"": result.line}
    from_ch, to_ch = np.asarray(from_ch, float), np.asarray(to_ch, float)
    geoms = np.empty(len(ids), dtype=object)
    for lid, line in lines.items():
        k = np.flatnonzero(ids == lid)
        a, b = from_ch[k] - start, to_ch[k] - start
        if reverse:
            a, b = line.length - a, line.length - b
        geoms[k] = line_substrings(line, np.minimum(a, b), np.maximum(a, b))
    return list(geoms)


def stretch_layer(result, *, start: float, reverse: bool) -> gpd.GeoDataFrame:
    data = stretch_frame(result)
    geoms = _pieces_along(result, data["line_id"].to_numpy(object),
                          data["from_chainage"], data["to_chainage"], start=start,
                          reverse=reverse)
    return _frame({c: data[c].to_numpy() for c in data.columns}, "stretches", geoms,
                  result.crs)


def economics_frame(result) -> pd.DataFrame:
    """The economics table (van Dantzig 1956 per section), empty without one."""
    e = result.economics
    cols = field_names("economics")
    if e is None or e.empty:
        return pd.DataFrame({c: pd.Series([], dtype=object if c in ("line_id", "section_id")
                                          else float) for c in cols})
    return e[cols].reset_index(drop=True)


def stretch_frame(result) -> pd.DataFrame:
    """The stretches layer's attributes (no geometry), as the tables and report use them:
    the run's stretch table (:mod:`trajectory.judgement.stretch_table`) in contract order."""
    return result.stretch_table[field_names("stretches")].reset_index(drop=True)


def section_profile_table(result) -> pd.DataFrame:
    """Profiles of the worst stations and the options' design stations (see :mod:`.profiles`),
    and of the worst station of the piping stretches the report draws."""
    from .report_piping import drawn_chainages

    ch = stored_chainages(stretch_frame(result), result.stations, result.options)
    pipe = drawn_chainages(piping_stretch_frame(result))
    ch = np.concatenate([ch, pipe[~np.isin(pipe, ch)]])
    ch = np.concatenate([ch, worst_stability_chainages(result.stations, exclude=ch)])
    return profile_table(result.stations["chainage"].to_numpy(float), result.offsets,
                         result.profiles, ch)


def _all_options(result) -> pd.DataFrame | None:
    """The crest's options, then the piping berms (:mod:`trajectory.inner.piping_screen`)."""
    cols = field_names("options")
    # each part holds the fields of its own kind; the others are empty (e.g. the
    # factor of safety of a stability berm on a piping berm's row)
    parts = [o.reindex(columns=cols) for o in (result.options,
                                               getattr(result, "piping_options", None))
             if o is not None and not o.empty]
    return pd.concat(parts, ignore_index=True) if parts else None


def option_layer(result, *, start: float, reverse: bool) -> gpd.GeoDataFrame:
    """The remedies, one row per stretch, basis and option, on the stretch's line."""
    opt = _all_options(result)
    cols = field_names("options")
    if opt is None or opt.empty:
        return gpd.GeoDataFrame({c: [] for c in cols}, geometry=[], crs=result.crs)
    geoms = _pieces_along(result, opt["line_id"].to_numpy(object), opt["from_chainage"],
                          opt["to_chainage"], start=start, reverse=reverse)
    data = option_frame(result)
    geoms = _offset_options(geoms, data, result.stations)
    return _frame({c: data[c].to_numpy() for c in cols}, "options", geoms, result.crs)


#: options of a stretch are drawn parallel to it, this far apart, on the land side (m)
OPTION_OFFSET_STEP = 4.0
_OPTION_ORDER = {(b, o): k for k, (b, o) in enumerate(
    [(b, o) for b in ("whole_stretch", "every_station")
     for o in ("raise", "outer_berm", "combined")], start=1)}


def _offset_options(geoms: list, data: pd.DataFrame, stations: pd.DataFrame) -> list:
    """Each option's line moved k x OPTION_OFFSET_STEP to the land side (k by basis and
    option), so the rows of one stretch lie side by side instead of on top of each other."""
    k = np.array([_OPTION_ORDER.get((b, o), 7) for b, o in
                  zip(data["basis"], data["option"], strict=True)], float)
    ch = stations["chainage"].to_numpy(float)
    lid = stations["line_id"].to_numpy(object) if "line_id" in stations \
        else np.full(len(stations), "", object)
    left = stations["water_side"].to_numpy(object) == "left"
    out = []
    for g, kk, a, line in zip(geoms, k, data["from_chainage"].to_numpy(float),
                              data["line_id"].to_numpy(object), strict=True):
        on = np.flatnonzero(lid == line)
        i = on[np.argmin(np.abs(ch[on] - a))] if on.size else None
        # shapely offsets + to the left of the line's direction; the land is opposite the water
        sign = -1.0 if i is None or left[i] else 1.0
        if g is None or g.is_empty:
            out.append(g)
            continue
        moved = shapely.offset_curve(g, sign * kk * OPTION_OFFSET_STEP)
        out.append(moved if not moved.is_empty else g)
    return out


def option_frame(result) -> pd.DataFrame:
    """The options layer's attributes (no geometry; flags as 0/1), for layer and workbook:
    the crest's options, then the piping berms."""
    cols = field_names("options")
    opt = _all_options(result)
    if opt is None or opt.empty:
        return pd.DataFrame({c: [] for c in cols})
    data = opt[cols].reset_index(drop=True).copy()
    for c in ("closes_gap", "cheapest"):
        data[c] = data[c].astype(int)
    return data


def _runs_table(result, attr: str, layer: str) -> pd.DataFrame:
    """A table of stretches the run keeps as ``result.<attr>``, in ``layer``'s fields
    (no geometry); an empty table of those fields where the run made none."""
    cols = field_names(layer)
    t = getattr(result, attr, None)
    if t is None or t.empty:
        return pd.DataFrame({c: pd.Series([], dtype=object if f.kind == "str" else float)
                             for c, f in zip(cols, LAYERS[layer][1], strict=True)})
    return t[cols].reset_index(drop=True)


def _runs_layer(result, attr: str, layer: str, *, start: float,
                reverse: bool) -> gpd.GeoDataFrame:
    """Those stretches on their part of the line."""
    data = _runs_table(result, attr, layer)
    geoms = _pieces_along(result, data["line_id"].to_numpy(object), data["from_chainage"],
                          data["to_chainage"], start=start, reverse=reverse) if len(data) else []
    return gpd.GeoDataFrame(data, geometry=geoms, crs=result.crs)


def piping_stretch_frame(result) -> pd.DataFrame:
    """The piping stretches' attributes (piping_screen.py)."""
    return _runs_table(result, "piping_stretches", "piping_stretches")


def change_frame(result) -> pd.DataFrame:
    """The stretches of verdict change (changes.py; empty without a previous survey)."""
    return _runs_table(result, "changes", "changes")


def structure_frame(result) -> pd.DataFrame:
    """The known structures applied (empty table when the run had none)."""
    cols = field_names("structures")
    t = getattr(result, "structures", None)
    if t is None or t.empty:
        return pd.DataFrame({c: pd.Series([], dtype=object if f.kind == "str" else float)
                             for c, f in zip(cols, LAYERS["structures"][1], strict=True)})
    return t[cols].reset_index(drop=True)


def _run_time(result):
    """The run's time stamp (metadata), for every time written into the file."""
    from datetime import datetime

    text = result.metadata.get("run_time")
    return datetime.fromisoformat(text) if text else None


def metadata_table(result) -> pd.DataFrame:
    items = sorted(result.metadata.items())
    return pd.DataFrame({"key": [k for k, _ in items], "value": [str(v) for _, v in items]})


def write_geopackage(result, path: str | Path, *, overwrite: bool = False,
                     styles: bool = True) -> Path:
    """Write every contract layer to ``path`` atomically (temp file, then rename).

    With ``styles`` the SLD files of the styled layers go beside it
    (:func:`trajectory.outputs.style.sld_paths`).
    """
    start = float(result.metadata.get("param_start_chainage", 0.0))
    reverse = bool(result.metadata.get("param_reverse", False))
    layers = {
        "stations": station_layer(result),
        "cross_sections": cross_section_layer(result),
        "crest_line": crest_line_layer(result),
        "stretches": stretch_layer(result, start=start, reverse=reverse),
        "options": option_layer(result, start=start, reverse=reverse),
        "run_metadata": metadata_table(result),
        "epochs": epoch_layer(result),
        "section_profiles": section_profile_table(result),
        "economics": economics_frame(result),
        "structures": structure_frame(result),
        "piping_stretches": _runs_layer(result, "piping_stretches", "piping_stretches",
                                        start=start, reverse=reverse),
        "slip_circles": slip_circle_layer(result),
        "changes": _runs_layer(result, "changes", "changes", start=start, reverse=reverse),
        "dem_extent": dem_extent_layer(result),
    }
    assert set(layers) == set(LAYERS)
    slds = sld_paths(path) if styles else {}
    for p in slds.values():
        refuse_overwrite(p, overwrite=overwrite)
    with atomic_path(path, overwrite=overwrite) as tmp:
        for name, frame in layers.items():
            # an empty spatial layer keeps its contract geometry type (none to infer it from)
            kind = LAYERS[name][0] if isinstance(frame, gpd.GeoDataFrame) and frame.empty \
                else None
            pyogrio.write_dataframe(frame, tmp, layer=name, driver="GPKG",
                                    **({"geometry_type": kind} if kind else {}))
        write_terrain_shade(result, tmp)
        # field descriptions and default styles, inside the temp file before the rename
        with contextlib.closing(sqlite3.connect(tmp)) as con, con:
            write_data_columns(con)
            write_layer_styles(con, when=_run_time(result))
    write_slds(slds, overwrite=overwrite)
    return Path(path)
