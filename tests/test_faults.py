"""Faults: a corrupt tile, an interrupted run, stale temporary files, determinism."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pyogrio
import pytest
import rasterio
import shapely
from click.testing import CliRunner

from trajectory.assess import RunInputs, assess, run
from trajectory.errors import InputError
from trajectory.frontends.cli import EXIT_INCOMPLETE, EXIT_INTERRUPTED, main
from trajectory.outputs.atomic import remove_stale_partials
from trajectory.params import Settings
from trajectory.pipeline.faults import FLAG_READ_FAILED, ChunkFailure, Guarded
from trajectory.scenario.synthetic import LeveeSpec, make_centreline, write_scenario


@pytest.fixture(scope="module")
def tiled(tmp_path_factory):
    """A 1200 m scenario with its DEM as a VRT mosaic of 200 m tiles."""
    out = tmp_path_factory.mktemp("tiled")
    return write_scenario(out, spec=LeveeSpec().scaled(1200.0),
                          centreline=make_centreline(1200.0), epochs=False, tile_size_m=200.0)


def _corrupt(tile: Path) -> None:
    """Cut the GeoTIFF just after its first data block starts: every block is unreadable."""
    with rasterio.open(tile) as ds:
        first = min(int(ds.get_tag_item(f"BLOCK_OFFSET_{i}_{j}", "TIFF", bidx=1) or 1e12)
                    for i in range(2) for j in range(2))
    with open(tile, "r+b") as fh:
        fh.truncate(first + 16)


def _copy_scenario(src: dict, dst: Path) -> dict:
    import shutil

    shutil.copytree(Path(src["dem"]).parent.parent, dst)
    root = Path(src["dem"]).parent.parent
    return {k: dst / Path(v).relative_to(root) for k, v in src.items()}


def test_corrupt_tile_gives_no_data_stations_and_an_incomplete_run(tiled, tmp_path):
    # the intact run reads the original; the copy (never opened before: no cached blocks)
    # is damaged
    paths = _copy_scenario(tiled, tmp_path / "scenario")
    inputs = RunInputs(str(tiled["centreline"]), str(tiled["dem"]), str(tiled["sections"]))
    intact = run(inputs, Settings(chunk_size=4)).stations
    # the tile under the station at chainage 600 m
    x, y = intact.loc[intact["chainage"] == 600.0, ["x", "y"]].to_numpy()[0]
    tiles = sorted(Path(paths["dem"]).parent.glob("*.tif"))
    bounds = {}
    for t in tiles:
        with rasterio.open(t) as ds:
            bounds[t] = ds.bounds
    tile = next(t for t, b in bounds.items() if b.left <= x < b.right and b.bottom < y <= b.top)
    _corrupt(tile)
    with rasterio.open(tile) as ds, pytest.raises(rasterio.errors.RasterioIOError):
        ds.read(1)  # the reference: GDAL itself cannot read the tile

    out = tmp_path / "r.gpkg"
    res = CliRunner().invoke(main, ["assess", "--centreline", str(paths["centreline"]),
                                    "--dem", str(paths["dem"]), "--conditions",
                                    str(paths["sections"]), "--out", str(out), "--quiet",
                                    "--chunk-size", "4"])
    assert res.exit_code == EXIT_INCOMPLETE, res.output
    assert "Incomplete" in res.output and tile.name in res.output
    st = pyogrio.read_dataframe(out, layer="stations")
    failed = st["flags"].fillna("").str.contains(FLAG_READ_FAILED).to_numpy()
    assert failed.any() and not failed.all()
    assert (st["status"][failed] == "no_data").all()
    assert st["crest_level"][failed].isna().all()
    # every station whose section crosses the corrupt tile is among the failed ones
    hw = 50.0
    seg = shapely.linestrings(np.stack([
        np.stack([intact["x"] - hw * intact["nx"], intact["y"] - hw * intact["ny"]], 1),
        np.stack([intact["x"] + hw * intact["nx"], intact["y"] + hw * intact["ny"]], 1)], 1))
    crosses = shapely.intersects(seg, shapely.box(*bounds[tile]))
    assert crosses.any() and failed[crosses].all()
    # and only stations whose section window (its bounding box) reaches the tile failed:
    # the failing chunk is retried station by station
    reach = shapely.intersects(shapely.buffer(shapely.envelope(seg), 1.0, join_style="mitre"),
                               shapely.box(*bounds[tile]))
    assert not failed[~reach].any()
    # stations of readable chunks are exactly as in the intact run
    keep = ~failed
    assert np.array_equal(st["crest_level"][keep].to_numpy(),
                          intact["crest_level"][keep].to_numpy(), equal_nan=True)
    # the message names the chainage range of the failed stations
    c = st["chainage"][failed]
    assert f"chainage {c.min():.1f}-" in res.output
    assert (tmp_path / "r.csv").read_text().splitlines()[1].startswith("# INCOMPLETE")
    meta = pyogrio.read_dataframe(out, layer="run_metadata")
    kv = dict(zip(meta["key"], meta["value"], strict=True))
    assert tile.name in kv["incomplete"]


def test_all_chunks_failing_is_an_error():
    from trajectory.geometry.chainage import Stations

    class Boom:
        stations = Stations(*[np.array([0.0, 25.0])] * 6)

    def fail(chunk):
        raise rasterio.errors.RasterioIOError("tile gone")

    got = Guarded(fail)(Boom())
    assert isinstance(got, ChunkFailure) and got.describe().startswith("chainage 0.0-25.0 m")
    from trajectory.pipeline.faults import fill_failures

    assert Guarded(fail, lambda c, i: c)(Boom()) == got  # every station fails alike
    with pytest.raises(InputError, match="could not be read anywhere along the line.*tile gone"):
        fill_failures([got], source="dem.vrt")


def test_a_bug_in_a_chunk_is_not_hidden_as_no_data():
    def bug(chunk):
        raise KeyError("planted")

    with pytest.raises(KeyError):
        Guarded(bug)(object())


# ------------------------------------------------------------ interruption
def _partials(folder: Path, stem: str = "r") -> list[Path]:
    return sorted(folder.glob(f".{stem}.*.partial*"))


def _start(demo, out: Path) -> subprocess.Popen:
    cmd = [sys.executable, "-m", "trajectory.frontends.cli", "assess", "--centreline",
           str(demo["centreline"]), "--dem", str(demo["dem"]), "--conditions",
           str(demo["sections"]), "--out", str(out), "--overwrite", "--quiet",
           "--spacing", "5"]
    return subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE)


def _kill_when_writing(proc: subprocess.Popen, folder: Path, sig: int) -> bool:
    """Send ``sig`` as soon as a temporary output appears; True if it was seen."""
    t0 = time.monotonic()
    while time.monotonic() - t0 < 120:
        if _partials(folder):
            proc.send_signal(sig)
            return True
        if proc.poll() is not None:
            return False
        time.sleep(0.002)
    proc.send_signal(sig)
    return False


@pytest.mark.slow
@pytest.mark.parametrize("sig", [signal.SIGKILL, signal.SIGTERM])
def test_killed_run_leaves_previous_result_intact(demo, tmp_path, sig):
    out = tmp_path / "r.gpkg"
    out.write_bytes(b"previous result")
    (tmp_path / "r.csv").write_bytes(b"previous table")
    proc = _start(demo, out)
    seen = _kill_when_writing(proc, tmp_path, sig)
    _, err = proc.communicate(timeout=60)
    assert seen, err.decode()
    assert proc.returncode == (-signal.SIGKILL if sig == signal.SIGKILL else EXIT_INTERRUPTED)
    assert out.read_bytes() == b"previous result"
    assert (tmp_path / "r.csv").read_bytes() == b"previous table"
    if sig == signal.SIGTERM:
        assert "interrupted" in err.decode() and not _partials(tmp_path)
    # the next run replaces the outputs and clears what a killed run left
    res = CliRunner().invoke(main, ["assess", "--centreline", str(demo["centreline"]),
                                    "--dem", str(demo["dem"]), "--conditions",
                                    str(demo["sections"]), "--out", str(out), "--overwrite",
                                    "--quiet"])
    assert res.exit_code == 0, res.output
    assert not _partials(tmp_path)
    assert len(pyogrio.read_dataframe(out, layer="stations")) == 121  # 3000 m / 25 m + 1


def test_stale_partials_of_dead_runs_are_removed_live_ones_kept(tmp_path):
    dead = subprocess.Popen([sys.executable, "-c", "pass"])
    dead.wait()
    stale = tmp_path / f".r.{dead.pid}.partial.gpkg"
    stale_journal = tmp_path / f".r.{dead.pid}.partial.gpkg-journal"
    live = tmp_path / f".r.{os.getppid()}.partial.gpkg"
    other = tmp_path / f".q.{dead.pid}.partial.gpkg"
    for p in (stale, stale_journal, live, other):
        p.write_bytes(b"x")
    removed = remove_stale_partials(tmp_path / "r.gpkg")
    assert sorted(removed) == sorted([stale, stale_journal])
    assert live.exists() and other.exists()


# ------------------------------------------------------------- determinism
def test_same_inputs_same_outputs(tiled, tmp_path):
    inputs = RunInputs(str(tiled["centreline"]), str(tiled["dem"]), str(tiled["sections"]))
    a = assess(inputs, tmp_path / "a.gpkg", Settings(chunk_size=7))
    b = assess(inputs, tmp_path / "b.gpkg", Settings(chunk_size=7))
    c = run(inputs, Settings(chunk_size=7, workers=2))
    pd.testing.assert_frame_equal(a.stations, b.stations)
    pd.testing.assert_frame_equal(a.stations, c.stations)
    assert np.array_equal(a.profiles, c.profiles, equal_nan=True)
    # the table files agree byte for byte; the GeoPackage layers field for field
    assert (tmp_path / "a.csv").read_bytes() == (tmp_path / "b.csv").read_bytes()
    for layer in ("stations", "cross_sections", "crest_line", "stretches"):
        pd.testing.assert_frame_equal(pyogrio.read_dataframe(tmp_path / "a.gpkg", layer=layer),
                                      pyogrio.read_dataframe(tmp_path / "b.gpkg", layer=layer))


# ------------------------------------------------------------- outputs as one set
def test_staged_outputs_are_renamed_together_or_not_at_all(tmp_path):
    from trajectory.outputs.atomic import atomic_path, staged

    a, b = tmp_path / "r.gpkg", tmp_path / "r.csv"
    a.write_text("old gpkg")
    b.write_text("old csv")
    with pytest.raises(RuntimeError, match="disk full"):
        with staged([a, b], overwrite=True) as tmp:
            tmp[a].write_text("new gpkg")
            raise RuntimeError("disk full")   # the table was never written
    # neither file changed and no temporary is left
    assert (a.read_text(), b.read_text()) == ("old gpkg", "old csv")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r.csv", "r.gpkg"]
    with staged([a, b], overwrite=True) as tmp:
        tmp[a].write_text("new gpkg")
        # a writer that stages on its own writes a staged temporary in place
        with atomic_path(tmp[b], overwrite=True) as t:
            assert t == tmp[b]
            t.write_text("new csv")
        assert a.read_text() == "old gpkg"    # nothing renamed before the set is complete
    assert (a.read_text(), b.read_text()) == ("new gpkg", "new csv")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r.csv", "r.gpkg"]


def test_writers_side_by_side_run_in_another_process_and_raise_its_errors(monkeypatch):
    from trajectory.errors import InputError
    from trajectory.pipeline import execution
    from trajectory.pipeline.execution import side_by_side

    def fail() -> None:
        raise InputError("row 7 of sections.csv: hm0 is negative")

    # where another thread runs (earlier tests may leave one), forking is refused
    monkeypatch.setattr(execution, "fork_is_safe", lambda: False)
    assert side_by_side([os.getpid, os.getpid], parallel=True) == [os.getpid()] * 2
    monkeypatch.setattr(execution, "fork_is_safe", lambda: True)
    pids = side_by_side([os.getpid, os.getpid], parallel=True)
    assert pids[1] == os.getpid() and pids[0] != os.getpid()
    assert side_by_side([os.getpid, os.getpid], parallel=False) == [os.getpid()] * 2
    with pytest.raises(InputError, match="row 7 of sections.csv"):
        side_by_side([fail, os.getpid], parallel=True)
    with pytest.raises(InputError, match="row 7"):
        side_by_side([os.getpid, fail], parallel=True)
