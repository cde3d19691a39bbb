"""Executors, chunks, windows and tiled DEMs: the same inputs give the same results.

The truth here is constructed: the serial run is the reference and every other
way of running (process pool, Dask LocalCluster, other chunk sizes, windows, a
VRT mosaic instead of one GeoTIFF) must reproduce it exactly. Terrain sampling
is also checked against scipy's RegularGridInterpolator (reference library) and
the tile mosaic against rasterio.merge (GDAL through rasterio).
"""

from __future__ import annotations

import hashlib
import sys

import numpy as np
import pandas as pd
import pytest
import rasterio
from rasterio.transform import from_origin
from scipy.interpolate import RegularGridInterpolator

from trajectory.assess import RunInputs, assess, run
from trajectory.geometry.chainage import Stations
from trajectory.geometry.sections import (
    sample_profiles,
    section_offsets,
    section_points,
    station_cell_ranges,
    to_pixel,
    window_groups,
)
from trajectory.params import Settings
from trajectory.pipeline.execution import (
    DaskExecutor,
    ExecutionError,
    SerialExecutor,
    _bounded_map,
    make_executor,
    resolve_workers,
)


def _inputs(demo) -> RunInputs:
    return RunInputs(str(demo["centreline"]), str(demo["dem"]), str(demo["sections"]))


