"""The output contract is declared once and documented in the README."""

from __future__ import annotations

from pathlib import Path

from trajectory.conditions import refresh_readme_tables
from trajectory.outputs.schema import LAYERS, refresh_readme

README = Path(__file__).resolve().parents[1] / "README.md"

# the contract of shared/DESIGN.md: these fields must exist (more may follow)
REQUIRED = {
    "stations": ["chainage", "section_id", "crest_level", "required_level", "margin",
                 "status", "freeboard", "outer_slope", "inner_slope", "crest_width",
                 "q_at_crest"],
    "cross_sections": ["chainage"],
    "crest_line": [],
    "stretches": ["from_chainage", "to_chainage", "length", "status", "worst_margin"],
}


def test_contract_fields_present():
    for layer, names in REQUIRED.items():
        have = [f.name for f in LAYERS[layer][1]]
        assert [n for n in names if n not in have] == [], layer


def test_readme_field_tables_are_current():
    text = README.read_text(encoding="utf-8")
    assert refresh_readme(text) == text, "run: python -m trajectory.outputs.schema README.md"
    # the conditions columns too, from their one declaration (trajectory.conditions)
    assert refresh_readme_tables(text) == text, \
        "run: python -m trajectory.outputs.schema README.md"
    assert "<!-- conditions:sections -->" in text and "<!-- conditions:lines -->" in text
    assert "qualified engineer" in text


def test_written_geopackage_matches_the_contract_exactly(demo_result):
    """The one test that owns the written contract: layer set, geometry types, field order."""
    import pyogrio

    from trajectory.outputs.schema import field_names

    _, out = demo_result
    layers = dict(pyogrio.list_layers(out))
    # layer_styles is the desktop-GIS style table convention, not a result layer
    assert set(layers) == set(LAYERS) | {"layer_styles"}
    for name, (geom, _) in LAYERS.items():
        info = pyogrio.read_info(out, layer=name)
        assert list(info["fields"]) == field_names(name), name
        assert (info["geometry_type"] if geom else None) == geom, name
