"""Bad input: each case stops with a message naming the thing to fix (or runs and says so).

The scenario is the invented synthetic levee (trajectory.scenario.synthetic), 600 m long;
wrong inputs are built from it in code, so each test knows the truth it checks.
"""

from __future__ import annotations

import logging
import time
import warnings

import geopandas as gpd
import numpy as np
import pyogrio
import pytest
import rasterio
import shapely
from click.testing import CliRunner
from rasterio.crs import CRS as RioCRS
from shapely.geometry import LineString, MultiLineString, Point

from trajectory.assess import RunInputs, run
from trajectory.errors import (
    ConditionsError,
    InputError,
    InputFileError,
    ParameterError,
    TrajectoryWarning,
)
from trajectory.frontends.cli import EXIT_INPUT, EXIT_INTERNAL, EXIT_INTERRUPTED, main
from trajectory.inputs.sources import read_centreline, read_conditions
from trajectory.params import Settings, load_run_file
from trajectory.scenario.synthetic import LeveeSpec, make_centreline, write_scenario

CRS = "EPSG:32632"


@pytest.fixture(scope="module")
def small(tmp_path_factory):
    out = tmp_path_factory.mktemp("small")
    paths = write_scenario(out, spec=LeveeSpec().scaled(600.0),
                           centreline=make_centreline(600.0), epochs=False)
    with rasterio.open(paths["dem"]) as ds:
        paths["array"] = ds.read(1)
        paths["profile"] = ds.profile
    paths["line"] = pyogrio.read_dataframe(paths["centreline"]).geometry.iloc[0]
    return paths


def _inputs(small, **change):
    d = {"centreline": str(small["centreline"]), "dem": str(small["dem"]),
         "conditions": str(small["sections"])}
    d.update({k: str(v) for k, v in change.items()})
    return RunInputs(d["centreline"], d["dem"], d["conditions"], change.get("layer"))


def _write_line(path, geoms, crs=CRS, layer="centreline"):
    gdf = gpd.GeoDataFrame({"k": range(len(geoms))}, geometry=list(geoms), crs=crs)
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", "'crs' was not provided")  # wanted in one test
        gdf.to_file(path, layer=layer, driver="GPKG")
    return path


def _write_dem(path, small, array=None, **profile):
    prof = dict(small["profile"])
    prof.update(profile)
    a = small["array"] if array is None else array
    with rasterio.open(path, "w", **prof) as ds:
        ds.write(a.astype(prof["dtype"]), 1)
    return path


# ------------------------------------------------------------------ files
def test_missing_centreline_names_file_and_option(small, tmp_path):
    with pytest.raises(InputFileError,
                       match=r"nowhere\.gpkg: centreline file not found.*--centreline"):
        run(_inputs(small, centreline=tmp_path / "nowhere.gpkg"))


def test_empty_files_are_named_as_empty(small, tmp_path):
    empty = tmp_path / "empty.gpkg"
    empty.write_bytes(b"")
    with pytest.raises(InputFileError, match=r"empty\.gpkg: the centreline file is empty"):
        run(_inputs(small, centreline=empty))
    dem = tmp_path / "empty.tif"
    dem.write_bytes(b"")
    with pytest.raises(InputFileError, match=r"empty\.tif: the DEM file is empty"):
        run(_inputs(small, dem=dem))
    csv = tmp_path / "empty.csv"
    csv.write_text("")
    with pytest.raises(InputFileError, match=r"empty\.csv: the conditions file is empty"):
        run(_inputs(small, conditions=csv))


def test_garbage_files_are_named_as_unreadable(small, tmp_path):
    junk = tmp_path / "junk.gpkg"
    junk.write_bytes(b"\x00\x17not a file format\xff" * 50)
    with pytest.raises(InputFileError, match=r"junk\.gpkg: not a vector file GDAL can read"):
        run(_inputs(small, centreline=junk))
    with pytest.raises(InputFileError, match=r"junk\.gpkg: not a raster GDAL can read"):
        run(_inputs(small, dem=junk))
    # a GeoPackage given as the conditions table
    with pytest.raises(InputError, match=r"levee\.gpkg"):
        read_conditions(small["centreline"])


def test_folder_given_as_file(small, tmp_path):
    with pytest.raises(InputFileError, match="is a folder, not a DEM file"):
        run(_inputs(small, dem=tmp_path))


