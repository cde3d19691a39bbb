"""The demo scenario end to end: planted truth comes out where it was planted.

The truth is what the synthetic generator built (tests/conftest.py); the
expected statuses follow from it and the EurOtop (2018) requirement.
"""

from __future__ import annotations

import numpy as np
import pyogrio

from trajectory.outputs.schema import LAYERS, field_names


def _status_at(stations, lo, hi):
    sel = (stations["chainage"] >= lo) & (stations["chainage"] <= hi)
    return stations.loc[sel, "status"]


def test_planted_low_stretches_are_deficit(demo, demo_result):
    result, _ = demo_result
    st = result.stations
    for low in demo["truth_data"]["low_stretches"]:
        inside = _status_at(st, low["full_depth_from"], low["full_depth_to"])
        assert inside.size >= 3
        assert (inside == "deficit").all(), (low, inside.tolist())


def test_healthy_levee_is_ok(demo, demo_result):
    result, _ = demo_result
    st = result.stations
    truth = demo["truth_data"]
    bad = np.zeros(len(st), bool)
    for low in truth["low_stretches"]:
        bad |= (st["chainage"] >= low["from_chainage"] - 25) & (
            st["chainage"] <= low["to_chainage"] + 25)
    healthy = st.loc[~bad, "status"]
    # nodata holes may make a station no_data; every other healthy station is ok
    assert (healthy.isin(["ok", "no_data"])).all()
    assert (healthy == "ok").mean() > 0.95


def test_measured_geometry_matches_the_planted_levee(demo, demo_result):
    result, _ = demo_result
    st = result.stations
    truth = demo["truth_data"]
    plain = np.ones(len(st), bool)
    for key in ("low_stretches", "berms", "water_stretches", "hedges"):
        for f in truth[key]:
            plain &= ~((st["chainage"] >= f["from_chainage"] - 30)
                       & (st["chainage"] <= f["to_chainage"] + 30))
    sub = st.loc[plain & (st["status"] != "no_data")]
    # slopes within 5 % of the planted 1:n
    assert abs(np.nanmedian(sub["outer_slope"]) / truth["outer_slope_cot"] - 1) < 0.05
    assert abs(np.nanmedian(sub["inner_slope"]) / truth["inner_slope_cot"] - 1) < 0.05
    assert abs(np.nanmedian(sub["crest_width"]) - truth["crest_width_m"]) <= 0.5
    # the crest undulates by +-0.1 m around the nominal level
    assert abs(np.nanmedian(sub["crest_level"]) - truth["nominal_crest_level"]) < 0.1


def test_geopackage_has_every_contract_layer_and_field(demo_result):
    _, out = demo_result
    layers = {name: geom for name, geom in pyogrio.list_layers(out)}
    for name, (geom, _) in LAYERS.items():
        assert name in layers
        info = pyogrio.read_info(out, layer=name)
        assert list(info["fields"]) == field_names(name), name
        if geom is not None:
            assert info["geometry_type"] == geom
    st = pyogrio.read_dataframe(out, layer="stations")
    assert set(st["status"]) <= {"ok", "watch", "deficit", "no_data"}
    ok = st["status"] != "no_data"
    assert np.allclose(st.loc[ok, "margin"], st.loc[ok, "crest_level"]
                       - st.loc[ok, "required_level"])
    assert np.allclose(st.loc[ok, "freeboard"], st.loc[ok, "required_level"]
                       - st.loc[ok, "water_level"] - st.loc[ok, "sea_level_rise"]
                       - st.loc[ok, "settlement"])


def test_stretches_tile_the_line(demo_result):
    _, out = demo_result
    s = pyogrio.read_dataframe(out, layer="stretches")
    assert s["from_chainage"].iloc[0] == 0.0
    assert np.allclose(s["from_chainage"].iloc[1:].to_numpy(), s["to_chainage"].iloc[:-1])
    assert abs(s["length"].sum() - 3000.0) < 1e-6
    # stretch geometries follow the centreline: their length equals the chainage span
    assert np.allclose(s.geometry.length, s["length"], atol=1e-6)


def test_crest_line_is_3d_at_the_crest_level(demo_result):
    _, out = demo_result
    cl = pyogrio.read_dataframe(out, layer="crest_line")
    z = np.concatenate([np.asarray(g.coords)[:, 2] for g in cl.geometry])
    assert 5.0 < z.min() and z.max() < 6.5


def test_metadata_records_inputs_and_caution(demo_result):
    _, out = demo_result
    meta = pyogrio.read_dataframe(out, layer="run_metadata")
    kv = dict(zip(meta["key"], meta["value"], strict=True))
    assert "qualified engineer" in kv["caution"]
    assert len(kv["sha256_dem"]) == 64
    assert kv["param_spacing"] == "25.0"


def test_deficit_table_rows_and_caution(demo_result):
    import pandas as pd

    result, out = demo_result
    csv = out.with_suffix(".csv")
    first = csv.read_text().splitlines()[0]
    assert first.startswith("#") and "qualified engineer" in first
    t = pd.read_csv(csv, comment="#")
    assert list(t.columns) == field_names("stations")
    assert len(t) == len(result.stations)
