"""Tests of trajectory.inputs.conditions: the section-conditions input.

Truth here is constructed by the tests (synthetic tables and polygons whose
answer is known) or checked against reference libraries (shapely for
point-in-polygon, pyproj for reprojection, numpy for interpolation), and
against the published tables named beside the checks.
"""

from __future__ import annotations

from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import pytest
import shapely
from pyproj import CRS, Transformer
from shapely.geometry import LineString, box

from trajectory.errors import ConditionsError, InputError
from trajectory.formulas import hydraulics as hy
from trajectory.inputs.conditions import assign_sections, read_conditions

HEADER = ("section_id,from_chainage,to_chainage,water_level,sea_level_rise,settlement,"
          "freeboard_method,hm0,tm10,tp,wave_angle,q_allow,roughness,min_freeboard,"
          "fixed_freeboard,near_structure,water_level_end")
GOOD = [
    "A,0,100,5.0,0.2,0.1,overtopping,1.0,4.0,,20,1,grass,0.5,,,4.8",
    "B,100,250,4.8,0.2,0.1,runup,1.2,,5.5,30,,Basalt,,,,",
    "C,250,400,4.7,0.2,0.1,constant,,,,,,,,0.9,,",
    "D,400,500,4.6,0.2,0.1,cfr_riverine,,,,,,0.8,,,yes,",
    "E,500,600,4.6,0.2,0.1,CFR_coastal,1.5,6,,,,rock_two_layers_impermeable_core,,,,",
]


def _csv(tmp_path, rows, header=HEADER, name="c.csv"):
    p = tmp_path / name
    p.write_text("\n".join([header, *rows]) + "\n", encoding="utf-8")
    return p


def _findings(path, **kw) -> list[str]:
    with pytest.raises(ConditionsError) as info:
        read_conditions(path, **kw)
    return info.value.findings


def test_csv_with_every_option(tmp_path):
    cond = read_conditions(_csv(tmp_path, GOOD))
    t = cond.table
    assert list(t["section_id"]) == list("ABCDE")
    assert list(t["freeboard_method"]) == ["overtopping", "runup", "constant", "cfr_riverine",
                                           "cfr_coastal"]
    # EurOtop (2018) Table 5.2 (from memory) by name; numbers as given; empty -> 1.0
    assert t["roughness"].tolist() == [1.0, 0.90, 1.0, 0.8, 0.55]
    # Tp ≈ 1.1 Tm-1,0 (EurOtop 2018, common practice): 5.5 s -> 5.0 s
    assert t["tm10"].iloc[1] == pytest.approx(5.0)
    assert t["period_from_tp"].tolist() == [False, True, False, False, False]
    assert t["near_structure"].tolist() == [0.0, 0.0, 0.0, 1.0, 0.0]
    assert t["wave_angle"].iloc[2] == 0.0 and t["min_freeboard"].iloc[1] == 0.0


def test_old_end_to_end_csv_still_reads(tmp_path):
    # The CSV of the end-to-end issue (all hydraulic columns, numbers only)
    head = ("section_id,from_chainage,to_chainage,water_level,hm0,tm10,wave_angle,q_allow,"
            "sea_level_rise,settlement,roughness,min_freeboard")
    cond = read_conditions(_csv(tmp_path, ["S1,0,500,4.2,0.6,3,20,1,0.2,0.1,1,0.5"], head))
    assert cond.table["freeboard_method"].tolist() == ["overtopping"]


