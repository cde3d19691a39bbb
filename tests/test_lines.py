"""Several centrelines in one run.

Constructed truth: the demo line cut in two at chainage 1500 m and given two
ids must give, station for station, what the single line gives (each half with
its own chainage from 0), its conditions rows shifted to the half's chainage.
"""

from __future__ import annotations

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import pytest
from click.testing import CliRunner
from conftest import CUT
from shapely.geometry import LineString

from trajectory.assess import RunInputs, run
from trajectory.errors import ConditionsError, InputError
from trajectory.frontends.cli import main
from trajectory.outputs.schema import LAYERS
from trajectory.params import Settings


def test_each_line_has_its_own_chainage_and_the_single_line_results(two_lines, demo_result):
    single, _ = demo_result
    res = run(RunInputs(str(two_lines["centreline"]), str(two_lines["dem"]),
                        str(two_lines["sections"]), line_id_field="dike"), Settings())
    st = res.stations
    assert list(dict.fromkeys(st["line_id"])) == ["north-a", "north-b"]
    ref = single.stations.set_index("chainage")
    cols = ["crest_level", "required_level", "margin", "outer_slope", "crest_width"]
    for lid, shift in (("north-a", 0.0), ("north-b", CUT)):
        part = st[st["line_id"] == lid]
        assert part["chainage"].iloc[0] == 0.0
        # interior stations (the end ones see a clipped tangent) match the single line
        inner = part.iloc[1:-1]
        expect = ref.loc[inner["chainage"].to_numpy() + shift]
        assert (inner["status"].to_numpy() == expect["status"].to_numpy()).all()
        np.testing.assert_allclose(inner[cols].to_numpy(float), expect[cols].to_numpy(float),
                                   atol=1e-6, equal_nan=True)
    # stretches tile each line separately
    sl = res.stretches
    lid = st["line_id"].to_numpy()[sl.first]
    assert (lid == st["line_id"].to_numpy()[sl.last]).all()
    for name in ("north-a", "north-b"):
        length = res.lines[name].length
        assert abs(sl.length[lid == name].sum() - length) < 1e-6


def test_cli_writes_one_geopackage_with_a_line_id_on_every_layer(two_lines):
    out = two_lines["out"] / "both.gpkg"
    r = CliRunner().invoke(main, [
        "assess", "--centreline", str(two_lines["centreline"]), "--dem", str(two_lines["dem"]),
        "--conditions", str(two_lines["sections"]), "--out", str(out), "--line-id-field",
        "dike", "--quiet"])
    assert r.exit_code == 0, r.output
    for layer in ("stations", "cross_sections", "crest_line", "stretches"):
        # right after the leading chainage field (the first column of every table)
        assert LAYERS[layer][1][1].name == "line_id"
        df = pyogrio.read_dataframe(out, layer=layer)
        assert set(df["line_id"]) == {"north-a", "north-b"}, layer
    st = pyogrio.read_dataframe(out, layer="stretches")
    for name, g in st.groupby("line_id"):
        # stretch geometries follow their own line: length equals the chainage span
        assert np.allclose(g.geometry.length, g["length"], atol=1e-6), name
        assert g["from_chainage"].min() == 0.0


def test_conditions_problems_name_the_line_and_the_file_row(two_lines, tmp_path):
    t = pd.read_csv(two_lines["sections"])
    bad_row = int(np.flatnonzero(t["line_id"] == "north-b")[1])
    t.loc[bad_row, "hm0"] = -1.0
    bad = tmp_path / "bad.csv"
    t.to_csv(bad, index=False)
    with pytest.raises(ConditionsError) as err:
        run(RunInputs(str(two_lines["centreline"]), str(two_lines["dem"]), str(bad),
                      line_id_field="dike"))
    # the header is file row 1, so table row k is file row k + 2
    assert f"line 'north-b': row {bad_row + 2}, column hm0" in str(err.value)


def test_a_line_without_conditions_and_a_missing_id_field_are_refused(two_lines, tmp_path):
    t = pd.read_csv(two_lines["sections"])
    only_a = tmp_path / "only_a.csv"
    t[t["line_id"] == "north-a"].to_csv(only_a, index=False)
    with pytest.raises(ConditionsError, match="no rows for line 'north-b'"):
        run(RunInputs(str(two_lines["centreline"]), str(two_lines["dem"]), str(only_a),
                      line_id_field="dike"))
    with pytest.raises(InputError, match="no field 'name'"):
        run(RunInputs(str(two_lines["centreline"]), str(two_lines["dem"]),
                      str(two_lines["sections"]), line_id_field="name"))


def test_several_lines_are_read_by_the_single_line_rules(tmp_path):
    """Each line of a multi-line file passes the same checks as a single centreline
    (sources.line_from_parts): the gap tolerance, and no self-crossing. Constructed
    geometry: line a has two parts 3 m apart; line b crosses itself at (50, 0)."""
    from trajectory.inputs.lines import read_centrelines

    a = [LineString([(0, 0), (100, 0)]), LineString([(103, 0), (200, 0)])]
    b = [LineString([(0, 50), (100, 50)])]
    path = tmp_path / "lines.gpkg"
    gdf = gpd.GeoDataFrame({"dike": ["a", "a", "b"]}, geometry=a + b, crs="EPSG:32632")
    pyogrio.write_dataframe(gdf, path, layer="l", driver="GPKG")
    with pytest.raises(InputError, match=r"line 'a'.*gap"):
        read_centrelines(path, id_field="dike")
    lines, _ = read_centrelines(path, id_field="dike", gap_tolerance=5.0)
    assert [c.line_id for c in lines] == ["a", "b"]
    assert lines[0].line.length == pytest.approx(200.0)   # 100 + the 3 m gap closed + 97
    loop = LineString([(0, 0), (100, 0), (100, 10), (50, 10), (50, -10)])
    gdf = gpd.GeoDataFrame({"dike": ["a", "b"]}, geometry=[b[0], loop], crs="EPSG:32632")
    pyogrio.write_dataframe(gdf, tmp_path / "loop.gpkg", layer="l", driver="GPKG")
    with pytest.raises(InputError, match=r"line .b.*crosses itself at \(50\.0, 0\.0\)"):
        read_centrelines(tmp_path / "loop.gpkg", id_field="dike")
