"""The deficit table: one row per station, as CSV."""

from __future__ import annotations

from pathlib import Path

from .. import CAUTION
from .atomic import atomic_path
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
            df.to_csv(fh, index=False, float_format="%.4f")
    return Path(path)
