"""Known structures and accepted exceptions: matching, validation, and end to end on the demo.

Synthetic truth: the tests construct chainage ranges and polygons whose stations
are known (polygon containment checked against shapely, the reference library).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyogrio
import pytest
import shapely
from click.testing import CliRunner
from shapely.geometry import box

from trajectory.errors import InputError
from trajectory.frontends.cli import EXIT_INPUT, main
from trajectory.judgement.status import absorb_short_runs
from trajectory.judgement.structures import Structures, match_structures, validate_structures


def _structures(rows, polygons=None):
    df = pd.DataFrame(rows)
    polys = tuple(polygons) if polygons is not None else (None,) * len(df)
    t = validate_structures(df, has_polygons=np.array([p is not None for p in polys]),
                            source="test.csv")
    return Structures(t, polys, "test.csv")


def test_chainage_ranges_polygons_and_the_strongest_effect():
    ch = np.arange(0.0, 501.0, 25.0)
    x, y = ch.copy(), np.zeros_like(ch)            # a straight line along x
    poly = box(190.0, -5.0, 260.0, 5.0)            # covers 200, 225, 250
    s = _structures([
        {"kind": "crest_wall", "effect": "crest_level", "from_chainage": "100",
         "to_chainage": "150", "crest_level": "6.5", "note": "wall"},
        {"kind": "ramp", "effect": "exclude", "from_chainage": "150", "to_chainage": "175"},
        {"kind": "culvert", "effect": "note", "note": "pipe"},
        {"kind": "gate", "effect": "note", "from_chainage": "400", "to_chainage": "425",
         "line_id": "other line"},
    ], polygons=[None, None, poly, None])
    m = match_structures(s, ch, x, y, line_id="")
    at = {c: i for i, c in enumerate(ch)}
    # the range is inclusive at both ends
    assert m.effect[at[100.0]] == m.effect[at[125.0]] == "crest_level"
    assert m.crest_level[at[100.0]] == 6.5
    # 150 lies in the wall and the ramp: exclude wins, both ids listed, no crest level
    assert m.effect[at[150.0]] == "exclude" and m.structure_id[at[150.0]] == "S1;S2"
    assert np.isnan(m.crest_level[at[150.0]])
    # the polygon: the stations shapely says it contains
    inside = shapely.contains_xy(poly, x, y)
    assert (m.effect == "note")[inside].all() and inside.sum() == 3
    assert m.note[at[225.0]] == "pipe"
    # a structure of another line does not apply
    assert m.effect[at[400.0]] == "" and m.stations[3] == 0
    assert m.stations.tolist() == [3, 2, 3, 0]


def test_every_bad_row_is_reported_at_once():
    with pytest.raises(InputError) as e:
        _structures([
            {"kind": "bridge", "effect": "note", "from_chainage": "0", "to_chainage": "10"},
            {"kind": "gate", "effect": "skip", "from_chainage": "0", "to_chainage": "10"},
            {"kind": "crest_wall", "effect": "crest_level", "from_chainage": "0",
             "to_chainage": "10"},
            {"kind": "ramp", "effect": "exclude", "from_chainage": "20", "to_chainage": "10"},
            {"kind": "ramp", "effect": "exclude"},
        ])
    text = str(e.value)
    assert "5 problem(s)" in text
    for needle in ("row 2, column kind: 'bridge'", "row 3, column effect: 'skip'",
                   "row 4, column crest_level", "row 5: to_chainage", "row 6: give"):
        assert needle in text


def test_an_excluded_run_neither_absorbs_nor_is_absorbed():
    ch = 25.0 * np.arange(8)
    st = np.array(["ok", "ok", "deficit", "excluded", "ok", "ok", "ok", "ok"], dtype=object)
    got = absorb_short_runs(ch, st, start=-12.5, end=187.5, min_length=50.0)
    # the short deficit stays (it is more severe than ok), the excluded ramp stays
    assert got.tolist()[2:4] == ["deficit", "excluded"]
    st2 = np.array(["deficit"] * 3 + ["excluded"] + ["deficit"] * 3, dtype=object)
    got2 = absorb_short_runs(25.0 * np.arange(7), st2, start=-12.5, end=162.5,
                             min_length=100.0)
    assert got2[3] == "excluded"


# ---------------------------------------------------------------- end to end
def _args(demo, out):
    return ["assess", "--centreline", str(demo["centreline"]), "--dem", str(demo["dem"]),
            "--conditions", str(demo["sections"]), "--out", str(out), "--quiet"]


@pytest.fixture(scope="module")
def with_structures(demo, demo_result, tmp_path_factory):
    """The demo assessed with its structures table, given in a run file."""
    tmp = tmp_path_factory.mktemp("structures")
    cfg = tmp / "run.toml"
    cfg.write_text(f"[parameters]\nstructures_file = {str(demo['structures'])!r}\n")
    out = tmp / "r.gpkg"
    res = CliRunner().invoke(main, _args(demo, out) + ["--config", str(cfg),
                                                       "--report", str(tmp / "r.html")])
    assert res.exit_code == 0, res.output
    return out, tmp / "r.html"


def test_demo_structures_change_the_verdict_as_declared(demo, demo_result, with_structures):
    out, report = with_structures
    plain = demo_result[0].stations.set_index("chainage")
    st = pyogrio.read_dataframe(out, layer="stations").set_index("chainage")
    table = pd.read_csv(demo["structures"])
    for r in table.itertuples(index=False):
        at = st[(st.index >= r.from_chainage) & (st.index <= r.to_chainage)]
        assert len(at) >= 1 and (at["structure_id"] == r.structure_id).all()
        ref = plain.loc[at.index]
        # the ground reading is the one of the run without structures
        np.testing.assert_allclose(at["ground_crest_level"], ref["crest_level"])
        if r.effect == "crest_level":
            assert (at["crest_level"] == r.crest_level).all()
            np.testing.assert_allclose(at["margin"], r.crest_level - ref["required_level"])
            assert at["flags"].str.contains("crest_from_structure").all()
            assert (ref["status"] == "deficit").all() and (at["status"] == "ok").all()
        elif r.effect == "exclude":
            assert (at["status"] == "excluded").all()
        else:
            assert (at["status"] == ref["status"]).all()
            assert (at["structure_note"] == r.note).all()
    # no crest remedy over an excluded or given-crest station, no piping berm over an
    # excluded one (a crest wall does not lengthen the seepage path); the table is kept
    from trajectory.judgement.remedies import OPTIONS

    opt = pyogrio.read_dataframe(out, layer="options")
    crest = opt["option"].isin(OPTIONS)
    for r in table[table["effect"] != "note"].itertuples(index=False):
        over = (opt["from_chainage"] < r.to_chainage) & (opt["to_chainage"] > r.from_chainage)
        assert not (over & (crest | (r.effect == "exclude"))).any()
    kept = pyogrio.read_dataframe(out, layer="structures")
    assert kept["structure_id"].tolist() == table["structure_id"].tolist()
    assert (kept["stations"] >= 1).all()
    meta = pyogrio.read_dataframe(out, layer="run_metadata")
    kv = dict(zip(meta["key"], meta["value"], strict=True))
    assert kv["param_structures_file"] == str(demo["structures"])
    assert len(kv["sha256_structures"]) == 64
    # the report lists every structure with its effect
    text = report.read_text(encoding="utf-8")
    assert "Known structures and accepted exceptions" in text
    for r in table.itertuples(index=False):
        assert f"<td>{r.structure_id}</td>" in text


def test_a_bad_structures_file_is_a_one_line_error(demo, tmp_path):
    bad = tmp_path / "s.csv"
    bad.write_text("kind,effect,from_chainage,to_chainage\nwall,exclude,0,10\n")
    res = CliRunner().invoke(main, _args(demo, tmp_path / "r.gpkg")
                             + ["--structures-file", str(bad)])
    assert res.exit_code == EXIT_INPUT
    assert "row 2, column kind: 'wall'" in res.output and "Traceback" not in res.output
    assert not (tmp_path / "r.gpkg").exists()


def test_a_given_crest_level_is_what_holds_the_return_period(demo, tmp_path):
    """Where a structure gives the crest (a wall's top), the return period held is that
    of the given crest: a crest above the level that holds the standard today holds more
    than the standard, below it less (the held solver's own definition, held.py)."""
    out = tmp_path / "r.gpkg"
    res = CliRunner().invoke(main, [
        "assess", "--centreline", str(demo["centreline"]), "--dem", str(demo["dem"]),
        "--conditions", str(demo["standards"]), "--frequency", str(demo["frequency"]),
        "--structures-file", str(demo["structures"]), "--out", str(out), "--quiet"])
    assert res.exit_code == 0, res.output
    st = pyogrio.read_dataframe(out, layer="stations", read_geometry=False)
    wall = st[(st["structure_effect"] == "crest_level") & (st["held_range"] == "within")]
    assert len(wall) >= 2
    above = wall["crest_level"] > wall["standard_level"]
    holds = wall["return_period_held"] >= wall["standard_return_period"]
    assert (above == holds).all()
    # and the stations without a structure keep the same relation
    plain = st[(st["structure_effect"] == "") & (st["held_range"] == "within")]
    assert ((plain["crest_level"] > plain["standard_level"])
            == (plain["return_period_held"] >= plain["standard_return_period"])).all()
