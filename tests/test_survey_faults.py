"""A failing tile is contained: a mosaic's missing tile, earlier surveys like the latest.

The invented synthetic levee (trajectory.scenario.synthetic, 300 m) with its DEM as a
VRT mosaic of 100 m tiles; a tile is removed or cut short in a copy. GDAL
itself is the reference for "cannot be read" (opening the cut tile fails).
Each case checks the exit code, the one-line message naming the file, and
that the inputs are unchanged (SHA-256).
"""

from __future__ import annotations

import hashlib
import shutil
from pathlib import Path

import pyogrio
import pytest
import rasterio
from click.testing import CliRunner

from trajectory.frontends.cli import EXIT_INCOMPLETE, EXIT_INPUT, EXIT_OK, main
from trajectory.pipeline.faults import FLAG_READ_FAILED
from trajectory.scenario.synthetic import LeveeSpec, make_centreline, write_scenario


@pytest.fixture(scope="module")
def tiled(tmp_path_factory):
    out = tmp_path_factory.mktemp("tiles")
    return write_scenario(out, spec=LeveeSpec().scaled(300.0),
                          centreline=make_centreline(300.0), epochs=False, tile_size_m=100.0)


def _copy(tiled, dst: Path) -> Path:
    """A copy of the mosaic folder; returns the copied VRT."""
    src = Path(tiled["dem"]).parent
    shutil.copytree(src, dst)
    return dst / Path(tiled["dem"]).name


def _tile_under_the_middle(vrt: Path, tiled) -> Path:
    line = pyogrio.read_dataframe(tiled["centreline"]).geometry.iloc[0]
    mid = line.interpolate(0.5, normalized=True)
    for t in sorted(vrt.parent.glob("*.tif")):
        with rasterio.open(t) as ds:
            b = ds.bounds
        if b.left <= mid.x < b.right and b.bottom < mid.y <= b.top:
            return t
    raise AssertionError("no tile under the line's middle")


def _cut(tile: Path) -> None:
    with open(tile, "r+b") as fh:
        fh.truncate(200)  # the header's start only
    with pytest.raises(rasterio.errors.RasterioIOError):
        rasterio.open(tile).close()  # the reference: GDAL cannot read it


