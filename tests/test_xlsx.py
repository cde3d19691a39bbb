"""The columnar XLSX writer, read back by independent readers.

References: openpyxl 3.1 as the spreadsheet reader (values, fonts, fills,
panes, widths) and its ``openpyxl.utils.escape.unescape`` as the decoder of
the ``_xHHHH_`` escapes of ECMA-376 Part 1 §22.9.2.19; Python's
``xml.etree.ElementTree`` as the XML parser (well-formed parts, which cells
exist); Python's ``round`` as the 4-decimal rounding; ``zipfile`` for the
package.
"""

from __future__ import annotations

import contextlib
import math
import xml.etree.ElementTree as ET
import zipfile
from datetime import UTC, datetime

import numpy as np
import pandas as pd
import pytest
from openpyxl import load_workbook
from openpyxl.utils import get_column_letter
from openpyxl.utils.escape import unescape

from trajectory.outputs.xlsx import Style, Workbook, column_letter

NS = {"m": "http://schemas.openxmlformats.org/spreadsheetml/2006/main"}


def _save(tmp_path, build, name="t.xlsx", **kw):
    wb = Workbook()
    build(wb)
    return wb.save(tmp_path / name, **kw)


@contextlib.contextmanager
def _read_only(path):
    wb = load_workbook(path, read_only=True)
    try:
        yield wb
    finally:
        wb.close()


def _cell_refs(path, sheet=1) -> set[str]:
    """The cells present in a sheet's XML (Python's XML parser)."""
    with zipfile.ZipFile(path) as z:
        root = ET.fromstring(z.read(f"xl/worksheets/sheet{sheet}.xml"))
    return {c.get("r") for c in root.iter(f"{{{NS['m']}}}c")}


def test_column_letters_match_openpyxl():
    # reference: openpyxl.utils.get_column_letter (1-based)
    for j in [0, 1, 25, 26, 27, 51, 52, 701, 702, 703, 16383]:
        assert column_letter(j) == get_column_letter(j + 1)


def test_every_part_is_well_formed_xml_and_declared(tmp_path):
    p = _save(tmp_path, lambda wb: wb.add_sheet("a", [[1, 2]]) or wb.add_sheet("b", [["x"]]))
    with zipfile.ZipFile(p) as z:
        assert z.testzip() is None
        names = z.namelist()
        for n in names:
            ET.fromstring(z.read(n))                     # raises on malformed XML
        types = z.read("[Content_Types].xml").decode()
    assert {"[Content_Types].xml", "_rels/.rels", "xl/workbook.xml",
            "xl/_rels/workbook.xml.rels", "xl/styles.xml", "xl/worksheets/sheet1.xml",
            "xl/worksheets/sheet2.xml"} <= set(names)
    for n in names:
        if not n.endswith(".rels") and n != "[Content_Types].xml":
            assert f'PartName="/{n}"' in types, n
    assert load_workbook(p).sheetnames == ["a", "b"]


def test_values_keep_their_types_and_round_to_the_decimals(tmp_path):
    rng = np.random.default_rng(3)
    floats = rng.normal(size=50) * 10.0 ** rng.integers(-3, 6, 50)
    ints = rng.integers(-10**12, 10**12, 50)
    bools = rng.random(50) < 0.5
    objs = [1, 2.123456, "x", None, True, 7, -0.5, "", np.int64(9), np.float32(1.5)] * 5
    p = _save(tmp_path, lambda wb: wb.add_sheet(
        "s", [floats, ints, bools, objs, list(floats)], decimals=4))
    rows = list(load_workbook(p)["s"].iter_rows(values_only=True))
    assert len(rows) == 50
    for k, (f, i, b, o, fl) in enumerate(rows):
        assert f == pytest.approx(round(float(floats[k]), 4), abs=0, rel=1e-15)  # Python round
        assert fl == f
        assert i == int(ints[k]) and type(i) is int
        assert b is bool(bools[k])
        ref = objs[k]
        if ref is None or ref == "":
            assert o is None
        elif isinstance(ref, bool):
            assert o is ref
        elif isinstance(ref, (int, np.integer)):
            assert o == int(ref) and type(o) is int
        elif isinstance(ref, (float, np.floating)):
            assert o == round(float(ref), 4)
        else:
            assert o == ref


def test_shortest_round_trip_without_decimals(tmp_path):
    v = np.array([0.1, 1 / 3, 1e-300, 6.02214076e23, -2.5])
    p = _save(tmp_path, lambda wb: wb.add_sheet("s", [v]))
    got = [r[0] for r in load_workbook(p)["s"].iter_rows(values_only=True)]
    assert got == v.tolist()                           # the very same doubles