def test_out_of_range_values_name_row_column_and_rule(tmp_path):
    rows = [
        "A,0,100,5.0,0.2,0.1,overtopping,-1.0,4.0,,20,1,grass,,,,",       # row 2: hm0 < 0
        "B,100,200,5.0,0.2,0.1,overtopping,1.0,0,,20,1,grass,,,,",        # row 3: tm10 = 0
        "C,200,300,5.0,0.2,0.1,overtopping,1.0,4,,20,0,grass,,,,",        # row 4: q_allow 0
        "D,300,400,5.0,0.2,0.1,overtopping,1.0,4,,20,1,granite_setts,,,,",  # row 5
        "E,400,500,5.0,0.2,0.1,overtopping,1.0,4,,95,1,grass,,,,",        # row 6: angle
        "F,500,600,5.0,0.2,0.1,wall_rule,1.0,4,,20,1,grass,,,,",          # row 7: method
        "G,600,700,5.0,0.2,0.1,overtopping,1.0,,0,20,1,grass,,,,",        # row 8: tp = 0
    ]
    f = _findings(_csv(tmp_path, rows))
    text = "\n".join(f)
    assert "row 2, column hm0: -1 breaks the rule 0 <= number" in text
    assert "row 3, column tm10: 0 breaks the rule 0 < number" in text
    assert "row 4, column q_allow: 0 breaks the rule 0 < number" in text
    assert "row 5, column roughness: unknown revetment type 'granite_setts'" in text
    assert "basalt" in text  # the valid names are listed
    assert "row 6, column wave_angle: 95 breaks the rule 0 <= number <= 90" in text
    assert "row 7, column freeboard_method: 'wall_rule' breaks the rule one of" in text
    assert "row 8, column tp: 0 breaks the rule 0 < number" in text
    assert len(f) == 7


def test_what_each_method_needs(tmp_path):
    rows = [
        "A,0,100,5.0,0.2,0.1,overtopping,1.0,4.0,,20,,,,,,",   # no q_allow
        "B,100,200,5.0,0.2,0.1,runup,,4.0,,,,,,,,",            # no hm0
        "C,200,300,5.0,0.2,0.1,constant,,,,,,,,,,",            # no fixed_freeboard
        "D,300,400,5.0,0.2,0.1,cfr_coastal,1.0,4.0,4.4,,,,,,,",  # two periods
        "E,400,500,5.0,0.2,0.1,runup,1.0,,,,,,,,,",            # no period
        "F,500,600,5.0,0.2,0.1,cfr_riverine,,,,,,,,,maybe,",   # not yes/no
        "G,600,700,,0.2,0.1,cfr_riverine,,,,,,,,,,",           # no water level
    ]
    text = "\n".join(_findings(_csv(tmp_path, rows)))
    assert "row 2, column q_allow: empty" in text
    assert "row 3, column hm0: empty" in text
    assert "row 4, column fixed_freeboard: empty" in text
    assert "row 5, columns tm10 and tp: give one period, not both" in text
    assert "row 6, columns tm10/tp: both empty" in text
    assert "row 7, column near_structure: 'maybe' must be yes or no" in text
    assert "row 8, column water_level: empty" in text


def test_gaps_and_overlaps_are_refused(tmp_path):
    rows = [
        "A,0,100,5,0,0,constant,,,,,,,,1,,",
        "B,120,200,5,0,0,constant,,,,,,,,1,,",   # gap 100-120
        "C,190,300,5,0,0,constant,,,,,,,,1,,",   # overlaps B
    ]
    text = "\n".join(_findings(_csv(tmp_path, rows)))
    assert "gap in chainage between section 'A' (row 2, to 100 m) and 'B' (row 3" in text
    assert "sections 'B' (row 3) and 'C' (row 4) overlap (190-200 m)" in text


def test_geopackage_table_reads_like_the_csv(tmp_path):
    csv = read_conditions(_csv(tmp_path, GOOD)).table
    raw = pd.read_csv(_csv(tmp_path, GOOD), dtype=str, keep_default_na=False)
    # typed columns as a GIS would store them
    for c in ("from_chainage", "to_chainage", "water_level", "sea_level_rise", "settlement"):
        raw[c] = raw[c].astype(float)
    gpkg = tmp_path / "c.gpkg"
    pyogrio.write_dataframe(raw, gpkg, layer="sections", driver="GPKG")
    pyogrio.write_dataframe(raw.iloc[:1], gpkg, layer="other", driver="GPKG", append=False)
    with pytest.raises(InputError, match="--conditions-layer"):
        read_conditions(gpkg)
    table = read_conditions(gpkg, layer="sections").table
    cols = [c for c in csv.columns if c != "_row"]
    pd.testing.assert_frame_equal(table[cols], csv[cols], check_dtype=False)
    # a bad value is reported by feature number
    raw.loc[2, "settlement"] = -1.0
    bad = tmp_path / "bad.gpkg"
    pyogrio.write_dataframe(raw, bad, layer="sections", driver="GPKG")
    assert any(f.startswith("row 3, column settlement: -1") for f in _findings(bad))