def test_raster_as_centreline_and_vector_as_dem_suggest_the_swap(small):
    with pytest.raises(InputFileError, match=r"is a raster, not a line layer.*swap"):
        run(_inputs(small, centreline=small["dem"]))
    with pytest.raises(InputFileError, match=r"is a vector file, not a raster.*swap"):
        run(_inputs(small, dem=small["centreline"]))


def test_no_line_layer(small, tmp_path):
    p = _write_line(tmp_path / "points.gpkg", [Point(0, 0), Point(1, 1)], layer="posts")
    with pytest.raises(InputError, match="no line layer found"):
        run(_inputs(small, centreline=p))


def test_several_line_layers_need_layer_option(small, tmp_path):
    p = _write_line(tmp_path / "two.gpkg", [small["line"]], layer="levee_a")
    _write_line(p, [small["line"]], layer="levee_b")
    with pytest.raises(InputError, match=r"several line layers \(levee_a, levee_b\).*--layer"):
        run(_inputs(small, centreline=p))
    res = run(_inputs(small, centreline=p, layer="levee_b"))
    assert len(res.stations) == 25  # 600 m / 25 m + 1


def test_centreline_without_crs(small, tmp_path):
    p = _write_line(tmp_path / "nocrs.gpkg", [small["line"]], crs=None)
    with pytest.raises(InputError, match="nocrs.gpkg: the centreline has no coordinate"):
        run(_inputs(small, centreline=p))


def test_dem_without_crs(small, tmp_path):
    p = _write_dem(tmp_path / "nocrs.tif", small, crs=None)
    with pytest.raises(InputError, match="nocrs.tif: the DEM has no coordinate reference"):
        run(_inputs(small, dem=p))


def test_geographic_dem(small, tmp_path):
    p = _write_dem(tmp_path / "deg.tif", small, crs=RioCRS.from_epsg(4326),
                   transform=rasterio.transform.from_origin(9.0, 52.0, 1e-5, 1e-5))
    with pytest.raises(InputError, match="geographic CRS.*reproject"):
        run(_inputs(small, dem=p))


def test_no_overlap(small, tmp_path):
    far = shapely.affinity.translate(small["line"], 50_000, 0)
    p = _write_line(tmp_path / "far.gpkg", [far])
    with pytest.raises(InputError, match="does not overlap the DEM"):
        run(_inputs(small, centreline=p))


def test_partial_overlap_runs_and_counts_stations_off_the_dem(small, tmp_path, caplog):
    # extend the line 200 m straight on beyond its last vertex, off the DEM
    c = np.asarray(small["line"].coords)
    d = (c[-1] - c[-2]) / np.hypot(*(c[-1] - c[-2]))
    longer = LineString(np.vstack([c, c[-1] + 200.0 * d]))
    p = _write_line(tmp_path / "longer.gpkg", [longer])
    csv = tmp_path / "longer.csv"
    text = small["sections"].read_text().replace(",460,600,", ",460,800,")
    csv.write_text(text)
    with caplog.at_level(logging.WARNING):
        res = run(_inputs(small, centreline=p, conditions=csv))
    t = res.stations
    with rasterio.open(small["dem"]) as ds:
        box = shapely.box(*ds.bounds)  # the reference: shapely's containment test
    off = ~shapely.contains_xy(box, t["x"].to_numpy(), t["y"].to_numpy())
    assert off.sum() > 0
    assert (t["status"][off] == "no_data").all()
    assert t["flags"][off].str.contains("off_dem").all()
    assert np.isnan(t["crest_level"][off]).all()
    assert (t["status"][t["chainage"] < 500] != "no_data").all()
    assert f"{off.sum()} of {len(t)} stations lie off the DEM" in caplog.text
    assert "off_dem" in res.metadata


# --------------------------------------------------------------- geometry
def test_zero_length_line(small, tmp_path):
    x, y = small["line"].coords[0]
    p = _write_line(tmp_path / "zero.gpkg", [LineString([(x, y), (x, y)])])
    with pytest.raises(InputError, match="zero length"):
        read_centreline(p)


