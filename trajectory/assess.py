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
from .checks import check_chunk_memory, sections_off_the_line
from .errors import InputError, ParameterError
from .formulas.frequency import Lines, no_lines
from .geometry.chainage import Stations, crossing_sections, make_stations
from .geometry.sections import sample_profiles, section_offsets
from .inner import stability
from .inner.piping_screen import piping_options, piping_stretches, screen_piping
from .inner.stability import Soil
from .inner.stability_berms import plan_berms
from .inputs.conditions import station_soil
from .inputs.epoch_sources import open_earlier_dem, verdict_from_result
from .inputs.frequency_table import read_frequency
from .inputs.lines import Centreline, read_centrelines, read_line_conditions, stack_stretches
from .inputs.sources import (
    Conditions,
    DemInfo,
    assign_sections,
    file_checksum,
    line_bounds_overlap,
    open_dem,
    read_centreline,
    read_conditions,
)
from .inputs.station_list import read_station_chainages
from .judgement import uncertainty
from .judgement.changes import (
    change_class,
    change_runs,
    change_table,
    combined_sigma,
    previous_status,
)
from .judgement.economics import section_economics
from .judgement.epochs import (
    Epoch,
    EpochLevels,
    assess_epochs,
    check_order,
    epoch_rows,
    projected_year,
)
from .judgement.remedies import plan_options
from .judgement.status import (
    EXCLUDED,
    STATUSES,
    Stretches,
    classify,
    merge_stretches,
    station_extents,
)
from .judgement.stretch_table import stretch_rows
from .judgement.structures import (
    StructureMatch,
    Structures,
    match_structures,
    read_structures,
    structure_table,
)
from .judgement.uncertainty import (
    accuracy_from_settings,
    simulate,
    simulation_summary,
    station_uncertainty,
)
from .params import Settings
from .pipeline import diagnosis
from .pipeline.execution import (
    EXECUTION_FIELDS,
    geopackage_write_options,
    make_executor,
    run_time,
    side_by_side,
)
from .pipeline.faults import (
    FLAG_OFF_DEM,
    FLAG_READ_FAILED,
    READ_ERROR,
    ChunkFailure,
    Guarded,
    add_flag,
    blank_stations,
    failure_runs,
    fill_failures,
    incomplete_text,
    off_dem,
    part_size,
    refuse_missing_tiles,
    report_off_dem,
)
from .requirement.characteristic_slope import outer_characteristic_slope
from .requirement.crest_level import (
    STATION_COLUMNS,
    StationConditions,
    profile_berm,
    required_level,
    requirement_slope,
    station_conditions,
)
from .requirement.held import HELD_COLUMNS, empty_held, station_held
from .terrain.demread import DemReading, reading_rules, with_rules
from .terrain.hillshade import Terrain, dem_footprint, read_terrain
from .terrain.profile import FLAGS, ProfileMetrics, breaks_text, flag_text, read_profiles

log = logging.getLogger(__name__)

ProgressCallback = Callable[[int, int], None]


@dataclass(frozen=True)
class RunInputs:
    """The input files of one assessment."""

    centreline: str
    dem: str
    conditions: str
    layer: str | None = None
    dem_date: str | None = None        # survey date of `dem` (needed with earlier epochs)
    earlier: tuple[Epoch, ...] = ()    # earlier surveys, oldest first
    conditions_layer: str | None = None
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
    epochs: EpochLevels | None = None  # crest level per survey epoch (oldest first)
    options: pd.DataFrame | None = None  # remedies per deficit stretch (remedies.py)
    lines: dict[str, LineString] = field(default_factory=dict)  # line id -> line
    economics: pd.DataFrame | None = None  # van Dantzig optimum per section (economics.py)
    structures: pd.DataFrame | None = None  # known structures applied (structures.py)
    piping_stretches: pd.DataFrame | None = None  # runs of one piping status (piping_screen.py)
    piping_options: pd.DataFrame | None = None  # a piping berm per short stretch (the options
    #                                             layer's fields, written after the crest's)
    changes: pd.DataFrame | None = None  # stretches of verdict change (changes.py)
    # computed once at the end of the run for every writer (judgement/stretch_table.py,
    # judgement/epochs.py): the stretches with all their figures, the station x survey rows
    stretch_table: pd.DataFrame | None = None
    epoch_table: pd.DataFrame | None = None
    terrain: Terrain | None = None  # DEM footprint and a hillshade (terrain/hillshade.py)


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
    lines: Lines | None = None         # frequency line per station (frequency.py)
    soil: Soil | None = None           # body soil per station (stability.py; NaN: none)


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


def _read_chunk(chunk: _Chunk) -> tuple[np.ndarray, ProfileMetrics]:
    """Sample the sections of one chunk and read their profiles."""
    s = chunk.settings
    # a tile missing from a mosaic reads as nodata without an error: made a read error
    if chunk.dem_reading is not None:
        refuse_missing_tiles(chunk.stations, float(np.abs(chunk.offsets).max()),
                             chunk.dem_reading.missing, chunk.dem_path)
    # GDAL's block cache is bounded per process, so memory does not grow with the line;
    # the reading rules turn DEM values into levels (fill values, vertical unit)
    with rasterio.Env(GDAL_CACHEMAX=int(s.dem_cache * 2**20)):
        ds = with_rules(_dataset(chunk.dem_path), chunk.dem_reading)
        z = sample_profiles(ds, chunk.stations, chunk.offsets)
    # orient so that positive offsets point to the water (outer) side
    z = np.where((chunk.side > 0)[:, None], z, z[:, ::-1])
    prof = read_profiles(z, chunk.offsets, object_width=s.object_width,
                         crest_search=s.crest_search, crest_tolerance=s.crest_tolerance,
                         max_nodata=s.max_nodata, water_level=chunk.conditions.water_level)
    return z, prof


