"""The deficit table as an XLSX workbook: stations, stretches by severity, options, economics,
run metadata.

Each data sheet has the caution in its first row, the field names in the
second, their units in the third (which carries the autofilter buttons) and the
values from the fourth; the chainage column leads and is frozen with the header,
numbers carry formats by their unit (chainage and widths to 0.1 m, levels to
0.01 m, years as integers) and status cells are filled with the status colours.
On the ``options`` sheet (the options layer's fields) the cheapest option that
closes the gap of each stretch and basis is in bold; its ``cheapest`` column is 1.
"""

from __future__ import annotations

from datetime import datetime
from pathlib import Path

import numpy as np
import pandas as pd

from .. import CAUTION
from .atomic import atomic_path
from .schema import LAYERS
from .style import PIPING_COLOURS, STATUS_COLOURS
from .xlsx import Style, Workbook

#: first row of values on a data sheet (1-based, as in the spreadsheet)
FIRST_DATA_ROW = 4
#: decimals of coordinates in degrees (1e-7 degree is about 1 cm)
DEGREE_DECIMALS = 7
#: font colour of the caution row: the deficit colour (A6103C)
CAUTION_COLOUR = STATUS_COLOURS["deficit"].lstrip("#")
#: statuses whose fill is light enough for black text (white on the others)
_LIGHT = frozenset({"watch", "no_data", "not_screened"})


def _units(layer: str) -> dict[str, str]:
    return {f.name: f.unit for f in LAYERS[layer][1]}


def number_format(name: str, unit: str, kind: str = "float") -> str | None:
    """Display format of a column from its unit (the stored value keeps every decimal).

    Chainages, offsets, widths and lengths to 0.1 m; levels, margins and other
    heights to 0.01 m (standard deviations to 1 mm); years as integers; volumes
    and costs with thousands separators; rates, probabilities and factors to 3
    decimals. None: the spreadsheet's general format.
    """
    if unit == "year" or kind == "int":
        return "0"
    if unit == "m":
        if name.endswith("_sigma"):
            return "0.000"
        horizontal = ("chainage" in name or name in ("length", "length_to_raise", "outer_toe",
                                                     "inner_toe", "crest_offset", "x", "y")
                      or "width" in name or "footprint" in name)
        return "0.0" if horizontal else "0.00"
    if unit in ("m3", "cost units"):
        return "#,##0"
    if unit == "degrees":
        return "0.000000"
    if unit in ("m/yr", "probability", "-", "fraction", "n of 1:n", "m/m", "l/s per m"):
        return "0.000" if unit != "n of 1:n" else "0.00"
    return None


def _kinds(layer: str) -> dict[str, str]:
    return {f.name: f.kind for f in LAYERS[layer][1]} if layer in LAYERS else {}


def _status_styles(wb: Workbook, status: np.ndarray, bold: np.ndarray) -> np.ndarray:
    """Style id per row of the status column: its fill, a readable font, bold where asked."""
    plain = {b: wb.style(Style(bold=b)) for b in (False, True)}
    ids = np.where(bold, plain[True], plain[False])
    for k, colour in {**STATUS_COLOURS, **PIPING_COLOURS}.items():
        font = "000000" if k in _LIGHT else "FFFFFF"
        for b in (False, True):
            sid = wb.style(Style(bold=b, colour=font, fill=colour.lstrip("#")))
            ids[(status == k) & (bold == b)] = sid
    return ids


def _sheet(wb: Workbook, title: str, df: pd.DataFrame, units: dict[str, str],
           caution: str, *, bold_rows: np.ndarray | None = None,
           kinds: dict[str, str] | None = None) -> None:
    """One data sheet: caution, field names (bold), units (italic), then the values.

    The first column (the chainage, by the contract's order) is frozen with the
    three header rows; the units
    row carries the autofilter; ``bold_rows`` marks rows to set in bold.
    """
    cols = list(df.columns)
    n = len(df)
    kinds = kinds or {}
    bold = np.zeros(n, bool) if bold_rows is None else np.asarray(bold_rows, bool)
    styles: list = []
    for c in cols:
        fmt = number_format(c, units.get(c, ""), kinds.get(c, "float"))
        plain = wb.style(Style(number_format=fmt))
        strong = wb.style(Style(bold=True, number_format=fmt))
        styles.append(np.where(bold, strong, plain) if bold.any() else plain)
    if "status" in cols:
        status = df["status"].to_numpy(dtype=object)
        styles[cols.index("status")] = _status_styles(wb, status, bold)
    wb.add_sheet(
        title, [df[c] for c in cols],
        head=[[caution], cols, [units.get(c, "") for c in cols]],
        head_styles=[wb.style(Style(bold=True, colour=CAUTION_COLOUR)),
                     wb.style(Style(bold=True)), wb.style(Style(italic=True))],
        styles=styles, freeze=f"B{FIRST_DATA_ROW}",
        widths=[max(10, min(28, len(c) + 2)) for c in cols],
        # 4 decimals as in the CSV (mm and better for levels); degrees to 1e-7 (about 1 cm)
        decimals=[DEGREE_DECIMALS if units.get(c) == "degrees" else 4 for c in cols],
        autofilter=FIRST_DATA_ROW - 1 if n else None)