def test_self_intersecting_line_names_the_crossing(small, tmp_path):
    x, y = small["line"].coords[0]
    bow = LineString([(x, y), (x + 100, y + 100), (x + 100, y), (x, y + 100)])
    p = _write_line(tmp_path / "bow.gpkg", [bow])
    # the crossing point, by shapely: segments 1 and 3 of the bow-tie meet at (x+50, y+50)
    cross = LineString([(x, y), (x + 100, y + 100)]).intersection(
        LineString([(x + 100, y), (x, y + 100)]))
    with pytest.raises(InputError, match=rf"crosses itself at \({cross.x:.1f}, {cross.y:.1f}\)"):
        read_centreline(p)


def test_branching_parts_name_the_node(small, tmp_path):
    x, y = small["line"].coords[0]
    parts = [LineString([(x, y), (x + 100, y)]), LineString([(x + 100, y), (x + 200, y)]),
             LineString([(x + 100, y), (x + 100, y + 80)])]
    p = _write_line(tmp_path / "fork.gpkg", parts)
    with pytest.raises(InputError, match=rf"branches at \({x + 100:.1f}, {y:.1f}\)"):
        read_centreline(p)


def test_side_branch_from_the_middle_of_a_part(small, tmp_path):
    x, y = small["line"].coords[0]
    parts = [LineString([(x, y), (x + 200, y)]), LineString([(x + 100, y), (x + 100, y + 80)])]
    p = _write_line(tmp_path / "tee.gpkg", parts)
    with pytest.raises(InputError, match=r"branches at .*middle of part 1"):
        read_centreline(p)


def test_multipart_line_with_a_gap(small, tmp_path):
    x, y = small["line"].coords[0]
    m = MultiLineString([[(x, y), (x + 100, y)], [(x + 105, y), (x + 200, y)]])
    p = _write_line(tmp_path / "gap.gpkg", [m])
    with pytest.raises(InputError,
                       match=r"(?s)gap tolerance.*5\.0 m between parts 1 and 2.*--gap-tolerance"):
        read_centreline(p)


# -------------------------------------------------------------------- DEM
@pytest.mark.parametrize("fill", [-9999.0, float(np.finfo(np.float32).min)])
def test_unset_nodata_with_fill_values_is_treated_as_nodata(small, tmp_path, fill):
    a = small["array"].copy()
    nod = small["profile"]["nodata"]
    a[a == nod] = fill
    # a block of fill on the crest of stations 300-325 m makes them unreadable
    assert (a == fill).any()
    declared = _write_dem(tmp_path / "declared.tif", small, array=a, nodata=fill)
    unset = _write_dem(tmp_path / "unset.tif", small, array=a, nodata=None)
    with rasterio.open(unset) as ds:
        assert ds.nodata is None
    ref = run(_inputs(small, dem=declared))  # GDAL's own nodata handling is the reference
    with pytest.warns(TrajectoryWarning, match=r"declares no nodata value but holds fill"):
        got = run(_inputs(small, dem=unset))
    cols = ["crest_level", "required_level", "status", "nodata_fraction"]
    assert got.stations[cols].equals(ref.stations[cols])
    assert np.nanmin(got.profiles) > -100


def test_integer_dem_in_centimetres_is_refused_then_scaled(small, tmp_path):
    a = small["array"]
    nod = small["profile"]["nodata"]
    cm = np.where(a == nod, -9999, np.round(a * 100.0)).astype(np.int32)
    p = _write_dem(tmp_path / "cm.tif", small, array=cm, dtype="int32", nodata=-9999)
    with pytest.raises(InputError, match=r"whole numbers \(int32.*--dem-z-scale 0\.01"):
        run(_inputs(small, dem=p))
    got = run(_inputs(small, dem=p), Settings(dem_z_scale=0.01))
    ref = run(_inputs(small))
    both = np.isfinite(ref.stations["crest_level"]) & np.isfinite(got.stations["crest_level"])
    assert both.sum() >= 20
    # centimetre rounding moves each cell by at most 0.005 m; the crest mean may gain or lose
    # an edge cell, so allow 0.02 m per station and demand a typical error below 0.005 m
    diff = np.abs(got.stations["crest_level"][both] - ref.stations["crest_level"][both])
    assert diff.max() < 0.02 and np.median(diff) < 0.005


