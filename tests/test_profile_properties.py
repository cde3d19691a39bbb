"""Property-based checks (hypothesis) on random trapezoids and random curved lines."""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from shapely.geometry import LineString

from trajectory.geometry.chainage import make_stations
from trajectory.geometry.sections import section_points
from trajectory.terrain.profile import read_profiles

STEP = 0.5
OFF = np.arange(-100, 101) * STEP
KW = dict(object_width=1.0, crest_search=15.0, crest_tolerance=0.10, max_nodata=0.5)
FAST = settings(max_examples=40, deadline=None,
                suppress_health_check=[HealthCheck.too_slow])


def trapezoid(*, crest, width, n_out, n_in, base_out, base_in, centre):
    o = OFF - centre
    z = np.full(o.shape, crest)
    z = np.where(o > width / 2, np.maximum(crest - (o - width / 2) / n_out, base_out), z)
    return np.where(o < -width / 2, np.maximum(crest - (-o - width / 2) / n_in, base_in), z)


geometry = st.fixed_dictionaries({
    "crest": st.floats(3.0, 9.0),
    "width": st.floats(3.0, 8.0),
    "n_out": st.floats(2.0, 5.0),
    "n_in": st.floats(1.5, 4.0),
    "base_out": st.floats(0.0, 1.5),
    "base_in": st.floats(0.0, 1.5),
    "centre": st.floats(-3.0, 3.0),
})


@FAST
@given(g=geometry, where=st.floats(0.0, 1.0), height=st.floats(0.06, 5.0),
       noise=st.sampled_from([0.0, 0.05]), rs=st.integers(0, 2**31 - 1))
def test_single_cell_spike_on_the_crest_does_not_raise_the_crest(g, where, height, noise, rs):
    # an object is what rises above the ground by more than 0.05 m and 4 x the noise
    # (the documented rule). With noise, the spike and its two neighbours are replaced
    # by the ground estimate (within about 2 sigma of the cells), which may move the
    # mean by up to 3 * 2 sigma / cells; a spike left in would add height / cells,
    # at least 1 m / cells here
    height = height if noise == 0 else height + 1.0
    z = trapezoid(**g) + np.random.default_rng(rs).normal(0, noise, OFF.size)
    on_crest = np.flatnonzero(np.abs(OFF - g["centre"]) <= g["width"] / 2 - STEP)
    j = on_crest[int(where * (on_crest.size - 1))]
    spiked = z.copy()
    spiked[j] += height
    m = read_profiles(np.array([z, spiked]), OFF, **KW)
    assert m.crest_level[1] <= m.crest_level[0] + (1e-9 if noise == 0
                                                   else 6 * noise / m.crest_cells[0])


@FAST
@given(g=geometry, noise=st.sampled_from([0.0, 0.05]), rs=st.integers(0, 2**31 - 1))
def test_mirrored_profile_swaps_the_sides(g, noise, rs):
    # reading the profile from the other side (offsets mirrored) swaps outer and inner
    z = trapezoid(**g) + np.random.default_rng(rs).normal(0, noise, OFF.size)
    m = read_profiles(np.array([z, z[::-1]]), OFF, **KW)
    assert m.crest_level[1] == pytest.approx(m.crest_level[0], abs=1e-9)
    assert m.crest_width[1] == pytest.approx(m.crest_width[0], abs=1e-9)
    assert m.crest_offset[1] == pytest.approx(-m.crest_offset[0], abs=1e-9)
    assert m.outer_edge[1] == pytest.approx(-m.inner_edge[0], abs=1e-9)
    assert m.outer_toe[1] == pytest.approx(-m.inner_toe[0], abs=1e-9)
    assert m.inner_slope[1] == pytest.approx(m.outer_slope[0], rel=1e-9, nan_ok=True)
    assert m.outer_slope[1] == pytest.approx(m.inner_slope[0], rel=1e-9, nan_ok=True)


@FAST
@given(g=geometry)
def test_clean_trapezoid_is_read_exactly(g):
    m = read_profiles(trapezoid(**g)[None, :], OFF, **KW)
    assert m.crest_level[0] == pytest.approx(g["crest"], abs=1e-9)
    # the grid resolves the edges to within one sample
    assert m.crest_width[0] == pytest.approx(g["width"], abs=2 * STEP)
    if (g["crest"] - g["base_out"]) > 1.5:       # enough slope for a fit
        # on a short steep slope one sample of the flat foot may enter the fit (the
        # foot is found by a 1 m gradient window): within 3 %
        assert m.outer_slope[0] == pytest.approx(g["n_out"], rel=0.03)


curves = st.lists(st.floats(-0.02, 0.02), min_size=3, max_size=8)


def _curved_line(curvature: list[float], length: float = 600.0) -> LineString:
    """A smooth random line: heading integrates piecewise-constant curvature (1/m)."""
    s = np.linspace(0.0, length, 601)
    k = np.repeat(np.asarray(curvature), int(np.ceil(s.size / len(curvature))))[: s.size]
    heading = np.cumsum(k) * (s[1] - s[0])
    x = np.concatenate([[0.0], np.cumsum(np.cos(heading[:-1]))]) * (s[1] - s[0])
    y = np.concatenate([[0.0], np.cumsum(np.sin(heading[:-1]))]) * (s[1] - s[0])
    return LineString(np.c_[x + 5e5, y + 5.8e6])


@FAST
@given(curvature=curves, spacing=st.sampled_from([10.0, 25.0]))
def test_reversing_the_line_mirrors_the_sides(curvature, spacing):
    # digitising the line the other way round puts every station at the same place
    # with the normal (the left side) pointing the other way
    line = _curved_line(curvature)
    back = LineString(np.asarray(line.coords)[::-1])
    a = make_stations(line, spacing=spacing, smooth_length=10.0)
    length = line.length
    d = np.asarray(a.along)
    b = make_stations(back, spacing=spacing, smooth_length=10.0,
                      chainages=length - d[(d > 5.0) & (d < length - 5.0)])
    keep = (d > 5.0) & (d < length - 5.0)
    order = np.argsort(length - d[keep])
    ax, ay = a.x[keep][order], a.y[keep][order]
    anx, any_ = a.nx[keep][order], a.ny[keep][order]
    assert np.allclose(b.x, ax, atol=1e-6) and np.allclose(b.y, ay, atol=1e-6)
    assert np.allclose(b.nx, -anx, atol=1e-6) and np.allclose(b.ny, -any_, atol=1e-6)
    # the sample points of both sets of sections are the same, mirrored
    offs = np.arange(-10, 11) * 1.0
    xa, ya = section_points(a.take(np.flatnonzero(keep)[order]), offs)
    xb, yb = section_points(b, offs)
    assert np.allclose(xa, xb[:, ::-1], atol=1e-6) and np.allclose(ya, yb[:, ::-1], atol=1e-6)


@FAST
@given(curvature=curves)
def test_stations_lie_on_the_line_at_their_chainage(curvature):
    # reference: shapely's linear referencing (project)
    line = _curved_line(curvature)
    st_ = make_stations(line, spacing=20.0, start_chainage=1000.0)
    proj = shapely.line_locate_point(line, shapely.points(st_.x, st_.y))
    assert np.allclose(proj + 1000.0, st_.chainage, atol=1e-6)
