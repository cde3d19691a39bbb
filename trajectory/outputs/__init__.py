"""Output writers: GeoPackage layers and the deficit table."""

from __future__ import annotations

from .atomic import atomic_path, refuse_overwrite
from .geopackage import write_geopackage
from .table import write_deficit_table

__all__ = ["atomic_path", "refuse_overwrite", "write_deficit_table", "write_geopackage"]
