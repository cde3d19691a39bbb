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
from openpyxl.cell import WriteOnlyCell
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
        # 4 decimals, as in the CSV (mm and better for levels; no per-cell number format)
        return None if not np.isfinite(v) else round(float(v), 4)
    if isinstance(v, np.integer):
        return int(v)
    return v


def _sheet(wb: Workbook, title: str, df: pd.DataFrame, units: dict[str, str],
           caution: str, *, bold_rows: np.ndarray | None = None,
           mark: tuple[str, str] | None = None) -> None:
    """One data sheet, streamed row by row (openpyxl write-only mode: fast on long lines).

    ``bold_rows`` marks rows to set in bold; ``mark`` = (column, text) is appended
    to that column's value on those rows.
    """
    ws = wb.create_sheet(title)
    ws.freeze_panes = f"B{FIRST_DATA_ROW}"
    for j, c in enumerate(df.columns, start=1):
        ws.column_dimensions[get_column_letter(j)].width = max(10, min(28, len(c) + 2))
    ws.append([_styled(ws, caution, Font(bold=True, color="A6103C"))])
    ws.append([_styled(ws, c, _BOLD) for c in df.columns])
    ws.append([_styled(ws, units.get(c, ""), _ITALIC) for c in df.columns])
    cols = list(df.columns)
    status_col = cols.index("status") if "status" in cols else -1
    mark_col = cols.index(mark[0]) if mark and mark[0] in cols else -1
    fills = {k: PatternFill("solid", fgColor=c.lstrip("#")) for k, c in STATUS_COLOURS.items()}
    light = {"watch", "no_data"}
    for k, row in enumerate(df.itertuples(index=False)):
        vals = [_cell(v) for v in row]
        bold = bool(bold_rows is not None and bold_rows[k])
        if bold and mark_col >= 0:
            vals[mark_col] = f"{vals[mark_col]} {mark[1]}"
        out = []
        for j, v in enumerate(vals):
            if j == status_col and v in fills:
                c = WriteOnlyCell(ws, value=v)
                c.fill = fills[v]
                c.font = Font(color="000000" if v in light else "FFFFFF", bold=bold)
                out.append(c)
            else:
                out.append(_styled(ws, v, _BOLD) if bold else v)
        ws.append(out)


_BOLD = Font(bold=True)
_ITALIC = Font(italic=True)


def _styled(ws, value, font: Font) -> WriteOnlyCell:
    c = WriteOnlyCell(ws, value=value)
    c.font = font
    return c


#: mark of the cheapest option on the options sheet (beside the 1 of `cheapest`)
CHEAPEST_MARK = "\u2605 cheapest"


def write_workbook(stations: pd.DataFrame, stretches: pd.DataFrame, metadata: dict,
                   path: str | Path, *, overwrite: bool = False,
                   options: pd.DataFrame | None = None) -> Path:
    """Write ``stations`` (contract fields), the severity-sorted ``stretches``, the
    ``options`` (options layer's fields; the sheet is left out when None) and metadata."""
    from .report_remedies import CAVEAT, COST_NOTE

    wb = Workbook(write_only=True)
    _sheet(wb, "stations", stations, _units("stations"), CAUTION)
    _sheet(wb, "stretches", stretches, _units("stretches"),
           CAUTION + " Fill volumes are estimates (method in the README).")
    if options is not None:
        cheapest = (options["cheapest"].to_numpy().astype(int) > 0
                    if "cheapest" in options.columns else None)
        _sheet(wb, "options", options, _units("options"),
               f"{CAUTION} Reinforcement options: {CAVEAT} {COST_NOTE}",
               bold_rows=cheapest, mark=("option", CHEAPEST_MARK))
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
