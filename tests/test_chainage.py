"""Stations and normals, checked against shapely and pyproj (reference libraries)."""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from pyproj import Geod, Transformer
from shapely.geometry import LineString

from trajectory.geometry.chainage import make_stations, station_distances


def _arc(radius=800.0, sweep=1.2, n=200, x0=512000.0, y0=5810000.0):
    t = np.linspace(0, sweep, n)
    return LineString(np.c_[x0 + radius * np.cos(t), y0 + radius * np.sin(t)])


def test_station_positions_match_shapely_interpolate():
    # reference: shapely's own linear referencing (interpolate / project)
    line = _arc()
    st = make_stations(line, spacing=25.0, start_chainage=100.0)
    for c, x, y in zip(st.chainage, st.x, st.y, strict=True):
        p = line.interpolate(c - 100.0)
        assert (x, y) == pytest.approx((p.x, p.y), abs=1e-6)
        assert line.project(shapely.Point(x, y)) == pytest.approx(c - 100.0, abs=1e-6)
    assert np.allclose(np.diff(st.chainage), 25.0)


def test_reverse_runs_from_the_last_vertex():
    line = _arc()
    fwd = make_stations(line, spacing=25.0)
    rev = make_stations(line, spacing=25.0, reverse=True)
    p = line.interpolate(line.length - 50.0)
    k = int(np.flatnonzero(np.isclose(rev.chainage, 50.0))[0])
    assert (rev.x[k], rev.y[k]) == pytest.approx((p.x, p.y), abs=1e-6)
    assert rev.chainage[0] == 0.0 and np.all(np.diff(rev.chainage) > 0)
    # normals stay relative to the digitised direction, so water side does not flip
    k2 = int(np.argmin(np.hypot(fwd.x - rev.x[k], fwd.y - rev.y[k])))
    if np.hypot(fwd.x[k2] - rev.x[k], fwd.y[k2] - rev.y[k]) < 1e-6:
        assert rev.nx[k] == pytest.approx(fwd.nx[k2], abs=1e-9)


def test_normals_are_unit_perpendicular_and_point_left():
    line = _arc()
    st = make_stations(line, spacing=10.0, smooth_length=10.0)
    assert np.allclose(np.hypot(st.nx, st.ny), 1.0)
    # the arc turns left (counter-clockwise) so the left normal points to its centre
    cx, cy = 512000.0, 5810000.0
    to_centre = np.c_[cx - st.x, cy - st.y]
    to_centre /= np.linalg.norm(to_centre, axis=1)[:, None]
    cos = to_centre[:, 0] * st.nx + to_centre[:, 1] * st.ny
    assert np.all(cos > 0.999)


def test_smoothed_normal_at_a_sharp_vertex_is_the_bisector():
    # synthetic: a right-angle corner; the smoothed tangent at the vertex is the
    # chord between the points 5 m before and after, i.e. at 45 degrees
    line = LineString([(0, 0), (100, 0), (100, 100)])
    st = make_stations(line, spacing=100.0, smooth_length=10.0)
    k = int(np.flatnonzero(np.isclose(st.chainage, 100.0))[0])
    assert (st.nx[k], st.ny[k]) == pytest.approx((-np.sqrt(0.5), np.sqrt(0.5)), abs=1e-9)


def test_station_count_and_end():
    d = station_distances(100.0, 25.0)
    assert d.tolist() == [0, 25, 50, 75, 100]
    assert station_distances(99.0, 25.0).tolist() == [0, 25, 50, 75]


def test_projected_length_against_geodesic_length():
    # reference: pyproj's geodesic length on the WGS 84 ellipsoid; UTM's scale
    # factor is 0.9996 on the central meridian and within about 1.0004 near the zone
    # edge (published property of UTM), so the lengths agree within 0.1 %
    line = _arc()
    to_geo = Transformer.from_crs(32632, 4326, always_xy=True)
    lon, lat = to_geo.transform(*np.asarray(line.coords).T)
    geod_len = Geod(ellps="WGS84").line_length(lon, lat)
    assert line.length == pytest.approx(geod_len, rel=1e-3)


def test_fast_interpolation_and_substrings_match_shapely():
    # reference: shapely's line_interpolate_point and ops.substring on a long meander
    import shapely
    from shapely.ops import substring

    from trajectory.geometry.chainage import interpolate_points, line_substrings
    from trajectory.scenario.synthetic import make_long_centreline

    line = make_long_centreline(4000.0)
    rng = np.random.default_rng(3)
    # (shapely counts negative distances from the end; the helper clips them, so only
    # distances from 0 are compared)
    d = np.concatenate([[0.0, 10.0, line.length], rng.uniform(0.0, line.length + 5.0, 300)])
    ref = shapely.get_coordinates(shapely.line_interpolate_point(line, d))
    np.testing.assert_allclose(interpolate_points(line, d), ref, atol=1e-7)
    ab = np.sort(rng.uniform(0.0, line.length, (100, 2)), axis=1)
    for (a, b), got in zip(ab, line_substrings(line, ab[:, 0], ab[:, 1]), strict=True):
        want = substring(line, a, b)
        assert abs(got.length - want.length) < 1e-6
        assert got.hausdorff_distance(want) < 1e-6
