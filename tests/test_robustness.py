"""Property tests: random conditions tables and random lines give a result or a clear error.

"Clear error" means a :class:`trajectory.errors.TrajectoryError` (which the command
line prints as one line); any other exception is a traceback and fails the test.
"""

from __future__ import annotations

import csv
import io
import tempfile
from pathlib import Path

import geopandas as gpd
import numpy as np
import pytest
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st
from shapely.geometry import LineString, MultiLineString

from trajectory.assess import Result, RunInputs, run
from trajectory.errors import TrajectoryError
from trajectory.inputs.sources import (
    CONDITION_COLUMNS,
    OPTIONAL_COLUMNS,
    check_conditions_cover,
    read_conditions,
)
from trajectory.scenario.synthetic import LeveeSpec, make_centreline, write_scenario

LENGTH = 300.0
COLUMNS = list(CONDITION_COLUMNS) + list(OPTIONAL_COLUMNS)
#: the end-to-end column set (overtopping rule), for tables of the right shape
SHAPED = ["section_id", "from_chainage", "to_chainage", "water_level", "hm0", "tm10",
          "wave_angle", "q_allow", "sea_level_rise", "settlement", "roughness", "min_freeboard",
          "water_side"]


@pytest.fixture(scope="module")
def scenario(tmp_path_factory):
    out = tmp_path_factory.mktemp("robust")
    return write_scenario(out, spec=LeveeSpec().scaled(LENGTH), centreline=make_centreline(LENGTH),
                          epochs=False)


def _csv(header: list[str], rows: list[list[str]]) -> str:
    buf = io.StringIO()
    w = csv.writer(buf)
    w.writerow(header)
    w.writerows(rows)
    return buf.getvalue()


number = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True, width=64).map(repr),
    st.integers(-10**6, 10**6).map(str),
    st.sampled_from(["", " ", "nan", "NaN", "inf", "-inf", "1e400", "abc", "1,5", "0x10",
                     "left", "right", "-0", "NULL"]),
)
cell = st.one_of(number, st.text(max_size=6))


@st.composite
def any_table(draw):
    """Any header (known, unknown, missing or repeated columns) and any cells."""
    header = draw(st.lists(st.one_of(st.sampled_from(COLUMNS), st.text(max_size=5)),
                           min_size=0, max_size=16))
    rows = draw(st.lists(st.lists(cell, min_size=len(header), max_size=len(header)),
                         max_size=6))
    return _csv(header, rows)


@st.composite
def shaped_table(draw):
    """The right columns, sections tiling 0-LENGTH, values in and out of their rules."""
    n = draw(st.integers(1, 4))
    cuts = sorted(draw(st.lists(st.floats(1.0, LENGTH - 1.0), min_size=n - 1, max_size=n - 1,
                                unique=True)))
    edges = [0.0, *cuts, LENGTH + draw(st.sampled_from([0.0, 0.0, -10.0, 10.0]))]
    bad = st.one_of(st.floats(-5.0, 20.0), st.sampled_from([0.0, 1e-9, 1e4, 90.0, -1.0]))
    valid = {"water_level": (-2.0, 8.0), "hm0": (0.0, 3.0), "tm10": (0.5, 12.0),
             "wave_angle": (0.0, 90.0), "q_allow": (0.01, 200.0), "sea_level_rise": (0.0, 1.0),
             "settlement": (0.0, 1.0), "roughness": (0.3, 1.0), "min_freeboard": (0.0, 2.0)}
    rows = []
    for i in range(n):
        r = {"section_id": f"S{i}", "from_chainage": f"{edges[i]:.3f}",
             "to_chainage": f"{edges[i + 1]:.3f}"}
        for c, (lo, hi) in valid.items():
            # mostly valid values (edges of the range included), now and then a bad one
            good = st.floats(lo, hi) | st.sampled_from([lo, hi])
            r[c] = repr(draw(bad if draw(st.integers(0, 19)) == 0 else good))
        r["water_side"] = draw(st.sampled_from(["", "left", "right"]))
        rows.append([r[c] for c in SHAPED])
    return _csv(SHAPED, rows)