def _crest_chunk(chunk: _Chunk) -> dict[str, np.ndarray]:
    """The crest levels of one chunk alone (an earlier survey needs nothing more)."""
    return {"crest_level": _read_chunk(chunk)[1].crest_level}


def _assess_chunk(chunk: _Chunk) -> dict[str, np.ndarray]:
    """Sample, read and judge the profiles of one chunk of stations."""
    s = chunk.settings
    z, prof = _read_chunk(chunk)
    # the characteristic outer slope (EurOtop 2018, composite slopes) drives the freeboard
    tan_c, extrapolated = outer_characteristic_slope(z, chunk.offsets, prof, chunk.conditions,
                                                     object_width=s.object_width,
                                                     approach=s.approach)
    prof = dataclasses.replace(prof, flags=prof.flags | np.where(
        extrapolated, FLAGS["slope_extrapolated"], 0))
    # a section's registered design slope, where given, replaces the measured one
    tan_measured = tan_c
    tan_c, design = requirement_slope(tan_c, chunk.conditions.design_outer_slope)
    req = required_level(chunk.conditions, outer_slope=prof.outer_slope,
                         crest_level=prof.crest_level, approach=s.approach, tan_alpha=tan_c,
                         **profile_berm(prof))
    margin = prof.crest_level - req.required_level
    out = {f: getattr(prof, f) for f in prof.__dataclass_fields__}
    out.update({f: getattr(req, f) for f in req.__dataclass_fields__})
    out["margin"] = margin
    out["characteristic_slope"] = 1.0 / np.where(design, tan_measured, tan_c)
    out["outer_slope_source"] = np.where(design, "design", "measured").astype(object)
    # survey accuracy carried through to the margin; optional Monte Carlo (uncertainty.py)
    ds = with_rules(_dataset(chunk.dem_path), chunk.dem_reading)  # levels, as sampled
    acc = accuracy_from_settings(s)
    out.update(station_uncertainty(
        prof, chunk.conditions, margin=margin, accuracy=acc, cell=abs(ds.res[0]),
        step=float(chunk.offsets[1] - chunk.offsets[0]), crest_tolerance=s.crest_tolerance,
        approach=s.approach, watch_band=s.watch_band, slope_given=design,
        **profile_berm(prof)).columns())
    out.update(simulate(ds, chunk.stations, chunk.side, chunk.offsets, chunk.conditions, s,
                        accuracy=acc, chunk_key=int(chunk.stations.along[0] * 1000)))
    # inner-slope stability: Bishop (1955) circles on the measured inner side (stability.py)
    out.update(_stability_columns(z, chunk, prof))
    out["profiles"] = z.astype(np.float32)
    return out


def _stability_columns(z: np.ndarray, chunk: _Chunk,
                       prof: ProfileMetrics) -> dict[str, np.ndarray]:
    """The stability search's station fields; NaN where a section gives no soil."""
    n = z.shape[0]
    if chunk.soil is None or not np.isfinite(chunk.soil.unit_weight).any():
        return {k: np.full(n, np.nan) for k in stability.STATION_COLUMNS}
    c = chunk.conditions
    frame = stability.frame_of(prof, c.water_level + c.sea_level_rise)
    return stability.station_stability(chunk.offsets, z, frame, chunk.soil,
                                       phreatic=chunk.settings.stability_phreatic)


def _one_station(chunk: _Chunk, i: int) -> _Chunk:
    """The chunk of station ``i`` alone (to narrow down a read failure)."""
    sl = slice(i, i + 1)
    return dataclasses.replace(chunk, stations=chunk.stations.take(sl), side=chunk.side[sl],
                               conditions=chunk.conditions.take(sl),
                               lines=None if chunk.lines is None else chunk.lines.take(sl),
                               soil=None if chunk.soil is None else chunk.soil.take(sl))


def _chunks(n: int, size: int) -> list[slice]:
    return [slice(i, min(i + size, n)) for i in range(0, n, size)]


def _map(fn: Callable, items: list, settings: Settings) -> Iterator:
    """Ordered map on the run's executor: serial, process pool or Dask (same results)."""
    with make_executor(workers=settings.workers, scheduler=settings.scheduler,
                       n_tasks=len(items)) as ex:
        yield from ex.map(fn, items)


# ---------------------------------------------------------------- pipeline
def _gather_conditions(cond: Conditions, idx: np.ndarray,
                       chainage: np.ndarray) -> StationConditions:
    return station_conditions(cond.table, idx, chainage)


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
    structures: Structures | None = None


def _read_lines(inputs: RunInputs, dem: DemInfo,
                s: Settings) -> tuple[list[Centreline], CRS]:
    if inputs.line_id_field:
        return read_centrelines(inputs.centreline, id_field=inputs.line_id_field,
                                layer=inputs.layer, target_crs=dem.crs,
                                gap_tolerance=s.gap_tolerance)
    line, crs = read_centreline(inputs.centreline, layer=inputs.layer, target_crs=dem.crs,
                                gap_tolerance=s.gap_tolerance)
    return [Centreline("", line)], crs


