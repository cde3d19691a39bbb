"""Status colours stay distinguishable for colour-vision deficiencies and in grey print.

Reference: colorspacious (CAM02-UCS colour difference; CVD simulation of
Machado, Oliveira & Fernandes 2009, severity 100).
"""

from __future__ import annotations

import itertools
import xml.etree.ElementTree as ET

import numpy as np
import pytest
from colorspacious import cspace_convert, deltaE

from trajectory.judgement.status import STATUSES
from trajectory.outputs.style import CATEGORIES, LAYER_LOOK, STATUS_COLOURS, qml, sld


def _rgb(h: str) -> np.ndarray:
    return np.array([int(h[i:i + 2], 16) for i in (1, 3, 5)]) / 255.0


@pytest.mark.parametrize("cvd", [None, "protanomaly", "deuteranomaly", "tritanomaly"])
def test_status_colours_differ_under_colour_vision_deficiency(cvd):
    cols = {s: _rgb(STATUS_COLOURS[s]) for s in STATUSES}
    if cvd:
        space = {"name": "sRGB1+CVD", "cvd_type": cvd, "severity": 100}
        cols = {s: np.clip(cspace_convert(c, space, "sRGB1"), 0, 1) for s, c in cols.items()}
    # a CAM02-UCS difference of 20 is far above the just-noticeable ~1-2 (common practice)
    worst = min(deltaE(cols[a], cols[b], input_space="sRGB1")
                for a, b in itertools.combinations(STATUSES, 2))
    assert worst > 20.0


def test_status_colours_have_distinct_lightness_for_grey_print():
    lightness = sorted(cspace_convert(_rgb(STATUS_COLOURS[s]), "sRGB1", "CIELab")[0]
                       for s in STATUSES)
    assert np.diff(lightness).min() > 8.0   # CIE L* steps; our own threshold


@pytest.mark.parametrize("layer", list(LAYER_LOOK))
def test_qml_and_sld_are_well_formed_and_categorise_by_their_field(layer):
    q = ET.fromstring(qml(layer).split("\n", 1)[1])       # after the DOCTYPE line
    s = ET.fromstring(sld(layer).encode())
    ns = {"sld": "http://www.opengis.net/sld", "ogc": "http://www.opengis.net/ogc"}
    assert s.tag == "{http://www.opengis.net/sld}StyledLayerDescriptor"
    attr = LAYER_LOOK[layer][1]
    if attr:
        values = CATEGORIES[attr]
        if attr == "status":
            assert values == {x: STATUS_COLOURS[x] for x in STATUSES}
        cats = [c.get("value") for c in q.iter("category")]
        assert cats == list(values)
        assert q.find("renderer-v2").get("attr") == attr
        literals = [e.text for e in s.iterfind(".//ogc:Literal", ns)]
        assert literals == list(values)
        fills = [e.text for e in s.iter("{http://www.opengis.net/sld}CssParameter")
                 if e.get("name") in ("fill", "stroke") and e.text != "#303030"]
        assert fills == list(values.values())
    else:
        assert q.find("renderer-v2").get("type") == "singleSymbol"
