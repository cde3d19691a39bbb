"""Read and check a frequency table (an edge module: it touches files).

One row per section and return period: ``section_id``, ``return_period``
(years), ``water_level`` (m, DEM datum) and optionally ``hm0`` (m) and
``tm10`` or ``tp`` (s). CSV or a non-spatial GeoPackage table. Every bad row
is reported at once, naming the file, the row and the column.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import pyogrio

from ..errors import ConditionsError, InputError, InputFileError
from ..formulas import hydraulics as hy

log = logging.getLogger(__name__)

#: columns of a frequency table: name -> (unit, rule). The README quotes them.
FREQUENCY_COLUMNS: dict[str, tuple[str, str]] = {
    "section_id": ("", "text; a section of the conditions table"),
    "return_period": ("years", "number > 1, increasing within a section"),
    "water_level": ("m (DEM datum)", "number, not falling as the return period grows"),
    "hm0": ("m", "optional; 0 <= number <= 30, not falling as the return period grows"),
    "tm10": ("s", "optional; 0 < number <= 60 (give tm10 or tp)"),
    "tp": ("s", "optional; 0 < number <= 60, Tm-1,0 = Tp / 1.1"),
}
_REQUIRED = ("section_id", "return_period", "water_level")
_RANGES = {"return_period": (1.0, 1e8, True), "water_level": (-500.0, 9000.0, False),
           "hm0": (0.0, 30.0, False), "tm10": (0.0, 60.0, True), "tp": (0.0, 60.0, True)}


@dataclass(frozen=True)
class SectionTable:
    """The frequency table of one section (return periods increasing)."""

    return_period: np.ndarray
    water_level: np.ndarray
    hm0: np.ndarray       # NaN where the table has no wave height
    tm10: np.ndarray      # NaN where the table has no period
    from_tp: bool         # the period was given as Tp (Tm-1,0 = Tp / 1.1)
    rows: np.ndarray      # row numbers in the file


@dataclass(frozen=True)
class FrequencyTable:
    """Frequency tables by section id, with the file they came from."""

    sections: dict[str, SectionTable]
    source: str = ""


def read_frequency(path: str | Path) -> FrequencyTable:
    """Read and check a frequency table (CSV, or a GeoPackage's one non-spatial table)."""
    p = Path(path)
    if not p.exists():
        raise InputFileError(f"{p}: frequency table not found")
    if p.suffix.lower() in (".csv", ".txt"):
        try:
            raw = pd.read_csv(p, dtype=str, skipinitialspace=True, comment="#")
        except (pd.errors.EmptyDataError, pd.errors.ParserError, UnicodeDecodeError) as exc:
            raise InputError(f"{p}: cannot read the frequency table ({exc})") from exc
        row_base = 2
    else:
        try:
            layers = [str(n) for n, g in pyogrio.list_layers(p) if not g]
        except Exception as exc:  # pyogrio raises several kinds for unreadable data
            raise InputFileError(f"{p}: not a CSV nor a file GDAL can read ({exc})") from exc
        if len(layers) != 1:
            raise InputError(f"{p}: the frequency table must be the file's one table without "
                             f"geometry; found {len(layers)} ({', '.join(layers)})")
        df = pyogrio.read_dataframe(p, layer=layers[0], read_geometry=False)
        raw = pd.DataFrame(df).astype(object).where(pd.notna(df), None)
        raw = raw.map(lambda v: None if v is None else str(v))
        row_base = 1
    raw.columns = [str(c).strip().lower() for c in raw.columns]
    table, findings = validate_frequency(raw, row_base=row_base)
    if findings:
        raise ConditionsError(f"{p} (frequency table)", findings)
    return FrequencyTable(sections=table, source=str(p))


def validate_frequency(raw: pd.DataFrame, *,
                       row_base: int = 2) -> tuple[dict[str, SectionTable], list[str]]:
    """Check a frequency table given as text cells; return the tables and every finding."""
    missing = [c for c in _REQUIRED if c not in raw.columns]
    if missing:
        return {}, [f"missing column(s): {', '.join(missing)}"]
    unknown = [c for c in raw.columns if c not in FREQUENCY_COLUMNS]
    if unknown:
        log.warning("frequency table: ignoring unknown column(s) %s", ", ".join(unknown))
    if raw.empty:
        return {}, ["the table has no rows under its header; give one row per frequency "
                    "line point"]
    n = len(raw)
    findings: list[str] = []

    def text(col: str) -> pd.Series:
        if col not in raw.columns:
            return pd.Series([""] * n)
        return raw[col].fillna("").astype(str).str.strip()

    vals: dict[str, np.ndarray] = {}
    for col, (lo, hi, excl) in _RANGES.items():
        cells = text(col)
        v = pd.to_numeric(cells, errors="coerce").to_numpy(float)
        blank = (cells == "").to_numpy()
        for i in np.flatnonzero(np.isnan(v) & ~blank):
            findings.append(f"row {i + row_base}, column {col}: {cells.iloc[i]!r} is not a "
                            "number")
        if col in _REQUIRED:
            for i in np.flatnonzero(blank):
                findings.append(f"row {i + row_base}, column {col}: empty (a number is "
                                "required)")
        with np.errstate(invalid="ignore"):
            bad = ~np.isfinite(v) & ~np.isnan(v) | (v > hi) | (v < lo) | (excl & (v == lo))
        for i in np.flatnonzero(bad):
            findings.append(f"row {i + row_base}, column {col}: {v[i]:g} breaks the rule "
                            f"{FREQUENCY_COLUMNS[col][1]}")
        vals[col] = v
    sid = text("section_id")
    for i in np.flatnonzero((sid == "").to_numpy()):
        findings.append(f"row {i + row_base}, column section_id: empty")
    both = np.isfinite(vals["tm10"]) & np.isfinite(vals["tp"])
    for i in np.flatnonzero(both):
        findings.append(f"row {i + row_base}, columns tm10 and tp: give one period, not both")
    out: dict[str, SectionTable] = {}
    for name in pd.unique(sid[sid != ""]):
        pos = np.flatnonzero((sid == name).to_numpy())
        rows = pos + row_base
        t, wl = vals["return_period"][pos], vals["water_level"][pos]
        where = f"section {name!r}"
        if pos.size < 2:
            findings.append(f"row {rows[0]}, {where}: a frequency line needs at least two "
                            "return periods")
            continue
        for k in np.flatnonzero(~(np.diff(t) > 0)):
            findings.append(f"row {rows[k + 1]}, column return_period: {t[k + 1]:g} does not "
                            f"increase on row {rows[k]} ({t[k]:g}) of {where}; list each "
                            "section's return periods in increasing order")
        for k in np.flatnonzero(np.diff(wl) < 0):
            findings.append(f"row {rows[k + 1]}, column water_level: {wl[k + 1]:g} is lower "
                            f"than {wl[k]:g} at the shorter return period on row {rows[k]} "
                            f"of {where}; a frequency line must not fall")
        waves = {}
        for col in ("hm0", "tm10", "tp"):
            v = vals[col][pos]
            given = np.isfinite(v)
            if given.any() and not given.all():
                k = int(np.flatnonzero(~given)[0])
                findings.append(f"row {rows[k]}, column {col}: empty; give {col} on every row "
                                f"of {where} or on none")
            elif given.all():
                for k in np.flatnonzero(np.diff(v) < 0):
                    findings.append(f"row {rows[k + 1]}, column {col}: {v[k + 1]:g} is lower "
                                    f"than on row {rows[k]} of {where}; the required level "
                                    "must not fall as the return period grows")
                waves[col] = v
        from_tp = "tp" in waves and "tm10" not in waves
        tm10 = (np.asarray(hy.tm10_from_tp(waves["tp"])) if from_tp
                else waves.get("tm10", np.full(pos.size, np.nan)))
        out[str(name)] = SectionTable(return_period=t, water_level=wl,
                                      hm0=waves.get("hm0", np.full(pos.size, np.nan)),
                                      tm10=np.asarray(tm10, float), from_tp=from_tp, rows=rows)
    return out, findings
