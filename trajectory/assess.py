"""The assessment pipeline: read -> stations -> sections -> profiles -> requirement -> status.

:func:`run` computes the result in memory; :func:`assess` also writes it.
Stations flow through in chunks along chainage; each chunk reads one DEM
window, samples all its sections at once and is interpreted with array
operations, so memory is bounded by the chunk size, not by the line's length.
"""

from __future__ import annotations

import logging
import os
import threading
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import rasterio
from pyproj import CRS
from shapely.geometry import LineString, MultiLineString

from . import CAUTION, __version__
from .chainage import Stations, make_stations
from .errors import InputError, ParameterError
from .execution import EXECUTION_FIELDS, geopackage_write_options, make_executor, run_time
from .lines import Centreline, read_centrelines, read_line_conditions, stack_stretches
from .params import Settings
from .profile import flag_text, read_profiles
from .requirement import StationConditions, required_level
from .sections import sample_profiles, section_offsets
from .sources import (
    Conditions, DemInfo, check_conditions_cover, file_checksum, line_bounds_overlap,
    open_dem, read_centreline, read_conditions,
)
from .status import Stretches, classify, merge_stretches

log = logging.getLogger(__name__)

ProgressCallback = Callable[[int, int], None]


@dataclass(frozen=True)
class RunInputs:
    """The input files of one assessment."""

    centreline: str
    dem: str
    conditions: str
    layer: str | None = None
    line_id_field: str | None = None   # several lines in one file, told apart by this field


@dataclass
class Result:
    """Everything an assessment computed, ready to be written."""

    stations: pd.DataFrame             # one row per station, the contract fields and more
    stretches: Stretches
    line: LineString
    crs: CRS
    offsets: np.ndarray                # sample offsets (m, + towards the outer side)
    profiles: np.ndarray               # stations x offsets, float32, oriented outer-positive
    metadata: dict[str, Any] = field(default_factory=dict)
    lines: dict[str, LineString] = field(default_factory=dict)  # line id -> line


# ---------------------------------------------------------------- chunks
@dataclass(frozen=True)
class _Chunk:
    dem_path: str
    stations: Stations
    side: np.ndarray                   # +1 water on the left, -1 on the right
    conditions: StationConditions
    offsets: np.ndarray
    settings: Settings


_OPEN = threading.local()


def _dataset(path: str) -> rasterio.io.DatasetReader:
    """One open handle per process, thread and DEM (workers reuse theirs across chunks).

    A forked worker never reuses its parent's handles, and threads (a Dask worker
    runs several) never share one: GDAL datasets are not thread-safe.
    """
    if getattr(_OPEN, "pid", None) != os.getpid():
        _OPEN.pid, _OPEN.handles = os.getpid(), {}
    ds = _OPEN.handles.get(path)
    if ds is None or ds.closed:
        ds = _OPEN.handles[path] = rasterio.open(path)
    return ds


def _assess_chunk(chunk: _Chunk) -> dict[str, np.ndarray]:
    """Sample, read and judge the profiles of one chunk of stations."""
    s = chunk.settings
    # GDAL's block cache is bounded per process, so memory does not grow with the line
    with rasterio.Env(GDAL_CACHEMAX=int(s.dem_cache * 2**20)):
        z = sample_profiles(_dataset(chunk.dem_path), chunk.stations, chunk.offsets)
    # orient so that positive offsets point to the water (outer) side
    z = np.where((chunk.side > 0)[:, None], z, z[:, ::-1])
    prof = read_profiles(z, chunk.offsets, object_width=s.object_width,
                         crest_search=s.crest_search, crest_tolerance=s.crest_tolerance,
                         max_nodata=s.max_nodata)
    req = required_level(chunk.conditions, outer_slope=prof.outer_slope,
                         crest_level=prof.crest_level, approach=s.approach)
    margin = prof.crest_level - req.required_level
    out = {f: getattr(prof, f) for f in prof.__dataclass_fields__}
    out.update({f: getattr(req, f) for f in req.__dataclass_fields__})
    out["margin"] = margin
    out["profiles"] = z.astype(np.float32)
    return out


def _chunks(n: int, size: int) -> list[slice]:
    return [slice(i, min(i + size, n)) for i in range(0, n, size)]


def _map(fn: Callable, items: list, settings: Settings) -> Iterator:
    """Ordered map on the run's executor: serial, process pool or Dask (same results)."""
    with make_executor(workers=settings.workers, scheduler=settings.scheduler,
                       n_tasks=len(items)) as ex:
        yield from ex.map(fn, items)


# ---------------------------------------------------------------- pipeline
def _gather_conditions(cond: Conditions, idx: np.ndarray) -> StationConditions:
    t = cond.table
    cols = {c: t[c].to_numpy(float)[idx] for c in StationConditions.__dataclass_fields__}
    return StationConditions(**cols)


