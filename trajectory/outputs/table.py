"""The deficit table: one row per station, as CSV."""

from __future__ import annotations

from pathlib import Path

from .. import CAUTION
from .atomic import atomic_path
from .csvtext import write_csv
from .schema import field_names


def deficit_frame(result):
    """The station table restricted to the contract fields, in contract order."""
    return result.stations[field_names("stations")]


def write_deficit_table(result, path: str | Path, *, overwrite: bool = False) -> Path:
    """Write the per-chainage table as CSV, the caution as its first (comment) line."""
    df = deficit_frame(result)
    with atomic_path(path, overwrite=overwrite) as tmp:
        with open(tmp, "w", encoding="utf-8", newline="") as fh:
            fh.write(f"# {CAUTION}\n")
            if result.metadata.get("incomplete"):  # a partial result must say so (issue 7)
                fh.write(f"# INCOMPLETE, DEM unreadable for: {result.metadata['incomplete']}\n")
            write_csv(df, fh, decimals=4)
    return Path(path)


def stretch_table_path(table: str | Path) -> Path:
    """The stretch table goes beside the station table: ``<stem>_stretches.csv``."""
    t = Path(table)
    return t.with_name(f"{t.stem}_stretches.csv")


def write_stretch_table(result, path: str | Path, *, overwrite: bool = False) -> Path:
    """Write the stretches, worst margin first, with raise length and fill estimate, as CSV."""
    from .fill import stretch_table
    from .geopackage import option_frame, stretch_frame

    df = stretch_table(deficit_frame(result), stretch_frame(result), option_frame(result))
    with atomic_path(path, overwrite=overwrite) as tmp:
        with open(tmp, "w", encoding="utf-8", newline="") as fh:
            fh.write(f"# {CAUTION} Fill volumes are estimates (method in the README).\n")
            write_csv(df, fh, decimals=4)
    return Path(path)