def run(inputs: RunInputs, settings: Settings | None = None, *,
        progress: ProgressCallback | None = None, terrain_shade: bool = False) -> Result:
    """Assess the levee line(s); return the result without writing anything.

    ``terrain_shade``: also read a hillshade of the terrain around the line for the
    report's map (:mod:`trajectory.terrain.hillshade`; a decimated read of the DEM, so it is
    asked for only where a report is written). The DEM's footprint is always kept.
    """
    s = settings or Settings()
    # read the terrain model first: its CRS is the working CRS
    dem = open_dem(inputs.dem)
    # earlier surveys: dates in order, terrain models in the same CRS
    _check_epochs(inputs, dem)
    # read the centreline(s), reprojected to the DEM's CRS, each joined into one line
    lines, crs = _read_lines(inputs, dem, s)
    for c in lines:
        if not line_bounds_overlap(c.line, dem, s.half_width):
            name = f" (line {c.line_id!r})" if c.line_id else ""
            raise InputError(f"{inputs.centreline}{name}: the centreline does not overlap the "
                             f"DEM {inputs.dem}; check that both cover the same area and CRS")
    all_lines = lines[0].line if len(lines) == 1 else MultiLineString([c.line for c in lines])
    # how DEM values become levels (fill values, vertical unit), from a window near the line
    reading = reading_rules(dem.path, all_lines, margin=s.half_width, z_scale=s.dem_z_scale)
    # each earlier terrain model read by its own rules (its unit, fill values, lost tiles)
    earlier_rules = {e.path: reading_rules(e.path, all_lines, margin=s.half_width,
                                           z_scale=s.dem_z_scale)
                     for e in inputs.earlier if e.kind == "dem"}
    # frequency lines by section (optional), then the section conditions (per line with a
    # line_id column), the design level read off a line at the standard where it is empty
    freq = read_frequency(s.frequency) if s.frequency else None
    if inputs.line_id_field:
        extents = {c.line_id: _chainage_range(c.line, s) for c in lines}
        conds = read_line_conditions(inputs.conditions, [c.line_id for c in lines],
                                     layer=inputs.conditions_layer, target_crs=dem.crs,
                                     frequency=freq, extrapolate=s.extrapolate_frequency,
                                     extents=extents)
    else:
        extent = _chainage_range(lines[0].line, s)
        conds = {"": read_conditions(inputs.conditions, layer=inputs.conditions_layer,
                                     target_crs=dem.crs, frequency=freq,
                                     extrapolate=s.extrapolate_frequency, extent=extent)}
    step = s.sample_step or dem.cell
    offsets = section_offsets(s.half_width, step)
    accuracy_from_settings(s)  # refuse a contradictory accuracy setting before any work
    too_big = check_chunk_memory(offsets.size, s.chunk_size)
    if too_big:
        raise ParameterError(too_big)
    # stations at fixed chainage with smoothed normals, each line its own chainage
    # known structures and accepted exceptions, applied before the verdict
    known = read_structures(s.structures_file, target_crs=dem.crs) if s.structures_file else None
    plans = [dataclasses.replace(_plan_line(c, conds[c.line_id], s, source=inputs.conditions),
                                 structures=known) for c in lines]
    total = sum(len(pl.stations) for pl in plans)
    log.info("%d stations over %.0f m (%d line(s)), %d samples per section", total,
             sum(pl.line.length for pl in plans), len(plans), offsets.size)
    # each line assessed in turn: chunks, profiles, requirement, status, options, epochs
    results, done = [], 0
    for pl in plans:
        def line_progress(d: int, n: int, base: int = done) -> None:
            if progress is not None:
                progress(base + d, total)
        results.append(_run_line(inputs, s, dem, crs, pl, offsets, reading, line_progress,
                                 earlier_rules))
        done += len(pl.stations)
    result = _combine(results, [pl.line_id for pl in plans])
    if inputs.line_id_field:
        result.metadata["line_count"] = len(lines)
    _judge_run(result, inputs, s, dem)
    _tabulate(result)
    result.terrain = (_terrain(dem, all_lines, reading, s) if terrain_shade
                      else dem_footprint(dem.path))
    return result


def _chainage_range(line: LineString, s: Settings) -> tuple[float, float]:
    """First and last chainage of a line (its own chainage from ``start_chainage``)."""
    return s.start_chainage, s.start_chainage + line.length


def _tabulate(result: Result) -> None:
    """The stretch table and the survey rows, computed once for every writer."""
    result.stretch_table = stretch_rows(result)
    levels = result.epochs
    if levels is None:  # the latest survey alone
        levels = EpochLevels(labels=("",), years=np.array([np.nan]),
                             sources=(str(result.metadata.get("input_dem", "")),),
                             crest=result.stations["crest_level"].to_numpy(float)[:, None])
    result.epoch_table = epoch_rows(levels, result.stations)


def _terrain(dem: DemInfo, line: LineString | MultiLineString, reading: DemReading,
             s: Settings) -> Terrain:
    """Background for the map: the DEM's footprint, a hillshade of the ground near the line.

    The band is twice the sections' half width: about the cells the sections read.
    """
    return read_terrain(dem.path, line, band=2.0 * s.half_width, scale=reading.scale,
                        fill_values=reading.fill_values)


def _judge_run(result: Result, inputs: RunInputs, s: Settings, dem: DemInfo) -> None:
    """Say why nothing was assessed (an incomplete run), and what looks implausible."""
    st = result.stations
    why = diagnosis.nothing_assessed_text(st, result.profiles, cell=dem.cell,
                                          half_width=s.half_width, max_nodata=s.max_nodata,
                                          bounds=dem.bounds, source=inputs.dem)
    if why and "incomplete" not in result.metadata:  # said once, by the front end
        result.metadata["incomplete"] = why
    coarse = diagnosis.coarse_cell_text(dem.cell, inputs.dem)
    notes = [coarse] if coarse and not why else []
    levels = diagnosis.level_warnings(st)
    notes += levels
    side = None if levels else diagnosis.water_side_warning(  # sides judged on sane levels
        st, result.profiles, result.offsets, crest_search=s.crest_search)
    notes += [side] if side else []
    for note in notes:
        log.warning(note)
    if notes:
        result.metadata["plausibility"] = " | ".join(notes)