def _take(cond: StationConditions, sl: slice) -> StationConditions:
    return StationConditions(**{f: getattr(cond, f)[sl] for f in cond.__dataclass_fields__})


def _water_side(cond: Conditions, idx: np.ndarray, default: str) -> np.ndarray:
    ws = cond.table["water_side"].to_numpy(object)[idx]
    ws = np.where(ws == "", default, ws)
    return np.where(ws == "left", 1, -1)


@dataclass(frozen=True)
class _LinePlan:
    """One line of a run: its stations and their conditions (chunks never span lines)."""

    line_id: str
    line: LineString
    cond: Conditions
    stations: Stations
    sec: np.ndarray
    side: np.ndarray


def _read_lines(inputs: RunInputs, dem: DemInfo) -> tuple[list[Centreline], CRS]:
    if inputs.line_id_field:
        return read_centrelines(inputs.centreline, id_field=inputs.line_id_field,
                                layer=inputs.layer, target_crs=dem.crs)
    line, crs = read_centreline(inputs.centreline, layer=inputs.layer, target_crs=dem.crs)
    return [Centreline("", line)], crs


def run(inputs: RunInputs, settings: Settings | None = None, *,
        progress: ProgressCallback | None = None) -> Result:
    """Assess the levee line(s); return the result without writing anything."""
    s = settings or Settings()
    # read the terrain model first: its CRS is the working CRS
    dem = open_dem(inputs.dem)
    # read the centreline(s), reprojected to the DEM's CRS, each joined into one line
    lines, crs = _read_lines(inputs, dem)
    for c in lines:
        if not line_bounds_overlap(c.line, dem, s.half_width):
            name = f" (line {c.line_id!r})" if c.line_id else ""
            raise InputError(f"{inputs.centreline}{name}: the centreline does not overlap the "
                             f"DEM {inputs.dem}; check that both cover the same area and CRS")
    # read and validate the section conditions (per line with a line_id column)
    if inputs.line_id_field:
        conds = read_line_conditions(inputs.conditions, [c.line_id for c in lines])
    else:
        conds = {"": read_conditions(inputs.conditions)}
    step = s.sample_step or dem.cell
    if s.half_width <= s.crest_search:
        raise ParameterError(f"half_width ({s.half_width} m) must exceed crest_search "
                             f"({s.crest_search} m) so the slopes are in the section")
    offsets = section_offsets(s.half_width, step)
    # stations at fixed chainage with smoothed normals, each line its own chainage
    plans = [_plan_line(c, conds[c.line_id], s, source=inputs.conditions) for c in lines]
    total = sum(len(pl.stations) for pl in plans)
    log.info("%d stations over %.0f m (%d line(s)), %d samples per section", total,
             sum(pl.line.length for pl in plans), len(plans), offsets.size)
    # sample and interpret the cross-sections chunk by chunk, all lines on one executor
    tasks = [_Chunk(dem.path, pl.stations.take(sl), pl.side[sl], _take(cond, sl), offsets, s)
             for pl in plans for cond in [_gather_conditions(pl.cond, pl.sec)]
             for sl in _chunks(len(pl.stations), s.chunk_size)]
    parts: list[dict[str, np.ndarray]] = []
    done = 0
    for part in _map(_assess_chunk, tasks, s):
        parts.append(part)
        done += part["margin"].size
        if progress is not None:
            progress(done, total)
    cols = {k: np.concatenate([p[k] for p in parts]) for k in parts[0]}
    profiles = cols.pop("profiles")
    # margin and status per station, then stretches of one status, line by line
    status = classify(cols["margin"], watch_band=s.watch_band)
    tables, stretches, first = [], [], 0
    for pl in plans:
        sl = slice(first, first + len(pl.stations))
        line_cols = {k: v[sl] for k, v in cols.items()}
        t = _station_table(pl.stations, pl.side, pl.cond, pl.sec, line_cols, status[sl])
        t.insert(0, "line_id", pl.line_id)
        tables.append(t)
        stretches.append(merge_stretches(pl.stations.chainage, status[sl], line_cols["margin"],
                                         start=s.start_chainage,
                                         end=s.start_chainage + pl.line.length))
        first = sl.stop
    table = pd.concat(tables, ignore_index=True) if len(tables) > 1 else tables[0]
    line = lines[0].line if len(lines) == 1 else MultiLineString([c.line for c in lines])
    meta = _metadata(inputs, s, dem, crs, line)
    if inputs.line_id_field:
        meta["line_count"] = len(lines)
    return Result(stations=table, stretches=stack_stretches(stretches, [len(p.stations)
                                                                       for p in plans]),
                  line=line, crs=crs, offsets=offsets, profiles=profiles, metadata=meta,
                  lines={c.line_id: c.line for c in lines})