def _sums(folder: Path) -> dict[str, str]:
    return {str(p): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def _args(tiled, out, *dems, extra=()):
    d = [a for dem in dems for a in ("--dem", str(dem))]
    return ["assess", "--centreline", str(tiled["centreline"]), *d, "--conditions",
            str(tiled["sections"]), "--out", str(out), "--quiet", *extra]


def _one_line(res, head: str) -> str:
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith(head), res.output
    return lines[0]


def test_a_missing_tile_of_the_latest_mosaic_makes_the_run_incomplete(tiled, tmp_path):
    vrt = _copy(tiled, tmp_path / "dem")
    tile = _tile_under_the_middle(vrt, tiled)
    tile.unlink()
    before = _sums(tmp_path / "dem")
    res = CliRunner().invoke(main, _args(tiled, tmp_path / "r.gpkg", vrt))
    assert res.exit_code == EXIT_INCOMPLETE, res.output
    line = _one_line(res, "Incomplete: ")
    assert tile.name in line and "missing" in line and "Repair the file" in line
    st = pyogrio.read_dataframe(tmp_path / "r.gpkg", layer="stations")
    failed = st["flags"].fillna("").str.contains(FLAG_READ_FAILED).to_numpy()
    assert failed.any() and not failed.all()
    assert (st.loc[failed, "status"] == "no_data").all()
    assert _sums(tmp_path / "dem") == before


@pytest.mark.parametrize("damage", ["cut", "missing"])
def test_a_failing_tile_of_an_earlier_survey_is_contained(tiled, tmp_path, damage):
    old = _copy(tiled, tmp_path / "old")
    tile = _tile_under_the_middle(old, tiled)
    if damage == "cut":
        _cut(tile)
    else:
        tile.unlink()
    before = _sums(tmp_path / "old")
    res = CliRunner().invoke(main, _args(tiled, tmp_path / "r.gpkg", f"2019={old}",
                                         f"2024={tiled['dem']}"))
    assert res.exit_code == EXIT_INCOMPLETE, res.output
    line = _one_line(res, "Incomplete: ")
    assert "survey 2019" in line and tile.name in line
    st = pyogrio.read_dataframe(tmp_path / "r.gpkg", layer="stations")
    assert (st["status"] != "no_data").all()  # the latest survey gives every status
    assert _sums(tmp_path / "old") == before


def test_an_earlier_survey_unreadable_everywhere_is_an_input_error(tiled, tmp_path):
    old = _copy(tiled, tmp_path / "old")
    for t in old.parent.glob("*.tif"):
        t.unlink()
    before = _sums(tmp_path / "old")
    res = CliRunner().invoke(main, _args(tiled, tmp_path / "r.gpkg", f"2019={old}",
                                         f"2024={tiled['dem']}"))
    assert res.exit_code == EXIT_INPUT, res.output
    line = _one_line(res, "Error: ")
    assert str(old) in line and "check the file and its tiles" in line
    assert _sums(tmp_path / "old") == before and not (tmp_path / "r.gpkg").exists()


def test_a_truncated_earlier_result_names_the_file(tiled, tmp_path):
    first = tmp_path / "first.gpkg"
    res = CliRunner().invoke(main, _args(tiled, first, tiled["dem"]))
    assert res.exit_code == EXIT_OK, res.output
    with open(first, "r+b") as fh:
        fh.truncate(first.stat().st_size // 3)
    before = _sums(tmp_path)
    res = CliRunner().invoke(main, _args(tiled, tmp_path / "r.gpkg", f"2024={tiled['dem']}",
                                         extra=["--compare", f"2019={first}"]))
    assert res.exit_code == EXIT_INPUT, res.output
    line = _one_line(res, "Error: ")
    assert str(first) in line and "give a complete result GeoPackage" in line
    assert _sums(tmp_path) == before


def _tiff(path: Path, **options) -> Path:
    import numpy as np
    from rasterio.transform import from_origin

    with rasterio.open(path, "w", driver="GTiff", width=64, height=48, count=1,
                       dtype="float32", transform=from_origin(0, 48, 1, 1), **options) as ds:
        ds.write(np.arange(64 * 48, dtype="float32").reshape(1, 48, 64))
    return path


def _gdal_judges(p: Path) -> str:
    """GDAL (through rasterio) as the reference: ``readable`` (opens georeferenced and reads
    whole), ``unopenable``, or ``damaged`` (opens, but loses its georeferencing or fails
    on reading)."""
    import warnings

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error", rasterio.errors.NotGeoreferencedWarning)
            ds = rasterio.open(p)
    except rasterio.errors.NotGeoreferencedWarning:
        return "damaged"
    except rasterio.errors.RasterioError:
        return "unopenable"
    try:
        with ds:
            ds.read(1)
    except rasterio.errors.RasterioError:
        return "damaged"
    return "readable"


def _agrees(judged: bool, gdal: str, *where) -> None:
    """A readable tile must pass, one GDAL cannot open must not; a damaged one may go either
    way (it fails on reading, which the run flags too)."""
    if gdal == "readable":
        assert judged, where
    elif gdal == "unopenable":
        assert not judged, where


@pytest.mark.parametrize("case", ["classic", "bigtiff", "big_endian", "tiled_deflate",
                                  "empty", "text", "header_only", "ifd_beyond_end",
                                  "png_named_tif", "cut_200"])
def test_the_tile_header_check_agrees_with_gdal_opening_the_tile(tmp_path, case):
    # the mosaic check judges a GeoTIFF tile by its header (not by opening it, 0.7 ms per
    # tile); GDAL through rasterio is the reference for whether the tile opens
    from trajectory.terrain.demread import _opens

    p = tmp_path / "t.tif"
    if case == "classic":
        _tiff(p)
    elif case == "bigtiff":
        _tiff(p, BIGTIFF="YES")
    elif case == "big_endian":
        _tiff(p, ENDIANNESS="BIG")
    elif case == "tiled_deflate":
        _tiff(p, tiled=True, blockxsize=16, blockysize=16, compress="deflate")
    elif case == "empty":
        p.write_bytes(b"")
    elif case == "text":
        p.write_text("not a raster\n")
    elif case == "header_only":
        p.write_bytes(_tiff(tmp_path / "whole.tif").read_bytes()[:8])
    elif case == "cut_200":  # as _cut does to a mosaic's tile
        p.write_bytes(_tiff(tmp_path / "whole.tif").read_bytes()[:200])
    elif case == "ifd_beyond_end":
        data = bytearray(_tiff(tmp_path / "whole.tif").read_bytes())
        data[4:8] = (len(data) + 100).to_bytes(4, "little")
        p.write_bytes(bytes(data))
    else:
        _tiff(tmp_path / "src.tif")
        with rasterio.open(tmp_path / "src.tif") as src:
            prof = src.profile | {"driver": "PNG", "dtype": "uint16"}
            prof.pop("tiled", None), prof.pop("interleave", None)
            with rasterio.open(p, "w", **prof) as dst:
                dst.write(src.read().astype("uint16"))
    gdal = _gdal_judges(p)
    assert gdal == ("readable" if case in {"classic", "bigtiff", "big_endian", "tiled_deflate",
                                           "png_named_tif"}
                    else "damaged" if case == "cut_200" else "unopenable")
    _agrees(_opens(p), gdal)


@pytest.mark.parametrize("options", [{}, {"BIGTIFF": "YES"}, {"ENDIANNESS": "BIG"},
                                     {"tiled": True, "blockxsize": 16, "blockysize": 16}])
def test_a_tile_cut_anywhere_in_its_header_is_judged_as_gdal_judges_it(tmp_path, options):
    # every length from nothing to past the header's out-of-line values; GDAL through
    # rasterio is the reference for opening
    from trajectory.terrain.demread import _opens

    whole = _tiff(tmp_path / "whole.tif", **options).read_bytes()
    p = tmp_path / "t.tif"
    for cut in [*range(0, 64, 4), *range(64, 1200, 23)]:
        p.write_bytes(whole[:cut])
        _agrees(_opens(p), _gdal_judges(p), cut)
    p.write_bytes(whole)
    assert _opens(p) and _gdal_judges(p) == "readable"