def _digest(path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_serial_and_process_pool_write_the_same_bytes(demo, tmp_path, monkeypatch):
    # the run time is pinned (SOURCE_DATE_EPOCH, reproducible-builds convention), so
    # nothing may differ between the GeoPackages, nor between the workbooks
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1700000000")
    runs = {"serial": Settings(workers=1), "pool": Settings(workers=2, chunk_size=16)}
    digests = {}
    for name, s in runs.items():
        out = tmp_path / f"{name}.gpkg"
        assess(_inputs(demo), out, s)
        digests[name] = (_digest(out), _digest(out.with_suffix(".xlsx")))
    assert digests["serial"] == digests["pool"]


@pytest.mark.slow  # starting a local cluster takes a few seconds
def test_dask_local_cluster_writes_the_same_bytes(demo, tmp_path, monkeypatch):
    from distributed import LocalCluster  # the test set-up installs trajectory[distributed]

    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1700000000")
    ref = tmp_path / "serial.gpkg"
    assess(_inputs(demo), ref, Settings(workers=1))
    # one worker process with two threads: tasks are pickled to another process and
    # two chunks run at once there (each thread needs its own DEM handle)
    with LocalCluster(n_workers=1, threads_per_worker=2, processes=True,
                      dashboard_address=None, worker_dashboard_address=None) as cluster:
        out = tmp_path / "dask.gpkg"
        assess(_inputs(demo), out, Settings(scheduler=cluster.scheduler_address, chunk_size=8))
    assert _digest(out) == _digest(ref)


def test_chunk_boundaries_do_not_change_any_station(demo):
    ref = run(_inputs(demo), Settings(workers=1, chunk_size=64))
    for size in (1, 7, 1000):
        got = run(_inputs(demo), Settings(workers=1, chunk_size=size))
        pd.testing.assert_frame_equal(got.stations, ref.stations, check_exact=True)
        np.testing.assert_array_equal(got.profiles, ref.profiles)


def test_execution_settings_are_not_recorded_as_results(demo):
    meta = run(_inputs(demo), Settings(workers=1, chunk_size=5)).metadata
    assert "param_spacing" in meta
    assert not any(k in meta for k in ("param_workers", "param_chunk_size",
                                       "param_scheduler", "param_dem_cache"))


# ---------------------------------------------------------------- VRT vs GeoTIFF
def test_vrt_mosaic_gives_the_same_results_as_one_merged_geotiff(tmp_path):
    from rasterio.merge import merge

    from trajectory.scenario.synthetic import (
        LeveeSpec,
        make_centreline,
        write_centreline,
        write_dem,
        write_sections_csv,
    )

    spec = LeveeSpec().scaled(600.0)
    line = make_centreline(600.0)
    vrt = write_dem(tmp_path / "tiles", line, spec=spec, tile_size_m=250.0)
    tiles = sorted((tmp_path / "tiles").glob("*.tif"))
    assert len(tiles) >= 4
    # reference mosaic: rasterio.merge joins the tiles into one GeoTIFF
    srcs = [rasterio.open(t) for t in tiles]
    try:
        arr, transform = merge(srcs)
        profile = dict(srcs[0].profile, width=arr.shape[2], height=arr.shape[1],
                       transform=transform)
    finally:
        for s in srcs:
            s.close()
    merged = tmp_path / "merged.tif"
    with rasterio.open(merged, "w", **profile) as dst:
        dst.write(arr)
    levee = write_centreline(tmp_path / "levee.gpkg", line)
    sections = write_sections_csv(tmp_path / "sections.csv", spec)
    s = Settings(workers=1, chunk_size=4)
    a = run(RunInputs(str(levee), str(vrt), str(sections)), s)
    b = run(RunInputs(str(levee), str(merged), str(sections)), s)
    assert (a.stations["status"] != "no_data").mean() > 0.9
    pd.testing.assert_frame_equal(a.stations, b.stations, check_exact=True)
    np.testing.assert_array_equal(a.profiles, b.profiles)


# ---------------------------------------------------------------- windows
@pytest.fixture(scope="module")
def rough_raster(tmp_path_factory):
    """A random surface (any mis-indexed cell shows), 1 km square, with a nodata patch."""
    rng = np.random.default_rng(11)
    h = w = 2000
    z = rng.normal(size=(h, w)).astype(np.float32)
    z[760:775, 760:775] = -9999.0  # on the line, 400 m from its start
    path = tmp_path_factory.mktemp("rough") / "rough.tif"
    with rasterio.open(path, "w", driver="GTiff", width=w, height=h, count=1, dtype="float32",
                       crs="EPSG:32632", transform=from_origin(1000.0, 3000.0, 0.5, 0.5),
                       nodata=-9999.0, tiled=True, blockxsize=256, blockysize=256) as ds:
        ds.write(z, 1)
    return path, z


def _diagonal_stations(n: int = 36, spacing: float = 25.0) -> Stations:
    # a straight line at 45 degrees across the raster, stations every `spacing` m
    along = np.arange(n) * spacing
    t = np.array([1.0, -1.0]) / np.sqrt(2.0)
    x = 1100.0 + along * t[0]
    y = 2900.0 + along * t[1]
    return Stations(chainage=along, along=along, x=x, y=y, nx=np.full(n, -t[1]),
                    ny=np.full(n, t[0]))


def test_split_windows_read_the_same_values_as_one_window(rough_raster):
    path, z = rough_raster
    st = _diagonal_stations()
    off = section_offsets(50.0, 0.5)
    with rasterio.open(path) as ds:
        one = sample_profiles(ds, st, off, overhead=10**12)   # one bounding box
        split = sample_profiles(ds, st, off)                   # default windows
        single = np.vstack([sample_profiles(ds, st.take(slice(i, i + 1)), off)
                            for i in range(len(st))])          # one window per station
        batched = sample_profiles(ds, st, off, buffer_cells=1)  # each window its own batch
        small = sample_profiles(ds, st, off, overhead=0, buffer_cells=60_000)
        transform = ds.transform
    np.testing.assert_array_equal(split, one)
    np.testing.assert_array_equal(single, one)
    np.testing.assert_array_equal(batched, one)
    np.testing.assert_array_equal(small, one)
    # reference: scipy's linear interpolation on the whole grid, cell centres at i + 0.5
    ref = RegularGridInterpolator((np.arange(2000) + 0.5, np.arange(2000) + 0.5),
                                  z.astype(float), method="linear")
    x, y = section_points(st, off)
    c, r = to_pixel(transform, x, y)
    near = z[np.floor(r).astype(int), np.floor(c).astype(int)] == -9999.0
    touched = np.zeros_like(near)
    for di in (0, 1):
        for dj in (0, 1):
            touched |= z[np.floor(r - 0.5).astype(int) + di,
                         np.floor(c - 0.5).astype(int) + dj] == -9999.0
    assert near.any()
    assert np.isnan(one[near]).all()
    np.testing.assert_allclose(one[~touched], ref(np.c_[r[~touched], c[~touched]]), atol=1e-9)


def test_windows_on_a_diagonal_line_stay_close_to_the_sections(rough_raster):
    path, _ = rough_raster
    st = _diagonal_stations()
    off = section_offsets(50.0, 0.5)
    with rasterio.open(path) as ds:
        c, r = to_pixel(ds.transform, *section_points(st, off))
        ext = station_cell_ranges(c, r, width=ds.width, height=ds.height)
    area = (ext[:, 1] - ext[:, 0]) * (ext[:, 3] - ext[:, 2])
    groups = window_groups(ext)
    read = sum((e[1] - e[0]) * (e[3] - e[2]) for _, _, e in groups)
    box = (ext[:, 1].max() - ext[:, 0].min()) * (ext[:, 3].max() - ext[:, 2].min())
    # the groups tile the stations in order
    assert [g[0] for g in groups] == [0] + [g[1] for g in groups[:-1]]
    assert groups[-1][1] == len(st)
    # one bounding box would read far more than the sections; the groups do not
    assert box > 2.0 * read
    assert read < 1.6 * area.sum()


# ---------------------------------------------------------------- executors
def test_bounded_map_keeps_order_and_few_tasks_in_flight():
    in_flight, peak = [0], [0]

    class Done:
        def __init__(self, v):
            self.v = v

    def submit(item):
        in_flight[0] += 1
        peak[0] = max(peak[0], in_flight[0])
        return Done(item * item)

    def result(fut):
        in_flight[0] -= 1
        return fut.v

    out = list(_bounded_map(submit, range(50), 4, result))
    assert out == [i * i for i in range(50)]
    assert peak[0] == 4


def test_auto_workers_serial_for_short_runs_all_cores_for_long(monkeypatch):
    monkeypatch.setattr("os.cpu_count", lambda: 8)
    assert resolve_workers(0, 2) == 1
    assert resolve_workers(0, 100) == 8
    assert resolve_workers(0, 6) == 6
    assert resolve_workers(3, 100) == 3
    assert resolve_workers(3, 2) == 2
    assert isinstance(make_executor(workers=0, n_tasks=2), SerialExecutor)


def test_missing_distributed_extra_is_a_clear_error(monkeypatch):
    monkeypatch.setitem(sys.modules, "distributed", None)  # import now fails
    with pytest.raises(ExecutionError, match=r"trajectory\[distributed\]"):
        DaskExecutor("tcp://127.0.0.1:8786")
