"""Nothing silent: vertical units read and converted, runs that assess nothing say why.

Each case builds its terrain model in a temp folder from the invented synthetic
levee (trajectory.scenario.synthetic, 300 m), runs the command line and checks the exit
code, the one-line message and that the inputs are unchanged (SHA-256).
Unit factors: international foot 0.3048 m exactly, US survey foot 1200/3937 m
(NIST SP 811; EPSG units 9002 and 9003, as pyproj reports them).
"""

from __future__ import annotations

import dataclasses
import hashlib
import logging
from pathlib import Path

import numpy as np
import pyogrio
import pytest
import rasterio
from click.testing import CliRunner
from pyproj import CRS
from rasterio.enums import Resampling

from trajectory.frontends.cli import EXIT_INCOMPLETE, EXIT_INPUT, EXIT_OK, main
from trajectory.scenario.synthetic import LeveeSpec, make_centreline, write_scenario

FOOT = 0.3048
US_FOOT = 1200.0 / 3937.0


@pytest.fixture(scope="module")
def scenario(tmp_path_factory):
    out = tmp_path_factory.mktemp("diagnosis")
    paths = write_scenario(out, spec=LeveeSpec().scaled(300.0),
                           centreline=make_centreline(300.0), epochs=False)
    with rasterio.open(paths["dem"]) as ds:
        paths["array"], paths["profile"] = ds.read(1), ds.profile
    res = CliRunner().invoke(main, _args(paths, paths["dem"], out / "ref.gpkg"))
    assert res.exit_code == EXIT_OK, res.output
    paths["crest"] = pyogrio.read_dataframe(out / "ref.gpkg", layer="stations")["crest_level"]
    return paths


def _args(paths, dem, out, *extra):
    return ["assess", "--centreline", str(paths["centreline"]), "--dem", str(dem),
            "--conditions", str(paths["sections"]), "--out", str(out), "--quiet", *extra]


def _dem(scenario, path: Path, values=None, *, unit=None, crs=None, **profile) -> Path:
    prof = dict(scenario["profile"], **profile)
    if crs is not None:
        prof["crs"] = rasterio.crs.CRS.from_wkt(CRS.from_user_input(crs).to_wkt())
    a = scenario["array"] if values is None else values
    with rasterio.open(path, "w", **prof) as ds:
        ds.write(a.astype(prof["dtype"]), 1)
        if unit:
            ds.set_band_unit(1, unit)
    return path


def _scaled(scenario, metres_per_unit: float) -> np.ndarray:
    a = scenario["array"]
    return np.where(a == scenario["profile"]["nodata"], a, a / metres_per_unit)


def _sums(*paths: Path) -> dict[str, str]:
    return {str(p): hashlib.sha256(Path(p).read_bytes()).hexdigest() for p in paths}


def _inputs(scenario, dem):
    return [scenario["centreline"], scenario["sections"], dem]


def _one_line(res, head: str) -> str:
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith(head), res.output
    return lines[0]


# ------------------------------------------------------- 2. vertical units
@pytest.mark.parametrize("name, factor, unit, crs, said", [
    ("band_feet", FOOT, "ft", None, "band unit 'ft'"),
    ("band_us_feet", US_FOOT, "US survey foot", None, "band unit 'US survey foot'"),
    ("band_centimetres", 0.01, "cm", None, "band unit 'cm'"),
    ("crs_feet", FOOT, None, "EPSG:32632+8228", "NAVD88 height (ft), foot"),
    ("crs_us_feet", US_FOOT, None, "EPSG:32632+6360", "US survey foot"),
])
def test_declared_vertical_units_are_converted_to_metres(scenario, tmp_path, caplog, name,
                                                          factor, unit, crs, said):
    dem = _dem(scenario, tmp_path / f"{name}.tif", _scaled(scenario, factor), unit=unit,
               crs=crs)
    before = _sums(*_inputs(scenario, dem))
    with caplog.at_level(logging.WARNING, logger="trajectory"):
        res = CliRunner().invoke(main, _args(scenario, dem, tmp_path / "r.gpkg"))
    assert res.exit_code == EXIT_OK, res.output
    assert any(said in r.message and "converted to metres" in r.message for r in caplog.records)
    crest = pyogrio.read_dataframe(tmp_path / "r.gpkg", layer="stations")["crest_level"]
    # float32 storage of the scaled values: agreement to a millimetre
    np.testing.assert_allclose(crest, scenario["crest"], atol=1e-3)
    assert _sums(*_inputs(scenario, dem)) == before


