"""The XLSX workbook opens with openpyxl and holds what the CSV tables hold."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from openpyxl import load_workbook

from trajectory.outputs.schema import LAYERS, field_names
from trajectory.outputs.table import stretch_table_path
from trajectory.outputs.workbook import FIRST_DATA_ROW


def _sheet_rows(ws):
    rows = list(ws.iter_rows(values_only=True))
    return rows[0][0], list(rows[1]), list(rows[2]), rows[FIRST_DATA_ROW - 1:]


def _same(a, b) -> bool:
    if isinstance(b, float) and math.isnan(b):
        return a is None
    if isinstance(b, (float, np.floating, int, np.integer)) and not isinstance(b, bool):
        return a is not None and abs(float(a) - float(b)) <= 5e-5   # CSV keeps 4 decimals
    return (a if a is not None else "") == (b if isinstance(b, str) else str(b))


def _compare(ws, csv_path):
    caution, names, units, rows = _sheet_rows(ws)
    assert "qualified engineer" in caution
    t = pd.read_csv(csv_path, comment="#", keep_default_na=True)
    assert names == list(t.columns)
    assert len(rows) == len(t)
    for r, (_, ref) in zip(rows, t.iterrows(), strict=True):
        for a, b, col in zip(r, ref.tolist(), names, strict=True):
            b = "" if (col in ("flags", "section_id") and isinstance(b, float)
                       and math.isnan(b)) else b
            assert _same(a, b), (col, a, b)
    return names, units, rows


def test_stations_sheet_matches_the_csv(demo_result):
    _, out = demo_result
    wb = load_workbook(out.with_suffix(".xlsx"), read_only=True)
    # the demo gives flood damage and a discount rate: van Dantzig per section
    assert wb.sheetnames == ["stations", "stretches", "options", "piping_stretches", "economics",
                             "run"]
    names, units, _ = _compare(wb["stations"], out.with_suffix(".csv"))
    assert names == field_names("stations")
    assert units == [f.unit or None for f in LAYERS["stations"][1]]


def test_stretches_sheet_matches_its_csv_sorted_by_chainage_with_a_severity_rank(demo_result):
    _, out = demo_result
    wb = load_workbook(out.with_suffix(".xlsx"), read_only=True)
    names, _, rows = _compare(wb["stretches"], stretch_table_path(out.with_suffix(".csv")))
    start = [r[names.index("from_chainage")] for r in rows]
    assert start == sorted(start)
    # ranked by worst margin: rank 1 the smallest, unreadable stretches last
    rank = [r[names.index("severity_rank")] for r in rows]
    assert sorted(rank) == list(range(1, len(rows) + 1))
    worst = [r[names.index("worst_margin")] for _, r in sorted(zip(rank, rows, strict=True))]
    finite = [w for w in worst if w is not None]
    assert finite == sorted(finite) and worst[:len(finite)] == finite
    vol = [r[names.index("fill_volume")] for r in rows]
    status = [r[names.index("status")] for r in rows]
    assert all((v > 0) == (s == "deficit") for v, s in zip(vol, status, strict=True))


def test_options_sheet_holds_the_options_layer_with_the_cheapest_marked(demo_result):
    import pyogrio

    _, out = demo_result
    wb = load_workbook(out.with_suffix(".xlsx"))
    caution, names, units, rows = _sheet_rows(wb["options"])
    assert "qualified engineer" in caution and "estimate" in caution
    assert names == field_names("options")
    assert units == [f.unit or None for f in LAYERS["options"][1]]
    layer = pyogrio.read_dataframe(out, layer="options")
    assert len(rows) == len(layer) > 0
    for r, (_, ref) in zip(rows, layer.iterrows(), strict=True):
        assert _same(r[names.index("fill_volume")], float(ref["fill_volume"]))
        # the option's name as it is: the cheapest is its own column, no mark in the value
        assert r[names.index("option")] == ref["option"]
        assert bool(ref["cheapest"]) == bool(r[names.index("cheapest")])
    ws = wb["options"]
    bold = [ws.cell(row=FIRST_DATA_ROW + k, column=1).font.bold for k in range(len(rows))]
    assert bold == [bool(c) for c in layer["cheapest"]]


def test_asset_register_columns_coordinates_units_filter_and_formats(demo_result):
    # reference: pyproj for WGS 84; openpyxl (a spreadsheet reader) for panes, filter, formats
    from pyproj import Transformer

    result, out = demo_result
    t = pd.read_csv(out.with_suffix(".csv"), comment="#")
    lon, lat = Transformer.from_crs(result.crs, "EPSG:4326", always_xy=True).transform(
        t["x"].to_numpy(), t["y"].to_numpy())
    assert np.allclose(t["lon"], lon, atol=2e-7) and np.allclose(t["lat"], lat, atol=2e-7)
    # the stations lie on the centreline: x/y are the station points
    from shapely.geometry import Point

    assert max(result.line.distance(Point(x, y)) for x, y in zip(t["x"], t["y"],
                                                                 strict=True)) < 1e-3
    # the CSV's units line is aligned with its header and agrees with the contract
    lines = out.with_suffix(".csv").read_text(encoding="utf-8").splitlines()
    units = lines[1].removeprefix("# units: ").split(",")
    assert len(units) == len(t.columns)
    expect = {f.name: f.unit for f in LAYERS["stations"][1]}
    assert all(u == expect[c] for c, u in zip(t.columns, units, strict=True)
               if "," not in expect[c])
    wb = load_workbook(out.with_suffix(".xlsx"))
    for ws in (wb["stations"], wb["stretches"], wb["options"]):
        names = [c.value for c in ws[2]]
        assert names[0] in ("chainage", "from_chainage")          # the frozen column
        assert ws.freeze_panes == f"B{FIRST_DATA_ROW}"
        last = ws.cell(1, len(names)).column_letter
        assert ws.auto_filter.ref == f"A{FIRST_DATA_ROW - 1}:{last}{ws.max_row}"
        fmt = {n: ws.cell(FIRST_DATA_ROW, j + 1).number_format for j, n in enumerate(names)}
        assert fmt[names[0]] == "0.0"
        if "crest_level" in fmt:
            assert fmt["crest_level"] == "0.00" and fmt["margin"] == "0.00"
            assert fmt["lat"] == "0.000000"
            assert ws.cell(FIRST_DATA_ROW, names.index("lat") + 1).value == pytest.approx(
                float(t["lat"].iloc[0]), abs=1e-7)
            assert fmt["first_year"] == "0"
        if "worst_margin" in fmt:
            assert fmt["worst_margin"] == "0.00" and fmt["fill_volume"] == "#,##0"


def test_one_stretch_table_in_the_geopackage_and_the_csv(demo_result):
    """The stretches layer (which the report reads) and the stretch CSV show the same raise,
    fill and rank: one table computed in the run (judgement/stretch_table.py)."""
    import geopandas as gpd

    _, out = demo_result
    layer = gpd.read_file(out, layer="stretches")
    csv = pd.read_csv(stretch_table_path(out.with_suffix(".csv")), comment="#")
    assert list(csv.columns) == field_names("stretches")
    assert len(layer) == len(csv)
    for col in ("from_chainage", "crest_raise", "length_to_raise", "fill_volume"):
        assert np.allclose(layer[col].to_numpy(float), csv[col].to_numpy(float),
                           atol=5e-5, equal_nan=True), col   # CSV keeps 4 decimals
    assert layer["severity_rank"].tolist() == csv["severity_rank"].tolist()
