"""The terrain under the line: hillshade formula, decimated read, GeoPackage and report.

The hillshade is checked against the illumination of a plane, known in closed form
(Lambert's cosine law, common practice in hillshading: cos(zenith) cos(slope) +
sin(zenith) sin(slope) cos(azimuth - aspect), aspect the compass direction the slope
faces), and against GDAL's own ``gdaldem hillshade`` (Horn 1981) where the tool is
installed. The planes and rough surfaces are synthetic geometry built here.
"""

from __future__ import annotations

import math
import shutil
import subprocess

import numpy as np
import pyogrio
import pytest
import rasterio
from rasterio.transform import from_origin

from trajectory.outputs import plots
from trajectory.outputs.report import load_report_data
from trajectory.terrain.hillshade import MAX_PIXELS, hillshade, read_terrain, shade_bytes


def _plane_truth(p: float, q: float, azimuth: float = 315.0, altitude: float = 45.0) -> float:
    """Illumination of the plane z = p x + q y (x east, y north), from slope and aspect."""
    slope = math.atan(math.hypot(p, q))
    aspect = math.atan2(-p, -q)  # downhill direction, clockwise from north
    zen = math.radians(90.0 - altitude)
    v = (math.cos(zen) * math.cos(slope)
         + math.sin(zen) * math.sin(slope) * math.cos(math.radians(azimuth) - aspect))
    return max(v, 0.0)


def _plane(p: float, q: float, cell_x: float, cell_y: float, shape=(12, 15)) -> np.ndarray:
    rows, cols = np.mgrid[0:shape[0], 0:shape[1]]
    x, y = cols * cell_x, -rows * cell_y  # row 0 is north
    return p * x + q * y


@pytest.mark.parametrize("p, q", [(0.0, 0.0), (0.3, 0.0), (0.0, -0.5), (-0.2, 0.4),
                                  (1.5, 1.5), (0.25, -0.25)])
@pytest.mark.parametrize("azimuth, altitude", [(315.0, 45.0), (90.0, 30.0), (200.0, 60.0)])
def test_hillshade_of_a_plane_is_the_cosine_of_sun_and_normal(p, q, azimuth, altitude):
    z = _plane(p, q, 2.0, 3.0)
    got = hillshade(z, 2.0, 3.0, azimuth=azimuth, altitude=altitude)
    assert np.isnan(got[0]).all() and np.isnan(got[:, -1]).all()  # no full neighbourhood
    np.testing.assert_allclose(got[1:-1, 1:-1], _plane_truth(p, q, azimuth, altitude),
                               atol=1e-12)


def test_a_slope_facing_the_sun_is_brighter_than_flat_and_one_facing_away_darker():
    flat = _plane_truth(0.0, 0.0)
    towards = hillshade(_plane(0.3, -0.3, 1.0, 1.0), 1.0, 1.0)[5, 5]  # falls to the NW
    away = hillshade(_plane(-0.3, 0.3, 1.0, 1.0), 1.0, 1.0)[5, 5]
    assert flat == pytest.approx(math.sin(math.radians(45.0)))
    assert away < flat < towards


def test_nodata_stays_out_of_its_neighbourhood():
    z = _plane(0.1, 0.2, 1.0, 1.0)
    z[5, 6] = np.nan
    got = hillshade(z, 1.0, 1.0)
    assert np.isnan(got[4:7, 5:8]).all()
    assert np.isfinite(got[1:4, 1:-1]).all()
    assert shade_bytes(got)[5, 6] == 0 and shade_bytes(got)[2, 2] >= 1


@pytest.mark.skipif(shutil.which("gdaldem") is None, reason="GDAL's gdaldem not installed")
def test_hillshade_equals_gdaldem_on_rough_ground(tmp_path):
    rng = np.random.default_rng(7)
    rows, cols = np.mgrid[0:40, 0:55]
    z = (8 * np.sin(cols / 6.0) + 4 * np.cos(rows / 4.0)
         + rng.normal(0, 0.4, rows.shape)).astype("float32")
    dem, out = tmp_path / "z.tif", tmp_path / "hs.tif"
    with rasterio.open(dem, "w", driver="GTiff", width=55, height=40, count=1,
                       dtype="float32", crs="EPSG:32633",
                       transform=from_origin(0.0, 1000.0, 2.0, 3.0)) as ds:
        ds.write(z, 1)
    subprocess.run(["gdaldem", "hillshade", "-q", str(dem), str(out)], check=True)
    with rasterio.open(out) as ds:
        ref = ds.read(1).astype(int)
    mine = shade_bytes(hillshade(z, 2.0, 3.0)).astype(int)
    assert (ref == 0).sum() == (mine == 0).sum() > 0  # the same cells without a value
    assert np.abs(ref - mine).max() <= 1  # gdaldem rounds to a byte


def _dem(path, z, cell, nodata=None):
    with rasterio.open(path, "w", driver="GTiff", width=z.shape[1], height=z.shape[0],
                       count=1, dtype="float32", crs="EPSG:32633", nodata=nodata,
                       transform=from_origin(500000.0, 6000000.0, cell, cell)) as ds:
        ds.write(z.astype("float32"), 1)
    return str(path)


