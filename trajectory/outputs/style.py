"""Default layer styles: status colours, QGIS-style QML and OGC SLD, written into the GeoPackage.

The colours are our own choice, picked to stay apart for the three common
kinds of colour-vision deficiency and in grey-scale print (distinct
lightness: deficit darkest, watch lightest). ``tests/test_style.py`` checks
the separation with colorspacious's simulation of Machado et al. (2009).

Desktop GIS read a GeoPackage's default styles from a ``layer_styles`` table
(one row per layer: ``f_table_name``, ``styleQML``, ``styleSLD``,
``useAsDefault``, ...); the same SLD is also written as files next to the
GeoPackage for other clients.
"""

from __future__ import annotations

import sqlite3
from datetime import UTC, datetime
from pathlib import Path
from xml.sax.saxutils import escape, quoteattr

from ..status import STATUSES
from .atomic import atomic_path

#: fill colour of each status (hex sRGB)
STATUS_COLOURS: dict[str, str] = {
    "ok": "#1F78B4",       # blue
    "watch": "#F2B701",    # amber
    "deficit": "#A6103C",  # dark crimson
    "no_data": "#A0A0A0",  # grey
    "excluded": "#40004B",  # dark plum: a known structure or accepted exception
    "short": "#A6103C",    # short on inner-slope stability: drawn like a deficit
}
#: fill colour of the piping statuses not among the crest's (piping_screen.py): short of
#: the seepage length a rule asks takes the deficit's colour
PIPING_COLOURS: dict[str, str] = {
    "short": STATUS_COLOURS["deficit"],
    "not_screened": "#DCDCDC",  # light grey
}
#: outline and neutral line colour
INK = "#303030"

#: layer -> (geometry kind, categorised by status?, line or marker size in mm)
LAYER_LOOK: dict[str, tuple[str, bool, float]] = {
    "stations": ("point", True, 2.6),
    "cross_sections": ("line", True, 0.25),
    "crest_line": ("line", False, 0.5),
    "stretches": ("line", True, 1.8),
}

_QML_VERSION = "3.28.0"


def _rgba(hex_colour: str) -> str:
    h = hex_colour.lstrip("#")
    return ",".join(str(int(h[i:i + 2], 16)) for i in (0, 2, 4)) + ",255"


def _props(values: dict[str, str]) -> str:
    """Symbol-layer properties in both the current (Option map) and legacy (prop) form."""
    opts = "".join(f'<Option name={quoteattr(k)} type="QString" value={quoteattr(v)}/>'
                   for k, v in values.items())
    legacy = "".join(f"<prop k={quoteattr(k)} v={quoteattr(v)}/>" for k, v in values.items())
    return f'<Option type="Map">{opts}</Option>{legacy}'


def _qml_symbol(name: str, kind: str, colour: str, size: float) -> str:
    if kind == "point":
        props = {"name": "circle", "color": _rgba(colour), "outline_color": _rgba(INK),
                 "outline_width": "0.2", "outline_width_unit": "MM", "size": f"{size}",
                 "size_unit": "MM", "outline_style": "solid"}
        return (f'<symbol type="marker" name="{name}" alpha="1" clip_to_extent="1" '
                f'force_rhr="0"><layer class="SimpleMarker" pass="0" locked="0" enabled="1">'
                f"{_props(props)}</layer></symbol>")
    props = {"line_color": _rgba(colour), "line_width": f"{size}", "line_width_unit": "MM",
             "line_style": "solid", "capstyle": "flat", "joinstyle": "round"}
    return (f'<symbol type="line" name="{name}" alpha="1" clip_to_extent="1" force_rhr="0">'
            f'<layer class="SimpleLine" pass="0" locked="0" enabled="1">{_props(props)}'
            f"</layer></symbol>")


def qml(layer: str) -> str:
    """QGIS style document (QML) of ``layer``: categorised by status, or a single symbol."""
    kind, by_status, size = LAYER_LOOK[layer]
    if by_status:
        cats = "".join(f'<category value="{s}" symbol="{i}" label="{s}" render="true"/>'
                       for i, s in enumerate(STATUSES))
        syms = "".join(_qml_symbol(str(i), kind, STATUS_COLOURS[s], size)
                       for i, s in enumerate(STATUSES))
        renderer = (f'<renderer-v2 type="categorizedSymbol" attr="status" symbollevels="0" '
                    f'enableorderby="0" forceraster="0"><categories>{cats}</categories>'
                    f"<symbols>{syms}</symbols></renderer-v2>")
    else:
        renderer = (f'<renderer-v2 type="singleSymbol" symbollevels="0" enableorderby="0" '
                    f'forceraster="0"><symbols>{_qml_symbol("0", kind, INK, size)}</symbols>'
                    f"</renderer-v2>")
    return ("<!DOCTYPE qgis PUBLIC 'http://mrcc.com/qgis.dtd' 'SYSTEM'>\n"
            f'<qgis version="{_QML_VERSION}" styleCategories="Symbology">{renderer}'
            f"<layerGeometryType>{0 if kind == 'point' else 1}</layerGeometryType></qgis>\n")


