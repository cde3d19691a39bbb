"""The look of the results workbook: header rows, panes, widths, status fills, bold options.

Reference reader: openpyxl 3.1 (fonts, fills, panes and widths as a
spreadsheet program reads them); the colours are the status colours of
``trajectory.outputs.style``, the one source of them.
"""

from __future__ import annotations

from openpyxl import load_workbook

from trajectory.outputs.style import PIPING_COLOURS, STATUS_COLOURS
from trajectory.outputs.workbook import FIRST_DATA_ROW, write_result_workbook


def _rgb(colour) -> str | None:
    return colour.rgb[-6:].upper() if colour is not None and colour.type == "rgb" else None


def _workbook(demo_result):
    _, out = demo_result
    return load_workbook(out.with_suffix(".xlsx"))


def test_every_sheet_has_caution_names_and_units_rows_frozen_above_the_values(demo_result):
    wb = _workbook(demo_result)
    for ws in wb.worksheets:
        names = [c.value for c in ws[2]]
        # the caution in bold dark red, the deficit colour
        assert ws["A1"].font.b and _rgb(ws["A1"].font.color) == "A6103C", ws.title
        assert all(c.font.b for c in ws[2]) and all(c.font.i for c in ws[3]), ws.title
        if ws.title != "options":                 # (bold rows there: the next test)
            assert not any(c.font.b or c.font.i for c in ws[FIRST_DATA_ROW]), ws.title
        assert ws.freeze_panes == f"B{FIRST_DATA_ROW}", ws.title
        widths = [ws.column_dimensions[c.column_letter].width for c in ws[2]]
        assert widths == [max(10, min(28, len(n) + 2)) for n in names], ws.title


def test_status_cells_carry_the_status_fill_and_a_readable_font(demo_result):
    wb = _workbook(demo_result)
    seen = set()
    colours = {**STATUS_COLOURS, **PIPING_COLOURS}  # piping berms: status short
    for title in ("stations", "stretches", "options", "piping_stretches"):
        ws = wb[title]
        names = [c.value for c in ws[2]]
        j = names.index("status") + 1
        for r in range(FIRST_DATA_ROW, ws.max_row + 1):
            cell = ws.cell(row=r, column=j)
            seen.add(cell.value)
            assert cell.fill.fill_type == "solid", (title, r)
            assert _rgb(cell.fill.fgColor) == colours[cell.value].lstrip("#")
            light = cell.value in ("watch", "no_data", "not_screened")
            assert _rgb(cell.font.color) == ("000000" if light else "FFFFFF"), (title, r)
            other = ws.cell(row=r, column=1 if j != 1 else 2)
            assert other.fill.fill_type is None
    assert len(seen) >= 2          # the demo has planted deficits beside sound stretches


def test_cheapest_option_rows_are_bold_through_the_status_cell(demo_result):
    ws = _workbook(demo_result)["options"]
    names = [c.value for c in ws[2]]
    flag, status = names.index("cheapest") + 1, names.index("status") + 1
    rows = range(FIRST_DATA_ROW, ws.max_row + 1)
    assert any(ws.cell(row=r, column=flag).value for r in rows)
    for r in rows:
        bold = bool(ws.cell(row=r, column=flag).value)
        assert ws.cell(row=r, column=status).font.b == bold
        assert all(bool(c.font.b) == bold for c in ws[r] if c.value is not None)


def test_rewriting_the_workbook_gives_the_same_bytes(demo_result, tmp_path):
    result, out = demo_result
    a = write_result_workbook(result, tmp_path / "a.xlsx").read_bytes()
    b = write_result_workbook(result, tmp_path / "b.xlsx").read_bytes()
    assert a == b == out.with_suffix(".xlsx").read_bytes()