def test_read_terrain_decimates_a_large_window_and_keeps_the_plane(tmp_path):
    from shapely.geometry import LineString

    cell, p, q = 0.5, 0.04, -0.03
    z = _plane(p, q, cell, cell, shape=(1200, 3000))
    path = _dem(tmp_path / "plane.tif", z, cell)
    left, top = 500000.0, 6000000.0
    line = LineString([(left + 100, top - 500), (left + 1400, top - 100)])
    t = read_terrain(path, line, band=50.0)
    assert t.dem_bounds == (left, top - 600.0, left + 1500.0, top)
    assert t.dem_cell == cell and t.dem_size == (3000, 1200)
    assert t.shade is not None and max(t.shade.shape) <= MAX_PIXELS
    # the grid: the line's bounds plus the band, cut to the DEM (to a whole pixel)
    px = (t.shade_bounds[2] - t.shade_bounds[0]) / t.shade.shape[1]
    np.testing.assert_allclose(t.shade_bounds, (left + 50, top - 550, left + 1450, top - 50),
                               atol=px + cell)
    # only tiles near the line are read: the corners far from it hold no value
    assert t.shade[-1, 0] == 0 and t.shade[0, -1] == 0
    # decimation keeps a plane a plane: every inner pixel read has its illumination
    inner = t.shade[1:-1, 1:-1].astype(int)
    read = inner[inner > 0]
    assert read.size > 0.1 * inner.size
    assert np.abs(read - round(1 + 254 * _plane_truth(p, q))).max() <= 1
    # along the line itself every pixel has a value
    rows = ((t.shade_bounds[3] - np.linspace(top - 480, top - 120, 20)) / px).astype(int)
    cols = ((np.linspace(left + 160, left + 1340, 20) - t.shade_bounds[0]) / px).astype(int)
    assert (t.shade[rows, cols] > 0).all()


def test_read_terrain_outside_the_dem_gives_the_footprint_only(tmp_path):
    from shapely.geometry import LineString

    path = _dem(tmp_path / "z.tif", np.zeros((20, 30)), 1.0)
    t = read_terrain(path, LineString([(0.0, 0.0), (10.0, 10.0)]), band=1.0)
    assert t.shade is None and t.dem_size == (30, 20)
    path = _dem(tmp_path / "void.tif", np.full((20, 30), -9999.0), 1.0, nodata=-9999.0)
    line = LineString([(500005.0, 5999985.0), (500020.0, 5999995.0)])
    assert read_terrain(path, line, band=1.0).shade is None


def test_every_run_keeps_the_dem_extent_without_reading_a_shade(demo, demo_result):
    _, gpkg = demo_result  # written without a report
    ext = pyogrio.read_dataframe(gpkg, layer="dem_extent")
    with rasterio.open(demo["dem"]) as ds:
        assert ext["dem"].tolist() == [demo["dem"].name]
        np.testing.assert_allclose(ext.geometry.iloc[0].bounds, tuple(ds.bounds))
        assert (ext["columns"].iloc[0], ext["rows"].iloc[0]) == (ds.width, ds.height)
    assert load_report_data(gpkg).terrain is None  # the map falls back to a blank ground


def test_a_run_with_a_report_keeps_the_shade_the_report_draws(tmp_path):
    from trajectory.assess import RunInputs, assess
    from trajectory.scenario.synthetic import LeveeSpec, make_centreline, write_scenario

    paths = write_scenario(tmp_path, spec=LeveeSpec().scaled(400.0),
                           centreline=make_centreline(400.0), epochs=False)
    gpkg = tmp_path / "r.gpkg"
    assess(RunInputs(str(paths["centreline"]), str(paths["dem"]), str(paths["sections"])),
           gpkg, report=tmp_path / "r.html")
    data = load_report_data(gpkg)
    assert data.terrain is not None
    shade, bounds = data.terrain
    with rasterio.open(paths["dem"]) as ds:  # the shade is the DEM's, within its bounds
        assert bounds[0] >= ds.bounds.left - 1e-6 and bounds[2] <= ds.bounds.right + 1e-6
    assert max(shade.shape) <= MAX_PIXELS and (shade > 0).any()
    st = data.stations
    assert bounds[0] <= st["x"].min() and st["x"].max() <= bounds[2]
    assert bounds[1] <= st["y"].min() and st["y"].max() <= bounds[3]
    fig = plots.overview_map(st, data.stretches, terrain=data.terrain)
    ax = fig.axes[0]
    assert len(ax.images) == 1
    # the view is the line's, not the whole shade's
    x0, x1 = ax.get_xlim()
    assert x1 - x0 < 1.5 * (st["x"].max() - st["x"].min())
    assert "Overview map" in (tmp_path / "r.html").read_text(encoding="utf-8")


def test_the_dem_extent_style_draws_an_outline_only():
    # an unfilled polygon keeps the line's layers visible under it (common practice)
    import xml.etree.ElementTree as ET

    from trajectory.outputs.style import qml, sld

    q = ET.fromstring(qml("dem_extent").split("\n", 1)[1])
    layer = q.find("renderer-v2/symbols/symbol/layer")
    assert layer.get("class") == "SimpleFill"
    props = {o.get("name"): o.get("value") for o in layer.iter("Option") if o.get("name")}
    assert props["style"] == "no" and q.findtext("layerGeometryType") == "2"
    s = ET.fromstring(sld("dem_extent").encode())
    poly = s.find(".//{http://www.opengis.net/sld}PolygonSymbolizer")
    assert poly is not None and poly.find("{http://www.opengis.net/sld}Fill") is None
