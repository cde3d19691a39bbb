"""The assessment pipeline: read -> stations -> sections -> profiles -> requirement -> status.

:func:`run` computes the result in memory; :func:`assess` also writes it.
Stations flow through in chunks along chainage; each chunk reads one DEM
window, samples all its sections at once and is interpreted with array
operations, so memory is bounded by the chunk size, not by the line's length.
"""

from __future__ import annotations

import dataclasses
import logging
import os
from collections.abc import Callable, Iterator
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field
from datetime import datetime, timezone
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import rasterio
from pyproj import CRS
from shapely.geometry import LineString

from . import CAUTION, __version__
from .chainage import Stations, make_stations
from .checks import check_chunk_memory, sections_off_the_line
from .demread import DemReading, reading_rules, with_rules
from .errors import InputError, ParameterError
from .faults import (
    FLAG_OFF_DEM, FLAG_READ_FAILED, READ_ERROR, ChunkFailure, Guarded, add_flag,
    blank_stations, failure_runs, fill_failures, incomplete_text, off_dem, part_size,
    report_off_dem,
)
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


# ---------------------------------------------------------------- chunks
@dataclass(frozen=True)
class _Chunk:
    dem_path: str
    stations: Stations
    side: np.ndarray                   # +1 water on the left, -1 on the right
    conditions: StationConditions
    offsets: np.ndarray
    settings: Settings
    dem_reading: DemReading | None = None


_OPEN: dict[str, rasterio.io.DatasetReader] = {}


def _dataset(path: str) -> rasterio.io.DatasetReader:
    """One open handle per process and DEM (workers reuse theirs across chunks)."""
    ds = _OPEN.get(path)
    if ds is None or ds.closed:
        ds = _OPEN[path] = rasterio.open(path)
    return ds


def _assess_chunk(chunk: _Chunk) -> dict[str, np.ndarray]:
    """Sample, read and judge the profiles of one chunk of stations."""
    s = chunk.settings
    ds = with_rules(_dataset(chunk.dem_path), chunk.dem_reading)
    z = sample_profiles(ds, chunk.stations, chunk.offsets)
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


def _one_station(chunk: _Chunk, i: int) -> _Chunk:
    """The chunk of station ``i`` alone (to narrow down a read failure)."""
    sl = slice(i, i + 1)
    c = chunk.conditions
    return dataclasses.replace(chunk, stations=chunk.stations.take(sl), side=chunk.side[sl],
                               conditions=type(c)(**{f: getattr(c, f)[sl]
                                                     for f in c.__dataclass_fields__}))


def _chunks(n: int, size: int) -> list[slice]:
    return [slice(i, min(i + size, n)) for i in range(0, n, size)]


def _map(fn: Callable, items: list, workers: int) -> Iterator:
    """Ordered map, serial or on a process pool (same results either way)."""
    if workers == 1 or len(items) <= 1:
        yield from map(fn, items)
        return
    n = (os.cpu_count() or 1) if workers == 0 else workers
    with ProcessPoolExecutor(max_workers=n) as pool:
        yield from pool.map(fn, items)


# ---------------------------------------------------------------- pipeline
def _gather_conditions(cond: Conditions, idx: np.ndarray) -> StationConditions:
    t = cond.table
    cols = {c: t[c].to_numpy(float)[idx] for c in StationConditions.__dataclass_fields__}
    return StationConditions(**cols)


def _water_side(cond: Conditions, idx: np.ndarray, default: str) -> np.ndarray:
    ws = cond.table["water_side"].to_numpy(object)[idx]
    ws = np.where(ws == "", default, ws)
    return np.where(ws == "left", 1, -1)


def run(inputs: RunInputs, settings: Settings | None = None, *,
        progress: ProgressCallback | None = None) -> Result:
    """Assess one levee line; return the result without writing anything."""
    s = settings or Settings()
    # read the terrain model first: its CRS is the working CRS
    dem = open_dem(inputs.dem)
    # read the centreline, reprojected to the DEM's CRS, joined into one line
    line, crs = read_centreline(inputs.centreline, layer=inputs.layer, target_crs=dem.crs)
    if not line_bounds_overlap(line, dem, s.half_width):
        raise InputError(f"{inputs.centreline}: the centreline does not overlap the DEM "
                         f"{inputs.dem}; check that both cover the same area and CRS")
    # how DEM values become levels (fill values, vertical unit), from a window near the line
    reading = reading_rules(dem.path, line, margin=s.half_width, z_scale=s.dem_z_scale)
    # read and validate the section conditions
    cond = read_conditions(inputs.conditions)
    # stations at fixed chainage with smoothed normals
    st = make_stations(line, spacing=s.spacing, start_chainage=s.start_chainage,
                       reverse=s.reverse, smooth_length=s.smooth_length)
    check_conditions_cover(cond, st.chainage, source=inputs.conditions)
    for note in sections_off_the_line(cond.table, st.chainage.min(), st.chainage.max()):
        log.warning("%s: %s", inputs.conditions, note)
    sec = cond.lookup(st.chainage)
    side = _water_side(cond, sec, s.water_side)
    step = s.sample_step or dem.cell
    offsets = section_offsets(s.half_width, step)
    too_big = check_chunk_memory(offsets.size, s.chunk_size)
    if too_big:
        raise ParameterError(too_big)
    log.info("%d stations over %.0f m, %d samples per section", len(st), line.length,
             offsets.size)
    # sample and interpret the cross-sections chunk by chunk
    slices = _chunks(len(st), s.chunk_size)
    tasks = [_Chunk(dem.path, st.take(sl), side[sl], _gather_conditions(cond, sec[sl]),
                    offsets, s, reading) for sl in slices]
    got: list[dict[str, np.ndarray] | ChunkFailure] = []
    done = 0
    for part in _map(Guarded(_assess_chunk, _one_station), tasks, s.workers):
        got.append(part)
        done += part_size(part)
        if progress is not None:
            progress(done, len(st))
    # a chunk that could not be read: its stations no_data, the run incomplete
    parts = fill_failures(got, source=inputs.dem)
    cols = {k: np.concatenate([p[k] for p in parts]) for k in parts[0]}
    profiles = cols.pop("profiles")
    read_error = cols.pop(READ_ERROR)
    failures = failure_runs(st.chainage, read_error)
    off = off_dem(st.x, st.y, dem.bounds)
    blank_stations(cols, off)
    off_note = report_off_dem(st.chainage, off)
    # margin and status per station, then stretches of one status
    status = classify(cols["margin"], watch_band=s.watch_band)
    table = _station_table(st, side, cond, sec, cols, status)
    table["flags"] = add_flag(table["flags"].to_numpy(), off, FLAG_OFF_DEM)
    failed = np.array([e is not None for e in read_error], dtype=bool)
    table["flags"] = add_flag(table["flags"].to_numpy(), failed, FLAG_READ_FAILED)
    end = s.start_chainage + line.length
    stretches = merge_stretches(st.chainage, status, cols["margin"],
                                start=s.start_chainage, end=end)
    meta = _metadata(inputs, s, dem, crs, line)
    if failures:
        meta["incomplete"] = incomplete_text(failures)
    if off_note:
        meta["off_dem"] = off_note
    return Result(stations=table, stretches=stretches, line=line, crs=crs,
                  offsets=offsets, profiles=profiles, metadata=meta)


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
        "run_time": datetime.now(timezone.utc).isoformat(timespec="seconds"),
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
        meta[f"param_{k}"] = v
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