@dataclass(frozen=True)
class _LineRun:
    """The result of one line before the lines are put together."""

    line_id: str
    line: LineString
    result: Result
    stations: int


def _run_line(inputs: RunInputs, s: Settings, dem: DemInfo, crs: CRS, pl: _LinePlan,
              offsets: np.ndarray, reading: DemReading,
              progress: ProgressCallback,
              earlier_rules: dict[str, DemReading] | None = None) -> _LineRun:
    """Assess the stations of one line (chunks never span lines)."""
    st, side, cond, sec, line = pl.stations, pl.side, pl.cond, pl.sec, pl.line
    # sample and interpret the cross-sections chunk by chunk
    slices = _chunks(len(st), s.chunk_size)
    gathered = _gather_conditions(cond, sec, st.chainage)
    lines = cond.lines.take(sec) if cond.lines is not None else no_lines(len(st))
    soil, required = station_soil(cond.table, sec)
    tasks = [_Chunk(dem.path, st.take(sl), side[sl], gathered.take(sl), offsets, s, reading,
                    lines.take(sl), soil.take(sl)) for sl in slices]
    got: list[dict[str, np.ndarray] | ChunkFailure] = []
    done = 0
    for part in _map(Guarded(_assess_chunk, _one_station), tasks, s):
        got.append(part)
        done += part_size(part)
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
    # sections that cross a neighbour within their half-width (needs all stations)
    cols["flags"] = cols["flags"] | np.where(crossing_sections(st, s.half_width),
                                             FLAGS["sections_cross"], 0)
    # known structures: a given crest level (a wall's top) replaces the ground's, then
    # margin and status per station (excluded where a structure says so), then stretches
    ground_crest = cols["crest_level"].copy()
    match = (match_structures(pl.structures, st.chainage, st.x, st.y, line_id=pl.line_id)
             if pl.structures is not None else None)
    if match is not None:
        given = np.isfinite(match.crest_level)
        cols["crest_level"] = np.where(given, match.crest_level, cols["crest_level"])
        cols["margin"] = np.where(given, cols["crest_level"] - cols["required_level"],
                                  cols["margin"])
    # the return period the crest holds (held.py): once per line, on the crest assessed
    # (a structure's where it gives one), the solver's requirement calls shared by all
    cols.update(_held(cols, lines, gathered, s.approach))
    status = classify(cols["margin"], watch_band=s.watch_band)
    if match is not None:
        status[match.effect == "exclude"] = EXCLUDED
    table = _station_table(st, side, cond, sec, cols, status)
    _stability_fields(table, cols, soil, required)
    table["lon"], table["lat"] = _wgs84(crs, st.x, st.y)
    _structure_columns(table, ground_crest, match)
    table.insert(0, "line_id", pl.line_id)
    table["flags"] = add_flag(table["flags"].to_numpy(), off, FLAG_OFF_DEM)
    failed = np.array([e is not None for e in read_error], dtype=bool)
    table["flags"] = add_flag(table["flags"].to_numpy(), failed, FLAG_READ_FAILED)
    table["flags"] = add_flag(table["flags"].to_numpy(),
                              table["outer_slope_source"].to_numpy(object) == "design",
                              "design_slope")
    if s.simulate:
        log.info("Monte Carlo over %d terrain models: median ratio empirical/analytic std "
                 "%s", s.simulate, simulation_summary(table))
    end = s.start_chainage + line.length
    stretches = merge_stretches(st.chainage, status, cols["margin"],
                                start=s.start_chainage, end=end,
                                min_length=s.min_stretch_length)
    # remedies for every deficit stretch: raise, outer berm, combined
    lo, hi = station_extents(st.chainage, s.start_chainage, end)
    options = plan_options(table, gathered, stretches, extents=hi - lo,
                           watch_band=s.watch_band, include_watch=s.remedy_watch,
                           berm_above_swl=s.berm_above_swl,
                           fill_settlement=cond.table["fill_settlement"].to_numpy(float)[sec],
                           unit_cost=s.fill_unit_cost, approach=s.approach)
    # stability berms for every stretch short on inner-slope stability (stability_berms.py)
    frame = stability.frame_of(_FrameColumns({**cols, "crest_level": ground_crest}),
                               gathered.water_level + gathered.sea_level_rise)
    berms = plan_berms(table, offsets, profiles, frame, soil, required, extents=hi - lo,
                       lo=lo, hi=hi, phreatic=s.stability_phreatic, unit_cost=s.fill_unit_cost)
    if berms:
        options = pd.concat([options, pd.DataFrame(berms, columns=options.columns)],
                            ignore_index=True)
    options.insert(0, "line_id", pl.line_id)
    # piping: the measured seepage path against Bligh, Lane and Sellmeijer, and a piping
    # berm per stretch short on it (piping_screen.py)
    for k, v in screen_piping(table, cond.table.iloc[sec].reset_index(drop=True),
                              profiles=profiles, offsets=offsets, entry=s.piping_entry).items():
        table[k] = v
    pipe_runs = piping_stretches(table, start=s.start_chainage, end=end, line_id=pl.line_id)
    pipe_berms = piping_options(table, pipe_runs, extents=hi - lo,
                                thickness=s.piping_berm_thickness, unit_cost=s.fill_unit_cost)
    # the economic optimum (van Dantzig 1956) of sections that give damage and discount rate
    economics = section_economics(table, cond.table, extents=hi - lo, unit_cost=s.fill_unit_cost,
                                  line_id=pl.line_id)
    meta = _metadata(inputs, s, dem, crs, line)
    if failures:
        meta["incomplete"] = incomplete_text(failures)
    if off_note:
        meta["off_dem"] = off_note
    # every epoch read on the same stations and sections: change, rate, projected year
    levels, lost, previous = _epoch_levels(inputs, tasks, table, crs, ground_crest, s,
                                           earlier_rules or {})
    if lost:  # an earlier survey partly unreadable: its change unknown there
        meta["incomplete"] = " | ".join([meta["incomplete"], *lost] if "incomplete" in meta
                                        else lost)
    ep = assess_epochs(levels.years, levels.crest, cols["margin"],
                       vertical_accuracy=_survey_sigma(table, s), rate_z=s.rate_z)
    for k, v in ep.columns().items():
        table[k] = v
    # the year the held return period falls below the standard, at the lowering rate
    table["below_standard_year"] = projected_year(
        table["crest_level"].to_numpy(float) - table["standard_level"].to_numpy(float),
        table["lowering_rate"].to_numpy(float), table["rate_significant"].to_numpy(bool),
        year_now=float(levels.years[-1]) if len(levels.years) >= 2 else np.nan)
    meta.update(_epoch_metadata(levels, inputs))
    # what changed since the previous survey: its verdict under today's rules, the classes
    changes = _previous_verdict(table, previous, match, s, start=s.start_chainage, end=end)
    if previous.get("label") is not None:
        meta["previous_survey"] = (f"{previous['label']} ({previous['kind']}): judged under "
                                   "today's conditions and parameters")
    known = None
    if pl.structures is not None:
        known = structure_table(pl.structures, [] if match is None else [match])
        meta.update(_structure_metadata(s.structures_file, known))
    res = Result(stations=table, stretches=stretches, line=line, crs=crs, offsets=offsets,
                 profiles=profiles, metadata=meta, epochs=levels, options=options,
                 lines={pl.line_id: line}, economics=economics, structures=known,
                 piping_stretches=pipe_runs, piping_options=pipe_berms, changes=changes)
    return _LineRun(pl.line_id, line, res, len(st))


