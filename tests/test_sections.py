"""Terrain sampling, checked against scipy's RegularGridInterpolator (reference library)."""

from __future__ import annotations

import numpy as np
import rasterio
from rasterio.transform import from_origin
from scipy.interpolate import RegularGridInterpolator

from trajectory.geometry.chainage import Stations
from trajectory.geometry.sections import bilinear, sample_profiles, section_offsets


def test_bilinear_matches_regular_grid_interpolator():
    rng = np.random.default_rng(7)
    grid = rng.normal(size=(40, 60))
    # cell centres at i + 0.5 in pixel units
    rows = np.arange(40) + 0.5
    cols = np.arange(60) + 0.5
    ref = RegularGridInterpolator((rows, cols), grid, method="linear")
    r = rng.uniform(0.5, 39.5, 5000)
    c = rng.uniform(0.5, 59.5, 5000)
    got = bilinear(grid, c, r)
    assert np.allclose(got, ref(np.c_[r, c]), atol=1e-12)


def test_bilinear_nodata_and_outside():
    grid = np.ones((10, 10))
    grid[5, 5] = np.nan
    # nearest cell nodata -> NaN; neighbour nodata -> renormalised weights (still 1)
    assert np.isnan(bilinear(grid, np.array([5.5]), np.array([5.5])))[0]
    assert bilinear(grid, np.array([5.0]), np.array([4.9]))[0] == 1.0
    assert np.isnan(bilinear(grid, np.array([-1.0, 11.0]), np.array([2.0, 2.0]))).all()


def test_sample_profiles_on_a_plane_in_a_geotiff(tmp_path):
    # synthetic truth: z = 0.01 x + 0.02 y is reproduced exactly by bilinear sampling
    x0, y0, cell = 1000.0, 2000.0, 0.5
    h, w = 400, 400
    xs = x0 + (np.arange(w) + 0.5) * cell
    ys = y0 - (np.arange(h) + 0.5) * cell
    z = 0.01 * xs[None, :] + 0.02 * ys[:, None]
    path = tmp_path / "plane.tif"
    with rasterio.open(path, "w", driver="GTiff", width=w, height=h, count=1, dtype="float64",
                       crs="EPSG:32632", transform=from_origin(x0, y0, cell, cell)) as ds:
        ds.write(z, 1)
    st = Stations(chainage=np.array([0.0, 10.0]), along=np.array([0.0, 10.0]),
                  x=np.array([1100.0, 1100.0]), y=np.array([1900.0, 1890.0]),
                  nx=np.array([0.6, 1.0]), ny=np.array([0.8, 0.0]))
    off = section_offsets(50.0, 0.5)
    with rasterio.open(path) as ds:
        prof = sample_profiles(ds, st, off)
    px = st.x[:, None] + off * st.nx[:, None]
    py = st.y[:, None] + off * st.ny[:, None]
    assert np.allclose(prof, 0.01 * px + 0.02 * py, atol=1e-9)
