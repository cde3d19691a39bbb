"""Field descriptions stored in the GeoPackage itself (the GeoPackage schema extension).

The ``gpkg_data_columns`` table gives every field of every contract layer a
title (name and unit) and its description from :mod:`.schema`, so they travel
with the file; the `status` fields get an enumeration constraint in
``gpkg_data_column_constraints``. Table layouts follow the OGC GeoPackage
1.3 encoding standard, "Schema" extension (``gpkg_schema``).
"""

from __future__ import annotations

import sqlite3

from ..judgement.status import STATUSES
from .schema import LAYER_DESCRIPTIONS, LAYERS

SCHEMA_EXTENSION = "gpkg_schema"
SCHEMA_DEFINITION = "http://www.geopackage.org/spec/#extension_schema"
STATUS_CONSTRAINT = "trajectory_status"

_STATUS_MEANING = {
    "ok": "margin at least the watch band",
    "watch": "margin between 0 and the watch band",
    "deficit": "crest below the required level",
    "no_data": "profile not interpretable",
    "excluded": "excluded from the verdict by a known structure or accepted exception",
}

_DDL = (
    """CREATE TABLE IF NOT EXISTS gpkg_extensions (
        table_name TEXT, column_name TEXT, extension_name TEXT NOT NULL,
        definition TEXT NOT NULL, scope TEXT NOT NULL,
        CONSTRAINT ge_tce UNIQUE (table_name, column_name, extension_name))""",
    """CREATE TABLE IF NOT EXISTS gpkg_data_columns (
        table_name TEXT NOT NULL, column_name TEXT NOT NULL, name TEXT, title TEXT,
        description TEXT, mime_type TEXT, constraint_name TEXT,
        CONSTRAINT pk_gdc PRIMARY KEY (table_name, column_name),
        CONSTRAINT gdc_tn UNIQUE (table_name, name))""",
    """CREATE TABLE IF NOT EXISTS gpkg_data_column_constraints (
        constraint_name TEXT NOT NULL, constraint_type TEXT NOT NULL, value TEXT,
        min NUMERIC, min_is_inclusive BOOLEAN, max NUMERIC, max_is_inclusive BOOLEAN,
        description TEXT,
        CONSTRAINT gdcc_ntv UNIQUE (constraint_name, constraint_type, value))""",
)


def field_title(name: str, unit: str) -> str:
    """A field's title and alias: its name with the unit, e.g. ``crest_level [m]``."""
    return f"{name} [{unit}]" if unit and unit != "-" else name


_title = field_title


def write_data_columns(con: sqlite3.Connection) -> int:
    """Describe every field of every contract layer present; return the rows written."""
    for ddl in _DDL:
        con.execute(ddl)
    for table in ("gpkg_data_columns", "gpkg_data_column_constraints"):
        con.execute("INSERT OR REPLACE INTO gpkg_extensions VALUES (?, NULL, ?, ?, 'read-write')",
                    (table, SCHEMA_EXTENSION, SCHEMA_DEFINITION))
    for status in STATUSES:
        con.execute("INSERT OR REPLACE INTO gpkg_data_column_constraints (constraint_name, "
                    "constraint_type, value, description) VALUES (?, 'enum', ?, ?)",
                    (STATUS_CONSTRAINT, status, _STATUS_MEANING[status]))
    present = {r[0] for r in con.execute("SELECT table_name FROM gpkg_contents")}
    # `name` and `title` both carry the alias: GDAL (3.7 and later) reads one of them as the
    # field's alternative name, which desktop GIS show as the alias
    rows = [
        (layer, f.name, _title(f.name, f.unit), _title(f.name, f.unit),
         f"{f.description} ({f.unit})" if f.unit and f.unit != "-" else f.description,
         STATUS_CONSTRAINT if f.name == "status" else None)
        for layer, (_, fields) in LAYERS.items() if layer in present for f in fields
    ]
    con.executemany("INSERT OR REPLACE INTO gpkg_data_columns (table_name, column_name, name, "
                    "title, description, constraint_name) VALUES (?, ?, ?, ?, ?, ?)", rows)
    # what each layer is, in gpkg_contents (shown by GIS as the layer's abstract)
    con.executemany("UPDATE gpkg_contents SET description = ? WHERE table_name = ?",
                    [(LAYER_DESCRIPTIONS[t], t) for t in present if t in LAYER_DESCRIPTIONS])
    return len(rows)
