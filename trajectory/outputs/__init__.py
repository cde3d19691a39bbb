"""The outputs: the schema (every layer and field, declared once), the GeoPackage with its
styles, the CSV and XLSX tables, the report with its figures, all staged and switched together.

May import every stage below the run (inputs to inner); never the run or the front ends.
"""

from __future__ import annotations

from .atomic import atomic_path, refuse_overwrite
from .geopackage import write_geopackage
from .table import write_deficit_table

__all__ = ["atomic_path", "refuse_overwrite", "write_deficit_table", "write_geopackage"]