def _write(folder: str, text: str) -> Path:
    p = Path(folder) / "c.csv"
    p.write_text(text, encoding="utf-8")
    return p


@settings(max_examples=100, deadline=None)
@given(text=any_table())
def test_random_conditions_tables_never_give_a_traceback(text):
    with tempfile.TemporaryDirectory() as d:
        try:
            cond = read_conditions(_write(d, text))
        except TrajectoryError as exc:
            event(f"clear error: {type(exc).__name__}")
            assert str(exc)  # a message, not an empty error
            return
        event("table accepted")
        try:
            check_conditions_cover(cond, np.arange(0.0, LENGTH + 1, 25.0), source="c.csv")
        except TrajectoryError as exc:
            assert "outside every section" in str(exc)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                  HealthCheck.function_scoped_fixture])
@given(text=shaped_table())
def test_random_valid_shaped_tables_run_or_stop_clearly(scenario, text):
    with tempfile.TemporaryDirectory() as d:
        inputs = RunInputs(str(scenario["centreline"]), str(scenario["dem"]),
                           str(_write(d, text)))
        try:
            res = run(inputs)
        except TrajectoryError as exc:
            event(f"clear error: {type(exc).__name__}: {str(exc).splitlines()[-1][-40:]}")
            assert str(exc)
            return
        event("result")
        assert isinstance(res, Result)
        assert set(res.stations["status"]) <= {"ok", "watch", "deficit", "no_data"}
        finite = np.isfinite(res.stations["margin"])
        assert (res.stations["status"][~finite] == "no_data").all()


coord = st.floats(-150.0, 450.0, allow_nan=False)


@st.composite
def random_lines(draw):
    """1-3 parts of 2-8 vertices near the scenario line, repeated points allowed."""
    parts = []
    for _ in range(draw(st.sampled_from([1, 1, 1, 2, 3]))):
        if draw(st.booleans()):  # any vertices: crossings, spikes, tiny or huge lines
            pts = draw(st.lists(st.tuples(coord, coord), min_size=2, max_size=8))
        else:  # a walk of gentle bends: mostly simple lines that can be assessed
            x, y = draw(coord), draw(coord)
            heading = draw(st.floats(0.0, 2 * np.pi))
            pts = [(x, y)]
            for _ in range(draw(st.integers(1, 6))):
                heading += draw(st.floats(-0.6, 0.6))
                step = draw(st.floats(0.0, 120.0))
                x, y = x + step * np.cos(heading), y + step * np.sin(heading)
                pts.append((x, y))
        if draw(st.booleans()):
            pts.append(pts[-1])
        parts.append(pts)
    return parts, draw(st.booleans())


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                  HealthCheck.function_scoped_fixture])
@given(drawn=random_lines())
def test_random_lines_run_or_stop_clearly(scenario, drawn):
    parts, multipart = drawn
    x0, y0 = make_centreline(LENGTH).coords[0]
    shifted = [[(x0 + x, y0 + y) for x, y in p] for p in parts]
    geoms = ([MultiLineString(shifted)] if multipart else [LineString(p) for p in shifted])
    with tempfile.TemporaryDirectory() as d:
        line = Path(d) / "line.gpkg"
        gpd.GeoDataFrame({"k": range(len(geoms))}, geometry=geoms,
                         crs=LeveeSpec().crs).to_file(line, layer="centreline", driver="GPKG")
        cond = _write(d, _csv(list(CONDITION_COLUMNS),
                              [["A", "0", "100000", "4.2", "0.6", "3", "20", "1", "0.2", "0.1",
                                "1", "0.5"]]))
        try:
            res = run(RunInputs(str(line), str(scenario["dem"]), str(cond)))
        except TrajectoryError as exc:
            event(f"clear error: {type(exc).__name__}: {str(exc).splitlines()[-1][-40:]}")
            assert str(exc)
            return
        event("result")
        assert len(res.stations) >= 1
        assert set(res.stations["status"]) <= {"ok", "watch", "deficit", "no_data"}
