"""Shared fixtures: the invented demo scenario, generated once per test session."""

from __future__ import annotations

import json
import os

import pytest
from hypothesis import settings

from trajectory.scenario.synthetic import LeveeSpec, make_centreline, write_scenario

# CI runs the property tests on hypothesis's fixed sequence (reproducible verdicts);
# local runs keep searching new examples
settings.register_profile("ci", derandomize=True, print_blob=True)
if os.environ.get("CI"):
    settings.load_profile("ci")


#: chainage where the demo line is cut in two (a multiple of the 25 m spacing)
CUT = 1500.0


@pytest.fixture(scope="session")
def demo(tmp_path_factory):
    """The full demo scenario (3 km, one epoch) with its planted truth."""
    out = tmp_path_factory.mktemp("demo")
    spec = LeveeSpec()
    paths = write_scenario(out, spec=spec, centreline=make_centreline(spec.length_m),
                           epochs=False)
    paths["truth_data"] = json.loads(paths["truth"].read_text())
    return paths


@pytest.fixture(scope="session")
def demo_result(demo, tmp_path_factory):
    """The demo assessed once with default settings, written to a GeoPackage.

    Its conditions carry safety standards and frequency lines (``standards.csv``
    with ``frequency.csv``); the design levels they give equal ``sections.csv``'s.
    """
    from trajectory.assess import RunInputs, assess
    from trajectory.params import Settings

    out = tmp_path_factory.mktemp("demo_out") / "results.gpkg"
    result = assess(RunInputs(str(demo["centreline"]), str(demo["dem"]),
                              str(demo["standards"])), out,
                    Settings(frequency=str(demo["frequency"])))
    return result, out


@pytest.fixture(scope="session")
def two_lines(demo, tmp_path_factory):
    """The demo line cut in two at CUT, ids in field `dike`, conditions per half."""
    import geopandas as gpd
    import pandas as pd
    import pyogrio
    from shapely.ops import substring

    out = tmp_path_factory.mktemp("two_lines")
    line = pyogrio.read_dataframe(demo["centreline"]).geometry.iloc[0]
    halves = [substring(line, 0.0, CUT), substring(line, CUT, line.length)]
    gdf = gpd.GeoDataFrame({"dike": ["north-a", "north-b"]}, geometry=halves, crs="EPSG:32632")
    levees = out / "levees.gpkg"
    pyogrio.write_dataframe(gdf, levees, layer="centrelines", driver="GPKG")
    # each half's sections: the demo rows clipped to the half, chainage from 0
    sec = pd.read_csv(demo["sections"])
    rows = []
    for lid, lo, hi in (("north-a", 0.0, CUT), ("north-b", CUT, line.length)):
        part = sec[(sec["to_chainage"] > lo) & (sec["from_chainage"] < hi)].copy()
        part["from_chainage"] = part["from_chainage"].clip(lo, hi) - lo
        part["to_chainage"] = part["to_chainage"].clip(lo, hi) - lo
        part.insert(0, "line_id", lid)
        rows.append(part)
    cond = out / "sections.csv"
    pd.concat(rows).to_csv(cond, index=False)
    return {"centreline": levees, "sections": cond, "dem": demo["dem"], "out": out}
