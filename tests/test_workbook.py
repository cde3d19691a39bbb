"""The XLSX workbook opens with openpyxl and holds what the CSV tables hold."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
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
    assert wb.sheetnames == ["stations", "stretches", "options", "economics", "run"]
    names, units, _ = _compare(wb["stations"], out.with_suffix(".csv"))
    assert names == field_names("stations")
    assert units == [f.unit or None for f in LAYERS["stations"][1]]


def test_stretches_sheet_matches_its_csv_and_is_sorted_by_severity(demo_result):
    _, out = demo_result
    wb = load_workbook(out.with_suffix(".xlsx"), read_only=True)
    names, _, rows = _compare(wb["stretches"], stretch_table_path(out.with_suffix(".csv")))
    worst = [r[names.index("worst_margin")] for r in rows]
    finite = [w for w in worst if w is not None]
    assert finite == sorted(finite) and worst[:len(finite)] == finite
    vol = [r[names.index("fill_volume")] for r in rows]
    status = [r[names.index("status")] for r in rows]
    assert all((v > 0) == (s == "deficit") for v, s in zip(vol, status, strict=True))


def test_options_sheet_holds_the_options_layer_with_the_cheapest_marked(demo_result):
    import pyogrio

    from trajectory.outputs.workbook import CHEAPEST_MARK

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
        starred = str(r[names.index("option")]).endswith(CHEAPEST_MARK)
        assert starred == bool(ref["cheapest"]) == bool(r[names.index("cheapest")])
        assert str(r[names.index("option")]).startswith(ref["option"])
    ws = wb["options"]
    bold = [ws.cell(row=FIRST_DATA_ROW + k, column=1).font.bold for k in range(len(rows))]
    assert bold == [bool(c) for c in layer["cheapest"]]
