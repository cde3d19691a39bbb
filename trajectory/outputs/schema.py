"""The output contract: layers, their fields, units and meanings, declared once.

The GeoPackage writer, the deficit table and the README's field tables all
read this module; ``tests/test_contract.py`` owns the contract.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Field:
    name: str
    kind: str        # 'float', 'int', 'str'
    unit: str
    description: str


def _f(name: str, kind: str, unit: str, description: str) -> Field:
    return Field(name, kind, unit, description)


STATION_FIELDS: tuple[Field, ...] = (
    _f("chainage", "float", "m", "Chainage of the station along the centreline"),
    _f("section_id", "str", "", "Section of the conditions table the station lies in"),
    _f("crest_level", "float", "m", "Measured crest level (DEM datum), objects on the crest removed"),
    _f("required_level", "float", "m", "Required crest level = still water + freeboard + settlement"),
    _f("margin", "float", "m", "crest_level - required_level (negative: too low)"),
    _f("status", "str", "", "ok | watch | deficit | no_data"),
    _f("water_level", "float", "m", "Design water level of the section"),
    _f("sea_level_rise", "float", "m", "Sea-level-rise allowance"),
    _f("settlement", "float", "m", "Settlement allowance (extra construction height)"),
    _f("freeboard", "float", "m", "Freeboard: required_level - water_level - allowances"),
    _f("freeboard_eurotop", "float", "m",
       "Freeboard solving EurOtop (2018) mean overtopping for q_allow on the measured slope"),
    _f("freeboard_rule", "str", "", "Which freeboard governs: eurotop or minimum"),
    _f("q_at_crest", "float", "l/s per m",
       "EurOtop (2018) mean overtopping discharge at the measured crest"),
    _f("outer_slope", "float", "n of 1:n", "Outer (water-side) slope, least-squares fit edge-toe"),
    _f("inner_slope", "float", "n of 1:n", "Inner (land-side) slope, least-squares fit edge-toe"),
    _f("crest_width", "float", "m", "Distance between the outer and inner crest edges"),
    _f("crest_offset", "float", "m", "Centre of the crest from the centreline, + towards the water"),
    _f("outer_toe", "float", "m", "Offset of the outer toe from the centreline (+ towards water)"),
    _f("inner_toe", "float", "m", "Offset of the inner toe from the centreline (- towards land)"),
    _f("outer_toe_level", "float", "m", "Ground level at the outer toe"),
    _f("inner_toe_level", "float", "m", "Ground level at the inner toe"),
    _f("outer_fit_rmse", "float", "m", "Root-mean-square residual of the outer slope fit"),
    _f("inner_fit_rmse", "float", "m", "Root-mean-square residual of the inner slope fit"),
    _f("nodata_fraction", "float", "fraction", "Share of the section's samples without data"),
    _f("noise", "float", "m", "Robust estimate of the profile's noise (std)"),
    _f("gamma_f", "float", "-", "Roughness factor used"),
    _f("gamma_beta", "float", "-", "Oblique-wave factor used (EurOtop 2018, overtopping)"),
    _f("flags", "str", "", "Quality flags, ';'-separated (see README)"),
    _f("water_side", "str", "", "Side of the water relative to the digitised direction"),
)

CROSS_SECTION_FIELDS: tuple[Field, ...] = (
    _f("chainage", "float", "m", "Chainage of the station"),
    _f("crest_level", "float", "m", "Measured crest level"),
    _f("crest_width", "float", "m", "Crest width"),
    _f("outer_slope", "float", "n of 1:n", "Outer slope"),
    _f("inner_slope", "float", "n of 1:n", "Inner slope"),
    _f("status", "str", "", "Station status"),
    _f("half_width", "float", "m", "Section length on each side of the centreline"),
)

CREST_LINE_FIELDS: tuple[Field, ...] = (
    _f("from_chainage", "float", "m", "First station of this run of readable crest"),
    _f("to_chainage", "float", "m", "Last station of this run of readable crest"),
)

STRETCH_FIELDS: tuple[Field, ...] = (
    _f("from_chainage", "float", "m", "Start of the stretch"),
    _f("to_chainage", "float", "m", "End of the stretch"),
    _f("length", "float", "m", "Length of the stretch"),
    _f("status", "str", "", "ok | watch | deficit | no_data"),
    _f("worst_margin", "float", "m", "Smallest margin in the stretch"),
    _f("worst_chainage", "float", "m", "Chainage of the smallest margin"),
    _f("stations", "int", "", "Number of stations in the stretch"),
)

METADATA_FIELDS: tuple[Field, ...] = (
    _f("key", "str", "", "Item of the run's metadata"),
    _f("value", "str", "", "Its value"),
)

#: layer name -> (geometry type or None, fields)
LAYERS: dict[str, tuple[str | None, tuple[Field, ...]]] = {
    "stations": ("Point", STATION_FIELDS),
    "cross_sections": ("LineString", CROSS_SECTION_FIELDS),
    "crest_line": ("LineString Z", CREST_LINE_FIELDS),
    "stretches": ("LineString", STRETCH_FIELDS),
    "run_metadata": (None, METADATA_FIELDS),
}

# --- several lines in one run: the spatial layers lead with the line's id
LINE_ID_FIELD = _f("line_id", "str", "",
                   "Id of the centreline (its --line-id-field value; empty for a single line)")
for _name in ("stations", "cross_sections", "crest_line", "stretches"):
    LAYERS[_name] = (LAYERS[_name][0], (LINE_ID_FIELD, *LAYERS[_name][1]))


def field_names(layer: str) -> list[str]:
    return [f.name for f in LAYERS[layer][1]]


def markdown_table(layer: str) -> str:
    """The layer's fields as a Markdown table (for the README)."""
    rows = ["| field | unit | meaning |", "|---|---|---|"]
    rows += [f"| `{f.name}` | {f.unit} | {f.description} |" for f in LAYERS[layer][1]]
    return "\n".join(rows)


def refresh_readme(text: str) -> str:
    """Rewrite the field tables between ``<!-- fields:LAYER -->`` and ``<!-- /fields -->``."""
    import re

    def table(match: re.Match) -> str:
        return f"<!-- fields:{match[1]} -->\n{markdown_table(match[1])}\n<!-- /fields -->"

    return re.sub(r"<!-- fields:(\w+) -->.*?<!-- /fields -->", table, text, flags=re.S)


if __name__ == "__main__":  # python -m trajectory.outputs.schema README.md
    import sys
    from pathlib import Path

    p = Path(sys.argv[1])
    p.write_text(refresh_readme(p.read_text(encoding="utf-8")), encoding="utf-8")