@pytest.mark.parametrize("unit, crs, text", [
    ("furlong", None, "band unit 'furlong' is not one trajectory knows"),
    ("m", "EPSG:32632+8228", "band unit 'm' and its vertical CRS (NAVD88 height (ft), foot) "
                             "disagree"),
])
def test_unknown_or_contradicting_units_are_refused_with_the_fix(scenario, tmp_path, unit,
                                                                   crs, text):
    dem = _dem(scenario, tmp_path / "d.tif", unit=unit, crs=crs)
    before = _sums(*_inputs(scenario, dem))
    res = CliRunner().invoke(main, _args(scenario, dem, tmp_path / "r.gpkg"))
    assert res.exit_code == EXIT_INPUT
    line = _one_line(res, "Error: ")
    assert text in line and "--dem-z-scale" in line
    assert _sums(*_inputs(scenario, dem)) == before and not (tmp_path / "r.gpkg").exists()


def test_undeclared_centimetres_warn_that_the_crest_is_implausible(scenario, tmp_path, caplog):
    dem = _dem(scenario, tmp_path / "cm.tif", _scaled(scenario, 0.01))
    with caplog.at_level(logging.WARNING, logger="trajectory"):
        res = CliRunner().invoke(main, _args(scenario, dem, tmp_path / "r.gpkg"))
    assert res.exit_code == EXIT_OK, res.output
    said = [r.message for r in caplog.records if "implausible for a levee" in r.message]
    assert len(said) == 1 and "--dem-z-scale 0.01" in said[0]
    # and nothing else is judged on such levels (no side warning besides)
    assert not any("sides may be swapped" in r.message for r in caplog.records)