class _FrameColumns:
    """Profile columns of a line as attributes (for :func:`stability.frame_of`)."""

    def __init__(self, cols: dict[str, np.ndarray]) -> None:
        self.__dict__.update(cols)


def _stability_fields(table: pd.DataFrame, cols: dict[str, np.ndarray], soil: Soil,
                      required: np.ndarray) -> None:
    """Factor of safety, required factor, status and critical circle per station (in place)."""
    screened = np.isfinite(soil.unit_weight)
    table["stability_required"] = required
    for k in stability.STATION_COLUMNS:
        table[k] = cols[k]
    table["stability_status"] = stability.status(cols["stability_fos"], required,
                                                 screened=screened)


def _previous_verdict(table: pd.DataFrame, previous: dict[str, Any],
                      match: StructureMatch | None, s: Settings, *, start: float,
                      end: float) -> pd.DataFrame:
    """Station fields of the previous verdict and its change (in place); the change table.

    The previous verdict is today's rules on the previous survey: a terrain model
    read and judged in full (its own slope, so its own required level); an earlier
    result's crest level against today's required level. Known structures apply as
    today (a given crest level, an exclusion).
    """
    n = len(table)
    req_now = table["required_level"].to_numpy(float)
    sig_now = table["margin_sigma"].to_numpy(float)
    crest = np.asarray(previous.get("crest_level", np.full(n, np.nan)), float)
    req = np.asarray(previous.get("required_level", req_now), float)
    sig = np.asarray(previous.get("margin_sigma", sig_now), float)
    if match is not None:
        crest = np.where(np.isfinite(match.crest_level), match.crest_level, crest)
    margin_prev = crest - req
    excluded = None if match is None else match.effect == "exclude"
    status_prev = previous_status(margin_prev, watch_band=s.watch_band, excluded=excluded)
    if "kind" not in previous:
        status_prev = np.full(n, None, dtype=object)
    table["status_previous"] = status_prev
    table["status_delivered"] = previous.get("delivered", np.full(n, None, dtype=object))
    table["margin_previous"] = margin_prev
    table["margin_change"] = table["margin"].to_numpy(float) - margin_prev
    table["change_sigma"] = np.where(np.isfinite(margin_prev), combined_sigma(sig_now, sig),
                                     np.nan)
    table["verdict_change"] = change_class(table["status"].to_numpy(object), status_prev,
                                           table["margin"].to_numpy(float), margin_prev,
                                           table["change_sigma"].to_numpy(float))
    runs = change_runs(table["chainage"].to_numpy(float), table["verdict_change"].to_numpy(object),
                       start=start, end=end)
    return change_table(table, runs)


