"""The deficit table: one row per station, as CSV."""

from __future__ import annotations

from pathlib import Path

from .. import CAUTION
from .atomic import atomic_path
from .csvtext import write_csv
from .schema import field_names

#: decimals of coordinates in degrees in the CSV (1e-7 degree is about 1 cm)
DEGREE_DECIMALS = 7


def deficit_frame(result):
    """The station table restricted to the contract fields, in contract order."""
    return result.stations[field_names("stations")]


def units_line(columns, layer: str) -> str:
    """A ``#`` comment line of the columns' units, aligned with the header below it."""
    from .schema import LAYERS

    unit = {f.name: f.unit for f in LAYERS[layer][1]}
    cells = [_csv_cell(unit.get(c, "")) for c in columns]
    return "# units: " + ",".join(cells) + "\n"


def _csv_cell(text: str) -> str:
    return f'"{text}"' if "," in text or '"' in text else text


def _degree_decimals(df) -> dict[str, int]:
    """Columns in degrees, written with :data:`DEGREE_DECIMALS` (the table's 4 are ~10 m)."""
    from .schema import LAYERS

    return {f.name: DEGREE_DECIMALS for f in LAYERS["stations"][1]
            if f.unit == "degrees" and f.name in df}


def write_deficit_table(result, path: str | Path, *, overwrite: bool = False) -> Path:
    """Write the per-chainage table as CSV, the caution as its first (comment) line."""
    df = deficit_frame(result)
    with atomic_path(path, overwrite=overwrite) as tmp:
        with open(tmp, "w", encoding="utf-8", newline="") as fh:
            fh.write(f"# {CAUTION}\n")
            if result.metadata.get("incomplete"):  # a partial result must say so (issue 7)
                fh.write(f"# INCOMPLETE, DEM unreadable for: {result.metadata['incomplete']}\n")
            fh.write(units_line(df.columns, "stations"))
            write_csv(df, fh, decimals=4, column_decimals=_degree_decimals(df))
    return Path(path)


def stretch_table_path(table: str | Path) -> Path:
    """The stretch table goes beside the station table: ``<stem>_stretches.csv``."""
    t = Path(table)
    return t.with_name(f"{t.stem}_stretches.csv")


def write_stretch_table(result, path: str | Path, *, overwrite: bool = False) -> Path:
    """Write the stretches, worst margin first, with raise length and fill estimate, as CSV."""
    from .geopackage import stretch_frame

    df = stretch_frame(result)
    with atomic_path(path, overwrite=overwrite) as tmp:
        with open(tmp, "w", encoding="utf-8", newline="") as fh:
            fh.write(f"# {CAUTION} Fill volumes are estimates (method in the README).\n")
            fh.write(units_line(df.columns, "stretches"))
            write_csv(df, fh, decimals=4)
    return Path(path)
