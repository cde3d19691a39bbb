"""The deficit table as an XLSX workbook: stations, stretches by severity, options, economics,
run metadata.

Each data sheet has the caution in its first row, the field names in the
second, their units in the third and the values from the fourth; panes are
frozen below the header and status cells are filled with the status colours.
On the ``options`` sheet (the options layer's fields) the cheapest option
that closes the gap of each stretch and basis is in bold with a star.
"""

from __future__ import annotations

from datetime import datetime
from pathlib import Path

import numpy as np
import pandas as pd

from .. import CAUTION
from .atomic import atomic_path
from .fill import EXTRA_COLUMNS
from .schema import LAYERS
from .style import STATUS_COLOURS
from .xlsx import Style, Workbook

#: first row of values on a data sheet (1-based, as in the spreadsheet)
FIRST_DATA_ROW = 4
#: mark of the cheapest option on the options sheet (beside the 1 of `cheapest`)
CHEAPEST_MARK = "\u2605 cheapest"
#: font colour of the caution row: the deficit colour (A6103C)
CAUTION_COLOUR = STATUS_COLOURS["deficit"].lstrip("#")
#: statuses whose fill is light enough for black text (white on the others)
_LIGHT = frozenset({"watch", "no_data"})


def _units(layer: str) -> dict[str, str]:
    u = {f.name: f.unit for f in LAYERS[layer][1]}
    u.update({k: v[0] for k, v in EXTRA_COLUMNS.items()})
    return u


def _status_styles(wb: Workbook, status: np.ndarray, bold: np.ndarray) -> np.ndarray:
    """Style id per row of the status column: its fill, a readable font, bold where asked."""
    plain = {b: wb.style(Style(bold=b)) for b in (False, True)}
    ids = np.where(bold, plain[True], plain[False])
    for k, colour in STATUS_COLOURS.items():
        font = "000000" if k in _LIGHT else "FFFFFF"
        for b in (False, True):
            sid = wb.style(Style(bold=b, colour=font, fill=colour.lstrip("#")))
            ids[(status == k) & (bold == b)] = sid
    return ids


def _sheet(wb: Workbook, title: str, df: pd.DataFrame, units: dict[str, str],
           caution: str, *, bold_rows: np.ndarray | None = None,
           mark: tuple[str, str] | None = None) -> None:
    """One data sheet: caution, field names (bold), units (italic), then the values.

    ``bold_rows`` marks rows to set in bold; ``mark`` = (column, text) is appended
    to that column's value on those rows.
    """
    cols = list(df.columns)
    n = len(df)
    bold = np.zeros(n, bool) if bold_rows is None else np.asarray(bold_rows, bool)
    values: list = [df[c] for c in cols]
    if mark and mark[0] in cols and bold.any():
        j = cols.index(mark[0])
        v = df[mark[0]].to_numpy(dtype=object).copy()
        v[bold] = [f"{x} {mark[1]}" for x in v[bold]]
        values[j] = v
    row_style = np.where(bold, wb.style(Style(bold=True)), 0) if bold.any() else 0
    styles: list = [row_style] * len(cols)
    if "status" in cols:
        status = df["status"].to_numpy(dtype=object)
        styles[cols.index("status")] = _status_styles(wb, status, bold)
    wb.add_sheet(
        title, values,
        head=[[caution], cols, [units.get(c, "") for c in cols]],
        head_styles=[wb.style(Style(bold=True, colour=CAUTION_COLOUR)),
                     wb.style(Style(bold=True)), wb.style(Style(italic=True))],
        styles=styles, freeze=f"B{FIRST_DATA_ROW}",
        widths=[max(10, min(28, len(c) + 2)) for c in cols],
        decimals=4)  # 4 decimals, as in the CSV (mm and better for levels)


def _when(metadata: dict) -> datetime | None:
    """The run time of the metadata, to date the file (reruns write the same bytes)."""
    try:
        return datetime.fromisoformat(str(metadata["run_time"]))
    except (KeyError, ValueError):
        return None


def write_workbook(stations: pd.DataFrame, stretches: pd.DataFrame, metadata: dict,
                   path: str | Path, *, overwrite: bool = False,
                   options: pd.DataFrame | None = None,
                   economics: pd.DataFrame | None = None) -> Path:
    """Write ``stations`` (contract fields), the severity-sorted ``stretches``, the
    ``options`` (options layer's fields; the sheet is left out when None), the
    ``economics`` (van Dantzig per section; left out when None or empty) and metadata."""
    from ..remedies import CAVEAT, COST_NOTE

    wb = Workbook()
    _sheet(wb, "stations", stations, _units("stations"), CAUTION)
    _sheet(wb, "stretches", stretches, _units("stretches"),
           CAUTION + " Fill volumes are estimates (method in the README).")
    if options is not None:
        cheapest = (options["cheapest"].to_numpy().astype(int) > 0
                    if "cheapest" in options.columns else None)
        _sheet(wb, "options", options, _units("options"),
               f"{CAUTION} Reinforcement options: {CAVEAT} {COST_NOTE}",
               bold_rows=cheapest, mark=("option", CHEAPEST_MARK))
    if economics is not None and not economics.empty:
        from ..economics import CAVEAT as ECONOMICS_CAVEAT

        _sheet(wb, "economics", economics, _units("economics"),
               f"{CAUTION} {ECONOMICS_CAVEAT}")
    meta = pd.DataFrame({"key": list(metadata), "value": [str(v) for v in metadata.values()]})
    _sheet(wb, "run", meta, {}, CAUTION)
    with atomic_path(path, overwrite=overwrite) as tmp:
        wb.save(tmp, when=_when(metadata))
    return Path(path)


def write_result_workbook(result, path: str | Path, *, overwrite: bool = False) -> Path:
    """The workbook of an in-memory result."""
    from .fill import stretch_table
    from .geopackage import economics_frame, option_frame, stretch_frame
    from .table import deficit_frame

    st = deficit_frame(result)
    options = option_frame(result)
    return write_workbook(st, stretch_table(st, stretch_frame(result), options),
                          dict(sorted(result.metadata.items())), path, overwrite=overwrite,
                          options=options, economics=economics_frame(result))