def _plan_line(c: Centreline, cond: Conditions, s: Settings, *, source: str) -> _LinePlan:
    st = make_stations(c.line, spacing=s.spacing, start_chainage=s.start_chainage,
                       reverse=s.reverse, smooth_length=s.smooth_length)
    check_conditions_cover(cond, st.chainage,
                           source=f"{source} (line {c.line_id!r})" if c.line_id else source)
    sec = cond.lookup(st.chainage)
    return _LinePlan(c.line_id, c.line, cond, st, sec, _water_side(cond, sec, s.water_side))


def _station_table(st: Stations, side: np.ndarray, cond: Conditions, sec: np.ndarray,
                   cols: dict[str, np.ndarray], status: np.ndarray) -> pd.DataFrame:
    t = cond.table
    crest_x = st.x + side * cols["crest_offset"] * st.nx
    crest_y = st.y + side * cols["crest_offset"] * st.ny
    df = pd.DataFrame({
        "chainage": st.chainage,
        "section_id": t["section_id"].to_numpy(object)[sec],
        "crest_level": cols["crest_level"],
        "required_level": cols["required_level"],
        "margin": cols["margin"],
        "status": status,
        "water_level": t["water_level"].to_numpy(float)[sec],
        "sea_level_rise": t["sea_level_rise"].to_numpy(float)[sec],
        "settlement": t["settlement"].to_numpy(float)[sec],
        "freeboard": cols["freeboard"],
        "freeboard_eurotop": cols["freeboard_eurotop"],
        "freeboard_rule": cols["freeboard_rule"],
        "q_at_crest": cols["q_at_crest"],
        "outer_slope": cols["outer_slope"],
        "inner_slope": cols["inner_slope"],
        "crest_width": cols["crest_width"],
        "crest_offset": cols["crest_offset"],
        "outer_toe": cols["outer_toe"],
        "inner_toe": cols["inner_toe"],
        "outer_toe_level": cols["outer_toe_level"],
        "inner_toe_level": cols["inner_toe_level"],
        "outer_fit_rmse": cols["outer_fit_rmse"],
        "inner_fit_rmse": cols["inner_fit_rmse"],
        "nodata_fraction": cols["nodata_fraction"],
        "noise": cols["noise"],
        "gamma_f": cols["gamma_f"],
        "gamma_beta": cols["gamma_beta"],
        "flags": flag_text(cols["flags"]),
        "water_side": np.where(side > 0, "left", "right"),
        "x": st.x, "y": st.y, "nx": st.nx, "ny": st.ny,
        "crest_x": crest_x, "crest_y": crest_y,
        "along": st.along,
    })
    return df


def _metadata(inputs: RunInputs, s: Settings, dem: DemInfo, crs: CRS,
              line: LineString) -> dict[str, Any]:
    files = {"centreline": inputs.centreline, "dem": inputs.dem,
             "conditions": inputs.conditions}
    meta: dict[str, Any] = {
        "software": f"trajectory {__version__}",
        "run_time": run_time().isoformat(timespec="seconds"),
        "caution": CAUTION,
        "crs": crs.to_string(),
        "dem_cell_size": dem.cell,
        "line_length": round(line.length, 3),
        "vertical_datum": "as the DEM; conditions must use the same datum (not converted)",
    }
    for k, p in files.items():
        meta[f"input_{k}"] = Path(p).name
        if Path(p).is_file():
            meta[f"sha256_{k}"] = file_checksum(p)
    if inputs.layer:
        meta["input_layer"] = inputs.layer
    for k, v in s.__dict__.items():
        if k not in EXECUTION_FIELDS:  # how a run is executed does not change its results
            meta[f"param_{k}"] = v
    if inputs.line_id_field:
        meta["input_line_id_field"] = inputs.line_id_field
    return meta


def assess(inputs: RunInputs, out: str | Path, settings: Settings | None = None, *,
           overwrite: bool = False, table: str | Path | None = None,
           progress: ProgressCallback | None = None) -> Result:
    """Assess one levee line and write the GeoPackage (and the deficit table)."""
    from .outputs import refuse_overwrite, write_deficit_table, write_geopackage

    out = Path(out)
    table = Path(table) if table else out.with_suffix(".csv")
    for p in (out, table):
        refuse_overwrite(p, overwrite=overwrite)
    result = run(inputs, settings, progress=progress)
    # time stamps pinned to the run time (reruns compare byte for byte), no per-step sync
    with geopackage_write_options(result.metadata["run_time"]):
        write_geopackage(result, out, overwrite=overwrite)
    write_deficit_table(result, table, overwrite=overwrite)
    log.info("wrote %s and %s", out, table)
    return result


def summary(result: Result) -> dict[str, float]:
    """Length per status (m) and station counts, for logs and the report."""
    st = result.stretches
    out: dict[str, float] = {}
    for status in ("ok", "watch", "deficit", "no_data"):
        out[f"length_{status}"] = float(st.length[st.status == status].sum())
        out[f"stations_{status}"] = int((result.stations["status"] == status).sum())
    return out
