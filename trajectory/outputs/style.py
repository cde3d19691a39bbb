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

from ..judgement.status import STATUSES
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

#: colour of each reinforcement option (our own choice)
OPTION_COLOURS: dict[str, str] = {"raise": "#A6103C", "outer_berm": "#1B7837",
                                  "combined": "#7A3E9D"}
#: colour of each class of verdict change (our own choice; worse in the deficit colour)
CHANGE_COLOURS: dict[str, str] = {"new_deficit": "#A6103C", "resolved": "#1B7837",
                                  "worsened": "#E08214", "improved": "#1F78B4"}
#: categorising field -> its values and colours
CATEGORIES: dict[str, dict[str, str]] = {
    "status": {s: STATUS_COLOURS[s] for s in STATUSES},
    "option": OPTION_COLOURS,
    "change": CHANGE_COLOURS,
}

#: layer -> (geometry kind, categorising field or None, line or marker size in mm)
LAYER_LOOK: dict[str, tuple[str, str | None, float]] = {
    "stations": ("point", "status", 2.6),
    "cross_sections": ("line", "status", 0.25),
    "crest_line": ("line", None, 0.5),
    "stretches": ("line", "status", 1.8),
    "options": ("line", "option", 1.2),
    "epochs": ("point", None, 1.4),
    "changes": ("line", "change", 2.4),
    "piping_stretches": ("line", None, 1.8),
    "slip_circles": ("line", None, 0.4),
    "dem_extent": ("polygon", None, 0.4),   # outline only: context under the other layers
}
#: layer -> label expression (QGIS expression) and the SLD's label field: chainages
LABELS: dict[str, tuple[str, str]] = {
    "stations": ("format_number(\"chainage\", 0)", "chainage"),
    "cross_sections": ("format_number(\"chainage\", 0)", "chainage"),
    "crest_line": ("format_number(\"from_chainage\", 0) || '-' || "
                   "format_number(\"to_chainage\", 0)", "from_chainage"),
    "stretches": ("format_number(\"from_chainage\", 0) || '-' || "
                  "format_number(\"to_chainage\", 0) || ' ' || \"status\"", "from_chainage"),
    "options": ("\"option\" || ' ' || \"basis\" || ' ' || format_number(\"from_chainage\", 0) "
                "|| '-' || format_number(\"to_chainage\", 0)", "option"),
    "epochs": ("\"epoch\" || ' ' || format_number(\"chainage\", 0)", "chainage"),
    "changes": ("\"change\" || ' ' || format_number(\"from_chainage\", 0) || '-' || "
                "format_number(\"to_chainage\", 0)", "from_chainage"),
    "piping_stretches": ("\"status\" || ' ' || format_number(\"from_chainage\", 0) || '-' "
                         "|| format_number(\"to_chainage\", 0)", "from_chainage"),
    "slip_circles": ("format_number(\"chainage\", 0) || ' F=' || "
                     "format_number(\"stability_fos\", 2)", "chainage"),
    "dem_extent": ("\"dem\"", "dem"),  # not along the line: the file's name
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
    if kind == "polygon":
        props = {"style": "no", "outline_color": _rgba(colour), "outline_width": f"{size}",
                 "outline_width_unit": "MM", "outline_style": "dash", "joinstyle": "miter"}
        return (f'<symbol type="fill" name="{name}" alpha="1" clip_to_extent="1" '
                f'force_rhr="0"><layer class="SimpleFill" pass="0" locked="0" enabled="1">'
                f"{_props(props)}</layer></symbol>")
    props = {"line_color": _rgba(colour), "line_width": f"{size}", "line_width_unit": "MM",
             "line_style": "solid", "capstyle": "flat", "joinstyle": "round"}
    return (f'<symbol type="line" name="{name}" alpha="1" clip_to_extent="1" force_rhr="0">'
            f'<layer class="SimpleLine" pass="0" locked="0" enabled="1">{_props(props)}'
            f"</layer></symbol>")


def _qml_labels(layer: str, kind: str) -> str:
    """Simple labelling by the layer's chainage expression (placement: around a point,
    along a line), with collision avoidance left to the GIS."""
    expr = LABELS[layer][0]
    placement = "2" if kind == "line" else "0"
    return ('<labeling type="simple"><settings calloutType="simple">'
            f'<text-style fieldName={quoteattr(expr)} isExpression="1" fontSize="7" '
            f'fontSizeUnit="Point" textColor="{_rgba(INK)}" fontFamily="Sans Serif" '
            'multilineAlign="0"><text-buffer bufferDraw="1" bufferSize="0.7" '
            'bufferSizeUnits="MM" bufferColor="255,255,255,255"/></text-style>'
            f'<placement placement="{placement}" dist="1" distUnits="MM" '
            'placementFlags="10"/><rendering obstacle="1" displayAll="0" '
            'scaleVisibility="0"/></settings></labeling>')


def _qml_aliases(layer: str) -> str:
    """Field aliases (name and unit) in the style, where QGIS 3.22 reads them: on its
    GDAL (checked: 3.6.2) no alias comes from gpkg_data_columns; newer GDAL releases
    read that table as alternative names (from memory, 3.7 on; not checked here)."""
    from .describe import field_title
    from .schema import LAYERS

    fields = LAYERS[layer][1] if layer in LAYERS else ()
    items = "".join(f'<alias field={quoteattr(f.name)} index="{i}" '
                    f"name={quoteattr(field_title(f.name, f.unit))}/>"
                    for i, f in enumerate(fields))
    return f"<aliases>{items}</aliases>"


def qml(layer: str) -> str:
    """QGIS style document (QML) of ``layer``: categorised by its field or a single symbol,
    chainage labels, and the fields' aliases."""
    kind, attr, size = LAYER_LOOK[layer]
    if attr:
        values = CATEGORIES[attr]
        cats = "".join(f'<category value="{v}" symbol="{i}" label="{v}" render="true"/>'
                       for i, v in enumerate(values))
        syms = "".join(_qml_symbol(str(i), kind, c, size)
                       for i, c in enumerate(values.values()))
        renderer = (f'<renderer-v2 type="categorizedSymbol" attr="{attr}" symbollevels="0" '
                    f'enableorderby="0" forceraster="0"><categories>{cats}</categories>'
                    f"<symbols>{syms}</symbols></renderer-v2>")
    else:
        renderer = (f'<renderer-v2 type="singleSymbol" symbollevels="0" enableorderby="0" '
                    f'forceraster="0"><symbols>{_qml_symbol("0", kind, INK, size)}</symbols>'
                    f"</renderer-v2>")
    return ("<!DOCTYPE qgis PUBLIC 'http://mrcc.com/qgis.dtd' 'SYSTEM'>\n"
            f'<qgis version="{_QML_VERSION}" styleCategories="AllStyleCategories" '
            f'labelsEnabled="1">{renderer}{_qml_labels(layer, kind)}{_qml_aliases(layer)}'
            f"<layerGeometryType>{_GEOMETRY_TYPE[kind]}</layerGeometryType></qgis>\n")


#: QGIS geometry type number of each kind
_GEOMETRY_TYPE = {"point": 0, "line": 1, "polygon": 2}


def _sld_symbolizer(kind: str, colour: str, size_mm: float) -> str:
    # SLD sizes are in pixels; the OGC standardised rendering pixel is 0.28 mm (from memory)
    px = f"{size_mm / 0.28:.1f}"
    if kind == "point":
        return (f"<PointSymbolizer><Graphic><Mark><WellKnownName>circle</WellKnownName>"
                f'<Fill><CssParameter name="fill">{colour}</CssParameter></Fill>'
                f'<Stroke><CssParameter name="stroke">{INK}</CssParameter>'
                f'<CssParameter name="stroke-width">0.7</CssParameter></Stroke></Mark>'
                f"<Size>{px}</Size></Graphic></PointSymbolizer>")
    if kind == "polygon":
        return (f'<PolygonSymbolizer><Stroke><CssParameter name="stroke">{colour}'
                f'</CssParameter><CssParameter name="stroke-width">{px}</CssParameter>'
                '<CssParameter name="stroke-dasharray">6 3</CssParameter></Stroke>'
                "</PolygonSymbolizer>")
    return (f'<LineSymbolizer><Stroke><CssParameter name="stroke">{colour}</CssParameter>'
            f'<CssParameter name="stroke-width">{px}</CssParameter>'
            f'<CssParameter name="stroke-linecap">butt</CssParameter></Stroke></LineSymbolizer>')


def sld(layer: str) -> str:
    """OGC Styled Layer Descriptor 1.0.0 of ``layer`` (rules by status where categorised)."""
    kind, attr, size = LAYER_LOOK[layer]
    if attr:
        rules = "".join(
            f"<Rule><Name>{v}</Name><Title>{v}</Title>"
            f"<ogc:Filter><ogc:PropertyIsEqualTo><ogc:PropertyName>{attr}</ogc:PropertyName>"
            f"<ogc:Literal>{v}</ogc:Literal></ogc:PropertyIsEqualTo></ogc:Filter>"
            f"{_sld_symbolizer(kind, c, size)}</Rule>" for v, c in CATEGORIES[attr].items())
    else:
        rules = f"<Rule><Name>{layer}</Name>{_sld_symbolizer(kind, INK, size)}</Rule>"
    rules += (f"<Rule><Name>labels</Name><TextSymbolizer><Label><ogc:PropertyName>"
              f"{LABELS[layer][1]}</ogc:PropertyName></Label><Font>"
              '<CssParameter name="font-size">9</CssParameter></Font>'
              f'<Fill><CssParameter name="fill">{INK}</CssParameter></Fill>'
              "</TextSymbolizer></Rule>")
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
