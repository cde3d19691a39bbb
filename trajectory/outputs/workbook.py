"""The deficit table as an XLSX workbook: stations, stretches by severity, options, run metadata.

Each data sheet has the caution in its first row, the field names in the
second, their units in the third and the values from the fourth; panes are
frozen below the header and status cells are filled with the status colours.
On the ``options`` sheet (the options layer's fields) the cheapest option
that closes the gap of each stretch and basis is in bold with a star.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
from openpyxl import Workbook
from openpyxl.styles import Font, PatternFill
from openpyxl.utils import get_column_letter

from .. import CAUTION
from .atomic import atomic_path
from .fill import EXTRA_COLUMNS
from .schema import LAYERS
from .style import STATUS_COLOURS

#: first row of values on a data sheet (1-based, as in the spreadsheet)
FIRST_DATA_ROW = 4


def _units(layer: str) -> dict[str, str]:
    u = {f.name: f.unit for f in LAYERS[layer][1]}
    u.update({k: v[0] for k, v in EXTRA_COLUMNS.items()})
    return u


def _cell(v):
    if isinstance(v, (float, np.floating)):
        return None if not np.isfinite(v) else float(v)
    if isinstance(v, np.integer):
        return int(v)
    return v


def _sheet(wb: Workbook, title: str, df: pd.DataFrame, units: dict[str, str],
           caution: str) -> None:
    ws = wb.create_sheet(title)
    ws.append([caution])
    ws["A1"].font = Font(bold=True, color="A6103C")
    ws.append(list(df.columns))
    ws.append([units.get(c, "") for c in df.columns])
    for cell in ws[2]:
        cell.font = Font(bold=True)
    for cell in ws[3]:
        cell.font = Font(italic=True)
    for row in df.itertuples(index=False):
        ws.append([_cell(v) for v in row])
    ws.freeze_panes = ws.cell(row=FIRST_DATA_ROW, column=2)
    fills = {s: PatternFill("solid", fgColor=c.lstrip("#")) for s, c in STATUS_COLOURS.items()}
    if "status" in df.columns:
        col = list(df.columns).index("status") + 1
        light = {"watch", "no_data"}
        for r in range(FIRST_DATA_ROW, FIRST_DATA_ROW + len(df)):
            cell = ws.cell(row=r, column=col)
            if cell.value in fills:
                cell.fill = fills[cell.value]
                cell.font = Font(color="000000" if cell.value in light else "FFFFFF")
    for j, c in enumerate(df.columns, start=1):
        ws.column_dimensions[get_column_letter(j)].width = max(10, min(28, len(c) + 2))
        if pd.api.types.is_float_dtype(df[c]):
            for r in range(FIRST_DATA_ROW, FIRST_DATA_ROW + len(df)):
                ws.cell(row=r, column=j).number_format = "0.000"


#: mark of the cheapest option on the options sheet (beside the 1 of `cheapest`)
CHEAPEST_MARK = "\u2605 cheapest"


def _mark_cheapest(ws, df: pd.DataFrame) -> None:
    if "cheapest" not in df.columns:
        return
    col = list(df.columns).index("option") + 1
    for k, flag in enumerate(df["cheapest"].to_numpy()):
        if int(flag):
            r = FIRST_DATA_ROW + k
            for cell in ws[r]:
                cell.font = Font(bold=True)
            c = ws.cell(row=r, column=col)
            c.value = f"{c.value} {CHEAPEST_MARK}"


def write_workbook(stations: pd.DataFrame, stretches: pd.DataFrame, metadata: dict,
                   path: str | Path, *, overwrite: bool = False,
                   options: pd.DataFrame | None = None) -> Path:
    """Write ``stations`` (contract fields), the severity-sorted ``stretches``, the
    ``options`` (options layer's fields; the sheet is left out when None) and metadata."""
    from .report_remedies import CAVEAT, COST_NOTE

    wb = Workbook()
    wb.remove(wb.active)
    _sheet(wb, "stations", stations, _units("stations"), CAUTION)
    _sheet(wb, "stretches", stretches, _units("stretches"),
           CAUTION + " Fill volumes are estimates (method in the README).")
    if options is not None:
        _sheet(wb, "options", options, _units("options"),
               f"{CAUTION} Reinforcement options: {CAVEAT} {COST_NOTE}")
        _mark_cheapest(wb["options"], options)
    meta = pd.DataFrame({"key": list(metadata), "value": [str(v) for v in metadata.values()]})
    _sheet(wb, "run", meta, {}, CAUTION)
    with atomic_path(path, overwrite=overwrite) as tmp:
        wb.save(tmp)
    return Path(path)


def write_result_workbook(result, path: str | Path, *, overwrite: bool = False) -> Path:
    """The workbook of an in-memory result."""
    from .fill import stretch_table
    from .geopackage import option_frame, stretch_frame
    from .table import deficit_frame

    st = deficit_frame(result)
    return write_workbook(st, stretch_table(st, stretch_frame(result)),
                          dict(sorted(result.metadata.items())), path, overwrite=overwrite,
                          options=option_frame(result))