def _polygon_file(tmp_path, polys, crs="EPSG:32632", name="p.gpkg"):
    ids = [f"P{i}" for i in range(len(polys))]
    gdf = gpd.GeoDataFrame({"section_id": ids, "water_level": [5.0] * len(polys),
                            "sea_level_rise": 0.0, "settlement": 0.0,
                            "freeboard_method": "constant", "fixed_freeboard": 1.0},
                           geometry=polys, crs=crs)
    p = tmp_path / name
    pyogrio.write_dataframe(gdf, p, layer="sections", driver="GPKG")
    return p


def test_polygons_spatial_join(tmp_path):
    # Truth constructed: three boxes tiling 0-300 m along x; shapely decides containment
    polys = [box(0, -50, 100, 50), box(100, -50, 180, 50), box(180, -50, 300, 50)]
    cond = read_conditions(_polygon_file(tmp_path, polys), target_crs=CRS("EPSG:32632"))
    x = np.arange(5.0, 300.0, 10.0)
    y = np.zeros_like(x)
    idx, cond2 = assign_sections(cond, x, x, y, source="p.gpkg")
    truth = np.array([next(i for i, p in enumerate(polys)
                           if shapely.contains(p, shapely.Point(a, 0))) for a in x])
    np.testing.assert_array_equal(idx, truth)
    # chainage ranges from the first and last station of each section
    assert cond2.table["from_chainage"].tolist() == [5.0, 105.0, 185.0]
    assert cond2.table["to_chainage"].tolist() == [95.0, 175.0, 295.0]
    # a station on the shared edge x = 100 goes to the first polygon in file order
    edge, _ = assign_sections(cond, np.array([100.0]), np.array([100.0]), np.zeros(1),
                              source="p.gpkg")
    assert edge.tolist() == [0]
    # a station outside every polygon: a gap, refused
    with pytest.raises(ConditionsError, match="no section polygon"):
        assign_sections(cond, np.array([0.0, 350.0]), np.array([50.0, 350.0]),
                        np.zeros(2), source="p.gpkg")


def test_polygons_overlap_and_reprojection(tmp_path):
    polys = [box(0, -50, 120, 50), box(100, -50, 200, 50)]
    text = "\n".join(_findings(_polygon_file(tmp_path, polys)))
    # overlap area 20 m x 100 m = 2000 m² (constructed)
    assert "section polygons 'P0' (row 1) and 'P1' (row 2) overlap (2000.0 m²)" in text
    # polygons stored in another CRS come back in the working CRS (pyproj reference)
    tr = Transformer.from_crs("EPSG:32632", "EPSG:4326", always_xy=True)
    sq = box(500000, 5500000, 500100, 5500100)
    geo = shapely.transform(sq, lambda xy: np.column_stack(tr.transform(xy[:, 0], xy[:, 1])))
    cond = read_conditions(_polygon_file(tmp_path, [geo], crs="EPSG:4326", name="g.gpkg"),
                           target_crs=CRS("EPSG:32632"))
    back = cond.polygons[0]
    assert back.contains(shapely.Point(500050, 5500050))
    assert back.area == pytest.approx(1e4, rel=1e-3)


def test_polygon_layer_must_be_polygons(tmp_path):
    gdf = gpd.GeoDataFrame({"section_id": ["a"]}, geometry=[LineString([(0, 0), (1, 1)])],
                           crs="EPSG:32632")
    p = tmp_path / "l.gpkg"
    pyogrio.write_dataframe(gdf, p, layer="lines", driver="GPKG")
    with pytest.raises(InputError, match="polygons"):
        read_conditions(p)


def test_roughness_names_match_published_table(tmp_path):
    # EurOtop (2018) Table 5.2 (from memory): every registry name is accepted
    rows = [f"S{i},{i * 10},{i * 10 + 10},5,0,0,overtopping,1,4,,,1,{name},,,,"
            for i, name in enumerate(hy.ROUGHNESS)]
    t = read_conditions(_csv(tmp_path, rows)).table
    assert t["roughness"].tolist() == list(hy.ROUGHNESS.values())
    # the README documents every name and value of the table
    readme = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
    for name, value in hy.ROUGHNESS.items():
        line = next(r for r in readme.splitlines() if f"`{name}`" in r and r.startswith("|"))
        assert float(line.split("|")[-2]) == value, name


