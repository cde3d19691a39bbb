"""Centreline joins, listed stations and crossing sections on synthetic geometry."""

from __future__ import annotations

import geopandas as gpd
import numpy as np
import pytest
from shapely.geometry import LineString, MultiLineString

from trajectory.errors import InputError, InputFileError
from trajectory.geometry.chainage import crossing_sections, make_stations
from trajectory.inputs.joins import find_branches, join_parts
from trajectory.inputs.sources import read_centreline
from trajectory.inputs.station_list import read_station_chainages

X0, Y0 = 512000.0, 5810000.0


def _write(tmp_path, geoms, name="line.gpkg"):
    p = tmp_path / name
    gpd.GeoDataFrame({"id": range(len(geoms))}, geometry=geoms, crs=32632).to_file(p)
    return p


def test_parts_out_of_order_and_reversed_join_in_chain_order(tmp_path):
    a = LineString([(X0, Y0), (X0 + 100, Y0)])
    b = LineString([(X0 + 300, Y0), (X0 + 200, Y0)])          # digitised backwards
    c = LineString([(X0 + 100, Y0), (X0 + 200, Y0)])
    line, crs = read_centreline(_write(tmp_path, [a, b, c]))
    # reference: shapely length and endpoints; the first feature keeps its direction
    assert line.length == pytest.approx(300.0)
    assert line.coords[0] == (X0, Y0) and line.coords[-1] == (X0 + 300, Y0)
    assert crs.to_epsg() == 32632


def test_multipart_small_gap_closed_large_gaps_all_listed(tmp_path):
    a = LineString([(X0, Y0), (X0 + 100, Y0)])
    b = LineString([(X0 + 100.4, Y0), (X0 + 200, Y0)])        # 0.4 m gap: closed
    line, _ = read_centreline(_write(tmp_path, [MultiLineString([a, b])]))
    assert line.length == pytest.approx(200.0, abs=1e-9)
    c = LineString([(X0 + 205, Y0), (X0 + 300, Y0)])          # 5 m gap
    d = LineString([(X0 + 312, Y0), (X0 + 400, Y0)])          # 12 m gap
    with pytest.raises(InputError) as err:
        read_centreline(_write(tmp_path, [a, b, c, d], "gaps.gpkg"))
    msg = str(err.value)
    assert "2 gap(s)" in msg and "5.0 m" in msg and "12.0 m" in msg
    # a larger tolerance accepts them
    line, _ = read_centreline(tmp_path / "gaps.gpkg", gap_tolerance=15.0)
    assert line.length == pytest.approx(400.0, abs=1e-9)


def test_gaps_returned_by_join_parts_measure_the_distance():
    a = LineString([(0, 0), (10, 0)])
    b = LineString([(13, 4), (20, 4)])
    _, gaps = join_parts([a, b], tolerance=1.0)
    assert len(gaps) == 1 and gaps[0].distance == pytest.approx(5.0)   # 3-4-5 triangle


@pytest.mark.parametrize("parts", [
    # three part ends meet at one point (a Y)
    [LineString([(0, 0), (10, 0)]), LineString([(10, 0), (20, 5)]),
     LineString([(10, 0), (20, -5)])],
    # a part ends on another's interior (a T)
    [LineString([(0, 0), (20, 0)]), LineString([(10, 0), (10, 10)])],
])
def test_branching_lines_are_refused(parts):
    with pytest.raises(InputError, match="branches"):
        join_parts(parts, tolerance=1.0)


def test_one_finding_per_branch_point():
    # constructed: a Y at (10, 0) seen from all three ends there, a T at (10, 0) on part 1
    y = [LineString([(0, 0), (10, 0)]), LineString([(10, 0), (20, 5)]),
         LineString([(10, 0), (20, -5)])]
    (b,) = find_branches(y, tolerance=1.0)
    assert (b.x, b.y, b.on_part) == (10.0, 0.0, None)
    t = [LineString([(0, 0), (20, 0)]), LineString([(10, 0.5), (10, 10)])]
    (b,) = find_branches(t, tolerance=1.0)
    assert (b.x, b.y, b.on_part) == (10.0, 0.5, 0)
    # ends meeting end to end, or a part closer than the tolerance but not touching: none
    assert find_branches([LineString([(0, 0), (10, 0)]), LineString([(10, 0), (20, 0)])],
                         tolerance=1.0) == []
    assert find_branches([LineString([(0, 0), (20, 0)]), LineString([(10, 3), (10, 10)])],
                         tolerance=1.0) == []


def test_stations_at_listed_chainages(tmp_path):
    line = LineString([(X0, Y0), (X0 + 500, Y0)])
    p = tmp_path / "stations.csv"
    p.write_text("name,chainage\nA,1120\nB,1000\nC,1250.5\nD,1120\n")
    ch = read_station_chainages(p)
    assert ch.tolist() == [1000.0, 1120.0, 1250.5]
    st = make_stations(line, spacing=25.0, start_chainage=1000.0, chainages=ch)
    assert st.chainage.tolist() == [1000.0, 1120.0, 1250.5]
    assert st.x.tolist() == pytest.approx([X0, X0 + 120, X0 + 250.5])
    rev = make_stations(line, spacing=25.0, start_chainage=1000.0, chainages=ch, reverse=True)
    assert rev.x.tolist() == pytest.approx([X0 + 500, X0 + 380, X0 + 249.5])
    plain = tmp_path / "plain.txt"
    plain.write_text("# survey stations\n10\n20.5\n")
    assert read_station_chainages(plain).tolist() == [10.0, 20.5]


def test_listed_chainages_off_the_line_and_bad_lines_are_refused(tmp_path):
    line = LineString([(X0, Y0), (X0 + 500, Y0)])
    with pytest.raises(InputError, match="off the line"):
        make_stations(line, spacing=25.0, chainages=np.array([100.0, 600.0]))
    bad = tmp_path / "bad.csv"
    bad.write_text("chainage\n10\nten\n30\n")
    with pytest.raises(InputError, match="line 3"):
        read_station_chainages(bad)
    with pytest.raises(InputFileError):
        read_station_chainages(tmp_path / "missing.csv")


@pytest.mark.parametrize("radius,half_width,crossing", [
    (30.0, 50.0, True), (80.0, 50.0, False), (49.0, 50.0, True), (51.0, 50.0, False)])
def test_crossing_sections_on_a_circular_bend(radius, half_width, crossing):
    # geometry: all normals of a circle meet at its centre, R from every station, so
    # neighbouring sections of half-width h cross exactly when h >= R (synthetic truth)
    t = np.linspace(0, 1.5, 400)
    line = LineString(np.c_[X0 + radius * np.cos(t), Y0 + radius * np.sin(t)])
    st = make_stations(line, spacing=5.0, smooth_length=1.0)
    flags = crossing_sections(st, half_width)
    inner = flags[2:-2]          # away from the line's ends, where the chord is clipped
    assert inner.all() if crossing else not inner.any()


def test_straight_line_sections_never_cross():
    line = LineString([(X0, Y0), (X0 + 1000, Y0 + 200)])
    st = make_stations(line, spacing=1.0)
    assert not crossing_sections(st, 500.0).any()