def test_float_dem_in_millimetres_is_implausible(small, tmp_path):
    a = small["array"]
    nod = small["profile"]["nodata"]
    mm = np.where(a == nod, nod, a * 1000.0)
    p = _write_dem(tmp_path / "mm.tif", small, array=mm)
    with pytest.raises(InputError, match=r"implausible for terrain in metres.*--dem-z-scale"):
        run(_inputs(small, dem=p))


def test_huge_dem_with_tiny_overlap_reads_only_windows(small, tmp_path):
    # a 60 000 x 60 000 cell sparse GeoTIFF (3.6e9 cells) holding the scenario in one corner
    prof = dict(small["profile"])
    h, w = small["array"].shape
    t = prof["transform"]
    big = tmp_path / "huge.tif"
    prof.update(width=60_000, height=60_000, tiled=True, blockxsize=256, blockysize=256,
                compress="deflate", BIGTIFF="YES", SPARSE_OK=True)
    with rasterio.open(big, "w", **prof) as ds:
        ds.write(small["array"], 1, window=rasterio.windows.Window(0, 0, w, h))
    assert big.stat().st_size < 50e6
    with rasterio.open(big) as ds:
        assert ds.transform == t and ds.width * ds.height == 3.6e9
    t0 = time.perf_counter()
    got = run(_inputs(small, dem=big))
    elapsed = time.perf_counter() - t0
    ref = run(_inputs(small))
    assert got.stations["crest_level"].equals(ref.stations["crest_level"])
    assert elapsed < 10.0, elapsed


# ------------------------------------------------------------- conditions
HEADER = ("section_id,from_chainage,to_chainage,water_level,hm0,tm10,wave_angle,q_allow,"
          "sea_level_rise,settlement,roughness,min_freeboard")


def _conditions(tmp_path, *rows, header=HEADER):
    p = tmp_path / "c.csv"
    p.write_text("\n".join([header, *rows]) + "\n")
    return p


GOOD = "A,0,600,4.2,0.6,3,20,1,0.2,0.1,1,0.5"


def test_conditions_missing_column(tmp_path):
    # water_level is needed by every freeboard method (min_freeboard is optional)
    p = _conditions(tmp_path, GOOD, header=HEADER.replace("water_level", "waterlevel"))
    with pytest.raises(ConditionsError, match="missing column.*water_level"):
        read_conditions(p)


def test_conditions_unknown_column_warns(tmp_path, caplog):
    p = _conditions(tmp_path, GOOD + ",x", header=HEADER + ",colour")
    with caplog.at_level(logging.WARNING):
        read_conditions(p)
    assert "unknown column(s) colour" in caplog.text


@pytest.mark.parametrize("cell, pattern", [
    ("abc", r"row 2, column hm0: 'abc' is not a number"),
    ("", r"row 2, column hm0: empty; freeboard_method overtopping needs the wave height"),
    ("NaN", r"row 2, column hm0: empty; freeboard_method overtopping needs the wave height"),
    ("-0.5", r"row 2, column hm0: -0.5 breaks the rule 0 <= number <= 30"),
])
def test_conditions_bad_values_name_row_and_column(tmp_path, cell, pattern):
    p = _conditions(tmp_path, GOOD.replace(",0.6,", f",{cell},"))
    with pytest.raises(ConditionsError, match=pattern):
        read_conditions(p)


def test_conditions_zero_period_and_infinite_level(tmp_path):
    row = GOOD.replace(",3,20,", ",0,20,").replace(",4.2,", ",inf,")
    with pytest.raises(ConditionsError) as err:
        read_conditions(_conditions(tmp_path, row))
    text = str(err.value)
    assert "row 2, column tm10: 0 breaks the rule 0 < number" in text
    assert "row 2, column water_level: inf" in text


def test_conditions_gap_and_overlap(tmp_path):
    rows = [GOOD.replace("A,0,600", "A,0,200"), GOOD.replace("A,0,600", "B,250,400"),
            GOOD.replace("A,0,600", "C,390,600")]
    with pytest.raises(ConditionsError) as err:
        read_conditions(_conditions(tmp_path, *rows))
    text = str(err.value)
    assert ("gap in chainage between section 'A' (row 2, to 200 m) and 'B' (row 3, "
            "from 250 m)") in text
    assert "sections 'B' (row 3) and 'C' (row 4) overlap (390-400 m)" in text