def _when(metadata: dict) -> datetime | None:
    """The run time of the metadata, to date the file (reruns write the same bytes)."""
    try:
        return datetime.fromisoformat(str(metadata["run_time"]))
    except (KeyError, ValueError):
        return None


def write_workbook(stations: pd.DataFrame, stretches: pd.DataFrame, metadata: dict,
                   path: str | Path, *, overwrite: bool = False,
                   options: pd.DataFrame | None = None,
                   economics: pd.DataFrame | None = None,
                   piping: pd.DataFrame | None = None,
                   changes: pd.DataFrame | None = None) -> Path:
    """Write ``stations`` (contract fields), the severity-sorted ``stretches``, the
    ``options`` (options layer's fields; the sheet is left out when None), the
    ``piping`` stretches (left out when None or empty), the ``economics`` (van Dantzig
    per section; left out when None or empty) and metadata."""
    from ..inner.stability import CAUTION as STABILITY_CAUTION
    from ..judgement.remedies import CAVEAT, COST_NOTE

    wb = Workbook()
    _sheet(wb, "stations", stations, _units("stations"), CAUTION, kinds=_kinds("stations"))
    _sheet(wb, "stretches", stretches, _units("stretches"),
           CAUTION + " Fill volumes are estimates (method in the README).",
           kinds={**_kinds("stretches"), "severity_rank": "int"})
    if options is not None:
        cheapest = (options["cheapest"].to_numpy().astype(int) > 0
                    if "cheapest" in options.columns else None)
        _sheet(wb, "options", options, _units("options"),
               f"{CAUTION} Reinforcement options: {CAVEAT} {COST_NOTE} Stability berms "
               f"(option stability_berm): {STABILITY_CAUTION}",
               bold_rows=cheapest, kinds=_kinds("options"))
    if piping is not None and not piping.empty:
        from ..inner.piping_screen import CAVEAT as PIPING_CAVEAT

        _sheet(wb, "piping_stretches", piping, _units("piping_stretches"),
               f"{CAUTION} {PIPING_CAVEAT}", kinds=_kinds("piping_stretches"))
    if economics is not None and not economics.empty:
        from ..judgement.economics import CAVEAT as ECONOMICS_CAVEAT

        _sheet(wb, "economics", economics, _units("economics"),
               f"{CAUTION} {ECONOMICS_CAVEAT}", kinds=_kinds("economics"))
    if changes is not None and not changes.empty:
        _sheet(wb, "changes", changes, _units("changes"),
               f"{CAUTION} Verdict changes since the previous survey (today's rules on its "
               "terrain).", kinds=_kinds("changes"))
    meta = pd.DataFrame({"key": list(metadata), "value": [str(v) for v in metadata.values()]})
    _sheet(wb, "run", meta, {}, CAUTION)
    with atomic_path(path, overwrite=overwrite) as tmp:
        wb.save(tmp, when=_when(metadata))
    return Path(path)


def write_result_workbook(result, path: str | Path, *, overwrite: bool = False) -> Path:
    """The workbook of an in-memory result."""
    from .geopackage import (
        change_frame,
        economics_frame,
        option_frame,
        piping_stretch_frame,
        stretch_frame,
    )
    from .table import deficit_frame

    st = deficit_frame(result)
    options = option_frame(result)
    return write_workbook(st, stretch_frame(result),
                          dict(sorted(result.metadata.items())), path, overwrite=overwrite,
                          options=options, economics=economics_frame(result),
                          piping=piping_stretch_frame(result),
                          changes=change_frame(result))
