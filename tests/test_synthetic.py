"""Tests of the invented demo scenario generator (trajectory.scenario.synthetic).

The truth here is synthetic geometry the generator constructs; every reading
goes through general-purpose references: GDAL through rasterio for the
rasters, pyogrio for the GeoPackage, shapely for positions along and beside
the line, pyproj for the CRS.
"""

from __future__ import annotations

import csv
import json
import math
from dataclasses import replace
from pathlib import Path

import numpy as np
import pyogrio
import pytest
import rasterio
import shapely
from pyproj import CRS
from rasterio.windows import from_bounds

from trajectory.errors import FileOverwriteError, ParameterError
from trajectory.scenario.synthetic import (
    NODATA,
    SECTION_COLUMNS,
    LeveeSpec,
    crest_level,
    indicative_freeboard,
    make_centreline,
    make_long_centreline,
    write_dem,
    write_scenario,
)

LENGTH = 1200.0
SPEC = LeveeSpec().scaled(LENGTH)
SIGMA = SPEC.noise_sigma


@pytest.fixture(scope="module")
def scenario(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    out = tmp_path_factory.mktemp("scenario")
    return write_scenario(out, spec=SPEC, centreline=make_centreline(LENGTH), epochs=True)


@pytest.fixture(scope="module")
def line(scenario: dict[str, Path]) -> shapely.LineString:
    gdf = pyogrio.read_dataframe(scenario["centreline"], layer="centreline")
    return gdf.geometry.iloc[0]


@pytest.fixture(scope="module")
def truth(scenario: dict[str, Path]) -> dict:
    return json.loads(scenario["truth"].read_text(encoding="utf-8"))


def _points(line: shapely.LineString, s: np.ndarray, d: float) -> np.ndarray:
    """Map points at chainages ``s`` and offset ``d`` (left positive), via shapely.

    shapely's ``offset_curve`` offsets to the left for a positive distance
    (shapely 2 documentation); the point is the nearest on the offset line.
    """
    base = shapely.line_interpolate_point(line, s)
    if d == 0:
        return shapely.get_coordinates(base)
    off = shapely.offset_curve(line, d, quad_segs=16)
    return shapely.get_coordinates(shapely.line_interpolate_point(off, off.project(base)))


def _sample(path: Path, xy: np.ndarray) -> np.ndarray:
    """Cell values at map points (rasterio ``sample``), nodata as NaN."""
    with rasterio.open(path) as ds:
        z = np.array([v[0] for v in ds.sample([tuple(p) for p in xy])], dtype=float)
        z[z == ds.nodata] = np.nan
    return z


def test_raster_format(scenario: dict[str, Path]) -> None:
    with rasterio.open(scenario["dem"]) as ds:
        # CRS compared with pyproj's EPSG:32632 (WGS 84 / UTM 32N)
        assert CRS.from_wkt(ds.crs.to_wkt()).equals(CRS.from_epsg(32632))
        # layout as reported by GDAL through rasterio
        assert ds.res == (0.5, 0.5)
        assert ds.nodata == NODATA
        assert ds.dtypes == ("float32",)
        assert ds.profile["tiled"] and ds.block_shapes[0] == (256, 256)
        assert ds.compression.name.lower() == "deflate"
        # the corridor reaches >= 80 m beyond the line on every side (the bounds)
        lb = pyogrio.read_bounds(scenario["centreline"], layer="centreline")[1][:, 0]
        assert ds.bounds.left <= lb[0] - 80 and ds.bounds.right >= lb[2] + 80
        assert ds.bounds.bottom <= lb[1] - 80 and ds.bounds.top >= lb[3] + 80


def test_centreline(scenario: dict[str, Path], line: shapely.LineString, truth: dict) -> None:
    info = pyogrio.read_info(scenario["centreline"], layer="centreline")
    assert info["features"] == 1 and info["geometry_type"] == "LineString"
    assert {"line_id", "name"} <= set(info["fields"])
    # length measured by shapely equals the planted length
    assert line.length == pytest.approx(LENGTH, abs=1e-6)
    assert truth["line_length_m"] == pytest.approx(line.length, abs=1e-5)
    assert truth["crs"] == "EPSG:32632"


def test_river_is_on_the_left(scenario: dict[str, Path], line: shapely.LineString) -> None:
    s = np.linspace(50.0, LENGTH * 0.7, 25)
    left = _sample(scenario["dem"], _points(line, s, 40.0))
    right = _sample(scenario["dem"], _points(line, s, -22.0))
    # outer (left) side: foreshore level; inner (right): hinterland, as planted
    assert np.nanmedian(left) == pytest.approx(SPEC.foreshore_level, abs=0.05)
    assert np.nanmedian(right) == pytest.approx(SPEC.hinterland_level, abs=0.05)


def test_crest_level_at_normal_stretch(scenario: dict[str, Path],
                                       line: shapely.LineString) -> None:
    s = np.full(41, 0.08 * LENGTH)  # before every planted feature
    offs = np.linspace(-1.0, 1.0, 41)
    xy = np.vstack([_points(line, s[:1], o) for o in offs])
    z = _sample(scenario["dem"], xy)
    tol = 4 * SIGMA / math.sqrt(len(z)) + 0.005
    assert np.nanmean(z) == pytest.approx(float(crest_level(s[0], spec=SPEC)), abs=tol)
    # and within the declared band around the nominal crest level
    assert abs(np.nanmean(z) - SPEC.crest_level) <= SPEC.crest_variation + tol


def test_low_stretch_is_lower_by_its_depth(scenario: dict[str, Path],
                                           line: shapely.LineString, truth: dict) -> None:
    for low in truth["low_stretches"]:
        s = np.linspace(low["full_depth_from"] + 1, low["full_depth_to"] - 1, 30)
        z = np.concatenate([_sample(scenario["dem"], _points(line, s, o))
                            for o in (-0.75, 0.0, 0.75)])
        ss = np.tile(s, 3)
        undisturbed = crest_level(ss, spec=replace(SPEC, low_stretches=()))
        diff = np.nanmean(z - undisturbed)
        # planted depth, within the noise of the mean (4 standard errors)
        assert -diff == pytest.approx(low["depth"], abs=4 * SIGMA / math.sqrt(len(z)) + 0.005)


def test_outer_and_inner_slopes(scenario: dict[str, Path], line: shapely.LineString) -> None:
    s = np.linspace(20.0, 0.12 * LENGTH, 40)
    z = {d: _sample(scenario["dem"], _points(line, s, d)) for d in (4.0, 10.0, -4.0, -10.0)}
    # slope as 1:n = horizontal / vertical over 6 m of slope
    assert 6.0 / np.nanmean(z[4.0] - z[10.0]) == pytest.approx(SPEC.outer_slope, rel=0.05)
    assert 6.0 / np.nanmean(z[-4.0] - z[-10.0]) == pytest.approx(SPEC.inner_slope, rel=0.05)


def test_berm_and_water(scenario: dict[str, Path], line: shapely.LineString,
                        truth: dict) -> None:
    berm = truth["berms"][0]
    zc = SPEC.crest_level
    d_mid = 2.0 + SPEC.outer_slope * (zc - berm["level"]) + berm["width"] / 2
    s = np.linspace(berm["from_chainage"] + berm["taper"] + 2,
                    berm["to_chainage"] - berm["taper"] - 2, 30)
    zb = _sample(scenario["dem"], _points(line, s, d_mid))
    assert np.nanmean(zb) == pytest.approx(berm["level"], abs=0.03)
    w = truth["water_stretches"][0]
    s = np.linspace(w["from_chainage"] + 5, w["to_chainage"] - 5, 20)
    zw = _sample(scenario["dem"], _points(line, s, 60.0))
    assert np.allclose(zw, w["level"], atol=1e-3)  # flat water surface, no noise


def test_holes_and_posts(scenario: dict[str, Path], line: shapely.LineString,
                         truth: dict) -> None:
    for hole in truth["nodata_holes"]:
        z = _sample(scenario["dem"], _points(line, np.array([hole["chainage"]]),
                                             hole["offset"]))
        assert np.isnan(z).all(), hole
    posts = truth["posts"]
    s = posts["first_chainage"] + posts["spacing_m"] * np.arange(posts["count"])
    zp = _sample(scenario["dem"], _points(line, s, posts["offset_m"]))
    ref = crest_level(s, spec=SPEC)
    ok = np.isfinite(zp)
    assert ok.sum() >= posts["count"] - 1
    assert np.allclose(zp[ok] - ref[ok], posts["height_m"], atol=5 * SIGMA)


def test_epochs_crest_higher_in_the_past(scenario: dict[str, Path],
                                         line: shapely.LineString, truth: dict) -> None:
    ep = truth["epochs"]
    s = np.linspace(20.0, 0.12 * LENGTH, 40)
    xy = np.vstack([_points(line, s, o) for o in (-0.5, 0.0, 0.5)])
    z24 = _sample(scenario["dem"], xy)
    z19 = _sample(scenario["dem_2019"], xy)
    dz = z19 - z24
    years = truth["survey_year"] - 2019
    se = SIGMA * math.sqrt(2) / math.sqrt(len(dz))
    assert np.nanmean(dz) == pytest.approx(ep["base_lowering_rate_m_per_yr"] * years,
                                           abs=4 * se + 0.002)
    # independent noise: the spread of the difference is sigma * sqrt(2)
    assert np.nanstd(dz) == pytest.approx(SIGMA * math.sqrt(2), rel=0.3)
    fast = ep["rate_stretches"][0]
    s = np.linspace(fast["from_chainage"] + fast["taper"] + 1,
                    fast["to_chainage"] - fast["taper"] - 1, 30)
    xy = np.vstack([_points(line, s, o) for o in (-0.5, 0.0, 0.5)])
    dzf = _sample(scenario["dem_2019"], xy) - _sample(scenario["dem"], xy)
    assert np.nanmean(dzf) == pytest.approx(fast["rate"] * years, abs=4 * se + 0.002)


def test_vrt_mosaic_matches_single_geotiff(tmp_path: Path, scenario: dict[str, Path],
                                           line: shapely.LineString) -> None:
    vrt = write_dem(tmp_path / "tiles", line, spec=SPEC, tile_size_m=250.0)
    tiles = sorted(vrt.parent.glob("*.tif"))
    with rasterio.open(vrt) as mos, rasterio.open(scenario["dem"]) as one:
        assert mos.crs == one.crs and mos.res == one.res and mos.nodata == one.nodata
        # a window around the middle of the line, read from both (rasterio reference)
        cx, cy = shapely.get_coordinates(line.interpolate(0.5, normalized=True))[0]
        bounds = (cx - 150.0, cy - 100.0, cx + 150.0, cy + 100.0)
        a = mos.read(1, window=from_bounds(*bounds, mos.transform))
        b = one.read(1, window=from_bounds(*bounds, one.transform))
        assert a.shape == b.shape == (400, 600)
        assert (b != NODATA).sum() > 50_000
        assert np.array_equal(a, b)
        # and the whole single-file extent, line ends included
        full_b = one.read(1)
        full_a = mos.read(1, window=from_bounds(*one.bounds, mos.transform))
        assert full_a.shape == full_b.shape
        assert np.array_equal(full_a, full_b)
    # only tiles touching the corridor are written: each holds valid cells
    full = math.ceil((mos.bounds.right - mos.bounds.left) / 250.0) * math.ceil(
        (mos.bounds.top - mos.bounds.bottom) / 250.0)
    assert len(tiles) < full
    for t in tiles:
        with rasterio.open(t) as ds:
            assert (ds.read(1) != NODATA).any(), t.name


def test_sections_table(scenario: dict[str, Path]) -> None:
    with open(scenario["sections"], newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    assert tuple(rows[0].keys()) == SECTION_COLUMNS
    a = np.array([float(r["from_chainage"]) for r in rows])
    b = np.array([float(r["to_chainage"]) for r in rows])
    # end to end with no gap or overlap
    assert a[0] == 0.0 and b[-1] == pytest.approx(LENGTH, abs=1e-3)
    assert np.array_equal(a[1:], b[:-1]) and (b > a).all()


def test_indicative_freeboard_meets_q_allow() -> None:
    # Forward EurOtop (2018) design approach for smooth slopes (from memory):
    # q/sqrt(g Hm0^3) = min(0.026/sqrt(tan a) gb xi exp(-(2.5 Rc/(xi Hm0 gf gbeta))^1.3),
    #                       0.1035 exp(-(1.35 Rc/(Hm0 gf gbeta))^1.3)); gbeta = 1 - 0.0033 beta
    g = 9.81
    for hm0, tm10, q, gf, beta in ((0.6, 3.0, 1.0, 1.0, 20.0), (0.8, 3.6, 10.0, 0.9, 35.0),
                                  (1.5, 5.0, 0.1, 1.0, 0.0)):
        rc = indicative_freeboard(hm0, tm10, q, cot_alpha=3.0, gamma_f=gf, wave_angle=beta)
        tan_a = 1 / 3
        xi = tan_a / math.sqrt(hm0 / (g * tm10**2 / (2 * math.pi)))
        gb = 1 - 0.0033 * beta
        qa = 0.026 / math.sqrt(tan_a) * xi * math.exp(-(2.5 * rc / (xi * hm0 * gf * gb)) ** 1.3)
        qb = 0.1035 * math.exp(-(1.35 * rc / (hm0 * gf * gb)) ** 1.3)
        assert min(qa, qb) * math.sqrt(g * hm0**3) * 1000 == pytest.approx(q, rel=1e-9)


def test_demo_sections_separate_ok_from_deficit() -> None:
    # the 3 km demo: the nominal crest clears every indicative required level by
    # >= 0.10 m; each low stretch falls clearly short of its section's level
    from trajectory.scenario.synthetic import indicative_required_level

    spec = LeveeSpec()
    req = {s.section_id: indicative_required_level(s, cot_alpha=spec.outer_slope)
           for s in spec.sections}
    assert max(req.values()) <= spec.crest_level - spec.crest_variation - 0.10
    for low in spec.low_stretches:
        mid = 0.5 * (low.from_chainage + low.to_chainage)
        sec = next(s for s in spec.sections if s.from_chainage <= mid < s.to_chainage)
        assert float(crest_level(mid, spec=spec)) < req[sec.section_id] - 0.15


def test_long_centreline_and_repeated_spec() -> None:
    line = make_long_centreline(25_000.0, random_state=3, min_radius=400.0)
    assert line.length == pytest.approx(25_000.0, abs=1e-6)
    assert line.is_simple
    xy = shapely.get_coordinates(line)
    h = np.unwrap(np.arctan2(*np.diff(xy, axis=0).T[::-1]))
    seg = np.hypot(*np.diff(xy, axis=0).T)
    # radius of curvature from the turn between segments: R = ds / dtheta
    assert (seg[1:] / np.maximum(np.abs(np.diff(h)), 1e-12)).min() >= 400.0 * 0.99
    spec = LeveeSpec().repeated(25_000.0)
    a = np.array([s.from_chainage for s in spec.sections])
    b = np.array([s.to_chainage for s in spec.sections])
    assert a[0] == 0 and b[-1] == 25_000.0 and np.array_equal(a[1:], b[:-1])
    assert all(x.to_chainage <= 25_000.0 for x in spec.low_stretches)
    # 8 whole 3 km periods hold 2 each; the ninth (24-25 km) holds the first one only
    assert len(spec.low_stretches) == 2 * 8 + 1


def test_errors(tmp_path: Path, scenario: dict[str, Path]) -> None:
    with pytest.raises(ParameterError):
        write_dem(tmp_path / "x.tif", make_centreline(500.0), spec=SPEC)
    with pytest.raises(ParameterError):
        write_dem(tmp_path / "t", make_centreline(LENGTH), spec=SPEC, tile_size_m=100.3)
    with pytest.raises(ParameterError):
        replace(SPEC, low_stretches=(replace(SPEC.low_stretches[0], to_chainage=2 * LENGTH),))
    with pytest.raises(FileOverwriteError):
        write_scenario(scenario["dem"].parent, spec=SPEC, centreline=make_centreline(LENGTH))