def test_nan_inf_none_and_empty_text_leave_no_cell(tmp_path):
    f = np.array([1.0, np.nan, np.inf, -np.inf, 2.0])
    s = pd.Series(["a", None, "", np.nan, "b"], dtype="str")
    o = np.array([None, pd.NA, float("nan"), "c", 3], dtype=object)
    p = _save(tmp_path, lambda wb: wb.add_sheet("s", [f, s, o], head=[["f", "s", "o"]]))
    got = list(load_workbook(p)["s"].iter_rows(min_row=2, values_only=True))
    assert got == [(1.0, "a", None), (None, None, None), (None, None, None),
                   (None, None, "c"), (2.0, "b", 3)]
    assert _cell_refs(p) == {"A1", "B1", "C1", "A2", "B2", "A6", "B6", "C5", "C6"}


def test_an_all_missing_column_is_left_out_but_counts_in_the_dimension(tmp_path):
    p = _save(tmp_path, lambda wb: wb.add_sheet(
        "s", [[1, 2], [np.nan, np.nan], [None, None], ["x", "y"]]))
    with _read_only(p) as wb:
        ws = wb["s"]
        assert ws.calculate_dimension() == "A1:D2"
        rows = list(ws.iter_rows(values_only=True))
    assert rows == [(1, None, None, "x"), (2, None, None, "y")]
    assert _cell_refs(p) == {"A1", "A2", "D1", "D2"}


def test_text_is_escaped_and_reads_back_unchanged(tmp_path):
    texts = ['a < b & c > d', 'say "hi" & \'bye\'', "★ cheapest", "é à ü ß 水", "]]>",
             "  padded  ", "tab\tand\nnew line", "<c r=\"A1\"/>", "%s %d %%", "&amp;"]
    controls = ["bell\x07", "cr\r", "nul\x00", "_x0041_ literal"]
    p = _save(tmp_path, lambda wb: wb.add_sheet(
        "s", [texts + controls], head=[["head & <title> ★"]]))
    got = [r[0] for r in load_workbook(p)["s"].iter_rows(values_only=True)]
    assert got[0] == "head & <title> ★"
    assert got[1:1 + len(texts)] == texts
    # characters XML cannot hold come back through the spec's _xHHHH_ escape
    assert [unescape(g) for g in got[1 + len(texts):]] == controls


def test_freeze_panes_and_column_widths(tmp_path):
    def build(wb):
        cols = [np.arange(5), np.arange(5.0), np.array(list("abcde"))]
        wb.add_sheet("both", cols, freeze="B4", widths=[10, 12.5, 28])
        wb.add_sheet("rows", cols, freeze="A2")
        wb.add_sheet("cols", cols, freeze="C1")
        wb.add_sheet("none", cols)
    p = _save(tmp_path, build)
    wb = load_workbook(p)
    assert wb["both"].freeze_panes == "B4"
    assert wb["rows"].freeze_panes == "A2"
    assert wb["cols"].freeze_panes == "C1"
    assert wb["none"].freeze_panes is None
    dims = wb["both"].column_dimensions
    assert [dims[c].width for c in "ABC"] == [10, 12.5, 28]


def _rgb(colour) -> str | None:
    return colour.rgb[-6:] if colour is not None and colour.type == "rgb" else None


def test_fonts_and_fills_per_column_and_per_row(tmp_path):
    def build(wb):
        red = wb.style(Style(bold=True, colour="#a6103c"))
        it = wb.style(Style(italic=True))
        fill = wb.style(Style(colour="FFFFFF", fill="1F78B4"))
        bold = wb.style(Style(bold=True))
        per_row = np.array([0, fill, bold, fill])
        wb.add_sheet("s", [np.array([0.0, 1.0, np.nan, 3.0]), ["a", "b", None, "d"],
                           np.arange(4)],
                     head=[["caution"], ["x", "y", "z"]], head_styles=[red, it],
                     styles=[bold, per_row, per_row])
    p = _save(tmp_path, build)
    ws = load_workbook(p)["s"]
    assert ws["A1"].font.b and _rgb(ws["A1"].font.color) == "A6103C"
    assert all(ws[f"{c}2"].font.i and not ws[f"{c}2"].font.b for c in "ABC")
    assert all(ws[f"A{r}"].font.b for r in range(3, 7))
    for col in "BC":
        plain, filled, bolded, filled2 = (ws[f"{col}{r}"] for r in range(3, 7))
        assert plain.fill.fill_type is None and not plain.font.b
        for c in (filled, filled2):
            assert c.fill.fill_type == "solid" and _rgb(c.fill.fgColor) == "1F78B4"
            assert _rgb(c.font.color) == "FFFFFF"
        assert bolded.font.b and bolded.fill.fill_type is None
    # a styled cell without a value is kept (its look), an unstyled one is not written
    for ref in ("A5", "B5"):
        assert ws[ref].value is None and ws[ref].font.b
        assert ref in _cell_refs(p)


