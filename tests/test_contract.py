"""The output contract is declared once and documented in the README."""

from __future__ import annotations

import re
from pathlib import Path

from trajectory.inputs.conditions import refresh_readme_tables
from trajectory.outputs.schema import LAYERS, refresh_readme

README = Path(__file__).resolve().parents[1] / "README.md"
OUTPUTS = README.parent / "docs" / "outputs.md"

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
    """The field tables (README and docs/outputs.md) and the conditions tables (README)
    are the schema's and the column declarations' own, and every layer is documented."""
    text = README.read_text(encoding="utf-8")
    docs = OUTPUTS.read_text(encoding="utf-8")
    fix = "run: python -m trajectory.outputs.schema README.md docs/outputs.md"
    for t in (text, docs):
        assert refresh_readme(t) == t, fix
        assert refresh_readme_tables(t) == t, fix
        assert "qualified engineer" in t
    assert "<!-- conditions:sections -->" in text and "<!-- conditions:lines -->" in text
    documented = set(re.findall(r"<!-- fields:(\w+) -->", text + docs))
    # run_metadata is a key/value table, described in words
    assert set(LAYERS) - {"run_metadata"} <= documented, sorted(set(LAYERS) - documented)
    assert "docs/outputs.md" in text


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