def _sld_symbolizer(kind: str, colour: str, size_mm: float) -> str:
    # SLD sizes are in pixels; the OGC standardised rendering pixel is 0.28 mm (from memory)
    px = f"{size_mm / 0.28:.1f}"
    if kind == "point":
        return (f"<PointSymbolizer><Graphic><Mark><WellKnownName>circle</WellKnownName>"
                f'<Fill><CssParameter name="fill">{colour}</CssParameter></Fill>'
                f'<Stroke><CssParameter name="stroke">{INK}</CssParameter>'
                f'<CssParameter name="stroke-width">0.7</CssParameter></Stroke></Mark>'
                f"<Size>{px}</Size></Graphic></PointSymbolizer>")
    return (f'<LineSymbolizer><Stroke><CssParameter name="stroke">{colour}</CssParameter>'
            f'<CssParameter name="stroke-width">{px}</CssParameter>'
            f'<CssParameter name="stroke-linecap">butt</CssParameter></Stroke></LineSymbolizer>')


def sld(layer: str) -> str:
    """OGC Styled Layer Descriptor 1.0.0 of ``layer`` (rules by status where categorised)."""
    kind, by_status, size = LAYER_LOOK[layer]
    if by_status:
        rules = "".join(
            f"<Rule><Name>{s}</Name><Title>{s}</Title>"
            f"<ogc:Filter><ogc:PropertyIsEqualTo><ogc:PropertyName>status</ogc:PropertyName>"
            f"<ogc:Literal>{s}</ogc:Literal></ogc:PropertyIsEqualTo></ogc:Filter>"
            f"{_sld_symbolizer(kind, STATUS_COLOURS[s], size)}</Rule>" for s in STATUSES)
    else:
        rules = f"<Rule><Name>{layer}</Name>{_sld_symbolizer(kind, INK, size)}</Rule>"
    return ('<?xml version="1.0" encoding="UTF-8"?>\n'
            '<StyledLayerDescriptor version="1.0.0" xmlns="http://www.opengis.net/sld" '
            'xmlns:ogc="http://www.opengis.net/ogc" xmlns:xlink="http://www.w3.org/1999/xlink" '
            'xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">'
            f"<NamedLayer><Name>{escape(layer)}</Name><UserStyle><Name>{escape(layer)}</Name>"
            f"<Title>trajectory default: {escape(layer)}</Title>"
            f"<FeatureTypeStyle>{rules}</FeatureTypeStyle></UserStyle></NamedLayer>"
            "</StyledLayerDescriptor>\n")


_CREATE = """CREATE TABLE IF NOT EXISTS layer_styles (
    id INTEGER PRIMARY KEY AUTOINCREMENT NOT NULL,
    f_table_catalog TEXT(256), f_table_schema TEXT(256), f_table_name TEXT(256),
    f_geometry_column TEXT(256), styleName TEXT(30), styleQML TEXT, styleSLD TEXT,
    useAsDefault BOOLEAN, description TEXT, owner TEXT(30), ui TEXT(30),
    update_time DATETIME DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')))"""


def write_layer_styles(con: sqlite3.Connection, *, when: datetime | None = None) -> None:
    """Add the ``layer_styles`` table (registered in gpkg_contents) with one default per layer.

    ``when`` stamps the rows (default now); the writer passes the run time, so a
    rerun of the same inputs writes the same bytes.
    """
    con.execute(_CREATE)
    stamp = (when or datetime.now(UTC)).astimezone(UTC)
    now = stamp.strftime("%Y-%m-%dT%H:%M:%S.000Z")
    con.execute("INSERT OR REPLACE INTO gpkg_contents (table_name, data_type, identifier, "
                "description, last_change) VALUES ('layer_styles', 'attributes', "
                "'layer_styles', 'default layer styles (QML and SLD)', ?)", (now,))
    geom_col = dict(con.execute("SELECT table_name, column_name FROM gpkg_geometry_columns"))
    for layer in LAYER_LOOK:
        con.execute("DELETE FROM layer_styles WHERE f_table_name = ?", (layer,))
        con.execute("INSERT INTO layer_styles (f_table_catalog, f_table_schema, f_table_name, "
                    "f_geometry_column, styleName, styleQML, styleSLD, useAsDefault, "
                    "description, owner, ui, update_time) VALUES ('', '', ?, ?, ?, ?, ?, 1, ?, "
                    "'', '', ?)",
                    (layer, geom_col.get(layer, "geom"), layer, qml(layer), sld(layer),
                     f"trajectory default style of {layer}", now))


def sld_paths(gpkg: str | Path) -> dict[str, Path]:
    """Where the SLD files of a GeoPackage go: ``<stem>.<layer>.sld`` beside it."""
    g = Path(gpkg)
    return {layer: g.with_name(f"{g.stem}.{layer}.sld") for layer in LAYER_LOOK}


def write_slds(paths: dict[str, Path], *, overwrite: bool = False) -> None:
    """Write the SLD file of each layer in ``paths`` ({layer: path}), each atomically."""
    for layer, p in paths.items():
        with atomic_path(p, overwrite=overwrite) as tmp:
            tmp.write_text(sld(layer), encoding="utf-8")