# --------------------------------------------- 3. runs that assess nothing
def _coarse(scenario, path: Path, cell: float) -> Path:
    t = scenario["profile"]["transform"]
    k = int(round(cell / t.a))
    with rasterio.open(scenario["dem"]) as ds:
        a = ds.read(1, out_shape=(ds.height // k, ds.width // k), resampling=Resampling.average)
    prof = dict(scenario["profile"], width=a.shape[1], height=a.shape[0], tiled=False,
                transform=rasterio.Affine(t.a * k, 0, t.c, 0, t.e * k, t.f))
    for key in ("blockxsize", "blockysize"):
        prof.pop(key, None)
    with rasterio.open(path, "w", **prof) as ds:
        ds.write(a, 1)
    return path


@pytest.mark.parametrize("case, text", [
    ("all_nodata", "the DEM holds no values along the line (every sample is nodata)"),
    ("flat", "the ground is flat across the sections"),
    ("cells_25m", "the DEM's cells (25 m) are coarser than a levee crest"),
])
def test_a_run_assessing_nothing_says_why_once_and_is_incomplete(scenario, tmp_path, case,
                                                                   text):
    extra: list[str] = []
    nodata = scenario["profile"]["nodata"]
    if case == "all_nodata":
        dem = _dem(scenario, tmp_path / "d.tif", np.full_like(scenario["array"], nodata))
    elif case == "flat":
        dem = _dem(scenario, tmp_path / "d.tif", np.full_like(scenario["array"], 2.0))
    else:
        dem = _coarse(scenario, tmp_path / "d.tif", 25.0)
    before = _sums(*_inputs(scenario, dem))
    res = CliRunner().invoke(main, _args(scenario, dem, tmp_path / "r.gpkg", *extra))
    assert res.exit_code == EXIT_INCOMPLETE, res.output
    line = _one_line(res, "Incomplete: ")
    assert str(dem) in line and text in line
    st = pyogrio.read_dataframe(tmp_path / "r.gpkg", layer="stations")
    assert (st["status"] == "no_data").all()
    assert _sums(*_inputs(scenario, dem)) == before


def test_sections_reaching_beyond_the_dem_still_read_the_levee(scenario, tmp_path):
    # missing data counts in the levee's body only (toe to toe), so a half-width beyond
    # the DEM does not make the stations unreadable: the crest is read as with 60 m
    before = _sums(*_inputs(scenario, scenario["dem"]))
    res = CliRunner().invoke(main, _args(scenario, scenario["dem"], tmp_path / "r.gpkg",
                                         "--half-width", "2000"))
    assert res.exit_code == EXIT_OK, res.output
    assert _sums(*_inputs(scenario, scenario["dem"])) == before
    wide = pyogrio.read_dataframe(tmp_path / "r.gpkg", layer="stations")
    res = CliRunner().invoke(main, _args(scenario, scenario["dem"], tmp_path / "n.gpkg"))
    assert res.exit_code == EXIT_OK, res.output
    normal = pyogrio.read_dataframe(tmp_path / "n.gpkg", layer="stations")
    assert (wide["status"] != "no_data").all()
    # the same crest within the noise-dependent crest tolerance (the noise estimate is the
    # row's, and the row is longer)
    assert np.allclose(wide["crest_level"], normal["crest_level"], atol=0.05)


def test_a_line_shorter_than_the_spacing_gets_a_word(scenario, tmp_path, caplog):
    before = _sums(*_inputs(scenario, scenario["dem"]))
    with caplog.at_level(logging.WARNING, logger="trajectory"):
        res = CliRunner().invoke(main, _args(scenario, scenario["dem"], tmp_path / "r.gpkg",
                                             "--spacing", "400"))
    assert res.exit_code == EXIT_OK, res.output
    said = [r.message for r in caplog.records if "shorter than the spacing" in r.message]
    assert len(said) == 1 and "(400 m)" in said[0] and "lower --spacing" in said[0]
    # the sections after the one station lie on the line: they hold no station, they are
    # not "outside the line's chainage" (the 300 m line's chainage is 0-300 m)
    assert not any("outside the line's chainage" in r.message for r in caplog.records)
    idle = [r.message for r in caplog.records if "holds no station" in r.message]
    assert idle and all("(stations at 0-0 m)" in m and "lower --spacing" in m for m in idle)
    assert _sums(*_inputs(scenario, scenario["dem"])) == before


# ------------------------------------------------------------ 8. water side
@pytest.fixture(scope="module")
def high_polder(tmp_path_factory):
    """The levee with its land side 3.5 m above the foreshore (the water side is the low one)."""
    out = tmp_path_factory.mktemp("high_polder")
    spec = dataclasses.replace(LeveeSpec().scaled(300.0), hinterland_level=4.0,
                               foreshore_level=0.5)
    return write_scenario(out, spec=spec, centreline=make_centreline(300.0), epochs=False)


@pytest.mark.parametrize("side, warned", [("right", True), ("left", False)])
def test_water_side_on_the_higher_ground_is_suspect(high_polder, tmp_path, caplog, side,
                                                    warned):
    # synthetic truth: the water (outer) side is left of the digitised line
    with caplog.at_level(logging.WARNING, logger="trajectory"):
        res = CliRunner().invoke(main, _args(high_polder, high_polder["dem"],
                                             tmp_path / "r.gpkg", "--water-side", side))
    assert res.exit_code == EXIT_OK, res.output
    said = [r.message for r in caplog.records if "sides may be swapped" in r.message]
    assert bool(said) == warned, [r.message for r in caplog.records]
    if warned:
        assert "side given as water (right)" in said[0] and "--water-side" in said[0]


def test_the_demo_river_foreland_above_its_polder_is_not_suspect(scenario, tmp_path, caplog):
    # the demo's foreshore (1.5 m) lies above its polder (1.0 m): common, not a swap
    with caplog.at_level(logging.WARNING, logger="trajectory"):
        res = CliRunner().invoke(main, _args(scenario, scenario["dem"], tmp_path / "r.gpkg"))
    assert res.exit_code == EXIT_OK
    assert not any("sides may be swapped" in r.message for r in caplog.records)