def _wgs84(crs: CRS, x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Longitude and latitude (degrees, WGS 84) of projected points (pyproj)."""
    from pyproj import Transformer

    tr = Transformer.from_crs(crs, CRS.from_epsg(4326), always_xy=True)
    lon, lat = tr.transform(np.asarray(x, float), np.asarray(y, float))
    return np.asarray(lon, float), np.asarray(lat, float)


def _held(cols: dict[str, np.ndarray], lines: Lines, cond: StationConditions,
          approach: str) -> dict[str, np.ndarray]:
    """What the crest holds on each station's frequency line (held.py), all stations at once.

    The requirement is the one the status used: its slope tangent (the design slope
    where a section gives one) and the measured berm.
    """
    if not lines.has_line.any():
        return empty_held(cols["crest_level"].size)
    return station_held(lines, cond, crest_level=cols["crest_level"],
                        crest_sigma=cols["margin_sigma"], approach=approach,
                        outer_slope=cols["outer_slope"], tan_alpha=cols["tan_alpha"],
                        berm_width=cols["outer_berm_width"],
                        berm_level=cols["outer_berm_level"])


def _structure_columns(table: pd.DataFrame, ground_crest: np.ndarray,
                       match: StructureMatch | None) -> None:
    """Station fields of the known structures (in place); a flag where the crest is given."""
    n = len(table)
    table["ground_crest_level"] = ground_crest
    empty = np.full(n, "", dtype=object)
    table["structure_id"] = empty if match is None else match.structure_id
    table["structure_kind"] = empty if match is None else match.kind
    table["structure_effect"] = empty if match is None else match.effect
    table["structure_note"] = empty if match is None else match.note
    if match is not None:
        table["flags"] = add_flag(table["flags"].to_numpy(), np.isfinite(match.crest_level),
                                  "crest_from_structure")


def _structure_metadata(path: str, known: pd.DataFrame) -> dict[str, Any]:
    meta: dict[str, Any] = {"input_structures": Path(path).name,
                            "structures": f"{len(known)} known structure(s) or exception(s), "
                                          f"{int(known['stations'].sum())} station(s) covered"}
    if Path(path).is_file():
        meta["sha256_structures"] = file_checksum(path)
    return meta


def _combine_structures(tables: list[pd.DataFrame | None]) -> pd.DataFrame | None:
    """One structures table for several lines: stations summed, chainage range widened."""
    got = [t for t in tables if t is not None]
    if not got:
        return None
    t = got[0].copy()
    t["stations"] = np.sum([g["stations"].to_numpy() for g in got], axis=0)
    t["from_chainage"] = np.fmin.reduce([g["from_chainage"].to_numpy(float) for g in got])
    t["to_chainage"] = np.fmax.reduce([g["to_chainage"].to_numpy(float) for g in got])
    return t


def _combine(runs: list[_LineRun], ids: list[str]) -> Result:
    """Several lines' results as one (stations in line order, each its own chainage)."""
    if len(runs) == 1:
        return runs[0].result
    rs = [r.result for r in runs]
    meta = dict(rs[0].metadata)
    for key in ("incomplete", "off_dem"):
        notes = [f"line {r.line_id!r}: {r.result.metadata[key]}" for r in runs
                 if key in r.result.metadata]
        meta.pop(key, None)
        if notes:
            meta[key] = "; ".join(notes)
    meta["line_length"] = round(sum(r.line.length for r in runs), 3)
    levels = rs[0].epochs
    if levels is not None:
        levels = dataclasses.replace(levels, crest=np.vstack(
            [r.epochs.crest for r in rs if r.epochs is not None]))
    return Result(
        stations=pd.concat([r.stations for r in rs], ignore_index=True),
        stretches=stack_stretches([r.stretches for r in rs], [r.stations for r in runs]),
        line=MultiLineString([r.line for r in runs]), crs=rs[0].crs, offsets=rs[0].offsets,
        profiles=np.vstack([r.profiles for r in rs]), metadata=meta, epochs=levels,
        options=pd.concat([r.options for r in rs], ignore_index=True),
        lines={r.line_id: r.line for r in runs},
        economics=pd.concat([r.economics for r in rs], ignore_index=True),
        structures=_combine_structures([r.structures for r in rs]),
        piping_stretches=pd.concat([r.piping_stretches for r in rs], ignore_index=True),
        piping_options=pd.concat([r.piping_options for r in rs], ignore_index=True),
        changes=pd.concat([r.changes for r in rs if r.changes is not None],
                          ignore_index=True) if any(r.changes is not None for r in rs)
        else None)


def _survey_sigma(table: pd.DataFrame, s: Settings) -> np.ndarray:
    """Each survey's crest-level error per station, from the one accuracy model.

    The crest's standard deviation (systematic part plus the random part over
    the crest's cells, uncertainty.py); where the crest was not read, the
    accuracy class's total.
    """
    acc = accuracy_from_settings(s)
    total = float(np.hypot(acc.systematic, acc.random))
    sig = table["crest_sigma"].to_numpy(float)
    return np.where(np.isfinite(sig) & (sig > 0), sig, total)


def _check_epochs(inputs: RunInputs, dem: DemInfo) -> None:
    if not inputs.earlier:
        return
    if inputs.dem_date is None:
        raise InputError(f"{inputs.dem}: give the survey date of the latest terrain model "
                         "(e.g. --dem 2024=dem.tif) to compare it with earlier surveys")
    epochs = [*inputs.earlier, Epoch(inputs.dem_date, inputs.dem)]
    check_order([e.label for e in epochs], [e.path for e in epochs])
    for e in inputs.earlier:
        if e.kind == "dem":
            open_earlier_dem(e, latest=dem)


def _epoch_levels(inputs: RunInputs, tasks: list[_Chunk], table: pd.DataFrame, crs: CRS,
                  crest: np.ndarray, s: Settings,
                  rules: dict[str, DemReading]
                  ) -> tuple[EpochLevels, list[str], dict[str, Any]]:
    """Crest level per epoch: earlier terrain models read like the latest, results matched.

    A part of an earlier terrain model that cannot be read is contained like in
    the latest (its stations have no level of that survey); the second value
    names each such part for the run's ``incomplete`` entry. The third holds the
    previous survey's reading for its verdict (:func:`_previous_verdict`): a terrain
    model judged in full under today's rules, or an earlier result's crest level,
    and the latest earlier result's delivered status (``delivered``).
    """
    columns, lost = [], []
    previous: dict[str, Any] = {}
    xy = table[["x", "y"]].to_numpy(float)
    for j, e in enumerate(inputs.earlier):
        is_previous = j == len(inputs.earlier) - 1
        if e.kind == "result":
            got = verdict_from_result(e, crs=crs, chainage=table["chainage"].to_numpy(), xy=xy)
            columns.append(got["crest_level"])
            previous["delivered"] = got["status"]  # the latest earlier result's own verdict
            if is_previous:
                previous.update(kind="result", label=e.label, crest_level=got["crest_level"])
            continue
        log.info("reading survey %s (%s)", e.label, e.path)
        again = [dataclasses.replace(t, dem_path=e.path, dem_reading=rules.get(e.path))
                 for t in tasks]
        # the previous survey is judged in full under today's rules (changes.py)
        if is_previous:
            again = [dataclasses.replace(t, settings=t.settings.replace(simulate=0))
                     for t in again]
        fn = _assess_chunk if is_previous else _crest_chunk
        parts = fill_failures(list(_map(Guarded(fn, _one_station), again, s)), source=e.path)
        columns.append(np.concatenate([p["crest_level"] for p in parts]))
        if is_previous:
            previous.update({k: np.concatenate([p[k] for p in parts])
                             for k in ("crest_level", "required_level", "margin_sigma")})
            previous.update(kind="dem", label=e.label)
        errors = np.concatenate([p[READ_ERROR] for p in parts])
        fails = failure_runs(table["chainage"].to_numpy(float), errors)
        if fails:
            lost.append(incomplete_text(fails, what=f"the survey {e.label} ({e.path})",
                                        effect="those stations have no level of that survey"))
    labels = (*(e.label for e in inputs.earlier), inputs.dem_date or "")
    years = (check_order(labels, [*(e.path for e in inputs.earlier), inputs.dem])
             if inputs.earlier else np.array([np.nan]))
    sources = (*(Path(e.path).name for e in inputs.earlier), Path(inputs.dem).name)
    return EpochLevels(labels=labels, years=years, sources=sources,
                       crest=np.stack([*columns, crest], axis=1)), lost, previous


def _epoch_metadata(levels: EpochLevels, inputs: RunInputs) -> dict[str, Any]:
    pairs = zip(levels.labels, levels.sources, strict=True)
    meta: dict[str, Any] = {"epochs": "; ".join(f"{lab or 'undated'} ({src})"
                                                for lab, src in pairs)}
    for e in inputs.earlier:
        meta[f"input_epoch_{e.label}"] = Path(e.path).name
        if Path(e.path).is_file():
            meta[f"sha256_epoch_{e.label}"] = file_checksum(e.path)
    return meta


def _plan_line(c: Centreline, cond: Conditions, s: Settings, *, source: str) -> _LinePlan:
    listed = read_station_chainages(s.stations_file) if s.stations_file else None
    st = make_stations(c.line, spacing=s.spacing, start_chainage=s.start_chainage,
                       reverse=s.reverse, smooth_length=s.smooth_length, chainages=listed)
    where = f"{source} (line {c.line_id!r})" if c.line_id else source
    short = diagnosis.short_line_text(c.line.length, s.spacing, len(st),
                                      f"line {c.line_id!r}" if c.line_id else "the centreline")
    if short and not listed:
        log.warning(short)
    # the section of each station: by chainage range, or by polygon (spatial join)
    sec, cond = assign_sections(cond, st.chainage, st.x, st.y, source=where)
    if "from_chainage" in cond.table and cond.table["from_chainage"].notna().all():
        line_range = _chainage_range(c.line, s)
        for note in sections_off_the_line(cond.table, st.chainage.min(), st.chainage.max(),
                                          line_range):
            log.warning("%s: %s", where, note)
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
        "water_level": cols["water_level"],
        "sea_level_rise": cols["sea_level_rise"],
        "settlement": cols["settlement"],
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
    for name in STATION_COLUMNS:  # every further term of the requirement, for audit
        df[name] = cols[name]
    for k in uncertainty.STATION_COLUMNS:  # uncertainty.py
        df[k] = cols[k]
    # frequency line and standard: where the design level came from, what the crest holds
    for k, empty in (("water_level_source", "given"), ("standard_return_period", np.nan)):
        df[k] = t[k].to_numpy()[sec] if k in t.columns else np.full(len(df), empty)
    for k in HELD_COLUMNS:  # held.py
        df[k] = cols[k]
    for name in ("outer_berm_level", "outer_berm_width", "outer_berm_slope", "inner_berm_level",
                 "inner_berm_width", "inner_berm_slope", "outer_lower_slope",
                 "characteristic_slope", "crest_mean", "crest_level_outer", "crest_hole",
                 "outer_slope_steepest", "inner_slope_steepest", "outer_slope_source"):
        df[name] = cols[name]
    df["outer_breaks"] = breaks_text(cols["outer_breaks"])
    df["inner_breaks"] = breaks_text(cols["inner_breaks"])
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
    # CRS of each input as given (the centreline is reprojected to the DEM's)
    meta["crs_dem"] = dem.crs.to_string()
    meta["crs_centreline"] = _source_crs(inputs.centreline, inputs.layer)
    meta["crs_conditions"] = "none (table; chainage along the centreline)"
    for k, v in s.__dict__.items():
        if k not in EXECUTION_FIELDS:  # how a run is executed does not change its results
            meta[f"param_{k}"] = v
    if inputs.line_id_field:
        meta["input_line_id_field"] = inputs.line_id_field
    return meta


def _source_crs(path: str, layer: str | None) -> str:
    import pyogrio

    try:
        crs = pyogrio.read_info(path, layer=layer)["crs"]
    except Exception:  # recorded for information only; the run has read the file already
        return "unknown"
    return CRS.from_user_input(crs).to_string() if crs else "none"


def assess(inputs: RunInputs, out: str | Path, settings: Settings | None = None, *,
           overwrite: bool = False, table: str | Path | None = None,
           progress: ProgressCallback | None = None,
           report: str | Path | None = None, read: dict[str, str] | None = None) -> Result:
    """Assess the levee line(s); write the GeoPackage, the deficit tables (CSV, XLSX), a report.

    The files (the report too) are written under temporary names and switched into
    place together once all are complete, so they always come from the same run.
    No output may be an input or another output; ``read`` names further files the
    run read (e.g. ``{"--config": "run.toml"}``) that must not be replaced either.
    On a run with several workers the GeoPackage is written side by side with the
    tables.
    """
    from .outputs import write_deficit_table, write_geopackage
    from .outputs.atomic import forget_switched, refuse_overwrite, staged
    from .outputs.report import write_report
    from .outputs.style import sld_paths, write_slds
    from .outputs.table import stretch_table_path, write_stretch_table
    from .outputs.targets import check_targets
    from .outputs.workbook import write_result_workbook

    s = settings or Settings()
    targets = output_targets(out, table, report)
    check_targets(targets, input_files(inputs, s, read))
    out, table = targets["--out"], targets["--table"]
    slds = sld_paths(out)
    report_path = targets.get("--report")
    files = list(targets.values())
    forget_switched(files)
    for p in files:
        refuse_overwrite(p, overwrite=overwrite)
    result = run(inputs, s, progress=progress, terrain_shade=report_path is not None)
    parallel = s.workers != 1 and not s.scheduler and (os.cpu_count() or 1) > 1
    with staged(files, overwrite=overwrite) as tmp:
        def geopackage() -> None:
            # time stamps pinned to the run time (reruns compare byte for byte)
            with geopackage_write_options(result.metadata["run_time"]):
                write_geopackage(result, tmp[out], overwrite=True, styles=False)

        def tables() -> None:
            write_deficit_table(result, tmp[table], overwrite=True)
            write_stretch_table(result, tmp[stretch_table_path(table)], overwrite=True)
            write_result_workbook(result, tmp[table.with_suffix(".xlsx")], overwrite=True)
            write_slds({layer: tmp[p] for layer, p in slds.items()}, overwrite=True)

        side_by_side([geopackage, tables], parallel=parallel)
        if report_path is not None:  # part of the set: built from the staged GeoPackage
            write_report(tmp[out], tmp[report_path], overwrite=True, name=out.name)
    log.info("wrote %s, %s (+ stretches, .xlsx)%s", out, table,
             f" and {report_path}" if report_path else "")
    return result


def output_targets(out: str | Path, table: str | Path | None = None,
                   report: str | Path | None = None) -> dict[str, Path]:
    """Every file an assessment writes, by role; refuse names that cannot be right.

    Raises
    ------
    OutputError
        ``out`` empty or not a ``.gpkg``, ``table`` not a ``.csv``.
    """
    from .errors import OutputError
    from .outputs.style import sld_paths
    from .outputs.table import stretch_table_path

    if not str(out).strip():
        raise OutputError("--out is empty; give the result GeoPackage's file name, "
                          "e.g. --out results.gpkg")
    o = Path(out)
    if o.suffix.lower() != ".gpkg":
        raise OutputError(f"{o}: --out is the result GeoPackage; give a name ending in .gpkg "
                          "(the deficit table goes beside it, or where --table says)")
    t = Path(table) if table and str(table).strip() else o.with_suffix(".csv")
    if t.suffix.lower() != ".csv":
        raise OutputError(f"{t}: --table is the deficit table (CSV); give a name ending in "
                          ".csv (the workbook .xlsx goes beside it)")
    targets = {"--out": o, "--table": t, "the stretch table": stretch_table_path(t),
               "the workbook": t.with_suffix(".xlsx")}
    targets.update({f"the {layer} style file": p for layer, p in sld_paths(o).items()})
    if report and str(report).strip():
        targets["--report"] = Path(report)
    return targets


def input_files(inputs: RunInputs, s: Settings,
                read: dict[str, str] | None = None) -> dict[str, str]:
    """Every file a run reads, by role (a mosaic's tiles too), which no output may replace."""
    files = {"--centreline": inputs.centreline, "--dem": inputs.dem,
             "--conditions": inputs.conditions}
    for e in inputs.earlier:
        files[f"the earlier survey {e.label}"] = e.path
    if s.stations_file:
        files["stations_file"] = s.stations_file
    files.update(read or {})
    for role, p in list(files.items()):
        if str(p).lower().endswith(".vrt") and Path(p).is_file():
            try:
                with rasterio.open(p) as ds:
                    parts = ds.files[1:]
            except rasterio.errors.RasterioError:  # judged when the run opens it
                parts = []
            # one role per tile (a shared key kept only the last tile)
            files.update({f"tile {i} of {role}": q for i, q in enumerate(parts, 1)})
    return files


def summary(result: Result) -> dict[str, float]:
    """Length per status (m) and station counts, for logs and the report."""
    st = result.stretches
    out: dict[str, float] = {}
    for status in STATUSES:
        out[f"length_{status}"] = float(st.length[st.status == status].sum())
        out[f"stations_{status}"] = int((result.stations["status"] == status).sum())
    return out