def test_conditions_not_covering_the_line(small, tmp_path):
    p = _conditions(tmp_path, GOOD.replace("A,0,600", "A,0,400"))
    with pytest.raises(ConditionsError,
                       match=r"outside every section, chainage 425\.0-600\.0 m; extend"):
        run(_inputs(small, conditions=p))


def test_sections_beyond_the_line_are_reported(small, tmp_path, caplog):
    rows = [GOOD.replace("A,0,600", "A,0,700"), GOOD.replace("A,0,600", "Z,700,1000")]
    with caplog.at_level(logging.WARNING):
        res = run(_inputs(small, conditions=_conditions(tmp_path, *rows)))
    assert set(res.stations["section_id"]) == {"A"}
    assert "section 'Z' (700-1000 m) lies outside the line's chainage (0-600 m)" in caplog.text


def test_tiny_wave_height_and_period_are_not_design_conditions(tmp_path):
    row = GOOD.replace(",0.6,3,", ",1e-12,0.01,")
    with pytest.raises(ConditionsError) as err:
        read_conditions(_conditions(tmp_path, row))
    assert "column hm0: 1e-12 m is below 0.01 m; give 0 for no waves" in str(err.value)
    assert "column tm10: 0.01 s is below 0.1 s" in str(err.value)


# ------------------------------------------------------------- parameters
@pytest.mark.parametrize("change, pattern", [
    ({"spacing": 0.0}, "spacing must be > 0"),
    ({"half_width": 10.0, "crest_search": 15.0}, r"half_width \(10.0 m\) must exceed crest_search"),
    ({"sample_step": 20.0}, "sample_step .* fewer than 5 samples"),
    ({"object_width": 15.0}, r"object_width \(15.0 m\) must be smaller than crest_search"),
    ({"max_nodata": 1.5}, "max_nodata must be <= 1.0"),
])
def test_parameters_out_of_range_or_inconsistent(change, pattern):
    with pytest.raises(ParameterError, match=pattern):
        Settings(**change)


def test_chunk_too_large_for_memory(small):
    with pytest.raises(ParameterError, match="lower chunk_size or raise sample_step"):
        run(_inputs(small), Settings(chunk_size=100000, half_width=500.0))


def test_unknown_parameter_in_run_file(tmp_path):
    cfg = tmp_path / "run.toml"
    cfg.write_text("spacng = 10\n")
    with pytest.raises(ParameterError, match="unknown parameter.*spacng"):
        Settings.from_mapping(load_run_file(cfg), source=str(cfg))


# --------------------------------------------------------------------- CLI
def _cli_args(small, out):
    return ["assess", "--centreline", str(small["centreline"]), "--dem", str(small["dem"]),
            "--conditions", str(small["sections"]), "--out", str(out), "--quiet"]


def test_cli_bad_input_is_one_line_without_traceback(small, tmp_path):
    args = _cli_args(small, tmp_path / "r.gpkg")
    args[args.index("--centreline") + 1] = str(small["dem"])
    res = CliRunner().invoke(main, args)
    assert res.exit_code == EXIT_INPUT
    assert res.output.startswith("Error: ") and "swap" in res.output
    assert "Traceback" not in res.output
    assert not (tmp_path / "r.gpkg").exists()


def test_cli_interrupt_says_nothing_was_replaced(small, tmp_path, monkeypatch):
    def interrupted(*a, **k):
        raise KeyboardInterrupt

    monkeypatch.setattr("trajectory.assess.run", interrupted)
    res = CliRunner().invoke(main, _cli_args(small, tmp_path / "r.gpkg"))
    assert res.exit_code == EXIT_INTERRUPTED
    assert "interrupted; no output was replaced" in res.output


def test_cli_unexpected_failure_is_one_line_and_debug_shows_it(small, tmp_path, monkeypatch):
    def broken(*a, **k):
        raise ZeroDivisionError("planted")

    monkeypatch.setattr("trajectory.assess.run", broken)
    res = CliRunner().invoke(main, _cli_args(small, tmp_path / "r.gpkg"))
    assert res.exit_code == EXIT_INTERNAL
    assert "unexpected failure (ZeroDivisionError: planted)" in res.output
    assert "--debug" in res.output and "Traceback" not in res.output
    res = CliRunner().invoke(main, _cli_args(small, tmp_path / "r.gpkg") + ["--debug"])
    assert isinstance(res.exception, ZeroDivisionError)