def test_a_long_sheet_keeps_every_row(tmp_path):
    n = 70_000                                        # beyond the old 65,536-row .xls limit
    rng = np.random.default_rng(5)
    v = rng.normal(size=n)
    v[::7] = np.nan
    label = np.array(["ok", "watch", "deficit", "no_data"])[np.arange(n) % 4]
    p = _save(tmp_path, lambda wb: wb.add_sheet(
        "long", [np.arange(n), v, label], head=[["i", "v", "label"]], decimals=4))
    with _read_only(p) as wb:
        assert wb["long"].max_row == n + 1
        rows = list(wb["long"].iter_rows(min_row=2, values_only=True))
    assert len(rows) == n
    idx = np.array([r[0] for r in rows])
    assert (idx == np.arange(n)).all()
    got = np.array([np.nan if r[1] is None else r[1] for r in rows])
    np.testing.assert_array_equal(np.isnan(got), np.isnan(v))
    ok = ~np.isnan(v)
    assert np.abs(got[ok] - v[ok]).max() <= 5e-5
    assert [r[2] for r in rows] == label.tolist()


def test_two_writes_are_byte_identical(tmp_path):
    def build(wb):
        s = wb.style(Style(bold=True, fill="F2B701"))
        wb.add_sheet("s", [np.linspace(0, 1, 500), ["x"] * 500], head=[["a", "b"]],
                     head_styles=[s], freeze="B2", widths=[12, 14], decimals=4)
    when = datetime(2024, 5, 1, 12, 0, tzinfo=UTC)
    a = _save(tmp_path, build, "a.xlsx", when=when).read_bytes()
    b = _save(tmp_path, build, "b.xlsx", when=when).read_bytes()
    assert a == b
    c = _save(tmp_path, build, "c.xlsx", when=datetime(2025, 1, 1)).read_bytes()
    assert c != a                                      # the date is in the properties
    assert load_workbook(tmp_path / "a.xlsx").properties.created == datetime(2024, 5, 1, 12)


def test_a_sheet_with_a_head_only(tmp_path):
    p = _save(tmp_path, lambda wb: wb.add_sheet("s", [[], []], head=[["a", "b"], ["m", ""]]))
    rows = list(load_workbook(p)["s"].iter_rows(values_only=True))
    assert rows == [("a", "b"), ("m", None)]


@pytest.mark.parametrize("call, message", [
    (lambda wb: wb.add_sheet("a/b", []), "sheet name"),
    (lambda wb: wb.add_sheet("x" * 32, []), "sheet name"),
    (lambda wb: (wb.add_sheet("Run", []), wb.add_sheet("run", [])), "used twice"),
    (lambda wb: wb.add_sheet("s", [[1, 2], [1]]), "different lengths"),
    (lambda wb: wb.add_sheet("s", [[1, 2]], styles=[5]), "register styles"),
    (lambda wb: wb.add_sheet("s", [[1, 2]], styles=[np.array([0])]), "one id per row"),
    (lambda wb: wb.add_sheet("s", [[1]], freeze="4B"), "cell reference"),
    (lambda wb: wb.style(Style(fill="red")), "six hex digits"),
    (lambda wb: wb.save("never.xlsx"), "at least one sheet"),
])
def test_bad_calls_say_what_to_change(call, message):
    with pytest.raises(ValueError, match=message):
        call(Workbook())


def test_floats_match_the_csv_writer(tmp_path):
    # reference: pandas' CSV writer with float_format="%.4f" (what the CSV tables use)
    rng = np.random.default_rng(11)
    v = np.round(rng.normal(size=300) * 1000, 6)
    v[[3, 50]] = [0.00005, -0.00005]                  # ties near zero
    p = _save(tmp_path, lambda wb: wb.add_sheet("s", [v], decimals=4))
    got = [r[0] for r in load_workbook(p)["s"].iter_rows(values_only=True)]
    csv = pd.Series(v).to_csv(index=False, header=False, float_format="%.4f").split()
    assert [float(c) for c in csv] == got
    assert not any(math.isnan(g) for g in got)