def test_demo_with_section_polygons_matches_the_table(demo, demo_result, tmp_path):
    # Truth constructed: polygons cut from a buffer of the demo centreline at the
    # section boundaries carry the same conditions as the chainage table, so every
    # station off a boundary gets the same required level (stations on a shared
    # boundary may go to either neighbour).
    from trajectory.assess import RunInputs, run
    from trajectory.geometry.chainage import make_stations
    from trajectory.params import Settings

    result, _ = demo_result
    table = pd.read_csv(demo["sections"])
    line = gpd.read_file(demo["centreline"]).geometry.iloc[0]
    s = Settings()
    cuts = table["from_chainage"].to_numpy()[1:]
    st = make_stations(line, spacing=s.spacing, smooth_length=s.smooth_length)
    k = np.searchsorted(st.chainage, cuts)
    assert np.allclose(st.chainage[k], cuts)  # the boundaries fall on stations
    pieces = shapely.ops.split(
        line.buffer(40.0, cap_style="flat"),
        shapely.MultiLineString([[(st.x[i] - 80 * st.nx[i], st.y[i] - 80 * st.ny[i]),
                                  (st.x[i] + 80 * st.nx[i], st.y[i] + 80 * st.ny[i])]
                                 for i in k]))
    mids = [line.interpolate((a + b) / 2) for a, b in
            zip(table["from_chainage"], table["to_chainage"], strict=True)]
    polys = [next(p for p in pieces.geoms if p.contains(m)) for m in mids]
    gdf = gpd.GeoDataFrame(table.drop(columns=["from_chainage", "to_chainage"]),
                           geometry=polys, crs=gpd.read_file(demo["centreline"]).crs)
    path = tmp_path / "polys.gpkg"
    pyogrio.write_dataframe(gdf, path, layer="sections", driver="GPKG")
    res = run(RunInputs(str(demo["centreline"]), str(demo["dem"]), str(path)), s)
    a, b = result.stations, res.stations
    off = ~np.isin(a["chainage"].to_numpy(), cuts)
    assert off.sum() > 100
    np.testing.assert_array_equal(a["section_id"][off], b["section_id"][off])
    np.testing.assert_allclose(a["required_level"][off], b["required_level"][off])
    on = ~off
    assert set(b["section_id"][on]) <= set(table["section_id"])


def test_cli_reads_a_geopackage_layer_with_tp_and_revetment_names(demo, demo_result, tmp_path):
    # The same conditions written as Tp = 1.1 Tm-1,0 (EurOtop 2018, common practice)
    # and revetment names for the numbers (EurOtop 2018 Table 5.2: grass 1.0,
    # basalt 0.9, from memory) give the same required levels as the demo table.
    from click.testing import CliRunner

    from trajectory.frontends.cli import main

    result, _ = demo_result
    t = pd.read_csv(demo["sections"])
    t["tp"] = t.pop("tm10") * 1.1
    t["roughness"] = t["roughness"].map({1.0: "grass", 0.9: "Basalt"})
    assert t["roughness"].notna().all()
    gpkg = tmp_path / "conditions.gpkg"
    pyogrio.write_dataframe(t, gpkg, layer="sections", driver="GPKG")
    pyogrio.write_dataframe(t.iloc[:1], gpkg, layer="draft", driver="GPKG")
    out = tmp_path / "r.gpkg"
    args = ["assess", "--centreline", str(demo["centreline"]), "--dem", str(demo["dem"]),
            "--conditions", str(gpkg), "--conditions-layer", "sections", "--out", str(out),
            "--quiet"]
    res = CliRunner().invoke(main, args)
    assert res.exit_code == 0, res.output
    st = pyogrio.read_dataframe(out, layer="stations", read_geometry=False)
    assert (st["period_source"] == "tp/1.1").all()
    np.testing.assert_allclose(st["required_level"], result.stations["required_level"],
                               rtol=1e-9)
